"""``eftsieve impose``: re-sample a fit with positivity imposed.

Parses the options, calls :func:`eftsieve.impose.api.impose` (which chooses the mode)
and :func:`eftsieve.report.outputs.write_impose_outputs`, and prints a few lines.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path
from typing import Any

from eftsieve.cli.args import (
    add_fit_args,
    input_files,
    load_fit_arg,
    positive_float,
    positive_int,
    region_for,
    uncertainty_from_args,
)
from eftsieve.numbers import fmt_kinematics, fmt_num, fmt_pm, fmt_prob
from eftsieve.tolerances import TINY_P_INSIDE

HELP = "re-sample a fit with positivity imposed as a prior truncation"
#: exit code of a refit whose chain is not converged (unless --allow-unconverged)
EXIT_UNCONVERGED = 8


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser("impose", help=HELP, description=HELP)
    add_fit_args(p)
    p.add_argument("--mode", choices=["reweight", "exact", "refit"], default=None,
                   help="default: exact for a Gaussian, reweight for samples, refit with "
                        "--data/--likelihood")
    like = p.add_mutually_exclusive_group()
    like.add_argument("--data", default=None, help="observables file for refit (YAML/JSON)")
    like.add_argument("--likelihood", default=None, metavar="MODULE:FUNCTION",
                      help="a Python log-likelihood for refit (runs your own code)")
    p.add_argument("--samples", type=positive_int, default=20_000,
                   help="samples (exact) or steps per walker (refit); default 20000")
    p.add_argument("--walkers", type=positive_int, default=32,
                   help="emcee walkers (refit; default 32)")
    p.add_argument("--sampler", choices=["auto", "importance", "mcmc"], default="auto",
                   help="refit sampler: importance sampling from a truncated Laplace "
                        "proposal, falling back to emcee when its weights are uneven "
                        "(auto), or one of them only")
    p.add_argument("--min-ess", type=positive_float, default=None,
                   help="effective-sample-size floor of reweight (default 400)")
    p.add_argument("--csv", action="store_true", help="also write samples.csv")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.add_argument("--no-plots", action="store_true", help="skip the corner plot")
    p.add_argument("--allow-unconverged", action="store_true",
                   help=f"exit 0 even when a refit chain is not converged (default: exit "
                        f"{EXIT_UNCONVERGED})")
    p.add_argument("-q", "--quiet", action="store_true", help="print nothing but errors")
    p.set_defaults(func=cmd_impose)
    return p


def settings_from_args(args: argparse.Namespace) -> Any:
    """ImposeSettings from the command line (the mode is chosen by the library)."""
    from eftsieve.impose.core import ImposeSettings
    from eftsieve.tolerances import MIN_ESS

    return ImposeSettings(args.mode, args.samples, args.walkers, args.seed,
                          args.min_ess if args.min_ess is not None else MIN_ESS,
                          not args.no_progress, args.sampler)


def cmd_impose(args: argparse.Namespace) -> int:
    from eftsieve.cli.progress import reuse_hint
    from eftsieve.impose.api import impose
    from eftsieve.io.outset import output_set
    from eftsieve.report.outputs import IMPOSE_OUTPUTS, write_impose_outputs

    fit = load_fit_arg(args)
    outdir = Path(args.output or f"{Path(args.fit).stem}_impose")
    settings = settings_from_args(args)
    unc = uncertainty_from_args(args)
    with output_set(outdir, input_files(fit, args, args.data),
                    known=IMPOSE_OUTPUTS) as stage:
        t_region = time.monotonic()
        region, rpath = region_for(fit, args, stage)
        t_region = time.monotonic() - t_region
        if args.region is None:  # built and saved into the set: record its final place
            rpath = str(outdir / "region.json")
        result = impose(fit, region, settings=settings, uncertainty=unc, data=args.data,
                        likelihood=args.likelihood)
        summary = write_impose_outputs(fit, region, result, stage, region_path=rpath,
                                       csv=args.csv, plots=not args.no_plots)
    if not args.quiet:
        print("\n".join(impose_lines(fit.name, result, summary, outdir)))
        if args.region is None and (hint := reuse_hint(region.theory, t_region, rpath)):
            print(f"  {hint}")
    if result.driven_by_bounds:
        print(f"eftsieve impose: warning: p_inside before the truncation is "
              f"{fmt_prob(summary['p_inside_before'])}, below {fmt_prob(TINY_P_INSIDE)}: the "
              "truncated result is set by the bounds, not by the data", file=sys.stderr)
    if not result.converged and not args.allow_unconverged:
        print("eftsieve impose: error: the refit chain is not converged (see report.html); "
              "run longer with --samples, or pass --allow-unconverged", file=sys.stderr)
        return EXIT_UNCONVERGED
    return 0


def impose_lines(name: str, result: Any, summary: dict[str, Any], outdir: Path) -> list[str]:
    """The banner first, then the region's kinematics and each parameter before -> after
    with its 68% interval, from the typed result."""
    from eftsieve.report.impose_report import impose_banner

    banner = impose_banner(result)
    corr = summary.get("ess_autocorr")
    ess = f"ESS {fmt_num(summary['ess'])}" + ("" if corr is None else
                                              f" ({fmt_num(corr)} after autocorrelation)")
    lines = [f"{banner.label}: {banner.text}",
             f"  '{name}': {ess} -> {outdir / 'samples.parquet'}",
             f"  kinematics: {fmt_kinematics(summary['kinematics'])}"]
    before = summary.get("before", {})
    for p in result.posterior.parameters:
        b = before.get(p.name)
        lo, hi = p.intervals[0.68]
        was = "" if b is None else f"{fmt_pm(b['mean'], b['std'])}  ->  "
        lines.append(f"  {p.name}: {was}{fmt_pm(p.mean, p.std)} "
                     f"(68%: [{fmt_num(lo, 4)}, {fmt_num(hi, 4)}])")
    from eftsieve.report.impose_report import cone_shell_text

    note = result.figures.get("cone_shell")
    if note and note["shell_fraction"] > 0:
        lines.append("  " + cone_shell_text(note))
    lines.append(f"  report: {outdir / 'report.html'}")
    return lines

