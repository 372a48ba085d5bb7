"""The ``check`` job: stream a fit through a region, collect statistics, write outputs.

Use :func:`run_check` from scripts; ``eftsieve check`` calls it.  The fit's rows are
read in chunks (or drawn from its Gaussian summary with an explicit seed), classified
with :func:`eftsieve.check.verdicts.classify`, and accounted for exactly: the counts always add up
to the rows read.  Outputs are written atomically and never over an input.
"""

from __future__ import annotations

import csv
import math
import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.check.verdicts import VERDICT_NAMES, CheckSettings, Reservoir, Verdicts, classify
from eftsieve.errors import InputError
from eftsieve.fit.model import Fit
from eftsieve.io.samples import Chunk
from eftsieve.region.model import Region
from eftsieve.stats.accumulate import Accumulator, bayes_factor, tension
from eftsieve.stats.truncation import (
    FacetUncertainty,
    UncertaintySettings,
    facet_uncertainty,
    prob_satisfies,
    verdicts_from_probability,
)
from eftsieve.theories.base import CoordinateMap

N_WORST = 20


@dataclass(frozen=True)
class CheckResult:
    """Everything a check produced.

    Attributes
    ----------
    summary
        The summary.json content.
    region
        The region used.
    worst
        The most violated points (dicts), most violated first.
    plot_samples, plot_weights
        A uniform subsample in the fit's coordinates for plots.
    plot_region_coords
        The same subsample in region coordinates.
    """

    summary: dict[str, Any]
    region: Region
    worst: tuple[dict[str, Any], ...]
    plot_samples: np.ndarray
    plot_weights: np.ndarray | None
    plot_region_coords: np.ndarray

    def to_dict(self) -> dict[str, Any]:
        return dict(self.summary)


def gaussian_chunks(fit: Fit, settings: CheckSettings) -> Iterator[Chunk]:
    """Draws from the fit's Gaussian summary, in chunks, from one seeded generator."""
    assert fit.mean is not None and fit.cov is not None
    rng = np.random.default_rng(settings.seed)
    chol = _psd_factor(fit.cov)
    done = 0
    while done < settings.draws:
        n = min(settings.chunk_rows, settings.draws - done)
        z = rng.standard_normal((n, len(fit.mean)))
        yield Chunk(np.arange(done, done + n, dtype=np.int64), fit.mean + z @ chol.T, None)
        done += n


def _psd_factor(cov: np.ndarray) -> np.ndarray:
    """A factor L with L L^T = cov, for positive semi-definite cov."""
    w, v = np.linalg.eigh(cov)
    return v * np.sqrt(np.clip(w, 0.0, None))


class FlaggedWriter:
    """Writes flagged rows to a temporary CSV (vectorised per chunk), moved into place by
    :meth:`commit`."""

    def __init__(self, path: Path, fit: Fit, region: Region) -> None:
        self.path = path
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, self.tmp = tempfile.mkstemp(prefix=".flagged.", suffix=".csv", dir=path.parent)
        self.fh = open(fd, "w", newline="", encoding="utf-8")
        self.region = region
        self.columns = ["row", "verdict", *fit.names,
                        *[f"{c} (region)" for c in region.coordinates], "min_margin",
                        *[f"margin_{i}" for i in range(len(region.facets))],
                        "worst_facet", "family", "channel", "point"]
        csv.writer(self.fh).writerow(self.columns)
        self.facet_text = [(f.family, f.channel,
                            ";".join(f"{a}={v:.6g}" for a, v in f.point.items()))
                           for f in region.facets]
        self.n = 0

    def write(self, chunk: Chunk, y: np.ndarray, verdict: np.ndarray, min_margin: np.ndarray,
              worst: np.ndarray) -> None:
        import pandas as pd

        sel = np.nonzero(verdict != 0)[0]
        if not len(sel):
            return
        margins = self.region.margins(y[sel])
        w = worst[sel]
        text = np.array(self.facet_text, dtype=object).reshape(len(self.facet_text), 3)[w]
        data = np.hstack([chunk.values[sel], y[sel], min_margin[sel, None], margins])
        frame = pd.DataFrame(data, columns=self.columns[2:-4])
        frame.insert(0, "verdict", np.array(VERDICT_NAMES, dtype=object)[verdict[sel]])
        frame.insert(0, "row", chunk.rows[sel])
        frame["worst_facet"] = w
        frame["family"], frame["channel"], frame["point"] = text[:, 0], text[:, 1], text[:, 2]
        frame.to_csv(self.fh, header=False, index=False, float_format="%.17g")
        self.n += len(sel)

    def commit(self) -> None:
        self.fh.flush()
        os.fsync(self.fh.fileno())
        self.fh.close()
        from eftsieve.io.atomic import _umask_mode

        os.chmod(self.tmp, _umask_mode())
        os.replace(self.tmp, self.path)

    def abort(self) -> None:
        if not self.fh.closed:
            self.fh.close()
        Path(self.tmp).unlink(missing_ok=True)


@contextmanager
def flagged_output(outdir: Path | None, fit: Fit, region: Region) -> Iterator[FlaggedWriter | None]:
    """A FlaggedWriter for ``outdir/flagged.csv`` (None without an outdir): moved into place
    when the block succeeds, removed when it raises, so the file is never half-written."""
    if outdir is None:
        yield None
        return
    writer = FlaggedWriter(outdir / "flagged.csv", fit, region)
    try:
        yield writer
    except BaseException:
        writer.abort()
        raise
    writer.commit()


class WorstKeeper:
    """Keeps the N most violated points seen so far."""

    def __init__(self, n: int = N_WORST) -> None:
        self.n = n
        self.rows: list[tuple[float, dict[str, Any]]] = []

    def add(self, chunk: Chunk, y: np.ndarray, min_margin: np.ndarray, worst: np.ndarray,
            region: Region) -> None:
        k = min(self.n, len(y))
        idx = np.argpartition(min_margin, k - 1)[:k] if k < len(y) else np.arange(len(y))
        for i in idx:
            if min_margin[i] >= 0:
                continue
            f = region.facets[int(worst[i])]
            self.rows.append((float(min_margin[i]), {
                "row": int(chunk.rows[i]), "region_point": y[i].tolist(),
                "min_margin": float(min_margin[i]), "facet": f.label()}))
        self.rows.sort(key=lambda r: r[0])
        del self.rows[self.n:]


def stream(fit: Fit, region: Region, cmap: CoordinateMap, settings: CheckSettings,
           flagged: FlaggedWriter | None, fu: FacetUncertainty | None = None,
           ) -> tuple[Accumulator, Reservoir, WorstKeeper]:
    """Classify every row of the fit; returns the accumulated statistics.

    With a theory-uncertainty model (``fu``), verdicts come from P(satisfies every facet)
    (inside / uncertain / outside) and the accumulator also sums that probability.
    """
    acc = Accumulator(region.dim)
    res = Reservoir(settings.plot_points, np.random.default_rng(settings.seed + 1))
    worst = WorstKeeper()
    band = settings.band(region)
    chunks = (gaussian_chunks(fit, settings) if fit.is_gaussian else
              fit.samples.iter_chunks(settings.chunk_rows))  # type: ignore[union-attr]
    for chunk in chunks:
        y = cmap(chunk.values)
        v = classify(y, region, band)
        soft = None
        if fu is not None and fu.model != "none":
            soft = prob_satisfies(y, region, fu)
            v = Verdicts(verdicts_from_probability(soft, fu.settings), v.min_margin, v.worst,
                         v.satisfies)
        acc.add(y, chunk.weights, v.verdict, v.satisfies, soft)
        res.add(np.hstack([chunk.values, y]), chunk.weights)
        worst.add(chunk, y, v.min_margin, v.worst, region)
        if flagged is not None:
            flagged.write(chunk, y, v.verdict, v.min_margin, v.worst)
    acc.finish()
    if acc.n_total == 0:
        raise InputError(fit.source, "samples", "no rows to check", "supply samples")
    if acc.sw <= 0:
        raise InputError(fit.samples.path if fit.samples else fit.source,
                         fit.samples.weight_column if fit.samples else "weights",
                         "all weights are zero", "give at least one positive weight")
    return acc, res, worst


def gaussian_probability(fit: Fit, region: Region, cmap: CoordinateMap,
                         seed: int) -> dict[str, Any] | None:
    """P(inside) of a Gaussian summary by minimax tilting (Botev 2017, arXiv:1603.04166)."""
    if fit.mean is None or fit.cov is None or not cmap.is_affine:
        return None
    from eftsieve.stats.tmvn import polytope_probability

    a, b = region.arrays()
    ap, bp = cmap.pull_back(a, b)
    res = polytope_probability(fit.mean, fit.cov, ap, bp, rng=np.random.default_rng(seed + 2))
    return {"p_inside": res.probability, "p_inside_err": res.std_error, "method": res.method}


def draw_prior(fit: Fit, cmap: CoordinateMap, n: int,
               rng: np.random.Generator) -> tuple[np.ndarray | None, str]:
    """n draws of the fit card's prior (independent factors) for the parameters that feed
    the region, or None with the reason why that is not possible."""
    if fit.prior is None:
        return None, "the fit card states no prior"
    used = (range(len(fit.names)) if cmap.jacobian is None
            else np.nonzero(np.abs(cmap.jacobian).sum(axis=0) > 0)[0])
    missing = [fit.names[i] for i in used if fit.names[i] not in fit.prior.kinds]
    if missing:
        return None, f"no prior stated for {', '.join(missing)}"
    x = np.zeros((n, len(fit.names)))
    for i in used:
        name = fit.names[i]
        lo, hi = fit.prior.params[name]
        x[:, i] = (rng.uniform(lo, hi, n) if fit.prior.kinds[name] == "uniform"
                   else rng.normal(lo, hi, n))
    return x, f"prior Monte Carlo, {n} draws"


def prior_probability(fit: Fit, region: Region, cmap: CoordinateMap,
                      seed: int, n: int = 1_000_000) -> tuple[float | None, float | None, str]:
    """P_prior(inside) for the fit card's stated prior."""
    x, why = draw_prior(fit, cmap, n, np.random.default_rng(seed + 3))
    if x is None:
        return None, None, why
    p = float(region.contains(cmap(x)).mean())
    return p, math.sqrt(max(p * (1 - p), 1.0 / n) / n), why


def run_check(fit: Fit, region: Region, settings: CheckSettings, outdir: Path | None,
              region_path: str | None = None,
              uncertainty: UncertaintySettings | None = None) -> CheckResult:
    """Classify the fit against the region and compute the statistics.

    With ``uncertainty`` (a model other than ``none``) the verdicts are probabilistic and
    ``summary["theory_uncertainty"]`` shows how p_inside, the tension and the Bayes factor
    change from hard edges to the model.
    """
    from eftsieve.theories import get_theory

    if fit.theory != region.theory and (fit.theory, region.theory) != ("chpt-su3", "chpt-su2"):
        raise InputError(region_path, "theory", f"region is for '{region.theory}' but the fit "
                         f"is '{fit.theory}'", "build the region for the fit's theory")
    # the region's theory maps the fit (an SU(3) fit goes through the SU(2) matching)
    cmap = get_theory(region.theory).coordinate_map(fit, region)
    fu = facet_uncertainty(region, uncertainty) if uncertainty is not None else None
    with flagged_output(outdir, fit, region) as flagged:
        acc, res, worst = stream(fit, region, cmap, settings, flagged, fu)
    summary = _summary(fit, region, cmap, settings, acc, region_path)
    if fu is not None and fu.model != "none":
        from eftsieve.stats.truncation_stats import model_statistics

        summary["theory_uncertainty"] = model_statistics(fit, region, cmap, fu, acc, summary,
                                                         settings.seed)
    k = len(fit.names)
    data = res.data if res.data is not None else np.empty((0, k + region.dim))
    return CheckResult(summary, region, tuple(r for _, r in worst.rows), data[:, :k],
                       res.weights, data[:, k:])


def _summary(fit: Fit, region: Region, cmap: CoordinateMap, settings: CheckSettings,
             acc: Accumulator, region_path: str | None) -> dict[str, Any]:
    p_mc, p_mc_err = acc.p_inside()
    counts = dict(zip(("n_inside", "n_marginal", "n_outside", "n_uncertain"),
                      map(int, acc.counts), strict=True))
    out: dict[str, Any] = {"fit": fit.name, "theory": fit.theory, "region_hash": region.hash,
                           "region_file": region_path, "n_total": acc.n_total, **counts,
                           "ess": acc.ess(), "p_inside_mc": p_mc, "p_inside_mc_err": p_mc_err,
                           "p_inside": p_mc, "p_inside_err": p_mc_err,
                           **acc.batch_means().to_dict(),
                           "p_inside_method": "sample fraction (weighted)",
                           "p_certainly_inside": acc.sw_in_inner / acc.sw,
                           "settings": {**settings.to_dict(),
                                        "marginal_band": settings.band(region)},
                           "source": "gaussian" if fit.is_gaussian
                           else "samples", "coordinate_map": cmap.to_dict()}
    accurate = gaussian_probability(fit, region, cmap, settings.seed)
    if accurate is not None:
        out.update(p_inside=accurate["p_inside"], p_inside_err=accurate["p_inside_err"],
                   p_inside_method=accurate["method"])
    if fit.is_gaussian and cmap.is_affine:
        assert cmap.jacobian is not None and cmap.shift is not None
        mean = cmap.jacobian @ fit.mean + cmap.shift
        cov = cmap.jacobian @ fit.cov @ cmap.jacobian.T
    else:
        mean, cov = acc.moments()
    out["mean_region"], out["cov_region"] = mean.tolist(), cov.tolist()
    out.update(tension(mean, cov, region, np.random.default_rng(settings.seed + 4)).to_dict())
    pp, pe, why = prior_probability(fit, region, cmap, settings.seed)
    out.update(bayes_factor(out["p_inside"], out["p_inside_err"], pp, pe, why).to_dict())
    if sum(counts.values()) != out["n_total"]:
        raise RuntimeError("row accounting failed: counts do not add up to the rows read")
    return out
