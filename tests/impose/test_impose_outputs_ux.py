"""impose for people (issue 16, items 13 and 15): report.html with the banner,
per-parameter truncated mean, sd, 68%/95% intervals and covariance; a console warning
when p_inside before the truncation is tiny; a non-zero exit for an unconverged refit.
The cards are invented test data (tests/report/verdict_cases/)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from scipy import stats as sps

from eftsieve.cli.impose import EXIT_UNCONVERGED
from eftsieve.cli.main import main
from eftsieve.stats.intervals import posterior_summary, weighted_quantile

CASES = Path(__file__).parents[1] / "report" / "verdict_cases"
REGION = str(CASES / "su2_physical_region.json")


def test_weighted_quantiles_match_repeated_rows():
    """Integer weights are repeated rows: the quantiles equal numpy's inverted-CDF ones."""
    rng = np.random.default_rng(4)
    x = rng.normal(size=300)
    w = rng.integers(1, 4, size=300)
    q = np.array([0.025, 0.16, 0.5, 0.84, 0.975])
    rep = np.repeat(x, w)
    assert np.allclose(weighted_quantile(x, q, w), np.quantile(rep, q, method="inverted_cdf"))


def test_posterior_summary_of_a_one_plane_truncated_gaussian():
    """x ~ N(0, 1) truncated to x >= 0.5: mean, sd and quantiles against scipy.stats.truncnorm."""
    rng = np.random.default_rng(7)
    x = rng.normal(size=(400_000, 1))
    keep = x[:, 0] >= 0.5
    post = posterior_summary(x, ("a",), keep.astype(float))
    ref = sps.truncnorm(0.5, np.inf)
    p = post.parameters[0]
    assert p.mean == pytest.approx(ref.mean(), abs=5e-3)
    assert p.std == pytest.approx(ref.std(), abs=5e-3)
    assert p.intervals[0.95][0] == pytest.approx(ref.ppf(0.025), abs=1e-2)
    assert p.intervals[0.68][1] == pytest.approx(ref.ppf(0.84), abs=1e-2)
    assert post.covariance[0, 0] == pytest.approx(ref.var(), abs=5e-3)


def test_impose_writes_report_html_and_intervals(tmp_path, capsys):
    out = tmp_path / "o"
    code = main(["impose", str(CASES / "tension.yaml"), "--region", REGION, "-o", str(out),
                 "--samples", "4000", "--no-plots"])
    assert code == 0
    first = capsys.readouterr().out.splitlines()[0]
    assert first.startswith("imposed: positivity imposed (exact, 4000 samples)")
    html = (out / "report.html").read_text()
    assert "class='verdict'" in html and "68% interval" in html
    s = json.loads((out / "summary.json").read_text())
    lb = s["posterior"]["parameters"]["lbar1"]
    assert lb["interval_68"][0] < lb["mean"] < lb["interval_68"][1]
    assert lb["interval_95"][0] < lb["interval_68"][0]
    assert len(s["posterior"]["covariance"]) == 2 and s["kinematics"]["pion_mass_mev"] == 139.57


def test_tiny_p_inside_warns_on_the_console(tmp_path, capsys):
    code = main(["impose", str(CASES / "excluded.yaml"), "--region", REGION, "-o",
                 str(tmp_path / "o"), "--samples", "2000", "--no-plots", "--quiet"])
    captured = capsys.readouterr()
    assert code == 0 and captured.out == ""
    assert "set by the bounds, not by the data" in captured.err
    assert json.loads((tmp_path / "o" / "summary.json").read_text())["driven_by_bounds"]


@pytest.mark.filterwarnings("default::eftsieve.errors.ConvergenceWarning")
def test_unconverged_refit_exits_non_zero(tmp_path, capsys):
    like = tmp_path / "invented_like.py"
    like.write_text("def loglike(x):\n    return -0.5 * float(((x[0] + 0.4) / 0.6) ** 2"
                    " + ((x[1] - 4.3) / 0.1) ** 2)\n")
    card = tmp_path / "card.yaml"
    card.write_text((CASES / "inside.yaml").read_text() + "prior:\n  lbar1: {uniform: [-5, 5]}\n"
                    "  lbar2: {uniform: [0, 8]}\n")
    args = ["impose", str(card), "--region", REGION, "--mode", "refit", "--likelihood",
            f"{like}:loglike", "--samples", "40", "--walkers", "8", "--no-plots",
            "--no-progress", "--sampler", "mcmc"]
    code = main([*args, "-o", str(tmp_path / "a")])
    err = capsys.readouterr().err
    assert code == EXIT_UNCONVERGED
    assert "not converged" in err and "--allow-unconverged" in err
    assert main([*args, "-o", str(tmp_path / "b"), "--allow-unconverged"]) == 0
    assert "NOT CONVERGED" in (tmp_path / "b" / "report.md").read_text()


def test_all_samples_inside_is_a_bound_not_a_probability_of_one():
    # every one of N samples inside: the rule of three gives p_inside > 1 - 3/N at 95%
    # (common practice), not p_inside = 1
    import numpy as np

    from eftsieve.impose.core import ImposeResult
    from eftsieve.report.impose_report import impose_banner

    n = 1000
    res = ImposeResult("reweight", ("a",), np.zeros((n, 1)), None, np.zeros((n, 1)), None,
                       {"p_inside_before": 1.0, "n_samples": n, "ess": float(n)})
    text = impose_banner(res).text
    assert "> 0.997 (all 1000 samples inside; 95% lower bound)" in text
    assert "= 1" not in text
