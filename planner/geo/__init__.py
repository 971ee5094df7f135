"""Files and coordinates: routes, DEMs, and the profile sampled along a route."""
