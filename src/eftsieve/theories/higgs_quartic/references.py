"""The papers behind ``higgs-quartic`` (the four-derivative Higgs-doublet operators),
on the positivity-cone engine.

Read by ``eftsieve cite``.  Titles, authors and arXiv ids were checked against public
abstract pages; journal data are left out where they were not checked.
"""

from __future__ import annotations

from typing import Any

REFERENCES: tuple[dict[str, Any], ...] = (
    {"key": "RemmenRodd2019", "authors": ("G. N. Remmen", "N. L. Rodd"),
     "title": "Consistency of the Standard Model Effective Field Theory",
     "eprint": "1908.09845", "year": 2019},
    {"key": "ZhangZhou2020", "authors": ("C. Zhang", "S.-Y. Zhou"),
     "title": "Convex Geometry Perspective to the (Standard Model) Effective Field Theory "
              "Space", "eprint": "2005.03047", "year": 2020},
)
