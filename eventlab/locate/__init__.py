"""locate layer."""
