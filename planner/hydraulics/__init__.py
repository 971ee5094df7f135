"""Physics on arrays in SI units: water properties, friction, energy along a line."""
