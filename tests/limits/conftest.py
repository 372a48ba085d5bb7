"""Regions of the dimension-8 cones, built once per test session."""

from __future__ import annotations

import pytest


@pytest.fixture(scope="session")
def cone_regions():
    """theory -> its default (extremal) region, built on first use."""
    from eftsieve.region.build import build_region

    cache: dict = {}

    def get(theory: str):
        if theory not in cache:
            cache[theory] = build_region(theory, {})
        return cache[theory]
    return get
