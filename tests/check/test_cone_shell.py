"""Exact shell solves in the one check kernel (issue 20): cone regions decide the points
between their inner and outer facets by one membership solve each.

References used as oracles:

* photon-quartic: for L = a (F.F)^2 + b (F.Ftilde)^2 forward positivity gives exactly
  a >= 0 and b >= 0 (Adams, Arkani-Hamed, Dubovsky, Nicolis & Rattazzi, "Causality,
  analyticity and an IR obstruction to UV completion", hep-th/0602178, Sec. 3; from
  memory, as in tests/theories/photon_quartic).  The Gaussian probability of that
  quadrant is a product of two normal CDFs (scipy.stats.norm).
* higgs-quartic: C2 >= 0, C1 + C2 >= 0, C1 + C2 + C3 >= 0 (Remmen & Rodd, arXiv:1908.09845;
  from memory, as in tests/theories/higgs_quartic), and tree-level exchanges of heavy
  scalars and vectors (rule-in models, integrated out here by the contact engine).

To make a shell on purpose, the photon-quartic region is given a looser (still valid)
outer set, one facet dropped, and a narrower (still valid) inner cone; the higgs-quartic
and transverse-w regions are built coarsely (few rays).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from scipy.stats import norm

from eftsieve.bounds.cone_build import ConeSettings, build_cone
from eftsieve.bounds.cone_region import cone_region
from eftsieve.check.engines.dask import dask_check
from eftsieve.check.engines.local import local_check
from eftsieve.check.run import run_check
from eftsieve.check.shell import BUDGET_REASON
from eftsieve.check.verdicts import CheckSettings, classify
from eftsieve.fit.conventions import Convention
from eftsieve.fit.model import Fit, Parameter
from eftsieve.io.samples import SamplesSource
from eftsieve.region.model import Facet
from eftsieve.theories import get_theory
from eftsieve.theories.photon_quartic import operators as photon
from tests.check.conftest import comparable

#: (a, b) of the photon fit: invented demo numbers, a Gaussian straddling b = 0
MEAN_AB, SD_AB = np.array([0.4, 0.05]), np.array([0.3, 0.15])


def _facet(normal: np.ndarray, kind: str) -> Facet:
    return Facet(tuple(float(x) for x in normal), 0.0, "extremal", kind, {}, 0.0, "verified",
                 {"kind": "test"})


@pytest.fixture(scope="module")
def photon_region():
    """The photon cone with the outer facet b >= 0 dropped and the inner cone narrowed to
    a >= 0.25 b, b >= 0.25 a (both in the (F.F)^2, (F.Ftilde)^2 basis)."""
    full = get_theory("photon-quartic").build_region({})
    jab = photon.ALT_FROM_ZETA                 # (a, b) = J zeta: a facet n_ab gives J^T n_ab
    a_facet = [f for f in full.facets
               if abs((np.asarray(f.normal) @ np.linalg.inv(jab))[1]) < 1e-9]
    assert len(a_facet) == 1
    inner = tuple(_facet(jab.T @ n, "inner (narrowed)") for n in
                  (np.array([1.0, -0.25]), np.array([-0.25, 1.0])))
    return replace(full, facets=tuple(a_facet), inner_facets=inner, inner_vertices=())


def photon_fit(samples: SamplesSource | None = None) -> Fit:
    params = tuple(Parameter(n, Convention("none")) for n in photon.ALT_COEFFICIENTS)
    if samples is not None:
        return Fit("photon-demo", "photon-quartic", params, {}, samples=samples)
    return Fit("photon-demo", "photon-quartic", params, {}, MEAN_AB, np.diag(SD_AB**2))


def _draws_ab(n: int, seed: int) -> np.ndarray:
    return MEAN_AB + SD_AB * np.random.default_rng(seed).normal(size=(n, 2))


@pytest.fixture(scope="module")
def photon_files(tmp_path_factory):
    """Two Parquet files of (a, b) rows (invented demo numbers), 700 + 500 rows."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    d = tmp_path_factory.mktemp("photon")
    rows = _draws_ab(1200, 5)
    for i, (lo, hi) in enumerate(((0, 700), (700, 1200))):
        pq.write_table(pa.table({"a_FF2": rows[lo:hi, 0], "b_FFdual2": rows[lo:hi, 1]}),
                       d / f"part-{i}.parquet")
    return d, rows


def test_shell_verdicts_agree_with_the_classic_photon_statement(photon_region, photon_files):
    d, ab = photon_files
    fit = photon_fit(SamplesSource(d, "parquet", photon.ALT_COEFFICIENTS, None))
    res = run_check(fit, photon_region, CheckSettings(), d.parent / "out_classic")
    sh = res.shell
    assert sh is not None and sh.n_shell > 100 and sh.n_marginal == 0
    assert sh.n_inside > 50 and sh.n_outside > 50
    # each shell point is solved or excluded by a facet learned from an earlier solve
    assert sh.n_solves + sh.n_learned == sh.n_shell and sh.n_learned > 0
    # every verdict (facet test or exact solve) is the classic quadrant a > 0, b > 0
    quadrant = (ab > 0).all(axis=1)
    assert res.counts.inside == int(quadrant.sum())
    assert res.counts.outside == int((~quadrant).sum())
    # p_inside is the fraction in the quadrant, not the fraction inside the looser facets
    assert res.p_inside == pytest.approx(quadrant.mean(), abs=1e-12)
    assert res.p_inside_mc == pytest.approx(quadrant.mean(), abs=1e-12)
    y = ab @ np.linalg.inv(photon.ALT_FROM_ZETA).T
    facets_only = classify(y, photon_region, 0.0)
    assert res.p_inside < facets_only.satisfies.mean()


def test_flagged_rows_carry_the_exact_verdicts(photon_region, photon_files, tmp_path):
    import pandas as pd

    d, ab = photon_files
    fit = photon_fit(SamplesSource(d, "parquet", photon.ALT_COEFFICIENTS, None))
    run_check(fit, photon_region, CheckSettings(), tmp_path)
    flagged = pd.read_csv(tmp_path / "flagged.csv", comment="#")
    outside = ~(ab > 0).all(axis=1)
    assert len(flagged) == int(outside.sum())
    assert set(flagged["verdict"]) == {"outside"}


def test_gaussian_p_inside_matches_the_quadrant_probability(photon_region):
    res = run_check(photon_fit(), photon_region,
                    CheckSettings(draws=2000, seed=3, shell_solves=2000))
    exact = float(np.prod(norm.cdf(MEAN_AB / SD_AB)))
    assert res.shell is not None and res.shell.p_correction < 0 and res.shell.n_marginal == 0
    assert "corrected by the sampled exact shell solves" in res.p_inside_method
    # tilting over the looser outer set gives Phi(a/sd_a); the solves bring it down
    assert abs(res.p_inside - exact) < 4 * res.p_inside_err
    assert abs(res.p_inside - exact) < 0.03
    assert res.to_dict()["shell"]["n_shell"] == res.shell.n_shell


def test_budget_leaves_points_marginal_with_the_reason(photon_region, photon_files):
    d, _ = photon_files
    fit = photon_fit(SamplesSource(d, "parquet", photon.ALT_COEFFICIENTS, None))
    res = run_check(fit, photon_region, CheckSettings(shell_solves=7))
    sh = res.shell
    assert sh is not None
    assert sh.n_solves == 14                   # 7 per partition, two files
    # learned facets still decide points after the budget is spent (no solve)
    assert sh.n_inside + sh.n_outside == 14 + sh.n_learned and sh.n_learned > 0
    assert sh.n_marginal == sh.n_shell - 14 - sh.n_learned == res.counts.marginal
    assert sh.reasons == ((BUDGET_REASON, sh.n_marginal),)
    # the budget is counted in row order per partition: the chunk size changes nothing
    again = run_check(fit, photon_region, CheckSettings(shell_solves=7, chunk_rows=97))
    assert comparable(again.to_dict()) == comparable(res.to_dict())


def test_forced_solver_failure_gives_marginal(photon_region, monkeypatch):
    import cvxpy as cp

    from eftsieve.bounds.sdp import ExtremalSDP, SDPResult

    def not_solved(self, c):
        return SDPResult("solver_error: forced", float("nan"), None, None)

    monkeypatch.setattr(ExtremalSDP, "membership", not_solved)
    res = run_check(photon_fit(), photon_region, CheckSettings(draws=500))
    sh = res.shell
    assert sh is not None and sh.n_shell > 0
    assert sh.n_inside == sh.n_outside == 0 and sh.n_marginal == sh.n_shell
    assert sh.reasons == (("SDP not solved (status solver_error)", sh.n_shell),)
    assert sh.p_correction == 0.0

    def raises(self, c):
        raise cp.error.SolverError("forced failure")

    monkeypatch.setattr(ExtremalSDP, "membership", raises)
    res = run_check(photon_fit(), photon_region, CheckSettings(draws=500))
    assert res.shell is not None
    assert res.shell.reasons == (("solve failed (SolverError)", res.shell.n_shell),)


def test_local_and_dask_agree_with_exact_shell_solves(photon_region, photon_files, cluster):
    d, _ = photon_files
    fit = photon_fit(SamplesSource(d, "parquet", photon.ALT_COEFFICIENTS, None))
    st = CheckSettings(shell_solves=50)
    ref = local_check(fit, photon_region, st, None)
    other = dask_check(fit, photon_region, CheckSettings(shell_solves=50, chunk_rows=333),
                       None, scheduler=cluster.scheduler_address)
    assert ref.shell is not None and ref.shell.n_solves == 100
    assert comparable(other.to_dict()) == comparable(ref.to_dict())
    assert other.shell == ref.shell


def coarse_region(theory: str):
    th = get_theory(theory)
    build = build_cone(th.problem(), ConeSettings(shell_target=0.3, max_rounds=1,
                                                  rays_per_round=3, mc_points=20_000))
    return cone_region(theory, build, {"name": "none"})


def test_higgs_shell_is_inside_as_remmen_rodd_say():
    from eftsieve.theories.higgs_quartic import operators as ops
    from tests.theories.cone_helpers import exchange

    region = coarse_region("higgs-quartic")
    problem = get_theory("higgs-quartic").problem()
    rule_in = [exchange(problem, ops.MODES, [ops.current_singlet], 3.0, 0)[0],
               exchange(problem, ops.MODES, [ops.current_triplet(a) for a in range(3)], 3.0,
                        0)[0],
               exchange(problem, ops.MODES, [ops.current_vector(None)], 3.0, 1)[0]]
    total = np.sum(rule_in, axis=0)
    rng = np.random.default_rng(11)
    pts = np.vstack([total, total + 0.02 * rng.normal(size=(150, 3))])
    rr = pts @ ops.REMMEN_RODD_FROM_F.T                            # (C1, C2, C3)
    forms = np.column_stack([rr[:, 1], rr[:, 0] + rr[:, 1], rr.sum(axis=1)])
    scale = np.linalg.norm(pts, axis=1)
    fit = Fit("higgs-demo", "higgs-quartic",
              tuple(Parameter(c, Convention("none")) for c in problem.coefficients), {},
              samples=_parquet_samples(pts, problem.coefficients))
    got, res = _verdicts(fit, region)
    sh = res.shell
    assert sh is not None and sh.n_shell > 5 and sh.n_inside > 0
    clear = (np.abs(forms).min(axis=1) > 1e-6 * scale)
    assert clear[0] and (forms[0] > 0).all()          # the rule-in sum is strictly inside
    truth_in = (forms > 0).all(axis=1)
    # every clear point's verdict is the Remmen-Rodd one; the rule-in point is inside
    assert got[0] == 0
    assert (got[clear & truth_in] == 0).all() and (got[clear & ~truth_in] == 2).all()


def _parquet_samples(pts: np.ndarray, names: tuple[str, ...]) -> SamplesSource:
    import tempfile
    from pathlib import Path

    import pyarrow as pa
    import pyarrow.parquet as pq

    path = Path(tempfile.mkdtemp()) / "pts.parquet"
    pq.write_table(pa.table({n: pts[:, i] for i, n in enumerate(names)}), path)
    return SamplesSource(path, "parquet", names, None)


def _verdicts(fit: Fit, region) -> tuple[np.ndarray, object]:
    """Per-row verdicts from the flagged file of a check (rows not listed are inside), and
    the check's result."""
    import tempfile
    from pathlib import Path

    import pandas as pd

    out = Path(tempfile.mkdtemp())
    res = run_check(fit, region, CheckSettings(), out)
    codes = np.zeros(res.n_total, dtype=int)
    flagged = pd.read_csv(out / "flagged.csv", comment="#")
    names = {"marginal": 1, "outside": 2, "uncertain": 3}
    codes[flagged["row"].to_numpy(dtype=int)] = [names[v] for v in flagged["verdict"]]
    return codes, res


@pytest.mark.slow
@pytest.mark.parametrize("family, expected", [("extremal", 2), ("elastic", 0)])
def test_transverse_w_point_between_the_families(family, expected):
    # C_STAR violates the extremal-only facet 12 fT0 + 4 fT1 + 5 fT2 >= 0 and is proven
    # elastic-positive (tests/theories/transverse_w, with its certificate checked there):
    # through the check kernel it is outside the extremal cone and inside the elastic one
    from tests.theories.transverse_w.test_transverse_w import C_STAR

    th = get_theory("transverse-w")
    build = build_cone(th.problem(), ConeSettings(family=family, shell_target=0.5,
                                                  max_rounds=1, rays_per_round=2,
                                                  mc_points=5_000),
                       reduction=th.reduction() if family == "elastic" else None)
    built = cone_region("transverse-w", build, {"name": "none"})
    pts = np.array([C_STAR, 2 * C_STAR])
    # put the points in the shell on purpose: drop the outer facets they violate (the
    # rest is still a valid outer cone) and cut them off the inner cone (a smaller inner
    # cone is still inside)
    outer = tuple(f for f in built.facets if np.asarray(f.normal) @ C_STAR >= 0)
    region = replace(built, facets=outer, inner_facets=built.inner_facets + (
        _facet(-C_STAR, "inner (cut)"),))
    assert (classify(pts, region, 0.0).verdict == 1).all()      # both in the shell
    fit = Fit("tw-demo", "transverse-w", tuple(Parameter(c, Convention("none"))
                                               for c in region.coordinates), {},
              samples=_parquet_samples(pts, region.coordinates))
    got, res = _verdicts(fit, region)
    assert res.shell is not None
    # outside (extremal): the second point, 2 C_STAR, lies on the first one's ray and is
    # excluded by the facet learned from the first solve; inside (elastic): two solves
    assert (res.shell.n_solves, res.shell.n_learned) == ((1, 1) if expected == 2 else (2, 0))
    assert got.tolist() == [expected, expected]


def test_command_line_budget_summary_and_report(photon_region, tmp_path, capsys):
    import json

    from eftsieve.cli.main import main

    region = tmp_path / "photon.json"
    photon_region.save(region)
    card = tmp_path / "photon.yaml"
    card.write_text("# INVENTED DEMO DATA (fictional photon-quartic fit)\nformat_version: 1\n"
                    "name: photon-demo\ntheory: photon-quartic\nparameters:\n"
                    "  - {name: a_FF2, convention: none}\n"
                    "  - {name: b_FFdual2, convention: none}\n"
                    f"mean: [{MEAN_AB[0]}, {MEAN_AB[1]}]\nerrors: [{SD_AB[0]}, {SD_AB[1]}]\n")
    out = tmp_path / "out"
    code = main(["check", str(card), "--region", str(region), "-o", str(out), "--draws",
                 "2000", "--shell-solves", "5", "--no-plots"])
    assert code == 0
    text = capsys.readouterr().out
    assert "shell (between inner and outer cones):" in text
    assert f"{BUDGET_REASON}:" in text
    shell = json.loads((out / "summary.json").read_text())["shell"]
    assert shell["n_solves"] == 5 and shell["budget_per_partition"] == 5
    assert shell["n_marginal"] == shell["n_shell"] - 5 - shell["n_learned"]
    assert shell["reasons"][0]["reason"] == BUDGET_REASON
    report = (out / "report.md").read_text()
    assert "## Shell" in report and "why left marginal" in report


def test_a_point_outside_by_rounding_is_solved_not_declared_outside():
    # (a, b) = (0, 1) lies on the boundary ray a = 0 of the photon cone (classic statement
    # above); pushed out by 1e-15 it is outside only by rounding: the facet test alone
    # would call it outside, the exact solve leaves it marginal; pushed out by 1e-3 it is
    # outside.  (The elastic facets are exact product states; extremal facets carry a
    # small outward repair, so there such a point is in the shell anyway.)
    region = get_theory("photon-quartic").build_region({"families": ["elastic"]})
    zeta_of = np.linalg.inv(photon.ALT_FROM_ZETA)
    pts = np.array([zeta_of @ [-1e-15, 1.0], zeta_of @ [-1e-3, 1.0]])
    assert (classify(pts, region, 0.0).verdict == 2).all()
    fit = Fit("edge", "photon-quartic", tuple(Parameter(c, Convention("none"))
                                              for c in region.coordinates), {},
              samples=_parquet_samples(pts, region.coordinates))
    got, res = _verdicts(fit, region)
    assert got.tolist() == [1, 2]
    assert res.shell is not None and res.shell.n_shell == 1
    assert res.shell.n_marginal == 1 and res.shell.n_outside == 0


def test_fit_verdict_decides_a_mean_in_the_shell_exactly(photon_region):
    # the looser outer set (a >= 0 only) holds a mean with b < 0, but the quadrant
    # a >= 0, b >= 0 (hep-th/0602178) does not: the verdict says so from an exact solve,
    # and the tension against the outer facets (zero) is not passed off as the cone's
    params = tuple(Parameter(n, Convention("none")) for n in photon.ALT_COEFFICIENTS)
    fit = Fit("photon-demo", "photon-quartic", params, {}, np.array([0.4, -0.2]),
              np.diag([0.05, 0.05]) ** 2)
    res = run_check(fit, photon_region, CheckSettings(draws=2000, seed=1))
    v = res.verdict
    assert not v.mean_inside
    assert "inside every outer facet but outside the cone (exact solve: outside" in v.reason
    assert v.tension_text.startswith("not computed against the cone itself")
    # a mean in the shell but inside the quadrant keeps the usual reason
    inside = run_check(photon_fit(), photon_region, CheckSettings(draws=2000, seed=1))
    assert inside.verdict.mean_inside and "inside the nearest facet" in inside.verdict.reason
