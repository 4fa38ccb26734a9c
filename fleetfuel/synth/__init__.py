"""synth stage."""
