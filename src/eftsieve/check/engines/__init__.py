"""check/engines."""
