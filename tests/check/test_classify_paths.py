"""The cheaper paths of classify give the same verdicts, margins and worst facets.

Oracles: numpy's ``y @ A.T - b`` with ``argmin`` (first of equal ones, as numpy documents)
for the margins and the worst facet, and the verdict rule written out on all rows."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.check.verdicts import INSIDE, MARGINAL, OUTSIDE, classify
from eftsieve.region.model import Facet, Region


def _region(with_inner: bool) -> Region:
    outer = (Facet((1.0, 0.0), -1.0, "f", "a", {}), Facet((0.0, 1.0), -1.0, "f", "b", {}),
             Facet((1.0, 0.0), -1.0, "f", "a-again", {}),  # a tie with facet 0 everywhere
             Facet((-1.0, -1.0), -3.0, "f", "c", {}))
    inner = (Facet((1.0, 0.0), -0.5, "f", "a", {}), Facet((0.0, 1.0), -0.5, "f", "b", {}),
             Facet((1.0, 1.0), -0.8, "f", "c", {}))
    return Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar"}, outer, {},
                  inner if with_inner else ())


@pytest.mark.parametrize("with_inner", [False, True])
@pytest.mark.parametrize("shift", [0.0, -1.5])  # mostly inside, mostly outside
def test_worst_facets_of_the_kept_rows_only_are_the_same(with_inner, shift):
    region = _region(with_inner)
    y = np.random.default_rng(3).normal(size=(20_000, 2)) + shift
    full = classify(y, region, 0.01)
    lazy = classify(y, region, 0.01, all_worst=False)
    for name in ("verdict", "min_margin", "satisfies"):
        assert np.array_equal(getattr(full, name), getattr(lazy, name)), name
    kept = (full.verdict != INSIDE) | (full.min_margin < 0)
    assert kept.any() and (~kept).any()
    assert np.array_equal(lazy.worst[kept], full.worst[kept])
    assert (lazy.worst[~kept] == -1).all()
    a, b = region.arrays()
    m = y @ a.T - b
    assert np.array_equal(full.worst, m.argmin(axis=1))  # ties: the lower index
    assert not (full.worst == 2).any()  # facet 2 only ever ties with facet 0


def test_inner_test_on_mostly_outside_rows_matches_the_rule():
    """More than half the rows outside: the inner facets run on the other rows only."""
    region = _region(True)
    y = np.random.default_rng(9).normal(size=(8_000, 2)) - 1.5
    v = classify(y, region, 0.01)
    a, b = region.arrays()
    ai, bi = region.arrays(inner=True)
    m_out, m_in = (y @ a.T - b).min(axis=1), (y @ ai.T - bi).min(axis=1)
    want = np.where(m_out < -0.01, OUTSIDE, np.where(m_in > 0.01, INSIDE, MARGINAL))
    assert (want == OUTSIDE).mean() > 0.5
    assert np.array_equal(v.verdict, want)
    assert (want == INSIDE).any() and (want == MARGINAL).any()


def test_a_check_with_the_lazy_worst_facets_writes_the_same_files(tmp_path, monkeypatch):
    """A mostly-inside check (the lazy path after the first block) against the same check
    with the worst facet tracked on every row: the same flagged file, worst points and
    summary."""
    import importlib
    import json

    engine = importlib.import_module("eftsieve.check.engine")
    from eftsieve.check.engines.local import local_check
    from eftsieve.check.verdicts import CheckSettings
    from eftsieve.theories import get_theory
    from tests.check.conftest import make_fit, write_parts

    (path,) = write_parts(tmp_path / "in", (150_000,), seed=21)
    fit = make_fit(path)
    region = get_theory("chpt-su2").build_region({"families": ["second-derivative"]})
    st = CheckSettings(plot_points=500)
    lazy = local_check(fit, region, st, tmp_path / "lazy")
    share = (lazy.counts.marginal + lazy.counts.outside) / lazy.summary["n_total"]
    assert 0 < share < 1 / engine.FEW_FLAGGED  # the lazy path ran
    monkeypatch.setattr(engine, "FEW_FLAGGED", 0)  # never lazy
    full = local_check(fit, region, st, tmp_path / "full")
    assert ((tmp_path / "lazy" / "flagged.csv").read_bytes()
            == (tmp_path / "full" / "flagged.csv").read_bytes())
    assert lazy.worst == full.worst and len(lazy.worst) > 0
    assert (json.dumps(lazy.summary, sort_keys=True, default=str)
            == json.dumps(full.summary, sort_keys=True, default=str))
