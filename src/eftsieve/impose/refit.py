"""The ``refit`` mode: an MCMC refit with emcee, the prior truncated by the region.

The posterior is  prior(theta) * 1[theta in region] * L(theta).  The prior is the fit
card's (independent uniform or normal factors); the likelihood is either

- Gaussian observables from a data file (the theory's library, e.g.
  :mod:`eftsieve.theories.chpt_su2.observables`): values and a
  covariance of threshold parameters of the built-in library, each at its own M_pi and
  F_pi, so that lattice ensembles at several pion masses can be fitted together; or
- a user's Python callable ``module:function`` returning the log-likelihood of one
  parameter vector (in the fit's parameter order).  It runs the user's own code.

By default the refit first tries importance sampling from an exact truncated Laplace
proposal (:mod:`eftsieve.impose.importance`: i.i.d. weighted draws, Kish ESS), and runs
the MCMC below only when those weights are refused (``ImposeSettings.sampler``).


What positivity changes is shown like with like: a second chain samples the same
prior, data and likelihood without the region, and the report compares the two (the
fit card's own summary, which may rest on other data, is only a reference column).


MCMC walkers start at the region's Chebyshev centre (an LP) plus a small ball, all inside
the region and the prior support.  emcee: Foreman-Mackey et al., PASP 125 (2013) 306,
arXiv:1202.3665; integrated autocorrelation times by its ``get_autocorr_time``
(Goodman & Weare 2010; Sokal's window).  A chain shorter than 50 autocorrelation
times is never called converged.
"""

from __future__ import annotations

import importlib
import math
import warnings
from collections.abc import Callable
from typing import Any

import numpy as np

from eftsieve.errors import ConvergenceWarning, InputError, InputNotice, SamplingError
from eftsieve.fit.model import Fit
from eftsieve.impose.core import ImposeResult, ImposeSettings, with_moments
from eftsieve.region.model import Region
from eftsieve.theories.base import CoordinateMap

MIN_TAU_MULTIPLE = 50


def log_prior_fn(fit: Fit) -> Callable[[np.ndarray], np.ndarray]:
    """Vectorised log prior (up to a constant) of the fit card's prior."""
    if fit.prior is None:
        raise InputError(fit.source, "prior", "refit needs a prior",
                         "add prior: {name: {uniform: [lo, hi]}} for every parameter")
    missing = [n for n in fit.names if n not in fit.prior.kinds]
    if missing:
        raise InputError(fit.source, "prior", f"no prior for {', '.join(missing)}",
                         "state a uniform or normal prior for every parameter")
    kinds = [fit.prior.kinds[n] for n in fit.names]
    pars = np.array([fit.prior.params[n] for n in fit.names])

    def logp(x: np.ndarray) -> np.ndarray:
        out = np.zeros(len(x))
        for i, kind in enumerate(kinds):
            a, b = pars[i]
            if kind == "uniform":
                out[(x[:, i] < a) | (x[:, i] > b)] = -np.inf
            else:
                out += -0.5 * ((x[:, i] - a) / b) ** 2
        return out

    return logp


def load_callable(spec: str) -> Callable[[np.ndarray], np.ndarray]:
    """Load the user's log-likelihood: ``module:function`` (a module importable from the
    current folder or the Python path) or ``path/to/file.py:function``."""
    mod_name, sep, fn_name = spec.rpartition(":")
    if not sep or not mod_name or not fn_name:
        raise InputError(None, "--likelihood", f"'{spec}' is not module:function",
                         "write e.g. mylike:loglike or path/to/mylike.py:loglike")
    try:
        module = _user_module(mod_name)
        fn = getattr(module, fn_name)
    except (ImportError, AttributeError, OSError, SyntaxError) as err:
        raise InputError(None, "--likelihood", f"cannot load '{spec}': {err}",
                         "give module:function with the module in the current folder or on "
                         "PYTHONPATH, or path/to/file.py:function") from err
    if not callable(fn):
        raise InputError(None, "--likelihood", f"'{fn_name}' in '{mod_name}' is not a function",
                         "name a function that takes one parameter vector")

    def loglike(x: np.ndarray) -> np.ndarray:
        return np.array([float(fn(row)) for row in x])

    return loglike


def _user_module(name: str) -> Any:
    """Import a module by file path (``*.py`` or a name with a slash) or by name, with the
    current folder searched first (a console script does not put it on sys.path)."""
    import sys
    from importlib.util import module_from_spec, spec_from_file_location
    from pathlib import Path

    path = Path(name)
    if path.suffix == ".py" or "/" in name or "\\" in name:
        if not path.is_file():
            raise ImportError(f"no file {path}")
        spec = spec_from_file_location(f"eftsieve_user_{path.stem}", path)
        if spec is None or spec.loader is None:
            raise ImportError(f"cannot import {path}")
        module = module_from_spec(spec)
        spec.loader.exec_module(module)
        return module
    cwd = str(Path.cwd())
    added = cwd not in sys.path
    if added:
        sys.path.insert(0, cwd)
    try:
        return importlib.import_module(name)
    finally:
        if added:
            sys.path.remove(cwd)


def prior_box(fit: Fit) -> list[tuple[float, float]]:
    """The prior's support as a box (normal priors: mean +- 5 sigma)."""
    if fit.prior is None:
        raise InputError(fit.source, "prior", "a refit needs the fit card's prior",
                         "add a prior block (uniform or normal per parameter)")
    box = []
    for n in fit.names:
        a, b = fit.prior.params[n]
        box.append((a, b) if fit.prior.kinds[n] == "uniform" else (a - 5 * b, a + 5 * b))
    return box


def start_point(fit: Fit, region: Region, cmap: CoordinateMap,
                logprior: Callable[[np.ndarray], np.ndarray]) -> tuple[np.ndarray, float]:
    """The Chebyshev centre of region x prior box, in the fit's coordinates (an LP)."""
    from scipy.optimize import linprog

    from eftsieve.errors import SolverError

    if not cmap.is_affine:
        raise InputError(fit.source, "parameters", "refit needs an affine coordinate map", "")
    a, b = cmap.pull_back(*region.arrays())
    box = prior_box(fit)
    lo, hi = np.array(box).T
    k = len(box)
    # rows: a x - r |a| >= b, and x_i - r >= lo_i, -x_i - r >= -hi_i
    rows = np.vstack([np.hstack([a, -np.linalg.norm(a, axis=1)[:, None]]),
                      np.hstack([np.eye(k), -np.ones((k, 1))]),
                      np.hstack([-np.eye(k), -np.ones((k, 1))])]) if len(a) else np.vstack([
                          np.hstack([np.eye(k), -np.ones((k, 1))]),
                          np.hstack([-np.eye(k), -np.ones((k, 1))])])
    rhs = np.concatenate([b, lo, -hi]) if len(a) else np.concatenate([lo, -hi])
    c = np.zeros(k + 1)
    c[-1] = -1.0
    res = linprog(c, A_ub=-rows, b_ub=-rhs, bounds=[(None, None)] * k + [(0, None)],
                  method="highs")
    if res.status != 0:
        raise SolverError(res.message, "Chebyshev centre LP of region x prior")
    x, r = res.x[:k], float(res.x[-1])
    if r <= 0 or not np.isfinite(logprior(x[None, :])[0]):
        raise SamplingError("the region and the prior support do not overlap",
                            "widen the prior or check the conventions")
    return x, r


def run_refit(fit: Fit, region: Region, cmap: CoordinateMap,
              loglike: Callable[[np.ndarray], np.ndarray], settings: ImposeSettings,
              likelihood_label: str,
              before: tuple[np.ndarray, np.ndarray | None] | None = None,
              soft: Callable[[np.ndarray], np.ndarray] | None = None) -> ImposeResult:
    """emcee refit with the truncated prior, and the same refit without positivity.

    Two chains of the same length, walkers and start share the prior, the data and the
    likelihood; only the first has the region's indicator (or, with ``soft``, log P(x)
    of a theory-uncertainty model).  The second is the comparison ("without
    positivity"): ``before_samples`` of the result, its moments ``figures["before"]``,
    and the fraction of it inside the region ``p_inside_before``.  ``before`` (the fit
    card's own samples, which may come from other data) is kept only as a reference,
    ``figures["card"]``.  Both chains must pass the convergence rule for ``converged``.
    """
    import emcee

    if settings.sampler not in ("auto", "importance", "mcmc"):
        raise InputError(None, "--sampler", f"unknown sampler '{settings.sampler}'",
                         "use auto, importance or mcmc")
    if settings.sampler != "mcmc":
        from eftsieve.impose.importance import refit_by_importance

        x_start, _ = start_point(fit, region, cmap, log_prior_fn(fit))
        res, why = refit_by_importance(fit, region, cmap, loglike, settings,
                                       likelihood_label, prior_box(fit), x_start, before,
                                       soft)
        if res is not None:
            if soft is not None:
                res.figures["truncation"] = "soft"
            return res
        if settings.sampler == "importance":
            raise SamplingError(f"the importance sample was refused: {why}",
                                "use --sampler mcmc (or auto)")
        warnings.warn(f"importance sampling refused ({why}); running the MCMC refit",
                      InputNotice, stacklevel=2)
    logprior = log_prior_fn(fit)
    a, b = region.arrays()

    def inside(x: np.ndarray) -> np.ndarray:
        return np.asarray(((cmap(x) @ a.T - b) >= 0).all(axis=1))

    def make_logpost(with_bounds: bool) -> Callable[[np.ndarray], np.ndarray]:
        def logpost(x: np.ndarray) -> np.ndarray:
            lp = logprior(x)
            if with_bounds and soft is None:
                lp[~inside(x)] = -np.inf
            elif with_bounds and soft is not None:
                lp = lp + soft(x)
            ok = np.isfinite(lp)
            out = np.full(len(x), -np.inf)
            if ok.any():
                out[ok] = lp[ok] + loglike(x[ok])
            return out
        return logpost

    rng = np.random.default_rng(settings.seed)
    x0, r = start_point(fit, region, cmap, logprior)
    p0 = _ball(x0, r, settings.walkers, rng, make_logpost(True))
    chains = []
    for with_bounds in (True, False):
        sampler = emcee.EnsembleSampler(settings.walkers, len(x0), make_logpost(with_bounds),
                                        vectorize=True)
        # emcee draws its moves from a legacy RandomState: seed it from our generator
        sampler.random_state = np.random.RandomState(int(rng.integers(2**31))).get_state()
        sampler.run_mcmc(p0, settings.n_samples, progress=settings.progress)
        chains.append(_chain_figures(fit, sampler, settings,
                                     "with" if with_bounds else "without"))
    res = _refit_result(fit, chains, settings, likelihood_label, before, inside)
    if soft is not None:
        res.figures["truncation"] = "soft"
    return res


def _ball(x0, r, n, rng, logpost) -> np.ndarray:
    """n starting points in a small ball around x0, all with finite posterior."""
    scale = 0.1 * max(r, 1e-6)
    pts = x0 + scale * rng.standard_normal((n, len(x0)))
    for _ in range(100):
        bad = ~np.isfinite(logpost(pts))
        if not bad.any():
            return pts
        pts[bad] = x0 + scale * rng.standard_normal((int(bad.sum()), len(x0)))
        scale /= 2
    raise SamplingError("could not start the walkers inside the region and the prior",
                        "check the prior support and the region")


def _chain_figures(fit: Fit, sampler: Any, settings: ImposeSettings,
                   which: str) -> dict[str, Any]:
    """The thinned chain after burn-in, its autocorrelation times, ESS and convergence."""
    n_steps = settings.n_samples
    tau = np.asarray(sampler.get_autocorr_time(tol=0), dtype=float)
    tau_max = float(np.nanmax(tau)) if np.isfinite(tau).any() else math.inf
    converged = bool(np.isfinite(tau_max) and n_steps >= MIN_TAU_MULTIPLE * tau_max)
    if not converged:
        warnings.warn(f"chain {which} positivity: {n_steps} steps is shorter than "
                      f"{MIN_TAU_MULTIPLE} autocorrelation times (tau_max = {tau_max:.1f}): "
                      "not converged; run longer with --samples", ConvergenceWarning,
                      stacklevel=3)
    discard = int(min(n_steps // 2, math.ceil(2 * tau_max))) if np.isfinite(tau_max) else 0
    thin = max(1, int(tau_max // 2)) if np.isfinite(tau_max) else 1
    return {"chain": sampler.get_chain(discard=discard, thin=thin, flat=True),
            "tau": tau, "converged": converged, "discard": discard, "thin": thin,
            "n_eff": settings.walkers * (n_steps - discard) / tau,
            "acceptance": float(np.mean(sampler.acceptance_fraction))}


def _refit_result(fit: Fit, chains: list[dict[str, Any]], settings: ImposeSettings,
                  label: str, card: tuple[np.ndarray, np.ndarray | None] | None,
                  inside: Callable[[np.ndarray], np.ndarray]) -> ImposeResult:
    """The ImposeResult of the chain with positivity against the chain without."""
    from eftsieve.impose.core import moments

    on, off = chains
    chain, free = on["chain"], off["chain"]
    p_in = float(inside(free).mean())
    ess_free = float(np.min(off["n_eff"]))
    summary = {"mode": "refit", "n_samples": int(len(chain)), "ess": float(np.min(on["n_eff"])),
               "ess_per_parameter": dict(zip(fit.names, map(float, on["n_eff"]), strict=True)),
               "acceptance": on["acceptance"],
               "tau": dict(zip(fit.names, map(float, on["tau"]), strict=True)),
               "converged": bool(on["converged"] and off["converged"]),
               "n_steps": settings.n_samples, "walkers": settings.walkers,
               "discard": on["discard"], "thin": on["thin"], "likelihood": label,
               "convergence_rule": f"steps >= {MIN_TAU_MULTIPLE} x max tau, both chains",
               "comparison": "the same prior, data and likelihood without positivity "
                             "(a second chain of the same length)",
               "tau_without_positivity": dict(zip(fit.names, map(float, off["tau"]),
                                                  strict=True)),
               "converged_without_positivity": bool(off["converged"]),
               "acceptance_without_positivity": off["acceptance"],
               "p_inside_before": p_in,
               "p_inside_before_err": float(np.sqrt(max(p_in * (1 - p_in), 1.0 / ess_free)
                                                    / max(ess_free, 1.0)))}
    if card is not None:
        summary["card"] = moments(card[0], card[1], fit.names)
    return with_moments(ImposeResult("refit", fit.names, chain, None, free, None, summary),
                        np.arange(len(chain)))
