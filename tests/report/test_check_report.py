"""Golden-text test of report.md on a fixed seed (regenerate with EFTSIEVE_REGEN_GOLDEN=1)."""

from __future__ import annotations

import os
from pathlib import Path

from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.fit.model import Parameter, Prior
from eftsieve.report.check_report import check_document
from eftsieve.report.document import to_html, to_markdown
from tests.helpers import gaussian_fit, region

GOLDEN = Path(__file__).parent / "golden_check_report.md"


def _report() -> str:
    prior = Prior({"lbar1": "uniform", "lbar2": "uniform"},
                  {"lbar1": (-10.0, 10.0), "lbar2": (-10.0, 10.0)})
    fit = gaussian_fit([0.5, 1.1], [[0.5, 0.1], [0.1, 0.2]], name="golden", prior=prior)
    reg = region(((0, 1), 1.0), ((1, 2), 3.0))
    res = run_check(fit, reg, CheckSettings(draws=20_000, seed=11), None)
    return to_markdown(check_document(res, {}))


def test_report_matches_golden_text():
    text = _report()
    if os.environ.get("EFTSIEVE_REGEN_GOLDEN"):
        GOLDEN.write_text(text)
    assert text == GOLDEN.read_text()


def test_report_states_assumptions_and_the_band():
    text = _report()
    assert "What the bounds assume" in text and "Froissart" in text
    assert "marginal band" in text and "0.001" in text
    assert "chi-bar-squared" in text


def test_html_is_self_contained(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    from eftsieve.report.document import Document, Image

    fig = Figure()
    fig.add_subplot().plot([0, 1])
    png = tmp_path / "x.png"
    fig.savefig(png)
    html = to_html(Document("t", [Image(png, "x")]))
    assert "data:image/png;base64," in html and "src='x.png'" not in html


def _samples_report(tmp_path, rho, n=20_000):
    """A check of AR(1)-correlated samples (rho = 0 gives independent draws)."""
    import numpy as np
    import pandas as pd
    from scipy.signal import lfilter

    from eftsieve.fit.model import Fit
    from eftsieve.io.samples import SamplesSource
    from tests.helpers import LBAR

    rng = np.random.default_rng(3)
    e = rng.standard_normal((n, 2)) * np.sqrt(1 - rho**2)
    e[0] = rng.standard_normal(2)
    x = lfilter([1.0], [1.0, -rho], e, axis=0) + [0.5, 1.1]
    path = tmp_path / f"chain_{rho}.csv"
    pd.DataFrame(x, columns=["lbar1", "lbar2"]).to_csv(path, index=False)
    params = tuple(Parameter(p, LBAR) for p in ("lbar1", "lbar2"))
    fit = Fit("chain", "chpt-su2", params, {"pion_mass_mev": 139.57},
              samples=SamplesSource(path, "csv", ("lbar1", "lbar2")))
    reg = region(((0, 1), 1.0), ((1, 2), 3.0))
    res = run_check(fit, reg, CheckSettings(seed=1), None)
    return res.summary, to_markdown(check_document(res, {}))


def test_report_gives_the_batch_means_error_of_correlated_samples(tmp_path):
    s, text = _samples_report(tmp_path, rho=0.95)
    assert s["tau_inside"] > 10 and s["p_inside_mc_err_batch"] > 3 * s["p_inside_mc_err"]
    assert "p_inside error, correlated draws (batch means)" in text
    assert "quote the batch-means error" in text
    s, text = _samples_report(tmp_path, rho=0.0)
    assert 0.6 < s["tau_inside"] < 1.6
    assert "p_inside error, correlated draws (batch means)" in text
    assert "quote the batch-means error" not in text


def test_cautions_are_those_of_the_region_theory():
    """Regression: a chpt-su3 report printed the chpt-su2 cautions."""
    from eftsieve.report.cautions import cautions_for

    su3 = " ".join(cautions_for("chpt-su3"))
    assert "chpt-su3" in su3 and "M_K" in su3 and "skipped" in su3
    assert "chpt-su2" not in su3 and "400 MeV" not in su3
    assert "chpt-su2" in " ".join(cautions_for("chpt-su2"))
    assert "to that order" in " ".join(cautions_for("scalar-eft"))


def test_kinematics_line_skips_empty_lists():
    # a region with every coefficient in use stores no coordinate as fixed to zero; an
    # empty list (regions of earlier versions) says nothing and is left out of the line
    from eftsieve.numbers import fmt_kinematics

    line = fmt_kinematics({"name": "hat-i", "fixed_to_zero": [], "units": "TeV^-4",
                           "pion_mass_mev": 139.57})
    assert "fixed" not in line and ";  ;" not in line
    assert line == "pion_mass = 139.57 MeV; name hat-i; units TeV^-4"


def test_kinematics_line_writes_numbers_as_numbers():
    # a number that is not a mass (the weak angle of aqgc-dim8) is 'name = value' with six
    # significant digits, like the masses, not 'sin2 theta w 0.2230518910035465'
    from eftsieve.numbers import fmt_kinematics

    line = fmt_kinematics({"sin2_theta_w": 0.2230518910035465, "units": "TeV^-4",
                           "convention": "hat-i"})
    assert line == "sin2_theta_w = 0.223052; units TeV^-4; convention hat-i"
