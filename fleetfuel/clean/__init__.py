"""clean stage."""
