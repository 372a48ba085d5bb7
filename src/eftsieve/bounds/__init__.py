"""Bound families: generic machinery that turns dispersion relations into linear constraints."""
