"""engine stage."""
