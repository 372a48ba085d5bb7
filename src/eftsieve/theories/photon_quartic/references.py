"""The papers behind ``photon-quartic`` (light-by-light scattering at dimension 8),
on the positivity-cone engine.

Read by ``eftsieve cite``.  Titles, authors and arXiv ids were checked against public
abstract pages; journal data are left out where they were not checked.
"""

from __future__ import annotations

from typing import Any

REFERENCES: tuple[dict[str, Any], ...] = (
    {"key": "Adams2006", "authors": ("A. Adams", "N. Arkani-Hamed", "S. Dubovsky",
                                     "A. Nicolis", "R. Rattazzi"),
     "title": "Causality, Analyticity and an IR Obstruction to UV Completion",
     "eprint": "hep-th/0602178", "year": 2006},
    {"key": "ZhangZhou2020", "authors": ("C. Zhang", "S.-Y. Zhou"),
     "title": "Convex Geometry Perspective to the (Standard Model) Effective Field Theory "
              "Space", "eprint": "2005.03047", "year": 2020},
)
