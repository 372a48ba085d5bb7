"""Imposing positivity regions on fitted EFT constants: truncation and refits."""
