"""segment stage."""
