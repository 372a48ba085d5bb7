"""The multi-file Parquet data set of the engine tests, shared with the reader tests."""

from tests.check.conftest import dataset  # noqa: F401  (a pytest fixture)
