"""The directions of a 2-D scalar-eft region solved in parallel on a local cluster."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.errors import InputError
from eftsieve.executors import dask_map
from eftsieve.theories import get_theory

SETTINGS = {"coordinates": ["g3t", "g4t"], "order": 6, "directions": 8, "spins": 20,
            "mass_points": 40}


def test_parallel_directions_give_verified_facets_close_to_serial(cluster):
    th = get_theory("scalar-eft")
    serial = th.build_region(SETTINGS)
    par = th.build_region(SETTINGS, executor=dask_map(cluster.scheduler_address))
    assert len(par.facets) == len(serial.facets)
    for a, b in zip(serial.facets, par.facets, strict=True):
        np.testing.assert_allclose(a.normal, b.normal, atol=1e-12)
        # each parallel direction is its own verified dual bound; the serial solver shares
        # cutting-plane states between directions, so the two agree to the LP tolerance
        assert b.offset == pytest.approx(a.offset, abs=1e-4 * max(1.0, abs(a.offset)))
        ver = b.extra["verification"]
        assert ver["passed"] and ver["lower"] == pytest.approx(b.offset, rel=1e-9)
    # the inner points of the parallel build are inside its own outer facets
    assert (par.margins(np.array(par.inner_vertices)) >= -1e-6).all()
    # the executor is the caller's choice: it never enters the region or its hash
    same = {k: v for k, v in par.settings.items() if k != "grid_states_final"}
    assert same == {k: v for k, v in serial.settings.items() if k != "grid_states_final"}
    assert "engine" not in par.settings and "scheduler" not in par.settings


def test_engine_settings_are_not_region_settings():
    """Regression: engine and scheduler were region settings and entered the hash."""
    with pytest.raises(InputError, match="known settings|accepted"):
        get_theory("scalar-eft").build_region({**SETTINGS, "scheduler": "tcp://x:1"})
