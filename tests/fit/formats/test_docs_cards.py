"""The smallest cards of docs/formats.md validate against the card schema."""

from __future__ import annotations

import re
from pathlib import Path

import jsonschema
import yaml

from eftsieve.fit.card import FIT_CARD_SCHEMA

DOC = Path(__file__).parents[3] / "docs" / "formats.md"


def test_every_card_in_the_formats_doc_validates():
    blocks = re.findall(r"```yaml\n(.*?)```", DOC.read_text(), flags=re.S)
    cards = [yaml.safe_load(b) for b in blocks if "format_version: 1\nname:" in b]
    kinds = {next(k for k in ("mean", "samples", "gaussian") if k in c) for c in cards}
    assert len(cards) >= 5 and kinds == {"mean", "samples", "gaussian"}
    for card in cards:
        jsonschema.validate(card, FIT_CARD_SCHEMA)
