"""cycles stage."""
