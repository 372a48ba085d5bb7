"""The papers behind ``chpt-su2``: its amplitude and its two bound families.

Read by ``eftsieve cite``.  Titles, authors and arXiv ids were checked against the
arXiv abstract pages; journal data are given only where they were checked too.
"""

from __future__ import annotations

from typing import Any

REFERENCES: tuple[dict[str, Any], ...] = (
    {"key": "GasserLeutwyler1984", "authors": ("J. Gasser", "H. Leutwyler"),
     "title": "Chiral Perturbation Theory to One Loop", "journal": "Ann. Phys.",
     "volume": "158", "pages": "142", "year": 1984},
    {"key": "Bijnens1995", "authors": ("J. Bijnens", "G. Colangelo", "G. Ecker", "J. Gasser",
                                       "M. E. Sainio"),
     "title": r"Elastic $\pi\pi$ scattering to two loops", "eprint": "hep-ph/9511397",
     "year": 1995},
    {"key": "ManoharMateu2008", "authors": ("A. V. Manohar", "V. Mateu"),
     "title": r"Dispersion Relation Bounds for $\pi\pi$ Scattering", "eprint": "0801.3222",
     "year": 2008},
    {"key": "deRham2017", "authors": ("C. de Rham", "S. Melville", "A. J. Tolley",
                                      "S.-Y. Zhou"),
     "title": "Positivity Bounds for Scalar Theories", "eprint": "1702.06134", "year": 2017},
    {"key": "Wang2020", "authors": ("Y.-J. Wang", "F.-K. Guo", "C. Zhang", "S.-Y. Zhou"),
     "title": "Generalized positivity bounds on chiral perturbation theory",
     "eprint": "2004.03992", "year": 2020},
)
