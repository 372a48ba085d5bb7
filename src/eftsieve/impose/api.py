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
            return run(fit, region, cmap, settings)
        run_soft = soft.soft_reweight if chosen == "reweight" else soft.soft_exact
        return run_soft(fit, region, cmap, settings, fu)
    from eftsieve.impose import refit, soft

    loglike, label = refit_likelihood(fit, data, likelihood)
    before = before_samples(fit, settings.seed)
    log_soft = None if fu is None else soft.log_soft_indicator(region, cmap, fu)
    return refit.run_refit(fit, region, cmap, loglike, settings, label, before, log_soft)


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
