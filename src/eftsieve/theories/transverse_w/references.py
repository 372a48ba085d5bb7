"""The papers behind ``transverse-w`` (the transverse SU(2) operators f_T0..f_T2),
on the positivity-cone engine.

Read by ``eftsieve cite``.  Titles, authors and arXiv ids were checked against public
abstract pages; journal data are left out where they were not checked.
"""

from __future__ import annotations

from typing import Any

REFERENCES: tuple[dict[str, Any], ...] = (
    {"key": "ZhangZhou2020", "authors": ("C. Zhang", "S.-Y. Zhou"),
     "title": "Convex Geometry Perspective to the (Standard Model) Effective Field Theory "
              "Space", "eprint": "2005.03047", "year": 2020},
    {"key": "Li2021", "authors": ("X. Li", "H. Xu", "C. Yang", "C. Zhang", "S.-Y. Zhou"),
     "title": "Positivity in Multi-Field EFTs", "eprint": "2101.01191", "year": 2021},
)
