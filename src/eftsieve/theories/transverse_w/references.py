"""The papers behind ``transverse-w`` (the transverse SU(2) operators f_T0..f_T2),
on the positivity-cone engine.  Read by ``eftsieve cite``; the entries are shared
(:mod:`eftsieve.theories.cone_references`).
"""

from __future__ import annotations

from typing import Any

from eftsieve.theories.cone_references import LI_2021, ZHANG_ZHOU_2020

REFERENCES: tuple[dict[str, Any], ...] = (ZHANG_ZHOU_2020, LI_2021)
