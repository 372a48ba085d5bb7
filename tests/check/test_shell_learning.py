"""Learned facets in the check kernel: the separating certificates of a partition's
earlier ``outside`` solves decide its later shell points without a solve, with verdicts
that do not depend on the chunk size.

Reference used as the oracle: the higgs-quartic cone is C2 >= 0, C1 + C2 >= 0,
C1 + C2 + C3 >= 0 (Remmen & Rodd, "Consistency of the Standard Model Effective Field
Theory", arXiv:1908.09845; from memory, as in tests/theories/higgs_quartic).  The region
is built coarsely (few rays) and given a looser (still valid) outer set, so that its
shell is large and holds outside points; the points are a fictional
Gaussian cloud around the cone's centre (invented demo numbers), in two Parquet files.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from eftsieve.check import engine
from eftsieve.check.verdicts import CheckSettings
from eftsieve.fit.conventions import Convention
from eftsieve.fit.model import Fit, Parameter
from eftsieve.io.samples import SamplesSource
from eftsieve.theories import get_theory
from eftsieve.theories.higgs_quartic import operators as ops
from tests.check.conftest import comparable
from tests.check.test_cone_shell import coarse_region

#: Remmen & Rodd's inequalities A F >= 0 in the region's (fS0, fS1, fS2) (module docstring)
PUBLISHED = np.array([[0.0, 1, 0], [1, 1, 0], [1, 1, 1]]) @ ops.REMMEN_RODD_FROM_F
CODES = {"marginal": 1, "outside": 2, "uncertain": 3}


@pytest.fixture(scope="module")
def region():
    """A coarse build with only its outer facet fS0 >= 0 kept (fewer valid facets: still a
    valid outer set), so that points outside the other two published facets are in the
    shell and must be solved (or excluded by a learned facet)."""
    built = coarse_region("higgs-quartic")
    keep = tuple(f for f in built.facets
                 if np.allclose(np.asarray(f.normal) / np.linalg.norm(f.normal), [1, 0, 0]))
    assert len(keep) == 1 and len(built.facets) == 3
    return replace(built, facets=keep)


@pytest.fixture(scope="module")
def cloud(tmp_path_factory):
    """2500 fictional points (1600 + 900 rows in two files) around the cone's centre."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    rays = np.linalg.inv(PUBLISHED)
    centre = (rays / np.linalg.norm(rays, axis=0)).sum(axis=1)
    pts = centre + 0.8 * np.linalg.norm(centre) * np.random.default_rng(21).normal(
        size=(2500, 3))
    d = tmp_path_factory.mktemp("higgs_cloud")
    names = get_theory("higgs-quartic").problem().coefficients
    for i, (lo, hi) in enumerate(((0, 1600), (1600, 2500))):
        pq.write_table(pa.table({n: pts[lo:hi, j] for j, n in enumerate(names)}),
                       d / f"part-{i}.parquet")
    fit = Fit("higgs-demo", "higgs-quartic", tuple(Parameter(n, Convention("none"))
                                                   for n in names), {},
              samples=SamplesSource(d, "parquet", names, None))
    return fit, pts


def _run(fit: Fit, region, settings: CheckSettings, out):
    """A check and its per-row verdicts (rows not in flagged.csv are inside)."""
    import pandas as pd

    from eftsieve.check.run import run_check

    res = run_check(fit, region, settings, out)
    codes = np.zeros(res.n_total, dtype=int)
    flagged = pd.read_csv(out / "flagged.csv", comment="#")
    codes[flagged["row"].to_numpy(dtype=int)] = [CODES[v] for v in flagged["verdict"]]
    return res, codes


def test_learned_verdicts_are_the_same_for_two_chunk_sizes(region, cloud, tmp_path):
    fit, pts = cloud
    res, codes = _run(fit, region, CheckSettings(), tmp_path / "a")
    again, codes2 = _run(fit, region, CheckSettings(chunk_rows=173), tmp_path / "b")
    sh = res.shell
    assert sh is not None and sh.n_shell > 100 and sh.n_learned > 20 and sh.n_marginal == 0
    assert sh.n_solves + sh.n_learned == sh.n_shell
    assert codes2.tolist() == codes.tolist()
    assert comparable(again.to_dict()) == comparable(res.to_dict())
    assert again.to_dict()["shell"]["n_learned"] == sh.n_learned
    # every verdict is Remmen & Rodd's away from the boundary
    a = PUBLISHED / np.linalg.norm(PUBLISHED, axis=1, keepdims=True)
    margin = (pts @ a.T).min(axis=1) / np.linalg.norm(pts, axis=1)
    clear = np.abs(margin) > 1e-6
    assert ((codes[clear] == 0) == (margin[clear] > 0)).all()
    assert (codes[clear & (margin < 0)] == 2).all()


def test_learning_saves_solves_and_changes_no_decided_verdict(region, cloud, tmp_path,
                                                             monkeypatch):
    fit, _ = cloud
    res, codes = _run(fit, region, CheckSettings(), tmp_path / "learn")

    def no_learning(reg, settings):
        budget = no_learning.real(reg, settings)
        return None if budget is None else replace(budget, learned=None)
    no_learning.real = engine.shell_budget
    monkeypatch.setattr(engine, "shell_budget", no_learning)
    plain, plain_codes = _run(fit, region, CheckSettings(), tmp_path / "plain")
    assert plain.shell is not None and res.shell is not None
    assert plain.shell.n_learned == 0 and plain.shell.n_solves == plain.shell.n_shell
    assert res.shell.n_shell == plain.shell.n_shell
    assert res.shell.n_solves + res.shell.n_learned == plain.shell.n_solves
    assert res.shell.n_solves < 0.8 * plain.shell.n_solves
    both = (codes != 1) & (plain_codes != 1)
    assert (codes[both] == plain_codes[both]).all()
    assert res.p_inside_mc == pytest.approx(plain.p_inside_mc, abs=1e-12)


def test_an_exhausted_budget_leaves_learned_facets_working(region, cloud, tmp_path):
    fit, _ = cloud
    res, codes = _run(fit, region, CheckSettings(shell_solves=10), tmp_path / "cap")
    sh = res.shell
    assert sh is not None and sh.n_solves == 20                 # 10 per file
    assert sh.n_learned > 0
    assert sh.n_marginal == sh.n_shell - sh.n_solves - sh.n_learned
    again, codes2 = _run(fit, region, CheckSettings(shell_solves=10, chunk_rows=97),
                         tmp_path / "cap2")
    assert codes2.tolist() == codes.tolist() and again.shell == sh
