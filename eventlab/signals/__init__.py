"""signals layer."""
