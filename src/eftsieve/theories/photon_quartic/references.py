"""The papers behind ``photon-quartic`` (light-by-light scattering at dimension 8),
on the positivity-cone engine.  Read by ``eftsieve cite``; the entries are shared
(:mod:`eftsieve.theories.cone_references`).
"""

from __future__ import annotations

from typing import Any

from eftsieve.theories.cone_references import ADAMS_2006, ZHANG_ZHOU_2020

REFERENCES: tuple[dict[str, Any], ...] = (ADAMS_2006, ZHANG_ZHOU_2020)
