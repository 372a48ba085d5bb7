"""The papers shared by the theories on the positivity-cone engine (one entry each).

Titles, authors and arXiv ids were checked against public abstract pages; journal data
are left out where they were not checked.
"""

from __future__ import annotations

from typing import Any

ADAMS_2006: dict[str, Any] = {
    "key": "Adams2006", "authors": ("A. Adams", "N. Arkani-Hamed", "S. Dubovsky",
                                    "A. Nicolis", "R. Rattazzi"),
    "title": "Causality, Analyticity and an IR Obstruction to UV Completion",
    "eprint": "hep-th/0602178", "year": 2006}
ZHANG_ZHOU_2020: dict[str, Any] = {
    "key": "ZhangZhou2020", "authors": ("C. Zhang", "S.-Y. Zhou"),
    "title": "Convex Geometry Perspective to the (Standard Model) Effective Field Theory "
             "Space", "eprint": "2005.03047", "year": 2020}
REMMEN_RODD_2019: dict[str, Any] = {
    "key": "RemmenRodd2019", "authors": ("G. N. Remmen", "N. L. Rodd"),
    "title": "Consistency of the Standard Model Effective Field Theory",
    "eprint": "1908.09845", "year": 2019}
LI_2021: dict[str, Any] = {
    "key": "Li2021", "authors": ("X. Li", "H. Xu", "C. Yang", "C. Zhang", "S.-Y. Zhou"),
    "title": "Positivity in Multi-Field EFTs", "eprint": "2101.01191", "year": 2021}
