"""methods layer."""
