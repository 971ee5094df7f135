"""Pipe catalogues: real dimensions and ratings, with prices users replace."""
