"""The papers behind ``ew-chiral`` (the electroweak chiral Lagrangian's alpha4 and alpha5),
on the positivity-cone engine.  Read by ``eftsieve cite``; the entries are shared
(:mod:`eftsieve.theories.cone_references`).
"""

from __future__ import annotations

from typing import Any

from eftsieve.theories.cone_references import ADAMS_2006, LI_2021

REFERENCES: tuple[dict[str, Any], ...] = (ADAMS_2006, LI_2021)
