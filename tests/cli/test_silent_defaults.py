"""No silent defaults (issue 16, items 1-5): each case now works with a printed notice
(:class:`eftsieve.errors.InputNotice`) or fails with a one-line error naming the file,
the field and the fix.  All data here are invented test data.
"""

from __future__ import annotations

import sys
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import eftsieve as es
from eftsieve.api import check_kinematics, load_samples
from eftsieve.cli.main import main
from eftsieve.errors import InputError, InputNotice, KinematicsWarning
from eftsieve.impose.refit import load_callable
from eftsieve.region.model import Region

CASES = Path(__file__).parents[1] / "report" / "verdict_cases"
REGION = CASES / "su2_physical_region.json"


def _card(tmp_path: Path, body: str, name: str = "card.yaml") -> Path:
    path = tmp_path / name
    path.write_text("# INVENTED TEST DATA\nformat_version: 1\nname: invented\n"
                    "theory: chpt-su2\n" + textwrap.dedent(body))
    return path


def _csv(tmp_path: Path, columns: dict[str, np.ndarray], name: str = "s.csv") -> Path:
    path = tmp_path / name
    pd.DataFrame(columns).to_csv(path, index=False)
    return path


def _rows(n: int = 400, seed: int = 2) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    return {"lbar1": rng.normal(-0.4, 0.6, n), "lbar2": rng.normal(4.3, 0.1, n)}


# item 1: the region's kinematics are stated, and a --region file must match the fit
def test_card_kinematics_that_disagree_with_the_region_file_are_refused(tmp_path):
    card = _card(tmp_path, """\
        kinematics: {pion_mass_mev: 300.0}
        parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]
        mean: [-0.4, 4.3]
        errors: [0.6, 0.1]
        """)
    fit = es.load_fit(card)
    region = Region.load(REGION)
    with pytest.raises(InputError) as err:
        check_kinematics(fit, region, str(REGION))
    line = err.value.one_line()
    assert "kinematics.pion_mass_mev" in line and "300" in line and "139.57" in line
    assert str(card) in line and "--allow-kinematics-mismatch" in line
    with pytest.warns(KinematicsWarning, match="300"):
        check_kinematics(fit, region, str(REGION), allow_mismatch=True)


def test_cli_refuses_the_mismatch_in_one_line(tmp_path, capsys):
    card = _card(tmp_path, """\
        kinematics: {pion_mass_mev: 300.0}
        parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]
        mean: [-0.4, 4.3]
        errors: [0.6, 0.1]
        """)
    code = main(["check", str(card), "--region", str(REGION), "-o", str(tmp_path / "o"),
                 "--no-plots"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and "kinematics.pion_mass_mev" in err[0]


def test_an_lr_fit_without_a_pion_mass_gets_a_notice_for_the_default_region(tmp_path):
    """The case of the report: l_i^r samples at mu = 770 MeV and no pion mass."""
    from eftsieve.theories import get_theory

    path = _csv(tmp_path, {"l1": np.full(3, -4e-3), "l2": np.full(3, 5e-3)})
    fit = load_samples(path, "chpt-su2", "lr", mu_mev=770.0)
    th = get_theory("chpt-su2")
    (notice,) = th.region_default_notices(fit)
    assert "physical pion mass 139.57 MeV" in notice and "--pion-mass" in notice
    with_mass = load_samples(path, "chpt-su2", "lr", mu_mev=770.0, pion_mass_mev=300.0)
    assert th.region_default_notices(with_mass) == ()
    assert th.region_settings_for_fit(with_mass)["pion_masses_mev"] == [300.0]


def test_lbar_fits_carry_their_own_pion_mass():
    from eftsieve.theories import get_theory

    fit = es.load_fit(CASES / "inside.yaml")
    bare = type(fit)(fit.name, fit.theory, fit.parameters, {}, fit.mean, fit.cov)
    assert get_theory("chpt-su2").region_default_notices(bare) == ()


def test_kinematics_appear_in_summary_and_terminal():
    from eftsieve.cli.check import summary_lines

    res = es.api.check(es.load_fit(CASES / "inside.yaml"), Region.load(REGION), draws=2000)
    assert res.to_dict()["kinematics"]["pion_mass_mev"] == 139.57
    assert any(line.startswith("  kinematics: ") and "139.57 MeV" in line
               for line in summary_lines(res, "r.json"))


# item 2: theory and convention from the column names, physical pion mass for lbar
def test_bare_lbar_file_needs_no_flags(tmp_path):
    path = _csv(tmp_path, _rows())
    with pytest.warns(InputNotice) as rec:
        fit = load_samples(path)
    text = " ".join(str(w.message) for w in rec)
    assert "theory chpt-su2, convention lbar" in text and "139.57" in text
    assert fit.theory == "chpt-su2" and fit.parameters[0].convention.pion_mass_mev == 139.57


def test_unclaimed_columns_are_a_one_line_error(tmp_path):
    path = _csv(tmp_path, {"alpha": np.ones(3), "beta": np.zeros(3)})
    with pytest.raises(InputError) as err:
        load_samples(path)
    assert "--theory" in err.value.one_line() and "alpha, beta" in err.value.one_line()


def test_lr_columns_still_need_their_scale(tmp_path):
    path = _csv(tmp_path, {"l1": np.ones(3), "l2": np.zeros(3)})
    with pytest.warns(InputNotice), pytest.raises(InputError) as err:
        load_samples(path)
    assert "mu_mev" in err.value.one_line()


def test_card_parameters_shorthand(tmp_path):
    card = _card(tmp_path, """\
        parameters: [lbar1, lbar2]
        mean: [-0.4, 4.3]
        errors: [0.6, 0.1]
        """)
    with pytest.warns(InputNotice, match="139.57"):
        fit = es.load_fit(card)
    assert fit.names == ("lbar1", "lbar2")
    assert all(p.convention.name == "lbar" for p in fit.parameters)


# item 3: weight and sampler bookkeeping columns
def test_weight_and_bookkeeping_columns_are_recognised(tmp_path):
    rows = _rows()
    n = len(rows["lbar1"])
    path = _csv(tmp_path, {**rows, "weight": np.full(n, 2.0), "chain": np.arange(n) % 4,
                           "draw": np.arange(n) // 4, "lp__": -np.ones(n),
                           "log_prob": -np.ones(n)})
    with pytest.warns(InputNotice) as rec:
        fit = load_samples(path, "chpt-su2", "lbar", pion_mass_mev=139.57)
    text = " ".join(str(w.message) for w in rec)
    assert "'weight' is used as the sample weight" in text
    assert "chain, draw, lp__, log_prob left out" in text
    assert fit.names == ("lbar1", "lbar2") and fit.samples.weight_column == "weight"


def test_columns_flag_overrides_the_recognition(tmp_path):
    rows = _rows()
    path = _csv(tmp_path, {**rows, "chain": np.arange(len(rows["lbar1"])) % 2})
    fit = load_samples(path, "chpt-su2", "lbar", columns="lbar1,lbar2", pion_mass_mev=139.57)
    assert fit.names == ("lbar1", "lbar2")


# item 4: YAML 1.1 reads 9e-8 as a string; the card reader reads YAML 1.2 numbers
def test_yaml_exponent_without_dot_is_a_number(tmp_path):
    card = _card(tmp_path, """\
        parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]
        kinematics: {pion_mass_mev: 139.57}
        mean: [1e0, 4e0]
        covariance: [[9e-8, 0], [0, 1e-2]]
        """)
    fit = es.load_fit(card)
    assert fit.cov[0, 0] == pytest.approx(9e-8) and fit.mean[1] == 4.0


# item 5: --likelihood as module:function from the current folder, or path.py:function
def test_likelihood_module_from_the_current_folder(tmp_path, monkeypatch):
    (tmp_path / "invented_like.py").write_text(
        "def loglike(x):\n    return -0.5 * float(sum(v * v for v in x))\n")
    monkeypatch.chdir(tmp_path)
    monkeypatch.delitem(sys.modules, "invented_like", raising=False)
    try:
        fn = load_callable("invented_like:loglike")
        assert fn(np.array([[1.0, 2.0]]))[0] == -2.5
    finally:
        sys.modules.pop("invented_like", None)


def test_likelihood_from_a_file_path(tmp_path):
    sub = tmp_path / "path" / "to"
    sub.mkdir(parents=True)
    (sub / "mylike.py").write_text("def loglike(x):\n    return -float(x[0])\n")
    fn = load_callable(f"{sub / 'mylike.py'}:loglike")
    assert fn(np.array([[3.0, 0.0]]))[0] == -3.0
    with pytest.raises(InputError, match="path/to/file.py:function"):
        load_callable(f"{sub / 'nothere.py'}:loglike")
    with pytest.raises(InputError, match="not a function"):
        (sub / "notfn.py").write_text("loglike = 3\n")
        load_callable(f"{sub / 'notfn.py'}:loglike")
