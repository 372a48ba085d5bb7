"""Readers of the files where fits live: gvar JSON dumps, emcee HDF5 backends, ArviZ
NetCDF posteriors with vector variables, NumPy arrays; and the ``columns`` mapping
shared by every samples format.  docs/formats.md describes each format.
"""

from eftsieve.io.readers.columns import ColumnsSpec, parse_columns, parse_columns_flag
from eftsieve.io.readers.options import ReadOptions

__all__ = ["ColumnsSpec", "ReadOptions", "parse_columns", "parse_columns_flag"]
