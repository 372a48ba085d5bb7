"""Truncation allowance of the chpt-su2 facets, calibrated on loop-consistent models.

The one-loop facets are exact statements about the O(p^4) amplitude; the true amplitude
differs at O(p^6).  docs/truncation_study.py measures, for every facet, its *truncation
shift*: the offset minus the exact facet of amplitudes "one loop + the O(p^6) remainder
of a loop-consistent model" (the one-loop amplitude with Jbar cut off at Lambda and the
polynomial fixed by the twice-subtracted dispersion relation; exactly positive, see
docs/physics.md, Sec. "Truncation study").  The shift is positive (the one-loop facets
are too strong for these models) and scales like (M_pi/Lambda)^2.

The default region of ``chpt-su2`` (truncation model ``loop-consistent``) keeps the
one-loop facets as its inner set (``inside``) and relaxes its outer facets by the shift
of a model whose two-pion continuum is chiral up to the heavy scale Lambda_h
(default 770 MeV, the rho mass; from memory), so that points between them are
``uncertain`` and only points beyond the relaxed facets are ``outside``.

The table below is printed by ``docs/truncation_study.py`` (default scan of the facets,
161 x 81 domain grid of the models); tests/theories/test_truncation_default.py
recomputes part of it.
"""

from __future__ import annotations

import math

import numpy as np

TRUNCATION_MODELS = ("loop-consistent", "none")
#: Lambda_h: the heavy scale up to which the two-pion continuum is taken to be chiral;
#: the rho mass, 770 MeV (PDG, from memory), held fixed as M_pi grows (conservative: on
#: the lattice the rho becomes heavier with the pion mass).
HEAVY_SCALE_MEV = 770.0

#: Lambda/M_pi at which the shifts are tabulated
RATIOS = (2.3, 2.5, 2.75, 3.0, 3.5, 4.0, 5.0, 5.52, 6.5, 8.0, 10.0, 14.0, 20.0, 40.0)
#: truncation shift of each (family, channel) facet, in the facet's own normalisation
#: (smallest normal entry 1), at each ratio of RATIOS (docs/truncation_study.md)
SHIFTS = {
    ("second-derivative", "pi+ pi0"): (0.4522, 0.4016, 0.3453, 0.2981, 0.2266, 0.1770, 0.1158,
                                       0.0957, 0.0696, 0.0463, 0.0297, 0.0152, 0.0075, 0.0019),
    ("second-derivative", "pi+ pi+"): (1.5779, 1.4210, 1.2415, 1.0867, 0.8450, 0.6717, 0.4501,
                                       0.3752, 0.2760, 0.1856, 0.1205, 0.0622, 0.0307, 0.0077),
    ("second-derivative", "pi0 pi0"): (0.8239, 0.7408, 0.6452, 0.5627, 0.4341, 0.3425, 0.2267,
                                       0.1880, 0.1374, 0.0917, 0.0592, 0.0304, 0.0149, 0.0037),
    ("t-derivative", "pi+ pi0"): (0.7547, 0.6821, 0.5970, 0.5226, 0.4052, 0.3206, 0.2130,
                                  0.1768, 0.1293, 0.0865, 0.0558, 0.0287, 0.0141, 0.0035),
    ("t-derivative", "pi+ pi+"): (3.3396, 3.0412, 2.6868, 2.3722, 1.8666, 1.4950, 1.0107,
                                  0.8446, 0.6240, 0.4211, 0.2738, 0.1417, 0.0701, 0.0177),
    ("t-derivative", "pi0 pi0"): (2.3121, 2.0957, 1.8412, 1.6173, 1.2609, 1.0020, 0.6692,
                                  0.5564, 0.4081, 0.2734, 0.1768, 0.0910, 0.0448, 0.0112),
}
#: pi+ pi- and pi+ pi+ are related by s <-> u and have the same facet
_SAME = {"pi+ pi-": "pi+ pi+"}


def truncation_shift(family: str, channel: str, pion_mass_mev: float,
                     heavy_scale_mev: float = HEAVY_SCALE_MEV) -> float:
    """The truncation shift of a one-loop facet at Lambda_h / M_pi (lbar units).

    Interpolated in log-log between the tabulated ratios (the shift is a smooth power
    law, close to (M/Lambda)^2); outside the table it is continued as (M/Lambda)^2.
    Below the smallest ratio (M_pi > Lambda_h/2.3, above the pion-mass warning) that
    continuation is not calibrated: the heavy scale is then within 15% of the two-pion
    threshold, where no chiral estimate holds.
    """
    ratio = heavy_scale_mev / pion_mass_mev
    vals = np.asarray(SHIFTS[(family, _SAME.get(channel, channel))])
    grid = np.asarray(RATIOS)
    if ratio < grid[0]:
        return float(vals[0] * (grid[0] / ratio) ** 2)
    if ratio >= grid[-1]:
        return float(vals[-1] * (grid[-1] / ratio) ** 2)
    return float(math.exp(np.interp(math.log(ratio), np.log(grid), np.log(vals))))


def max_pion_mass_mev(heavy_scale_mev: float = HEAVY_SCALE_MEV) -> float:
    """The largest pion mass at which the allowance is calibrated (Lambda_h/2.3)."""
    return heavy_scale_mev / RATIOS[0]
