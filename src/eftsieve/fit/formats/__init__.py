"""Readers of Gaussian summaries in other libraries' formats (gvar/lsqfit JSON dumps)."""
