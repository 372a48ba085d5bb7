"""The typed result of a check, and how its statistics are formed from the block sums.

:class:`CheckResult` is what :func:`eftsieve.check` returns and what the reports, the
command line and summary.json are made from; :func:`summarize` forms it from the merged
:class:`~eftsieve.stats.accumulate.Accumulator` of any engine.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np

from eftsieve.check.shell import ShellSummary
from eftsieve.check.verdict import FitVerdict, fit_verdict
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError, SolverError
from eftsieve.fit.model import Fit
from eftsieve.region.model import Region
from eftsieve.stats.accumulate import Accumulator, BatchMeans
from eftsieve.stats.bayes import BayesFactor, bayes_factor, prior_probability
from eftsieve.stats.tension import Tension, tension
from eftsieve.theories.base import CoordinateMap

#: the most violated points kept for the report
N_WORST = 20


@dataclass(frozen=True)
class Counts:
    """Points per verdict.

    Attributes
    ----------
    inside, marginal, outside, uncertain
        The number of points (rows or draws) with each verdict.
    """

    inside: int
    marginal: int
    outside: int
    uncertain: int = 0

    @property
    def total(self) -> int:
        return self.inside + self.marginal + self.outside + self.uncertain

    def to_dict(self) -> dict[str, int]:
        return {"n_inside": self.inside, "n_marginal": self.marginal,
                "n_outside": self.outside, "n_uncertain": self.uncertain}


@dataclass(frozen=True)
class WorstPoint:
    """One of the most violated points.

    Attributes
    ----------
    row
        Its 0-based row (or draw) number.
    region_point
        Its region coordinates.
    min_margin
        Its smallest signed margin (negative: outside).
    facet
        The label of the facet it violates most.
    """

    row: int
    region_point: tuple[float, ...]
    min_margin: float
    facet: str

    def to_dict(self) -> dict[str, Any]:
        return {"row": self.row, "region_point": list(self.region_point),
                "min_margin": self.min_margin, "facet": self.facet}


@dataclass(frozen=True)
class CheckResult:
    """Everything a check produced.

    Attributes
    ----------
    fit, region
        What was checked.
    region_file
        The region file used (or written), or None.
    coordinate_map
        The map of the fit's parameters to the region's coordinates.
    settings
        The check settings; ``band`` the marginal band actually used.
    counts
        Points per verdict; ``n_total`` their sum (rows read or draws made).
    ess
        Kish's effective sample size of the points.
    p_inside, p_inside_err, p_inside_method
        The probability inside the outer facets, its error, and how it was computed
        (minimax tilting for a Gaussian with an affine map, else the sample fraction).
        Where the shell is solved exactly (``shell``), points solved outside are not
        inside and points left ``marginal`` count as inside the outer facets; a tilting
        value is corrected by the sampled fraction that the exact solves moved.
    p_inside_mc, p_inside_mc_err
        The sample fraction inside and its Monte-Carlo error (independent draws).
    batch
        The batch-means error and autocorrelation time (correlated samples).
    p_certainly_inside
        The weighted fraction with verdict ``inside`` (inner set, beyond the band).
    mean_region, cov_region
        The fit's mean and covariance in region coordinates.
    tension
        Minimal Mahalanobis distance and its chi-bar-squared p-value.
    bayes
        The Bayes factor of the truncated prior.
    theory_uncertainty
        The statistics under a theory-uncertainty model, or None.
    engine
        Which engine ran and its partitions.
    worst
        The most violated points, most violated first.
    plot_samples, plot_weights, plot_region_coords
        A uniform subsample (fit coordinates, weights, region coordinates) for plots.
    shell
        The exact decisions of the shell between the inner and outer sets (regions with
        an exact solver: positivity cones), or None.
    """

    fit: Fit
    region: Region
    region_file: str | None
    coordinate_map: CoordinateMap
    settings: CheckSettings
    band: float
    counts: Counts
    ess: float
    p_inside: float
    p_inside_err: float
    p_inside_method: str
    p_inside_mc: float
    p_inside_mc_err: float
    batch: BatchMeans
    p_certainly_inside: float
    mean_region: np.ndarray
    cov_region: np.ndarray
    tension: Tension
    bayes: BayesFactor
    theory_uncertainty: dict[str, Any] | None = None
    engine: dict[str, Any] = field(default_factory=dict)
    worst: tuple[WorstPoint, ...] = ()
    plot_samples: np.ndarray = field(default_factory=lambda: np.empty((0, 0)))
    plot_weights: np.ndarray | None = None
    plot_region_coords: np.ndarray = field(default_factory=lambda: np.empty((0, 0)))
    shell: ShellSummary | None = None

    @property
    def n_total(self) -> int:
        return self.counts.total

    @property
    def source(self) -> str:
        """``gaussian`` (draws from a mean and covariance) or ``samples`` (rows of a file)."""
        return "gaussian" if self.fit.is_gaussian else "samples"

    @cached_property
    def verdict(self) -> FitVerdict:
        """The fit verdict (consistent / tension / excluded / uncertain) with its reason
        and the per-facet table (:mod:`eftsieve.check.verdict`)."""
        exact = self.fit.is_gaussian and self.coordinate_map.is_affine
        tu = self.theory_uncertainty
        return fit_verdict(self.region, self.mean_region, self.cov_region, self.tension,
                           self.p_inside, self.p_inside_err, self.ess, exact=exact,
                           rows=self.plot_region_coords, weights=self.plot_weights,
                           model=tu, shell=self.shell)

    @property
    def truncation_model(self) -> str:
        """The truncation treatment of the bounds: the region's own (a relaxed outer set
        built in) and the check's theory-uncertainty model, or ``none`` (hard facets)."""
        parts = []
        built_in = self.region.settings.get("truncation") if isinstance(
            self.region.settings, dict) else None
        if built_in and built_in != "none":
            parts.append(f"{built_in} (region)")
        tu = self.theory_uncertainty
        if tu:
            parts.append(f"{tu['model']['settings']['model']} (check)")
        return " + ".join(parts) or "none"

    @cached_property
    def kinematics(self) -> dict[str, Any]:
        """The region's kinematics (pion masses, mu, convention, families) and the
        truncation model, as every verb prints them."""
        from eftsieve.theories import get_theory

        kin = get_theory(self.region.theory).region_kinematics(self.region)
        return {**kin, "truncation_model": self.truncation_model}

    @property
    def summary(self) -> dict[str, Any]:
        """The summary.json content (same as :meth:`to_dict`)."""
        return self.to_dict()

    def to_dict(self) -> dict[str, Any]:
        from eftsieve._version import __version__

        out: dict[str, Any] = {
            "verdict": self.verdict.to_dict(), "kinematics": self.kinematics,
            "eftsieve_version": __version__,
            "fit": self.fit.name, "theory": self.fit.theory, "region_hash": self.region.hash,
            "region_file": self.region_file, "n_total": self.n_total, **self.counts.to_dict(),
            "ess": self.ess, "p_inside_mc": self.p_inside_mc,
            "p_inside_mc_err": self.p_inside_mc_err, "p_inside": self.p_inside,
            "p_inside_err": self.p_inside_err, **self.batch.to_dict(),
            "p_inside_method": self.p_inside_method,
            "p_certainly_inside": self.p_certainly_inside,
            "settings": {**self.settings.to_dict(), "marginal_band": self.band},
            "source": self.source, "coordinate_map": self.coordinate_map.to_dict(),
            "mean_region": self.mean_region.tolist(), "cov_region": self.cov_region.tolist(),
            **self.tension.to_dict(), **self.bayes.to_dict(), "engine": dict(self.engine)}
        if self.theory_uncertainty is not None:
            out["theory_uncertainty"] = self.theory_uncertainty
        if self.shell is not None:
            out["shell"] = self.shell.to_dict()
        out["facets"] = [v.to_dict() for v in self.verdict.facets]
        return out

    def __repr__(self) -> str:
        return (f"CheckResult(fit={self.fit.name!r}, region={self.region.theory!r}, "
                f"n={self.n_total}, inside={self.counts.inside}, "
                f"outside={self.counts.outside}, p_inside={self.verdict.p_inside_text}, "
                f"verdict={self.verdict.label!r})")


def gaussian_probability(fit: Fit, region: Region, cmap: CoordinateMap,
                         seed: int) -> tuple[float, float, str] | None:
    """P(inside) of a Gaussian summary by minimax tilting (Botev 2017, arXiv:1603.04166)."""
    if fit.mean is None or fit.cov is None or not cmap.is_affine:
        return None
    from eftsieve.stats.gaussian import reduce_to_subspace, whitening
    from eftsieve.stats.tmvn import polytope_probability

    a, b = region.arrays()
    ap, bp = cmap.pull_back(a, b)
    rng = np.random.default_rng(seed + 2)
    w = whitening(fit.cov)
    if w.shape[1] == len(fit.mean):  # full rank: the polytope in the fit's coordinates
        try:
            res = polytope_probability(fit.mean, fit.cov, ap, bp, rng=rng)
        except SolverError as err:  # e.g. a mean 1e8 sigma outside: keep the sample fraction
            logging.getLogger(__name__).warning("minimax tilting failed (%s); p_inside is "
                                                "the sample fraction", err)
            return None
        return res.probability, res.std_error, res.method
    # a singular covariance: the Gaussian lives on a subspace, integrate over it
    g, h, unreachable = reduce_to_subspace(fit.mean, w, ap, bp)
    if unreachable or not len(h):
        return (0.0 if unreachable else 1.0), 0.0, "degenerate Gaussian (exact)"
    res = polytope_probability(np.zeros(w.shape[1]), np.eye(w.shape[1]), g, h, rng=rng)
    return res.probability, res.std_error, f"{res.method} on the covariance's subspace"


def region_moments(fit: Fit, cmap: CoordinateMap, acc: Accumulator
                   ) -> tuple[np.ndarray, np.ndarray]:
    """The fit's mean and covariance in region coordinates: exact for a Gaussian summary
    through an affine map, else the weighted sample moments."""
    if fit.mean is not None and fit.cov is not None and cmap.jacobian is not None \
            and cmap.shift is not None:
        return (cmap.jacobian @ fit.mean + cmap.shift,
                cmap.jacobian @ fit.cov @ cmap.jacobian.T)
    return acc.moments()


def summarize(fit: Fit, region: Region, cmap: CoordinateMap, settings: CheckSettings,
              acc: Accumulator, region_file: str | None, **extra: Any) -> CheckResult:
    """The check result from the merged sums (``extra``: engine, worst, plot subsample)."""
    if acc.n_total == 0:
        raise InputError(fit.samples.path if fit.samples else fit.source, "samples",
                         "no rows to check", "supply samples")
    if acc.sw <= 0:
        src = fit.samples
        raise InputError(src.path if src else fit.source, src.weight_column if src else None,
                         "all weights are zero", "give at least one positive weight")
    p_mc, p_mc_err = acc.p_inside()
    counts = Counts(*(int(c) for c in acc.counts))
    if counts.total != acc.n_total:
        raise RuntimeError("row accounting failed: counts do not add up to the rows read")
    p, p_err, method = p_mc, p_mc_err, "sample fraction (weighted)"
    accurate = gaussian_probability(fit, region, cmap, settings.seed)
    if accurate is not None:
        p, p_err, method = accurate
        shell: ShellSummary | None = extra.get("shell")
        if shell is not None and shell.p_correction != 0:
            p = min(max(p + shell.p_correction, 0.0), 1.0)
            p_err = float(np.hypot(p_err, shell.p_correction_err))
            method += " (outer facets), corrected by the sampled exact shell solves"
    mean, cov = region_moments(fit, cmap, acc)
    ten = tension(mean, cov, region, np.random.default_rng(settings.seed + 4))
    pp, pe, why = prior_probability(fit, region, cmap, settings.seed)
    return CheckResult(
        fit=fit, region=region, region_file=region_file, coordinate_map=cmap,
        settings=settings, band=settings.band(region), counts=counts, ess=acc.ess(),
        p_inside=p, p_inside_err=p_err, p_inside_method=method, p_inside_mc=p_mc,
        p_inside_mc_err=p_mc_err, batch=acc.batch_means(),
        p_certainly_inside=acc.sw_in_inner / acc.sw, mean_region=mean, cov_region=cov,
        tension=ten, bayes=bayes_factor(p, p_err, pp, pe, why), **extra)
