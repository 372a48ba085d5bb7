"""The row's declared convention reaches the theory's coordinate map (how a convention
map with sign flips, such as the M-type coefficients' between field-strength
normalisations, acts on published intervals), and a theory with conventions refuses a
row without one."""

from __future__ import annotations

import pytest

from eftsieve.errors import InputError
from eftsieve.fit.formats.interval_card import read_interval_card
from eftsieve.limits.intervals import truncate_rows
from eftsieve.theories import REGISTRY, get_theory

HEAD = "theory,coefficient,low,high,cl,convention,units,source\n"


@pytest.fixture
def flipped(monkeypatch):
    monkeypatch.setitem(REGISTRY, "higgs-flipped", "tests.limits.flipped_theory")
    return get_theory("higgs-flipped").build_region({})


def test_a_sign_flipping_convention_flips_the_truncation(flipped, tmp_path):
    card = tmp_path / "c.csv"
    card.write_text(HEAD + "higgs-flipped,fS1,-1,2,95,plain,TeV^-4,test\n"
                           "higgs-flipped,fS1,-1,2,95,flip,TeV^-4,test\n")
    plain, flip = truncate_rows(read_interval_card(card, get_theory),
                                {"higgs-flipped": flipped})
    # fS1 >= 0 alone in the region's convention (Remmen & Rodd, arXiv:1908.09845,
    # from memory): [-1, 2] keeps [0, 2]; with fS1 -> -fS1 it keeps [-1, 0]
    assert plain.allowed == pytest.approx((0.0, 2.0), abs=1e-6)
    assert flip.allowed == pytest.approx((-1.0, 0.0), abs=1e-6)


def test_a_theory_with_conventions_refuses_a_row_without_one(flipped, tmp_path):
    card = tmp_path / "c.csv"
    card.write_text(HEAD + "higgs-flipped,fS1,-1,2,95,,TeV^-4,test\n")
    with pytest.raises(InputError) as err:
        read_interval_card(card, get_theory)
    assert err.value.field == "line 2.convention" and "plain" in err.value.hint
    card.write_text(HEAD + "higgs-flipped,fS1,-1,2,95,none,TeV^-4,test\n")
    with pytest.raises(InputError) as err:
        read_interval_card(card, get_theory)
    assert "need a stated convention" in err.value.problem
