"""The route editor: an offline drawing page and the local live re-planning app."""
