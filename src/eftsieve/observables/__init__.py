"""Observables computed from the theories' amplitudes.

:mod:`eftsieve.observables.threshold` gives the pi-pi threshold parameters a_l^I, b_l^I
of one-loop SU(2) ChPT (names ``f"{kind}{I}_{l}"``, units of M_pi).
"""

from __future__ import annotations

from eftsieve.observables.threshold import (
    OBSERVABLES,
    ThresholdParameter,
    threshold_parameter,
    threshold_parameters,
)

__all__ = ["OBSERVABLES", "ThresholdParameter", "threshold_parameter", "threshold_parameters"]
