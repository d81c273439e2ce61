"""inputs layer."""
