"""check and impose take --family and the --pion-mass list as `region` does (issue 15,
item 4): one flag with one or several values, the same meaning for every verb.

* ``--family`` and ``--pion-mass`` with a card, or several ``--pion-mass`` values,
  build the region the way ``eftsieve region`` does with the same flags (same hash);
* several masses build one region that holds at every mass, in the fit's own
  convention, which must not depend on the pion mass (else a one-line refusal);
* one ``--pion-mass`` value with a bare samples file keeps its meaning: the file's own
  pion mass.

The fit values are the physical-QCD constants lbar1 = -0.4, lbar2 = 4.3 at
M_pi = 139.57 MeV (Colangelo, Gasser & Leutwyler, hep-ph/0103088, from memory), run to
l_i^r(770 MeV) with l_i^r = gamma_i / (32 pi^2) (lbar_i + ln(M^2/mu^2)), gamma = (1/3,
2/3) (Gasser & Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (9.7)), and held fixed across
masses, as in QCD.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from eftsieve.cli.main import main

M_PI, MU = 139.57, 770.0
#: (lbar1, lbar2) of hep-ph/0103088 (from memory)
CGL_LBAR = (-0.4, 4.3)
GAMMA = (1 / 3, 2 / 3)
CGL_LR = tuple(g / (32 * math.pi**2) * (lb + math.log(M_PI**2 / MU**2))
               for g, lb in zip(GAMMA, CGL_LBAR, strict=True))
FAST = ["--draws", "2000", "--no-plots", "--seed", "3"]


def _lr_card(tmp_path: Path) -> Path:
    """CGL at l^r(770 MeV), with a small invented spread (0.1 of the published error)."""
    card = tmp_path / "cgl_lr.yaml"
    card.write_text(
        "format_version: 1\nname: cgl-lr\ntheory: chpt-su2\n"
        f"kinematics: {{pion_mass_mev: {M_PI}, mu_mev: {MU}}}\n"
        "parameters: [{name: l1, convention: lr}, {name: l2, convention: lr}]\n"
        f"mean: [{CGL_LR[0]!r}, {CGL_LR[1]!r}]\n"
        "errors: [1.0e-4, 1.0e-4]\n")
    return card


def _lbar_card(tmp_path: Path) -> Path:
    card = tmp_path / "cgl_lbar.yaml"
    card.write_text(
        "format_version: 1\nname: cgl-lbar\ntheory: chpt-su2\n"
        f"kinematics: {{pion_mass_mev: {M_PI}}}\n"
        "parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]\n"
        f"mean: [{CGL_LBAR[0]}, {CGL_LBAR[1]}]\nerrors: [0.06, 0.01]\n")
    return card


def _hash(path: Path) -> str:
    return json.loads(path.read_text())["hash"]


def test_check_with_family_builds_the_region_that_region_builds(tmp_path, capsys):
    card = _lbar_card(tmp_path)
    assert main(["check", str(card), "-o", str(tmp_path / "c"), "--family",
                 "t-derivative", *FAST]) == 0
    assert main(["region", "--family", "t-derivative", "-o", str(tmp_path / "r.json")]) == 0
    assert _hash(tmp_path / "c" / "region.json") == _hash(tmp_path / "r.json")
    summary = json.loads((tmp_path / "c" / "summary.json").read_text())
    assert summary["kinematics"]["families"] == ["t-derivative"]


def test_several_masses_for_check_and_impose(tmp_path, capsys):
    """CGL held fixed in l^r against the region at 139.57 and 279.14 MeV (the issue's
    acceptance command, with a card): the same region as `region` builds, no point
    outside."""
    card = _lr_card(tmp_path)
    masses = ["--pion-mass", "139.57", "279.14"]
    assert main(["check", str(card), "-o", str(tmp_path / "c"), *masses, *FAST]) == 0
    assert main(["region", *masses, "--convention", "lr", "--scale", "770", "-o",
                 str(tmp_path / "r.json")]) == 0
    assert _hash(tmp_path / "c" / "region.json") == _hash(tmp_path / "r.json")
    summary = json.loads((tmp_path / "c" / "summary.json").read_text())
    assert summary["kinematics"]["pion_masses_mev"] == [139.57, 279.14]
    assert summary["n_outside"] == 0
    # the terminal names the mass of the most violated facet (the region file's)
    facets = json.loads((tmp_path / "c" / "region.json").read_text())["facets"]
    line = next(ln for ln in capsys.readouterr().out.splitlines() if "most violated" in ln)
    masses_named = {f"pion_mass = {f['pion_mass_mev']:g} MeV" for f in facets}
    assert any(m in line for m in masses_named), line
    assert main(["impose", str(card), "-o", str(tmp_path / "i"), *masses, "--samples",
                 "400", "--no-progress", "--no-plots"]) == 0
    assert _hash(tmp_path / "i" / "region.json") == _hash(tmp_path / "r.json")


def test_bare_lr_samples_with_several_masses(tmp_path, capsys):
    """The issue's acceptance command as written: a bare l^r file with --convention lr
    --scale 770 and two masses."""
    rng = np.random.default_rng(5)  # invented spread around the CGL values
    rows = rng.normal(CGL_LR, 1e-4, size=(300, 2))
    f = tmp_path / "cgl.csv"
    f.write_text("l1,l2\n" + "\n".join(f"{a:.9g},{b:.9g}" for a, b in rows) + "\n")
    assert main(["check", str(f), "--theory", "chpt-su2", "--convention", "lr", "--scale",
                 "770", "--pion-mass", "139.57", "279.14", "-o", str(tmp_path / "c"),
                 "--no-plots"]) == 0
    summary = json.loads((tmp_path / "c" / "summary.json").read_text())
    assert summary["kinematics"]["pion_masses_mev"] == [139.57, 279.14]
    assert summary["n_total"] == 300 and summary["n_outside"] == 0


@pytest.mark.parametrize("bare", [False, True])
def test_several_masses_refused_for_a_fit_at_one_mass(tmp_path, capsys, bare):
    if bare:
        f = tmp_path / "s.csv"
        f.write_text("lbar1,lbar2\n-0.4,4.3\n0.1,4.2\n")
        argv = ["check", str(f), "--theory", "chpt-su2", "--convention", "lbar"]
    else:
        argv = ["check", str(_lbar_card(tmp_path))]
    assert main([*argv, "--pion-mass", "139.57", "279.14", "-o", str(tmp_path / "o"),
                 *FAST]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err  # no notice about a default mass before the refusal
    assert "--pion-mass: several pion masses build one region" in err[0]
    assert "fix:" in err[0]
    assert not (tmp_path / "o").exists()


def test_one_mass_keeps_its_meaning_for_a_bare_file(tmp_path, capsys, su2_region):
    """One value is the bare file's own mass, also with --region (not a region option)."""
    f = tmp_path / "s.csv"
    f.write_text("lbar1,lbar2\n-0.4,4.3\n3.0,0.5\n")
    su2_region.save(tmp_path / "r.json")
    assert main(["check", str(f), "--theory", "chpt-su2", "--convention", "lbar",
                 "--pion-mass", "139.57", "--region", str(tmp_path / "r.json"), "-o",
                 str(tmp_path / "o"), "--no-plots"]) == 0
    summary = json.loads((tmp_path / "o" / "summary.json").read_text())
    assert summary["n_total"] == 2


def test_card_mass_must_be_among_the_masses(tmp_path, capsys):
    card = _lbar_card(tmp_path)
    assert main(["check", str(card), "--pion-mass", "200", "-o", str(tmp_path / "o"),
                 *FAST]) == 2
    line = capsys.readouterr().err.strip()
    assert "--pion-mass" in line and "139.57" in line and "200" in line
    assert "--allow-kinematics-mismatch" in line


@pytest.mark.parametrize("flag", [["--family", "t-derivative"],
                                  ["--pion-mass", "139.57", "279.14"]])
def test_region_options_refuse_a_region_file(tmp_path, capsys, su2_region, flag):
    su2_region.save(tmp_path / "r.json")
    assert main(["check", str(_lr_card(tmp_path)), "--region", str(tmp_path / "r.json"),
                 *flag, "-o", str(tmp_path / "o"), *FAST]) == 2
    line = capsys.readouterr().err.strip()
    assert f"{flag[0]}: chooses how the region is built" in line and "--region" in line


def test_several_fits_refuse_region_options(tmp_path, capsys):
    assert main(["check", str(_lbar_card(tmp_path)), str(_lr_card(tmp_path)), "--family",
                 "t-derivative", "-o", str(tmp_path / "o"), *FAST]) == 2
    assert "build the region once" in capsys.readouterr().err


def test_family_flag_repeats_and_takes_commas(tmp_path, capsys):
    """`--family a --family b` and `--family a,b` mean the same, for every verb."""
    for i, fam in enumerate((["--family", "second-derivative", "--family", "t-derivative"],
                             ["--family", "second-derivative,t-derivative"])):
        assert main(["region", *fam, "-o", str(tmp_path / f"r{i}.json"), "--json"]) == 0
        summary = json.loads(capsys.readouterr().out)
        assert summary["settings"]["families"] == ["second-derivative", "t-derivative"]
    assert _hash(tmp_path / "r0.json") == _hash(tmp_path / "r1.json")


def test_region_setting_errors_name_the_flag(tmp_path, capsys):
    assert main(["region", "--theory", "scalar-eft", "--pion-mass", "100", "-o",
                 str(tmp_path / "r.json")]) == 2
    assert "<command line>: --pion-mass:" in capsys.readouterr().err
