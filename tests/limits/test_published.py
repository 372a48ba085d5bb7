"""Published one-coefficient intervals, truncated by the positivity cones.

Outside reference: the single-coefficient signs of the literature, independent of this
project's cones.  Each coefficient alone must be non-negative:

* f_T0, f_T1, f_T2 >= 0 alone: Bi, Zhang & Zhou, arXiv:1902.08977, the linear transverse
  bounds (e.g. f_T2 >= 0, 4 f_T1 + f_T2 >= 0, f_T0 + f_T1 + f_T2/2 >= 0 with the others at
  zero) (from memory);
* f_S0, f_S1 >= 0 alone: Remmen & Rodd, arXiv:1908.09845, the Higgs-sector bounds
  (from memory);
* zeta1, zeta2 >= 0 alone: light-by-light, c1 = zeta1 + zeta2/2 >= 0 and c2 = zeta2/4 >= 0
  for L = c1 (F.F)^2 + c2 (F.Ftilde)^2 (Adams et al., arXiv:hep-th/0602178, Sec. 2)
  (from memory).

The published intervals themselves (three CMS analyses and CMS-TOTEM) are in
published_intervals.csv with their arXiv ids and tables, all marked (from memory).
So every interval [low, high] with low < 0 < high must become [0, high].
"""

from __future__ import annotations

from pathlib import Path

import pytest

from eftsieve.fit.formats.interval_card import read_interval_card
from eftsieve.limits.intervals import sign_rules, truncate_rows
from eftsieve.theories import get_theory

CARD = Path(__file__).with_name("published_intervals.csv")
#: coefficient -> the sign the literature requires of it alone (module docstring)
LITERATURE_SIGN = {"fT0": "nonnegative", "fT1": "nonnegative", "fT2": "nonnegative",
                   "fS0": "nonnegative", "fS1": "nonnegative", "zeta1": "nonnegative",
                   "zeta2": "nonnegative"}


@pytest.fixture(scope="module")
def truncated(cone_regions):
    rows = read_interval_card(CARD, get_theory)
    regions = {r.theory: cone_regions(r.theory) for r in rows}
    return rows, regions, truncate_rows(rows, regions)


def test_card_holds_three_analyses_and_light_by_light(truncated):
    rows, _, _ = truncated
    papers = {r.source.split(",")[1].strip() for r in rows}
    assert {"arXiv:2005.01173", "arXiv:1905.07445", "arXiv:2008.10521",
            "arXiv:2110.05916"} <= papers


def test_each_interval_becomes_its_nonnegative_part(truncated):
    _, _, out = truncated
    for t in out:
        assert LITERATURE_SIGN[t.row.coefficient] == "nonnegative"
        assert t.status == "truncated", t.row.label
        lo, hi = t.allowed
        # the lower end is zero up to the cone facets' solver noise (relative 1e-6)
        assert abs(lo) <= 1e-6 * (t.row.high - t.row.low), (t.row.label, lo)
        assert hi == t.row.high
        assert t.fraction_allowed == pytest.approx(t.row.high / (t.row.high - t.row.low),
                                                   rel=1e-6)


def test_signs_alone_agree_with_the_literature(truncated):
    _, regions, _ = truncated
    for region in regions.values():
        for rule in sign_rules(region):
            if rule.coefficient in LITERATURE_SIGN:
                assert rule.rule == LITERATURE_SIGN[rule.coefficient], rule.text


def test_a_negative_interval_is_excluded_entirely(cone_regions, tmp_path):
    card = tmp_path / "neg.csv"
    card.write_text("theory,coefficient,low,high,cl,convention,units,source\n"
                    "photon-quartic,zeta2,-3e-13,-1e-13,95,none,GeV^-4,invented\n")
    rows = read_interval_card(card, get_theory)
    (t,) = truncate_rows(rows, {"photon-quartic": cone_regions("photon-quartic")})
    assert t.status == "excluded" and t.allowed is None and t.fraction_allowed == 0
