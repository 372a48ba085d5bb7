"""The papers behind ``aqgc-dim8`` (the 18 dimension-8 quartic-gauge-coupling operators),
on the positivity-cone engine.  Read by ``eftsieve cite``.  Titles, authors and arXiv ids
are from memory where marked; shared entries come from
:mod:`eftsieve.theories.cone_references`.
"""

from __future__ import annotations

from typing import Any

from eftsieve.theories.cone_references import LI_2021, ZHANG_ZHOU_2020

EBOLI_2006: dict[str, Any] = {
    "key": "Eboli2006", "authors": ("O. J. P. Eboli", "M. C. Gonzalez-Garcia",
                                    "J. K. Mizukoshi"),
    "title": "pp -> jj e+- mu+- nu nu and jj e+- mu-+ nu nu at O(alpha_em^6) and "
             "O(alpha_em^4 alpha_s^2) for the study of the quartic electroweak gauge boson "
             "vertex at CERN LHC (from memory)", "eprint": "hep-ph/0606118", "year": 2006}
EBOLI_2016: dict[str, Any] = {
    "key": "Eboli2016", "authors": ("O. J. P. Eboli", "M. C. Gonzalez-Garcia"),
    "title": "Classifying the bosonic quartic couplings (from memory)",
    "eprint": "1604.03555", "year": 2016}
ZHANG_ZHOU_2018: dict[str, Any] = {
    "key": "ZhangZhou2018", "authors": ("C. Zhang", "S.-Y. Zhou"),
    "title": "Positivity bounds on vector boson scattering at the LHC",
    "eprint": "1808.00010", "year": 2018}
BI_2019: dict[str, Any] = {
    "key": "Bi2019", "authors": ("Q. Bi", "C. Zhang", "S.-Y. Zhou"),
    "title": "Positivity constraints on aQGC: carving out the physical parameter space",
    "eprint": "1902.08977", "year": 2019}

REFERENCES: tuple[dict[str, Any], ...] = (EBOLI_2006, EBOLI_2016, ZHANG_ZHOU_2018, BI_2019,
                                          ZHANG_ZHOU_2020, LI_2021)
