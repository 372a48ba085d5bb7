"""The papers behind ``chpt-su3``: its Lagrangian and its two bound families.

Read by ``eftsieve cite``.  Titles, authors and arXiv ids were checked against the
arXiv abstract pages; journal data are given only where they were checked too.
"""

from __future__ import annotations

from typing import Any

REFERENCES: tuple[dict[str, Any], ...] = (
    {"key": "GasserLeutwyler1985", "authors": ("J. Gasser", "H. Leutwyler"),
     "title": "Chiral Perturbation Theory: Expansions in the Mass of the Strange Quark",
     "journal": "Nucl. Phys. B", "volume": "250", "pages": "465", "year": 1985},
    {"key": "ManoharMateu2008", "authors": ("A. V. Manohar", "V. Mateu"),
     "title": r"Dispersion Relation Bounds for $\pi\pi$ Scattering", "eprint": "0801.3222",
     "year": 2008},
    {"key": "Mateu2008", "authors": ("V. Mateu",),
     "title": "Universal Bounds for SU(3) Low Energy Constants", "eprint": "0801.3627",
     "year": 2008},
    {"key": "deRham2017", "authors": ("C. de Rham", "S. Melville", "A. J. Tolley",
                                      "S.-Y. Zhou"),
     "title": "Positivity Bounds for Scalar Theories", "eprint": "1702.06134", "year": 2017},
)
