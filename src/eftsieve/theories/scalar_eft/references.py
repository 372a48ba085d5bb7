"""The papers behind ``scalar-eft``: the sum rules and their null constraints.

Read by ``eftsieve cite``.  Titles, authors and arXiv ids were checked against the
arXiv abstract pages; journal data are given only where they were checked too.
"""

from __future__ import annotations

from typing import Any

REFERENCES: tuple[dict[str, Any], ...] = (
    {"key": "CaronHuotVanDuong2020", "authors": ("S. Caron-Huot", "V. Van Duong"),
     "title": "Extremal Effective Field Theories", "eprint": "2011.02957", "year": 2020},
    {"key": "Chiang2021", "authors": ("L.-Y. Chiang", "Y.-t. Huang", "W. Li", "L. Rodina",
                                      "H.-C. Weng"),
     "title": "Into the EFThedron and UV constraints from IR consistency",
     "eprint": "2105.02862", "year": 2021},
)
