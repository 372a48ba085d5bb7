"""Fixtures of the check tests (shared with the scale-out tests)."""

from tests.scale.conftest import region  # noqa: F401 (a fixture)
