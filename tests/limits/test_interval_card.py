"""The interval card: what it reads, and one bad card per rule (a one-line error naming
the file, the field and the fix)."""

from __future__ import annotations

from pathlib import Path

import pytest

from eftsieve.errors import InputError
from eftsieve.fit.formats.interval_card import parse_cl, read_interval_card
from eftsieve.limits.intervals import truncate_rows
from eftsieve.theories import get_theory

CARDS = Path(__file__).with_name("cards")


def test_good_card():
    rows = read_interval_card(CARDS / "good.csv", get_theory)
    assert [r.coefficient for r in rows] == ["fS0", "fS1"]
    assert rows[0].cl == pytest.approx(0.95) and rows[1].cl == pytest.approx(0.68)
    assert rows[1].others == {"fS0": 0.5, "fS2": 0.0} and rows[0].others == {}
    assert rows[0].line == 2 and rows[0].convention.name == "none"


def test_others_move_the_line(cone_regions):
    # fS1 with fS0 = 0.5, fS2 = 0: fS0 + fS1 + fS2 >= 0 gives fS1 >= -0.5 (higgs-quartic
    # facets; fS0 + fS2 >= 0 holds), so [-1, 2] becomes [-0.5, 2]
    rows = read_interval_card(CARDS / "good.csv", get_theory)
    _, t = truncate_rows(rows, {"higgs-quartic": cone_regions("higgs-quartic")})
    assert t.allowed[0] == pytest.approx(-0.5, abs=1e-6) and t.allowed[1] == 2.0


@pytest.mark.parametrize("name,field", [
    ("bad_missing_column.csv", "header.source"),
    ("bad_unknown_column.csv", "header.extra"),
    ("bad_low_above_high.csv", "line 2.low"),
    ("bad_unknown_coefficient.csv", "line 2.coefficient"),
    ("bad_cl.csv", "line 2.cl"),
    ("bad_infinite.csv", "line 2.high"),
    ("bad_theory.csv", "line 2.theory"),
    ("bad_convention.csv", "line 2.convention"),
    ("bad_others.csv", "line 2.others.fS0"),
    ("bad_units.csv", "line 2.units"),
    ("bad_free_not_a_cone.csv", "line 2.others"),
])
def test_bad_cards_are_refused(name, field):
    with pytest.raises(InputError) as err:
        read_interval_card(CARDS / name, get_theory)
    e = err.value
    assert e.path.endswith(name) and e.field == field and e.hint
    assert "\n" not in e.one_line()


def test_an_others_cell_without_names_gets_its_three_forms(tmp_path):
    # a newcomer's "0" for "the others at zero": refused with the three forms the cell takes
    card = tmp_path / "zero.csv"
    card.write_text("theory,coefficient,low,high,cl,others,convention,units,source\n"
                    "aqgc-dim8,fT0,-0.5,0.6,95,0,hat-i,TeV^-4,invented test row\n")
    with pytest.raises(InputError) as err:
        read_interval_card(card, get_theory)
    assert err.value.field == "line 2.others"
    assert "leave it empty" in err.value.hint and "'free'" in err.value.hint


@pytest.mark.parametrize("text,value", [("95", 0.95), ("95%", 0.95), ("0.68", 0.68),
                                        ("99.7", 0.997)])
def test_confidence_levels(text, value):
    assert parse_cl(text, Path("x.csv"), "cl") == pytest.approx(value)


def test_a_region_that_is_not_a_cone(su2_region):
    # chpt-su2's default region has inner (one-loop) and relaxed outer facets and no exact
    # test between them: the interval is reported as undecided with both brackets, and no
    # sign rule (the region is not a cone)
    from eftsieve.limits.intervals import sign_rules

    (row,) = read_interval_card(CARDS / "good_chpt.csv", get_theory)
    (t,) = truncate_rows((row,), {"chpt-su2": su2_region})
    assert t.status == "undecided" and t.cut.method == "undecided"
    assert t.allowed[0] < t.sure[0] < t.sure[1] == t.allowed[1] == row.high
    assert sign_rules(su2_region) == ()


def test_rows_with_the_others_free(cone_regions):
    # higgs-quartic: fS0 >= 0, fS0 + fS2 >= 0, fS0 + fS1 + fS2 >= 0 (Remmen & Rodd,
    # arXiv:1908.09845, from memory).  With fS1 and fS2 free (Fourier-Motzkin by hand, and
    # tests/bounds/test_projection.py) only fS0 >= 0 remains, and fS1 is free in sign;
    # alone (others zero) fS1 >= 0.
    rows = read_interval_card(CARDS / "good_free.csv", get_theory)
    assert [r.others_free for r in rows] == [True, True, False]
    assert rows[0].to_dict()["others"] == "free"
    region = cone_regions("higgs-quartic")
    fs0, fs1_free, fs1_alone = truncate_rows(rows, {"higgs-quartic": region})
    assert fs0.allowed == (0.0, 2.0) and fs0.sure == (0.0, 2.0)
    assert fs0.status == "truncated" and fs0.cut.method == "projection"
    assert "fS0 >= 0 with every other coefficient" in fs0.cut.notes[0]
    assert fs1_free.allowed == (-1.0, 2.0) and fs1_free.status == "kept"
    assert fs1_alone.allowed[0] == pytest.approx(0.0, abs=1e-9)


def test_free_rows_under_the_elastic_family(cone_regions):
    # the elastic projection of the Higgs-sector cone gives the same sign rules as the
    # extremal one (the published cone is both: Remmen & Rodd, arXiv:1908.09845, from
    # memory), and the note names the family
    rows = read_interval_card(CARDS / "good_free.csv", get_theory)
    elastic = get_theory("higgs-quartic").build_region({"families": ["elastic"]})
    fs0, fs1_free, _ = truncate_rows(rows, {"higgs-quartic": elastic})
    assert fs0.allowed == (0.0, 2.0) and fs0.cut.method == "projection"
    assert "projection of the elastic cone" in fs0.cut.notes[0]
    assert fs1_free.allowed == (-1.0, 2.0) and fs1_free.status == "kept"


def test_a_card_with_free_rows_says_what_they_mean(cone_regions):
    from eftsieve.limits.run import FREE_NOTE, limits_from_card

    res = limits_from_card(CARDS / "good_free.csv",
                           lambda theory, names=(): (cone_regions(theory), None))
    assert FREE_NOTE in res.notes
    plain = limits_from_card(CARDS / "good.csv",
                             lambda theory, names=(): (cone_regions(theory), None))
    assert FREE_NOTE not in plain.notes


def test_a_single_kept_point_reads_only_that_point(cone_regions):
    # e.g. fM0 alone in aqgc-dim8 (excluded for either sign): [-3, 3] keeps only 0; the
    # terminal and the report write it as such, as the plot does, not as '[0, 0]'
    import dataclasses

    from eftsieve.limits.run import LimitsResult
    from eftsieve.report.limits_report import interval_rows, limits_lines

    rows = read_interval_card(CARDS / "good.csv", get_theory)
    t, _ = truncate_rows(rows, {"higgs-quartic": cone_regions("higgs-quartic")})
    point = dataclasses.replace(t, allowed=(-0.0, 0.0), sure=(0.0, 0.0), status="truncated",
                                fraction_allowed=0.0)
    text = "\n".join(limits_lines(LimitsResult("card.csv", "interval-card", {}, (point,))))
    assert "only 0 " in text and "[0, 0]" not in text
    assert interval_rows((point,))[0][6:8] == ("only 0", "only 0")
