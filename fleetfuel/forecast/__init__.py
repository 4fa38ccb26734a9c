"""forecast stage."""
