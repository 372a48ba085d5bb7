"""The docs and the example cards agree with the code."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest

from eftsieve.fit.card import FIT_CARD_SCHEMA, read_card

ROOT = Path(__file__).parents[1]


def test_schema_file_is_generated_from_the_code():
    stored = json.loads((ROOT / "docs" / "fit_card.schema.json").read_text())
    assert stored == FIT_CARD_SCHEMA


CARDS = [p for p in sorted((ROOT / "data_examples").glob("*.yaml"))
         if "observables" not in p.name] + sorted((ROOT / "tests" / "fit").glob("good_*"))


def test_observables_file_is_not_a_card():
    assert all("observables" not in p.name for p in CARDS) and len(CARDS) >= 4


@pytest.mark.parametrize("card", CARDS, ids=lambda p: p.name)
def test_example_cards_validate_against_the_schema(card):
    jsonschema.validate(read_card(card), FIT_CARD_SCHEMA)


def test_schema_rejects_a_card_with_both_mean_and_samples():
    card = read_card(ROOT / "tests" / "fit" / "good_gaussian.yaml")
    card["samples"] = {"path": "x.csv"}
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(card, FIT_CARD_SCHEMA)
