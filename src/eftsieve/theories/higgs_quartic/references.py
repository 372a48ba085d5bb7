"""The papers behind ``higgs-quartic`` (the four-derivative Higgs-doublet operators),
on the positivity-cone engine.  Read by ``eftsieve cite``; the entries are shared
(:mod:`eftsieve.theories.cone_references`).
"""

from __future__ import annotations

from typing import Any

from eftsieve.theories.cone_references import REMMEN_RODD_2019, ZHANG_ZHOU_2020

REFERENCES: tuple[dict[str, Any], ...] = (REMMEN_RODD_2019, ZHANG_ZHOU_2020)
