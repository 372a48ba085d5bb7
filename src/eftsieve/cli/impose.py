"""``eftsieve impose``: argument parsing, the run, and the outputs of the impose job."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

import numpy as np

OUTPUTS = ("samples.parquet", "samples.csv", "summary.json", "corner_before_after.png",
           "report.md", "region.json")


def add_parser(sub: Any) -> None:
    from eftsieve.cli.check import add_fit_args

    p = sub.add_parser("impose", help="re-sample a fit with positivity imposed as a prior "
                       "truncation")
    add_fit_args(p)
    p.add_argument("--mode", choices=["reweight", "exact", "refit"], default=None,
                   help="default: exact for a Gaussian, reweight for samples, refit with "
                        "--data/--likelihood")
    p.add_argument("--data", default=None, help="observables file for refit (YAML/JSON)")
    p.add_argument("--likelihood", default=None, metavar="MODULE:FUNCTION",
                   help="a Python log-likelihood for refit (runs your own code)")
    p.add_argument("--samples", type=int, default=20_000,
                   help="samples (exact) or steps per walker (refit); default 20000")
    p.add_argument("--walkers", type=int, default=32, help="emcee walkers (refit)")
    p.add_argument("--min-ess", type=float, default=None,
                   help="effective-sample-size floor of reweight (default 400)")
    p.add_argument("--csv", action="store_true", help="also write samples.csv")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.add_argument("--no-plots", action="store_true", help="skip the corner plot")
    p.set_defaults(func=cmd_impose)


def run(fit, region, args: argparse.Namespace, uncertainty=None):
    """Choose the mode and run it; returns the ImposeResult."""
    from eftsieve.impose import soft as softmod
    from eftsieve.impose.core import ImposeSettings, choose_mode, exact, reweight
    from eftsieve.stats.truncation import facet_uncertainty
    from eftsieve.theories import coordinate_map
    from eftsieve.tolerances import MIN_ESS

    has_like = bool(args.data or args.likelihood)
    mode = choose_mode(fit, args.mode, has_like)
    settings = ImposeSettings(mode, args.samples, args.walkers, args.seed,
                              args.min_ess if args.min_ess is not None else MIN_ESS,
                              not args.no_progress)
    cmap = coordinate_map(fit, region)
    fu = None
    if uncertainty is not None and uncertainty.model != "none":
        fu = facet_uncertainty(region, uncertainty)
    if mode == "reweight":
        return (reweight(fit, region, cmap, settings) if fu is None
                else softmod.soft_reweight(fit, region, cmap, settings, fu))
    if mode == "exact":
        return (exact(fit, region, cmap, settings) if fu is None
                else softmod.soft_exact(fit, region, cmap, settings, fu))
    from eftsieve.impose import refit

    if args.data:
        data = refit.load_observables(args.data)
        loglike, label = refit.observables_loglike(data, fit), f"observables {args.data}"
    else:
        loglike, label = refit.load_callable(args.likelihood), f"callable {args.likelihood}"
    before = _before(fit, args.seed)
    soft = None if fu is None else softmod.log_soft_indicator(region, cmap, fu)
    return refit.run_refit(fit, region, cmap, loglike, settings, label, before, soft)


def _before(fit, seed: int):
    if fit.is_gaussian:
        rng = np.random.default_rng(seed + 7)
        return rng.multivariate_normal(fit.mean, fit.cov, size=20_000), None
    chunk = fit.samples.read_all()
    return chunk.values, chunk.weights


def write_samples(result, outdir: Path, csv: bool) -> list[Path]:
    """samples.parquet (and samples.csv): the parameters, a weight column and the row."""
    import pandas as pd

    from eftsieve.io.atomic import atomic_write_with

    frame = pd.DataFrame(result.samples, columns=list(result.names))
    frame["weight"] = 1.0 if result.weights is None else result.weights
    frame["row"] = result.rows if result.rows is not None else np.arange(len(frame))
    paths = [atomic_write_with(outdir / "samples.parquet",
                               lambda t: frame.to_parquet(t, index=False))]
    if csv:
        paths.append(atomic_write_with(outdir / "samples.csv",
                                       lambda t: frame.to_csv(t, index=False)))
    return paths


def cmd_impose(args: argparse.Namespace) -> int:
    from eftsieve.cli.check import _inputs, load_fit_arg, region_for
    from eftsieve.io.atomic import atomic_write_json, atomic_write_text, guard_inputs
    from eftsieve.report.document import to_markdown
    from eftsieve.report.impose_report import impose_document

    fit = load_fit_arg(args)
    outdir = Path(args.output or f"{Path(args.fit).stem}_impose")
    guard_inputs([outdir / n for n in OUTPUTS], _inputs(fit, args) + [args.data])
    outdir.mkdir(parents=True, exist_ok=True)
    region, rpath = region_for(fit, args, outdir)
    from eftsieve.cli.check import uncertainty_from_args

    result = run(fit, region, args, uncertainty_from_args(args))
    write_samples(result, outdir, args.csv)
    images = {}
    if not args.no_plots:
        images["corner"] = impose_corner(result, fit, region, outdir)
    summary = {**result.summary, "fit": fit.name, "theory": fit.theory,
               "region_hash": region.hash, "region_file": rpath}
    atomic_write_json(outdir / "summary.json", summary)
    atomic_write_text(outdir / "report.md", to_markdown(
        impose_document(fit, region, summary, images)))
    corr = summary.get("ess_autocorr")
    ess = f"ESS {summary['ess']:.0f}" + ("" if corr is None else
                                         f" ({corr:.0f} after autocorrelation)")
    print(f"imposed positivity on '{fit.name}' ({summary['mode']}): {summary['n_samples']} "
          f"samples, {ess} -> {outdir / 'samples.parquet'}")
    for n in fit.names:
        b, a = summary["before"][n], summary["after"][n]
        print(f"  {n}: {b['mean']:.4g} +- {b['std']:.3g}  ->  {a['mean']:.4g} +- {a['std']:.3g}")
    return 0


def impose_corner(result, fit, region, outdir: Path) -> Path:
    """corner_before_after.png with the region boundary (in the fit's own coordinates
    where the map is the identity on the constrained columns)."""
    from eftsieve.cli.check import region_columns
    from eftsieve.report.plots import save_corner
    from eftsieve.theories import coordinate_map

    cmap = coordinate_map(fit, region)
    before, after = result.before_samples.copy(), result.samples.copy()
    names = list(fit.names)
    cols = region_columns(None if cmap.jacobian is None else cmap.jacobian.tolist())
    for k, c in cols.items():
        before[:, c] = cmap(result.before_samples)[:, k]
        after[:, c] = cmap(result.samples)[:, k]
        names[c] = f"{region.coordinates[k]} (region)"
    keep = min(len(before), 50_000)
    return save_corner(outdir / "corner_before_after.png", before[:keep], names,
                       weights=None if result.before_weights is None
                       else result.before_weights[:keep],
                       region=region, region_coords=cols, overlay=after[:50_000],
                       overlay_weights=None if result.weights is None
                       else result.weights[:50_000], labels=("before", "after positivity"))
