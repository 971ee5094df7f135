"""Engineering rules on top of the hydraulics: checks and the orchestration of a plan."""
