"""Impose positivity on a fit: the mode choice and the dispatch to one implementation.

Use :func:`impose` from scripts; ``eftsieve impose`` and the demo call it.  The mode is
the one asked for, else chosen from the fit (:func:`eftsieve.impose.core.choose_mode`):

``exact``
    a Gaussian summary, drawn from the truncated Gaussian (:mod:`eftsieve.impose.core`);
``reweight``
    posterior samples, kept inside the region with their weights;
``refit``
    whenever a likelihood is given (``data`` or ``likelihood``): an emcee refit with the
    prior truncated by the region (:mod:`eftsieve.impose.refit`).

With a theory-uncertainty model (:class:`eftsieve.stats.truncation.UncertaintySettings`,
model other than ``none``) the hard indicator of the region is replaced by the
probability that a point satisfies the bounds (:mod:`eftsieve.impose.soft`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.impose.core import ImposeResult, ImposeSettings, choose_mode

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region
    from eftsieve.stats.truncation import UncertaintySettings

#: draws of a Gaussian summary kept as the "before" sample of a refit
BEFORE_DRAWS = 20_000
#: offset of the seed of those draws from the run's seed (independent of the run's draws)
BEFORE_SEED_OFFSET = 7

LogLike = Callable[[np.ndarray], np.ndarray]


def impose(fit: Fit, region: Region, *, mode: str | None = None,
           settings: ImposeSettings | None = None,
           uncertainty: UncertaintySettings | None = None,
           data: Any = None,
           likelihood: str | LogLike | None = None) -> ImposeResult:
    """Re-sample ``fit`` with positivity imposed as a truncation of its prior.

    Parameters
    ----------
    fit
        The fit, in its own conventions.
    region
        The allowed region; its theory maps the fit to the region's coordinates.
    mode
        ``exact``, ``reweight`` or ``refit``; None takes ``settings.mode``, and if that is
        None too, the mode is chosen from the fit (see the module docstring).
    settings
        Sample sizes, walkers, seed, ESS floor and progress bar (defaults if None).
    uncertainty
        A theory-uncertainty model of the facets' offsets (soft truncation), or None.
    data
        An observables file (YAML/JSON) or loaded :class:`~eftsieve.impose.refit.
        ObservableData` for ``refit``.
    likelihood
        ``"module:function"`` (imports and runs the user's code) or a callable that takes
        one parameter vector and returns its log-likelihood, for ``refit``.  Give either
        ``data`` or ``likelihood``, not both.

    Returns
    -------
    ImposeResult
        The new samples, the fit's own samples for comparison and the summary figures.

    Raises
    ------
    InputError
        An unknown mode, a mode that does not fit the fit, or both ``data`` and
        ``likelihood``.
    SamplingError
        ``reweight`` kept too few effective samples.
    """
    from eftsieve.theories import coordinate_map

    if data is not None and likelihood is not None:
        raise InputError(None, "--data/--likelihood", "give one likelihood, not both",
                         "drop --data or --likelihood")
    settings = settings if settings is not None else ImposeSettings()
    has_like = data is not None or likelihood is not None
    chosen = choose_mode(fit, mode if mode is not None else settings.mode, has_like)
    settings = replace(settings, mode=chosen)
    cmap = coordinate_map(fit, region)
    fu = None
    if uncertainty is not None and uncertainty.model != "none":
        from eftsieve.stats.truncation import facet_uncertainty

        fu = facet_uncertainty(region, uncertainty)
    if chosen in ("reweight", "exact"):
        from eftsieve.impose import core, soft

        if fu is None:
            run = core.reweight if chosen == "reweight" else core.exact
            return cone_shell_note(run(fit, region, cmap, settings), region, cmap,
                                   settings.seed)
        run_soft = soft.soft_reweight if chosen == "reweight" else soft.soft_exact
        return run_soft(fit, region, cmap, settings, fu)
    from eftsieve.impose import refit, soft

    loglike, label = refit_likelihood(fit, data, likelihood)
    before = before_samples(fit, settings.seed)
    log_soft = None if fu is None else soft.log_soft_indicator(region, cmap, fu)
    return cone_shell_note(refit.run_refit(fit, region, cmap, loglike, settings, label,
                                           before, log_soft), region, cmap, settings.seed)


#: exact solves spent on the imposed samples that lie in a cone's shell
SHELL_NOTE_SOLVES = 100


def cone_shell_note(res: ImposeResult, region: Region, cmap: Any, seed: int,
                    solves: int = SHELL_NOTE_SOLVES) -> ImposeResult:
    """For a positivity cone, the truncation uses its verified outer facets: samples in the
    shell (outside the inner cone) may lie outside the cone itself.  Up to ``solves`` of
    them, drawn at random, are decided exactly, and the share of the imposed samples that
    lie in the cone is estimated from the decided ones (``figures["cone_shell"]``,
    ``in_cone_estimate``), with the range that counting the undecided ones outside, then
    inside, gives (``in_cone_range``).  Regions without a shell are returned unchanged."""
    if "cone_problem" not in region.settings or not region.inner_facets:
        return res
    from eftsieve.bounds.cone_region import BOUNDARY_REASON, ConeShell
    from eftsieve.bounds.cones import INSIDE, OUTSIDE

    y = cmap(np.asarray(res.samples, dtype=float))
    w = (np.ones(len(y)) if res.weights is None else np.asarray(res.weights, dtype=float))
    ai, bi = region.arrays(inner=True)
    sure = (y @ ai.T - bi >= 0).all(axis=1)
    shell_w = float(w[~sure].sum() / w.sum())
    note: dict[str, Any] = {"shell_fraction": shell_w, "checked": 0, "inside": 0,
                            "outside": 0, "marginal": 0, "on_boundary": 0,
                            "in_cone_estimate": 1.0,
                            "in_cone_range": [1.0, 1.0]}
    rows = np.flatnonzero(~sure)
    if len(rows):
        rng = np.random.default_rng([seed, 7])
        pick = np.sort(rng.choice(rows, size=min(solves, len(rows)), replace=False))
        codes, _, why = ConeShell.from_region(region).decide(y[pick], pick, seed=seed)
        n_in, n_out = int((codes == INSIDE).sum()), int((codes == OUTSIDE).sum())
        decided = n_in + n_out
        n_marg = len(pick) - decided
        # the undecided counted outside, then inside: the share in the cone lies between
        note.update(checked=len(pick), inside=n_in, outside=n_out, marginal=n_marg,
                    on_boundary=sum(r == BOUNDARY_REASON for r in why),
                    in_cone_estimate=(1.0 - shell_w) + shell_w * (n_in / decided)
                    if decided else None,
                    in_cone_range=[(1.0 - shell_w) + shell_w * n_in / len(pick),
                                   (1.0 - shell_w) + shell_w * (n_in + n_marg) / len(pick)])
    return replace(res, figures={**res.figures, "cone_shell": note})


def refit_likelihood(fit: Fit, data: Any,
                     likelihood: str | LogLike | None) -> tuple[LogLike, str]:
    """The log-likelihood of a refit and the label the report shows for it."""
    from eftsieve.impose import refit

    if data is not None:
        from eftsieve.theories import get_theory

        return get_theory(fit.theory).observable_likelihood(data, fit)
    if isinstance(likelihood, str):
        return refit.load_callable(likelihood), f"callable {likelihood}"
    if callable(likelihood):
        fn = likelihood

        def loglike(x: np.ndarray) -> np.ndarray:
            return np.array([float(fn(row)) for row in x])

        name = getattr(fn, "__qualname__", type(fn).__name__)
        return loglike, f"callable {getattr(fn, '__module__', '?')}:{name}"
    raise InputError(None, "--data/--likelihood", "mode 'refit' needs a likelihood",
                     "give --data obs.yaml or --likelihood module:function")


def before_samples(fit: Fit, seed: int) -> tuple[np.ndarray, np.ndarray | None]:
    """The fit before positivity: its samples, or draws of its Gaussian summary."""
    from eftsieve.stats.gaussian import draw, psd_factor

    if fit.mean is not None and fit.cov is not None:
        rng = np.random.default_rng(seed + BEFORE_SEED_OFFSET)
        return draw(fit.mean, psd_factor(fit.cov), BEFORE_DRAWS, rng), None
    if fit.samples is None:
        raise InputError(fit.source, "samples", "the fit has neither a mean nor samples",
                         "give a mean and covariance or a samples file")
    chunk = fit.samples.read_all()
    return chunk.values, chunk.weights
