"""Presentation: plan.json, drawings, the map.  Reads a Plan; computes no hydraulics."""
