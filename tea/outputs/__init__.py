"""outputs layer."""
