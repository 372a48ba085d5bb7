"""Shared helpers for the tests of the dimension-8 cone theories."""

from __future__ import annotations

import numpy as np

from eftsieve.bounds.cones import ConeProblem
from eftsieve.bounds.contact import ModeSet, exchange_forward_tensor


def coefficients_of(problem: ConeProblem, tensor: np.ndarray) -> tuple[np.ndarray, float]:
    """c with M(c) = tensor (least squares) and the relative residual (0 if in the span)."""
    a = problem.tensors.reshape(problem.k, -1).T
    c, *_ = np.linalg.lstsq(a, tensor.ravel(), rcond=None)
    resid = float(np.linalg.norm(a @ c - tensor.ravel()) / np.linalg.norm(tensor))
    return c, resid


def exchange(problem: ConeProblem, modes: ModeSet, currents, mass: float, spin: int,
             ) -> tuple[np.ndarray, float]:
    """Coefficients of the sum of tree exchanges of heavy states coupled to ``currents``."""
    total = sum(exchange_forward_tensor(j, modes, mass, spin) for j in currents)
    return coefficients_of(problem, total)


def min_margin(region, c: np.ndarray) -> float:
    """Smallest n . c / |c| over the region's outer facets."""
    a, _ = region.arrays()
    return float((a @ c).min() / np.linalg.norm(c))
