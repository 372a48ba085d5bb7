"""Shared fixtures."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

HERE = Path(__file__).parent


@pytest.fixture(scope="session")
def su2_region():
    """The default chpt-su2 region (both families), built once per test session."""
    from eftsieve.theories import get_theory

    return get_theory("chpt-su2").build_region({})


@pytest.fixture
def rng():
    return np.random.default_rng(12345)
