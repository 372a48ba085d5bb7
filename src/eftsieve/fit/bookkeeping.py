"""Columns of a bare samples file that are not parameters: weights and the bookkeeping
of MCMC samplers (chain and draw numbers, log densities, sampler diagnostics).

:func:`split_columns` sorts a bare file's columns into parameters, a weight column and
the bookkeeping columns left out; the caller prints a notice for each decision
(:class:`eftsieve.errors.InputNotice`), so no column changes the answer silently.
``--columns`` overrides all of it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

#: column names read as a sample weight (case-insensitive)
WEIGHT_NAMES = ("weight", "weights", "sample_weight", "importance_weight", "wt")
#: column names of sampler bookkeeping (case-insensitive): chain/draw counters, log
#: densities and the diagnostics of common samplers (Stan-style ``__`` suffixes included)
BOOKKEEPING_NAMES = (
    "chain", "chains", "draw", "draws", "iteration", "iter", "step", "walker", "sample",
    "index", "row", "unnamed: 0", "warmup", "lp", "lp__", "log_prob", "logprob", "logp",
    "log_posterior", "logpost", "log_prior", "logprior", "log_likelihood", "log_lik",
    "loglike", "loglik", "log_like", "chi2", "accept_stat__", "stepsize__", "treedepth__",
    "n_leapfrog__", "divergent__", "energy__", "accepted", "acceptance")


@dataclass(frozen=True)
class ColumnSplit:
    """A bare file's columns, sorted.

    Attributes
    ----------
    parameters
        The columns read as parameters, in file order.
    weight
        The column recognised as the weight, or None.
    bookkeeping
        The sampler bookkeeping columns left out.
    """

    parameters: tuple[str, ...]
    weight: str | None
    bookkeeping: tuple[str, ...]


def split_columns(labels: Sequence[str], weight_given: str | None) -> ColumnSplit:
    """Sort column labels into parameters, a weight column and bookkeeping columns.

    A declared weight column (``weight_given``) wins; otherwise one column with a weight
    name is the weight (two are ambiguous and stay parameters for the caller to refuse).
    """
    low = {str(c): str(c).strip().lower() for c in labels}
    weights = [c for c in low if low[c] in WEIGHT_NAMES]
    weight = weight_given if weight_given is not None else (
        weights[0] if len(weights) == 1 else None)
    keep = [c for c in low if low[c] not in BOOKKEEPING_NAMES and c != weight]
    books = tuple(c for c in low if low[c] in BOOKKEEPING_NAMES and c != weight)
    return ColumnSplit(tuple(keep), weight, books)
