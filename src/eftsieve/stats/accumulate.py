"""Streaming weighted sums of a check: counts, the probability inside and its errors.

:class:`Accumulator` adds the sums of whole blocks of rows (:class:`BlockSums`, made by
:func:`block_sums` in every engine) in row order: counts, the probability inside with
its Monte-Carlo error (ratio-estimator delta method), the Kish effective sample size
(Kish, "Survey Sampling", Wiley 1965), and the weighted mean and covariance in the
region's coordinates.  :meth:`Accumulator.batch_means` gives the error of the
probability inside for correlated draws (MCMC chains in draw order): non-overlapping
batch means with batches of about sqrt(n) rows (Flegal & Jones, "Batch means and
spectral variance estimators in Markov chain Monte Carlo", Ann. Statist. 38 (2010)
1034; from memory), and the integrated autocorrelation time of the inside indicator
that it implies.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.stats.ess import kish_ess_from_sums

BLOCK = 1 << 16
#: rows per elementary batch of the batch-means error (divides BLOCK)
BATCH = 256
#: fewer batches than this give no batch-means estimate (its variance would be too noisy)
MIN_BATCHES = 20
#: verdict codes counted per block (inside, marginal, outside, uncertain)
N_VERDICTS = 4


def run_sums(values: np.ndarray) -> np.ndarray:
    """Sums of ``values`` over consecutive runs of :data:`BATCH` rows (the elementary
    batches of the batch-means error), the first run starting at row 0."""
    if len(values) == 0:
        return np.zeros(0)
    return np.add.reduceat(values, np.arange(0, len(values), BATCH))


def batch_sums(w: np.ndarray, satisfies: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sums of w and of w over the rows inside, per run of :data:`BATCH` rows of a block.

    Runs start at the first row of the block, so the sums do not depend on chunk sizes;
    every engine calls this same function on the same blocks (the same bits).
    """
    return run_sums(w), run_sums(np.where(satisfies, w, 0.0))


def ratio_batch_variance(num: np.ndarray, den: np.ndarray, n_rows: int
                         ) -> tuple[float, int, int]:
    """Batch-means variance of the ratio estimator r = sum num / sum den.

    ``num``, ``den`` are sums over elementary batches of :data:`BATCH` consecutive rows,
    in row order; they are merged into batches of about sqrt(n_rows) rows and
    var(r) = k/(k - 1) sum_j (A_j - r W_j)^2 / (sum W)^2 over the k batches (module
    docstring).  Returns (variance, k, rows per batch); the variance is NaN with fewer
    than :data:`MIN_BATCHES` batches or without weight.
    """
    group = max(1, round(math.sqrt(n_rows) / BATCH))
    starts = np.arange(0, len(den), group)
    k = len(starts)
    total = float(den.sum()) if len(den) else 0.0
    if k < MIN_BATCHES or not total > 0:
        return float("nan"), k, group * BATCH
    big_a, big_w = np.add.reduceat(num, starts), np.add.reduceat(den, starts)
    r = float(num.sum()) / total
    var = k / (k - 1) * float(np.sum((big_a - r * big_w) ** 2)) / total**2
    return var, k, group * BATCH


@dataclass(frozen=True)
class BatchMeans:
    """The batch-means error of the probability inside (correlated draws).

    Attributes
    ----------
    std_error
        Standard error of P(inside) from the spread of the batch estimates (NaN with
        fewer than :data:`MIN_BATCHES` batches, or when every row is on one side).
    tau
        Integrated autocorrelation time of the inside indicator, the ratio of the
        batch-means variance to the variance for independent draws (about 1 for
        independent draws; NaN when either is undefined).
    n_batches, batch_rows
        Number of batches and rows per batch (the last batches of a file may be short).
    """

    std_error: float
    tau: float
    n_batches: int
    batch_rows: int

    def to_dict(self) -> dict[str, Any]:
        """Summary fields; undefined values are None (JSON null)."""
        def fin(v: float) -> float | None:
            return v if math.isfinite(v) else None
        return {"p_inside_mc_err_batch": fin(self.std_error), "tau_inside": fin(self.tau),
                "n_batches": self.n_batches, "batch_rows": self.batch_rows}


@dataclass
class Accumulator:
    """Weighted sums for the probability inside and the moments, block by block.

    Rows are summed in fixed blocks of :data:`BLOCK` consecutive rows (:func:`block_sums`),
    whatever the chunk sizes of the input, so every engine gives bit-identical results.
    """

    dim: int
    n_total: int = 0
    counts: np.ndarray = field(default_factory=lambda: np.zeros(4, dtype=np.int64))
    sw: float = 0.0
    sw2: float = 0.0
    sw_in: float = 0.0
    sw_in_inner: float = 0.0
    sw2_in: float = 0.0
    sw_soft: float = 0.0
    sw2_soft_dev: float = 0.0
    sw2p: float = 0.0
    mean_sum: np.ndarray | None = None
    outer_sum: np.ndarray | None = None
    batch_w: list = field(default_factory=list)
    batch_in: list = field(default_factory=list)

    @classmethod
    def from_arrays(cls, y: np.ndarray, w: np.ndarray | None, verdict: np.ndarray,
                    satisfies: np.ndarray, soft: np.ndarray | None = None) -> Accumulator:
        """The sums of rows held in memory, cut into blocks of :data:`BLOCK` rows as every
        engine cuts them (so the same bits as a streamed check of the same rows)."""
        acc = cls(y.shape[1])
        for lo in range(0, len(y), BLOCK):
            sl = slice(lo, lo + BLOCK)
            acc.absorb(block_sums(y[sl], None if w is None else w[sl], verdict[sl],
                                  satisfies[sl], None if soft is None else soft[sl]))
        return acc

    def absorb(self, b: BlockSums) -> None:
        """Add one block's sums; blocks must come in row order (every engine calls this,
        with blocks cut the same way, so every sum has the same bits in every engine)."""
        self.n_total += b.n
        self.counts += b.counts
        self.sw += b.sw
        self.sw2 += b.sw2
        self.sw_in += b.sw_in
        self.sw2_in += b.sw2_in
        self.sw_in_inner += b.sw_in_inner
        self.sw_soft += b.sw_soft
        self.sw2p += b.sw2p
        self.sw2_soft_dev += b.sw2_soft_dev
        self.mean_sum = b.mean_sum.copy() if self.mean_sum is None else self.mean_sum + b.mean_sum
        self.outer_sum = (b.outer_sum.copy() if self.outer_sum is None
                          else self.outer_sum + b.outer_sum)
        self.batch_w.append(b.batch_w)
        self.batch_in.append(b.batch_in)

    def p_inside(self) -> tuple[float, float]:
        """P(inside) and its Monte-Carlo standard error (delta method for the ratio)."""
        if self.sw <= 0:
            return float("nan"), float("nan")
        p = self.sw_in / self.sw
        # sum w^2 (I - p)^2 = sum_in w^2 (1-p)^2 + sum_out w^2 p^2
        var_num = self.sw2_in * (1 - p) ** 2 + (self.sw2 - self.sw2_in) * p**2
        return p, math.sqrt(var_num) / self.sw

    def p_soft(self) -> tuple[float, float]:
        """E[P(satisfies)] over the samples and its Monte-Carlo error (delta method)."""
        if self.sw <= 0:
            return float("nan"), float("nan")
        p = self.sw_soft / self.sw
        # sum w^2 (P_i - p)^2 = sum w^2 P^2 - 2 p sum w^2 P + p^2 sum w^2; bound sum w^2 P by
        # using sum w^2 P <= sqrt(sum w^2 P^2 sum w^2) is loose, so keep the exact pieces
        var = max(self.sw2_soft_dev - 2 * p * self.sw2p + p * p * self.sw2, 0.0)
        return p, math.sqrt(var) / self.sw

    def batch_means(self) -> BatchMeans:
        """Standard error of P(inside) for correlated draws, by batch means.

        Elementary batches are merged, in row order, into batches of about sqrt(n) rows;
        with batch sums A_j = sum w I and W_j = sum w, the ratio estimator p = sum A / sum W
        has variance k/(k - 1) sum_j (A_j - p W_j)^2 / (sum W)^2 over the k batches.  The
        rows must be in draw order within each chain (chains one after another); draws
        of several walkers interleaved step by step are correlated over more rows, and
        the estimate is then too small unless sqrt(n) rows span many autocorrelation
        times of the whole ensemble.
        """
        bw = np.concatenate(self.batch_w) if self.batch_w else np.zeros(0)
        bi = np.concatenate(self.batch_in) if self.batch_in else np.zeros(0)
        var, k, rows = ratio_batch_variance(bi, bw, self.n_total)
        iid = self.p_inside()[1]
        tau = var / iid**2 if iid > 0 else float("nan")
        err = math.sqrt(var) if var > 0 else float("nan")
        return BatchMeans(err, tau, k, rows)

    def ess(self) -> float:
        return kish_ess_from_sums(self.sw, self.sw2)

    def moments(self) -> tuple[np.ndarray, np.ndarray]:
        if self.mean_sum is None or self.outer_sum is None:
            raise ValueError("no rows were summed: the moments are undefined")
        mean = self.mean_sum / self.sw
        cov = self.outer_sum / self.sw - np.outer(mean, mean)
        return mean, (cov + cov.T) / 2

@dataclass(frozen=True)
class BlockSums:
    """The weighted sums of one block of rows (hard verdicts, no uncertainty model).

    Attributes
    ----------
    n
        Rows in the block.
    counts
        Rows per verdict (int64, one entry per :data:`eftsieve.check.verdicts.VERDICT_NAMES`).
    sw, sw2
        Sum of the weights and of their squares.
    sw_in, sw2_in
        The same over rows that satisfy every outer facet.
    sw_in_inner
        Sum of the weights of rows with verdict ``inside``.
    sw_soft, sw2p, sw2_soft_dev
        Sums of w P, w^2 P and w^2 P^2 with P = 1 where every facet holds, else 0 (the
        accumulator's probability sums without an uncertainty model).
    mean_sum
        Sum of w y, shape (k,).
    outer_sum
        Sum of w y y^T, shape (k, k), exactly symmetric.
    batch_w, batch_in
        Sums of w and of w over rows inside per elementary batch
        (:func:`eftsieve.stats.accumulate.batch_sums`).
    """

    n: int
    counts: np.ndarray
    sw: float
    sw2: float
    sw_in: float
    sw2_in: float
    sw_in_inner: float
    sw_soft: float
    sw2p: float
    sw2_soft_dev: float
    mean_sum: np.ndarray
    outer_sum: np.ndarray
    batch_w: np.ndarray
    batch_in: np.ndarray

    def to_dict(self) -> dict[str, Any]:
        return {"n": self.n, "counts": self.counts.tolist(), "sw": self.sw, "sw2": self.sw2,
                "sw_in": self.sw_in, "sw2_in": self.sw2_in, "sw_in_inner": self.sw_in_inner,
                "sw_soft": self.sw_soft, "sw2p": self.sw2p,
                "sw2_soft_dev": self.sw2_soft_dev, "mean_sum": self.mean_sum.tolist(),
                "outer_sum": self.outer_sum.tolist(), "batch_w": self.batch_w.tolist(),
                "batch_in": self.batch_in.tolist()}


def block_sums(y: np.ndarray, w: np.ndarray | None, verdict: np.ndarray,
               satisfies: np.ndarray, soft: np.ndarray | None = None) -> BlockSums:
    """The sums of one block (points ``y`` (n, k) in region coordinates), BLAS-free.

    The scalar sums that the accumulator forms with numpy reductions are the same
    expressions here (so the same bits); its dot and matrix products are replaced by
    element-wise products and one pairwise reduction each.  Without weights and without
    an uncertainty model every weight sum is a count, exact in a double (below 2**53), so
    counts replace the reductions over ones with the same bits.
    """
    if w is None and soft is None:
        return _unweighted_sums(y, verdict, satisfies)
    ww = np.ones(len(y)) if w is None else np.asarray(w, dtype=float)
    k = y.shape[1]
    cols = [np.ascontiguousarray(y[:, i]) for i in range(k)]
    wy = [ww * c for c in cols]
    mean = np.array([float(v.sum()) for v in wy])
    outer = np.empty((k, k))
    for i in range(k):
        for j in range(i, k):
            outer[i, j] = outer[j, i] = float((wy[i] * cols[j]).sum())
    w2 = ww * ww
    sp = satisfies.astype(float) if soft is None else np.asarray(soft, dtype=float)
    bw, bi = batch_sums(ww, satisfies)
    return BlockSums(
        n=len(y), counts=np.bincount(verdict, minlength=N_VERDICTS).astype(np.int64),
        sw=float(ww.sum()), sw2=float(w2.sum()), sw_in=float(ww[satisfies].sum()),
        sw2_in=float((ww[satisfies] ** 2).sum()), sw_in_inner=float(ww[verdict == 0].sum()),
        sw_soft=float((ww * sp).sum()), sw2p=float((w2 * sp).sum()),
        sw2_soft_dev=float((w2 * (sp * sp)).sum()), mean_sum=mean, outer_sum=outer,
        batch_w=bw, batch_in=bi)


def _unweighted_sums(y: np.ndarray, verdict: np.ndarray, satisfies: np.ndarray) -> BlockSums:
    """:func:`block_sums` with unit weights and hard verdicts: counts for the weight sums
    (w * c is c exactly, so the moments are the same reductions)."""
    n, k = y.shape
    cols = [np.ascontiguousarray(y[:, i]) for i in range(k)]
    mean = np.array([float(c.sum()) for c in cols])
    outer = np.empty((k, k))
    for i in range(k):
        for j in range(i, k):
            outer[i, j] = outer[j, i] = float((cols[i] * cols[j]).sum())
    counts = np.bincount(verdict, minlength=N_VERDICTS).astype(np.int64)
    n_in = float(np.count_nonzero(satisfies))
    starts = np.arange(0, n, BATCH)
    bw = np.minimum(BATCH, n - starts).astype(float)
    bi = (np.add.reduceat(satisfies.view(np.int8), starts, dtype=np.int64).astype(float)
          if n else np.zeros(0))
    return BlockSums(n=n, counts=counts, sw=float(n), sw2=float(n), sw_in=n_in, sw2_in=n_in,
                     sw_in_inner=float(counts[0]), sw_soft=n_in, sw2p=n_in, sw2_soft_dev=n_in,
                     mean_sum=mean, outer_sum=outer, batch_w=bw, batch_in=bi)
