"""simulate stage."""
