"""Per-point verdicts against a region, vectorised over samples, and streamed over files.

:func:`classify` gives each point its verdict (``inside``, ``marginal``, ``outside``),
its minimum signed margin and the most violated facet.  The marginal band is
``CheckSettings.marginal_band`` (in the region's coordinates, along the facet's unit
normal).  With an inner set (regions whose inner and outer boundaries differ), a point
is ``inside`` when it is inside the inner set by more than the band, ``outside`` when it
violates an outer facet by more than the band, and ``marginal`` otherwise; where the
outer facets are the inner ones relaxed by a truncation allowance (their certificates
carry ``truncation_shift``), a point between them is ``uncertain``.

:func:`run_check` streams a fit's samples (or draws a Gaussian summary with an explicit
seed), accumulates the statistics of :mod:`eftsieve.stats.accumulate`, and writes the flagged rows
as it goes, so memory stays bounded whatever the file size.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.region.model import Region
from eftsieve.tolerances import MARGINAL_BAND

INSIDE, MARGINAL, OUTSIDE, UNCERTAIN = 0, 1, 2, 3
VERDICT_NAMES = ("inside", "marginal", "outside", "uncertain")


@dataclass(frozen=True)
class CheckSettings:
    """Settings of a check run.

    Attributes
    ----------
    draws
        Draws from a Gaussian summary.
    seed
        Seed of every random number used.
    marginal_band
        Points within this distance of a facet are ``marginal``; None (the default) takes
        the band of the region's theory (:meth:`band`).
    chunk_rows
        Rows read per chunk from a samples file.
    plot_points
        Size of the uniform subsample kept for plots.
    flagged_format
        ``csv`` (flagged.csv) or ``parquet`` (flagged.parquet) for the rows not inside.
    flagged_limit
        Write at most this many flagged rows (the first in row order; None: all).
    flagged_margins
        Also write each flagged row's margin to every facet (off by default: the file
        then grows with the facet count; the margins follow from the coordinates).
    blas_threads
        BLAS threads inside the check (1 by default: the streaming check multiplies
        n x 2 arrays, where threads only spin; None leaves the process's setting).
    shell_solves
        Exact solves allowed **per partition** (one file of a samples source, or the
        whole of a Gaussian summary's draws) for regions that can decide their shell
        (positivity cones, :mod:`eftsieve.check.shell`); shell points beyond it stay
        ``marginal`` ("shell-solve budget reached").  One exact decision takes about
        1 ms (4 modes) to 20 ms (12 modes) on one core (``make bench``), so the default
        1000 bounds the cost at well under a minute; 0 solves nothing.
    """

    draws: int = 200_000
    seed: int = 0
    marginal_band: float | None = None
    chunk_rows: int = 1_000_000
    plot_points: int = 50_000
    flagged_format: str = "csv"
    flagged_margins: bool = False
    flagged_limit: int | None = None
    blas_threads: int | None = 1
    shell_solves: int = 1000

    def __post_init__(self) -> None:
        import math

        from eftsieve.errors import InputError

        if self.flagged_format not in ("csv", "parquet"):
            raise InputError(None, "--flagged-format", f"unknown format "
                             f"'{self.flagged_format}'", "use csv or parquet")

        if self.flagged_limit is not None and int(self.flagged_limit) < 0:
            raise InputError(None, "--flagged-limit", f"must be 0 or more, got "
                             f"{self.flagged_limit}", "give a row count, or leave it out")
        for name in ("draws", "chunk_rows", "plot_points"):
            if int(getattr(self, name)) < 1:
                raise InputError(None, name, f"must be at least 1, got {getattr(self, name)}",
                                 "give a positive number")
        if int(self.shell_solves) < 0:
            raise InputError(None, "--shell-solves", f"must be 0 or more, got "
                             f"{self.shell_solves}", "give a number of solves, 0 for none")
        if int(self.seed) < 0:
            raise InputError(None, "seed", f"must be 0 or more, got {self.seed}", "")
        band = self.marginal_band
        if band is not None and not (math.isfinite(band) and band >= 0):
            raise InputError(None, "marginal_band", f"must be a finite number >= 0, got {band}",
                             "give a band in region coordinates, or None")

    def band(self, region: Region) -> float:
        """The marginal band for ``region``: the one given, else its theory's default
        (:data:`eftsieve.tolerances.MARGINAL_BAND` for O(1) coordinates)."""
        if self.marginal_band is not None:
            return float(self.marginal_band)
        from eftsieve.theories import get_theory

        try:
            return float(get_theory(region.theory).marginal_band(region))
        except KeyError:
            return MARGINAL_BAND

    def to_dict(self) -> dict[str, Any]:
        return {"draws": self.draws, "seed": self.seed, "marginal_band": self.marginal_band,
                "chunk_rows": self.chunk_rows, "plot_points": self.plot_points,
                "flagged_format": self.flagged_format,
                "flagged_margins": self.flagged_margins, "flagged_limit": self.flagged_limit,
                "shell_solves": self.shell_solves}


@dataclass(frozen=True)
class Verdicts:
    """Verdicts of a block of points.

    Attributes
    ----------
    verdict
        0 inside, 1 marginal, 2 outside, 3 uncertain (int8, shape (n,)); ``uncertain``
        only under a theory-uncertainty model (:mod:`eftsieve.stats.truncation`).
    min_margin
        The smallest signed margin over the outer facets (positive inside).
    worst
        Index of the facet with the smallest margin (the first of equal ones); -1 on
        rows that are inside with no negative margin when :func:`classify` was asked
        for the flagged rows' facets only (``all_worst=False``).
    satisfies
        True where every outer facet holds (margin >= 0).
    """

    verdict: np.ndarray
    min_margin: np.ndarray
    worst: np.ndarray
    satisfies: np.ndarray

    def counts(self) -> dict[str, int]:
        c = np.bincount(self.verdict, minlength=4)
        out = {"n_inside": int(c[0]), "n_marginal": int(c[1]), "n_outside": int(c[2])}
        if c[3]:
            out["n_uncertain"] = int(c[3])
        return out

    def to_dict(self) -> dict[str, Any]:
        return {"verdict": [VERDICT_NAMES[v] for v in self.verdict],
                "min_margin": self.min_margin.tolist(), "worst": self.worst.tolist()}


#: up to this many facets the margins are formed one facet at a time (O(n) memory)
FEW_FACETS = 8
#: cells (rows x facets) of one tile of the many-facet path (2 MiB: within the L2/L3 cache)
TILE_CELLS = 1 << 18
#: cells of one single-precision tile of the BLAS screen (4 MiB; 4096-5800 rows at 181
#: facets ran fastest, benchmarks/bench_cones.py)
TILE_CELLS_SINGLE = 1 << 20
#: facets with at most this many nonzero coefficients on average (and fewer than the
#: dimension, so that there are zeros to skip) take the per-facet path whatever their
#: number (sparse facets, e.g. of a product of independent cones)
SPARSE_TERMS = 3


def _min_margin(y: np.ndarray, a: np.ndarray, b: np.ndarray, with_arg: bool = True,
                cols: list[np.ndarray] | None = None,
                ) -> tuple[np.ndarray, np.ndarray | None]:
    """Smallest margin ``min_j (a_j . y - b_j)`` and its (first) facet (None unless
    ``with_arg``: the inner set needs only the margin), per row.

    Every margin is ``((y_0 a_j0 + y_1 a_j1) + ...) - b_j`` in element-wise double
    arithmetic, whichever path runs, so the values (and ties, resolved to the lowest
    facet) have the same bits for any batch of rows.  Few (or sparse) facets: one facet
    at a time, skipping zero coefficients (for finite points adding ``0 * y`` changes no
    value); many: tiles of (facets x rows) reduced along the facet axis.
    """
    if not _few_facets(a, b):
        return _min_margin_tiled(y, a, b, with_arg)
    n = len(y)
    best = np.empty(n) if len(b) else np.full(n, np.inf)
    arg = np.zeros(n, dtype=np.int32) if with_arg else None
    if cols is None:
        cols = _columns(y)
    m, term = np.empty(n), np.empty(n)
    for j in range(len(b)):
        nz = np.flatnonzero(a[j]) if np.any(a[j]) else np.zeros(1, dtype=int)
        out = best if j == 0 else m  # the first facet's margins are the minimum so far
        np.multiply(cols[nz[0]], a[j, nz[0]], out=out)
        for k in nz[1:]:
            np.multiply(cols[k], a[j, k], out=term)
            out += term
        out -= b[j]
        if j == 0:
            continue
        if arg is not None:
            arg[m < best] = j
        np.minimum(best, m, out=best)
    return best, arg


def _columns(y: np.ndarray) -> list[np.ndarray]:
    """The columns of ``y`` as contiguous arrays (formed once per block)."""
    return [np.ascontiguousarray(y[:, k]) for k in range(y.shape[1])]


#: coordinates from which the many-facet path screens with one BLAS product per tile
BLAS_MIN_DIM = 7


def _min_margin_tiled(y: np.ndarray, a: np.ndarray, b: np.ndarray, with_arg: bool = True
                      ) -> tuple[np.ndarray, np.ndarray | None]:
    """Tiles of (rows x facets), reduced along the contiguous facet axis: one argmin pass
    and a gather (about 1.9x faster than reducing (facets x rows) tiles along rows, and
    faster than one BLAS ``y @ a.T`` pass at 100 facets; benchmarks/bench_stream.py).
    From :data:`BLAS_MIN_DIM` coordinates the BLAS screen of :func:`_min_margin_blas`
    finds the same values and facets faster."""
    if a.shape[1] >= BLAS_MIN_DIM:
        return _min_margin_blas(y, a, b, with_arg)
    return _min_margin_elementwise(y, a, b, with_arg)


def _min_margin_blas(y: np.ndarray, a: np.ndarray, b: np.ndarray, with_arg: bool = True
                     ) -> tuple[np.ndarray, np.ndarray | None]:
    """The element-wise minimum margin and its facet, bit for bit, with the facet found by
    one single-precision BLAS product per tile.

    The screen rounds y, a and b to float32 and forms the (facets x rows) tile of margins
    with one ``sgemm``, b entering as a (k+1)-th term (so that no pass subtracts it), in
    any order of summation.  Its margins lie within
    E = gamma_(k+6) (|y|_1 max|a| + max|b|) + (k+2) 2^-149 of the exact ones
    (gamma_n = n u / (1 - n u) with the float32 unit roundoff u = 2^-24; Higham, "Accuracy
    and Stability of Numerical Algorithms", 2nd ed., Sec. 3.1, the bound for a sum in any
    order, from memory; k+1 terms, and the extra u cover the three conversions and their
    products, the last term the absolute error of subnormal products), and so do the
    element-wise double margins (a smaller bound).  A row whose screened margins have one
    facet at or below min + 5E (the threshold rounded up to float32; 4E would do) has
    that facet as its element-wise argmin, and its margin is then recomputed element-wise
    in double for that facet alone.  The facet is found without an argmin: a count and an
    index-weighted sum of the (facet <= threshold) mask along the facet axis, both
    contiguous reductions.  The other rows (near-ties, non-finite values, and rows so
    large that float32 could overflow) take the element-wise path, together, after the
    tiles.  The result does not depend on the batch.  Single precision halves the
    product's time and the memory the reductions stream through, and the (facets x rows)
    layout turns the per-row reductions over the short facet axis into element-wise ones
    (about 1.4x the former (rows x facets) argmin at 181 facets in 18 coordinates;
    benchmarks/bench_cones.py); the double screen before them gave the same bits.
    """
    n, k = y.shape
    nf = len(b)
    best = np.empty(n)
    arg = np.empty(n, dtype=np.intp)
    u = 2.0 ** -24
    gamma = (k + 6) * u / (1 - (k + 6) * u)
    tiny = (k + 2) * 2.0 ** -149
    amax, bmax = float(np.abs(a).max()), float(np.abs(b).max())
    aug = np.empty((nf, k + 1), dtype=np.float32)
    aug[:, :k] = a
    aug[:, k] = -b
    # the count and the index sum of a row with one candidate fit this type exactly
    # (rows with more candidates are not used, so their wrap-around is harmless)
    idt = np.uint8 if nf < 1 << 8 else np.uint16 if nf < 1 << 16 else np.uint32
    index = np.arange(nf, dtype=idt)[:, None]
    # |y|_1 max|a| + max|b| below this cannot overflow float32 (max 3.4e38) on the way
    safe = 1e36
    ones = np.ones(k)
    step = max(512, TILE_CELLS_SINGLE // nf)
    ya = np.empty((min(step, n), k + 1), dtype=np.float32)
    ya[:, k] = 1.0
    rest = []
    for lo in range(0, n, step):
        hi = min(n, lo + step)
        yt = y[lo:hi]
        # |y|_1 by a BLAS product (a row sum of 18 terms is slow in numpy); its own
        # rounding, a few units of 1e-16, is covered by the 5E margin below
        size = (np.abs(yt) @ ones) * amax + bmax
        yw = ya[:hi - lo]
        with np.errstate(over="ignore", invalid="ignore"):
            yw[:, :k] = yt
            tile = aug @ yw.T
            v1 = tile.min(axis=0)
            thr = (v1 + 5.0 * (gamma * size + tiny)).astype(np.float32)
        thr = np.nextafter(thr, np.float32(np.inf))   # rounded up: never more rows pass
        mask = (tile <= thr).view(np.uint8)
        count = np.add.reduce(mask, axis=0, dtype=idt)
        with np.errstate(invalid="ignore"):           # non-finite rows: not ok, below
            ok = (count == 1) & np.isfinite(v1) & (size < safe)
        sel = np.add.reduce(mask * index, axis=0, dtype=idt)
        rows: slice | np.ndarray
        if ok.all():
            rows, ys = slice(lo, hi), yt
        else:
            okr = np.flatnonzero(ok)
            rest.append(lo + np.flatnonzero(~ok))
            sel = sel[okr]
            rows, ys = lo + okr, yt[okr]
        sel = sel.astype(np.intp)
        terms = (ys * a[sel]).T          # the products, then summed in column order
        m = terms[0].copy()
        for c in range(1, k):
            m += terms[c]
        m -= b[sel]
        best[rows] = m
        arg[rows] = sel
    if rest:
        bad = np.concatenate(rest)
        if len(bad):
            bv, ba = _min_margin_elementwise(y[bad], a, b, True)
            assert ba is not None
            best[bad] = bv
            arg[bad] = ba
    return best, arg.astype(np.int32) if with_arg else None


def _min_margin_elementwise(y: np.ndarray, a: np.ndarray, b: np.ndarray,
                            with_arg: bool = True) -> tuple[np.ndarray, np.ndarray | None]:
    """:func:`_min_margin_tiled` in element-wise double arithmetic, tile by tile."""
    n = len(y)
    best = np.empty(n)
    arg = np.empty(n, dtype=np.intp)
    step = max(256, TILE_CELLS // len(b))
    ac = [np.ascontiguousarray(a[:, k]) for k in range(a.shape[1])]
    for lo in range(0, n, step):
        hi = min(n, lo + step)
        tile = y[lo:hi, 0:1] * ac[0]
        for k in range(1, len(ac)):
            tile += y[lo:hi, k:k + 1] * ac[k]
        tile -= b
        am = tile.argmin(axis=1)
        arg[lo:hi] = am
        best[lo:hi] = tile[np.arange(hi - lo), am]
    return best, arg.astype(np.int32) if with_arg else None


def _few_facets(a: np.ndarray, b: np.ndarray) -> bool:
    """Whether :func:`_min_margin` takes the facet-by-facet path."""
    sparse_at = min(SPARSE_TERMS, a.shape[1] - 1) if a.ndim == 2 and a.shape[1] else 0
    return not (len(b) > FEW_FACETS and np.count_nonzero(a) > sparse_at * len(b))


def classify(y: np.ndarray, region: Region, band: float = MARGINAL_BAND, *,
             all_worst: bool = True) -> Verdicts:
    """Verdicts of points ``y`` (n, dim) in region coordinates.

    With ``all_worst=False`` the worst facet is found only for the rows that are not
    inside or have a negative margin (the rows a check writes or ranks), and is -1
    elsewhere.  Tracking the worst facet costs about as much as the margins themselves
    (a data-dependent store per facet and row), while a check needs it for few rows.
    Each row's margins are the same element-wise sums on any subset of rows, so the
    facets found are the same as with ``all_worst=True``.
    """
    y = np.asarray(y, dtype=float)
    if y.ndim != 2 or y.shape[1] != region.dim:
        raise ValueError(f"points must have shape (n, {region.dim}), got {y.shape}")
    a, b = region.arrays()
    ai, bi = region.arrays(inner=True) if region.inner_facets else (a, b)
    # contiguous columns serve the facet-by-facet path only (18 copies of a block cost
    # about a tenth of the many-facet path's time)
    cols = _columns(y) if _few_facets(a, b) or _few_facets(ai, bi) else None
    lazy = not all_worst and _few_facets(a, b)
    outer, worst = _min_margin(y, a, b, with_arg=not lazy, cols=cols)
    verdict = np.full(len(y), MARGINAL, dtype=np.int8)
    out = outer < -band
    verdict[out] = OUTSIDE
    if region.inner_facets:
        # a point outside a verified outer facet is outside, whatever the inner facets say
        # (the inner set lies within the outer one): the inner test runs on the rest only
        if 2 * np.count_nonzero(out) < len(y):
            # most rows remain: evaluate every row (a gather and a scatter would cost
            # more than the rows they save) and overrule the outside ones
            inner, _ = _min_margin(y, ai, bi, with_arg=False, cols=cols)
            inner[out] = -np.inf
        else:
            inner = np.full(len(y), -np.inf)
            rest = np.flatnonzero(~out)
            if len(rest):
                inner[rest] = _min_margin(y[rest], ai, bi, with_arg=False, cols=None
                                          if cols is None else [c[rest] for c in cols])[0]
    else:
        inner = outer
    verdict[inner > band] = INSIDE
    if region.inner_facets and any("truncation_shift" in f.extra for f in region.facets):
        # the gap between inner and outer facets is a truncation allowance (chpt-su2)
        verdict[(outer > band) & (inner <= band)] = UNCERTAIN
    if worst is None:  # lazy: the worst facet of the rows a check keeps, -1 elsewhere
        worst = np.full(len(y), -1, dtype=np.int32)
        need = np.flatnonzero((verdict != INSIDE) | (outer < 0))
        if len(need):
            _, sub = _min_margin(y[need], a, b, cols=None if cols is None
                                 else [c[need] for c in cols])
            if sub is not None:
                worst[need] = sub
    return Verdicts(verdict, outer, worst, outer >= 0)
