"""The papers behind ``ew-chiral`` (the electroweak chiral Lagrangian's alpha4 and alpha5),
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
    {"key": "Li2021", "authors": ("X. Li", "H. Xu", "C. Yang", "C. Zhang", "S.-Y. Zhou"),
     "title": "Positivity in Multi-Field EFTs", "eprint": "2101.01191", "year": 2021},
)
