"""``eftsieve check``: classify one fit, or several cards, against a region.

Parses the options, calls the check run and
:func:`eftsieve.report.outputs.write_check_outputs`, prints a few lines and chooses the
exit code.  No physics or statistics happen here.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from eftsieve.cli.args import (
    add_fit_args,
    finite_float,
    input_files,
    load_fit_arg,
    nonnegative_float,
    positive_int,
    region_for,
    uncertainty_from_args,
)
from eftsieve.tolerances import MARGINAL_BAND

#: exit code of ``--fail-below P`` when p_inside < P
EXIT_BELOW_THRESHOLD = 6
HELP = "classify a fit against a region, with statistics"


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser("check", help=HELP, description=HELP)
    add_fit_args(p, many=True)
    p.add_argument("--engine", choices=["local", "dask"], default=None,
                   help="dask: classify Parquet files partition by partition on a cluster "
                        "(needs the [dask] extra); default: one process")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="dask scheduler address (default: a local cluster of 2 workers)")
    p.add_argument("--draws", type=positive_int, default=200_000,
                   help="draws from a Gaussian summary (default 200000)")
    p.add_argument("--band", type=nonnegative_float, default=None,
                   help=f"marginal band in region coordinates (default: the theory's, "
                        f"{MARGINAL_BAND:g}; 1e-06 for l_i^r and L_i^r coordinates)")
    p.add_argument("--fail-below", type=finite_float, default=None, metavar="P",
                   help=f"exit with code {EXIT_BELOW_THRESHOLD} when p_inside < P")
    p.add_argument("--chunk-rows", type=positive_int, default=1_000_000,
                   help="rows per chunk (default 1000000)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG plots")
    p.add_argument("--flagged-format", choices=["csv", "parquet"], default="csv",
                   help="file of the rows not inside: flagged.csv or flagged.parquet "
                        "(default csv)")
    p.set_defaults(func=cmd_check)
    return p


def _settings(args: argparse.Namespace) -> Any:
    from eftsieve.check.verdicts import CheckSettings

    return CheckSettings(draws=args.draws, seed=args.seed, marginal_band=args.band,
                         chunk_rows=args.chunk_rows, flagged_format=args.flagged_format)


def cmd_check(args: argparse.Namespace) -> int:
    """One fit, or several cards with one summary table."""
    if len(args.fit) > 1:
        return cmd_check_many(args)
    args.fit = args.fit[0]
    return cmd_check_one(args)


def cmd_check_many(args: argparse.Namespace) -> int:
    from eftsieve.api import load_region
    from eftsieve.check.many import check_many
    from eftsieve.report.outputs import write_check_outputs

    if uncertainty_from_args(args) is not None:
        from eftsieve.errors import InputError

        raise InputError(None, "--theory-uncertainty", "several cards run without a "
                         "theory-uncertainty model", "check the cards one at a time")
    from eftsieve.io.outset import output_set

    outdir = Path(args.output or "checks")
    inputs = [args.region, *args.fit]
    with output_set(outdir, inputs) as stage:
        many = check_many([Path(f) for f in args.fit], _settings(args), stage,
                          region=load_region(args.region) if args.region else None,
                          region_path=args.region, engine=args.engine or "local",
                          scheduler=args.scheduler, final_outdir=outdir,
                          loader=lambda p: load_fit_arg(argparse.Namespace(
                              **{**vars(args), "fit": str(p)})))
        for fit, res, d in zip(many.fits, many.results, many.outdirs, strict=True):
            write_check_outputs(fit, res, d, plots=not args.no_plots)
    print(f"checked {len(many.fits)} fits; table {outdir / many.table.name}")
    for row in many.rows:
        print("  " + ", ".join(f"{k}={v}" for k, v in row.items()
                               if k in ("fit", "n_total", "p_inside", "tension_sigma")))
    below = [r for r in many.rows if args.fail_below is not None
             and float(r["p_inside"]) < args.fail_below]
    return EXIT_BELOW_THRESHOLD if below else 0


def cmd_check_one(args: argparse.Namespace) -> int:
    from eftsieve.check.run import run_check
    from eftsieve.io.outset import output_set
    from eftsieve.report.outputs import CHECK_OUTPUTS, write_check_outputs

    fit = load_fit_arg(args)
    outdir = Path(args.output or f"{Path(args.fit).stem}_check")
    settings = _settings(args)
    unc = uncertainty_from_args(args)
    with output_set(outdir, input_files(fit, args), known=CHECK_OUTPUTS) as stage:
        region, rpath = region_for(fit, args, stage)
        if args.region is None:  # built and saved into the set: record its final place
            rpath = str(outdir / "region.json")
        result = run_check(fit, region, settings, stage, rpath, unc,
                           engine=args.engine or "local", scheduler=args.scheduler)
        write_check_outputs(fit, result, stage, plots=not args.no_plots)
    _print_summary(fit.name, region, rpath, result.summary, args.theory_uncertainty)
    print(f"  report: {outdir / 'report.html'}")
    s = result.summary
    if args.fail_below is not None and s["p_inside"] < args.fail_below:
        print(f"  p_inside {s['p_inside']:.4g} < --fail-below {args.fail_below:g}")
        return EXIT_BELOW_THRESHOLD
    return 0


def _print_summary(name: str, region: Any, rpath: str, s: dict[str, Any], model: str) -> None:
    print(f"checked {s['n_total']} points of '{name}' against {region.theory} "
          f"({len(region.facets)} facets, region {rpath})")
    unc_txt = f", uncertain {s['n_uncertain']}" if s.get("n_uncertain") else ""
    print(f"  inside {s['n_inside']}, marginal {s['n_marginal']}, outside {s['n_outside']}"
          f"{unc_txt}")
    bm = s.get("p_inside_mc_err_batch") if s["source"] == "samples" else None
    bm_txt = "" if bm is None else f" (batch means +- {bm:.2g}, tau {s['tau_inside']:.3g})"
    print(f"  p_inside = {s['p_inside']:.4g} +- {s['p_inside_err']:.2g}{bm_txt}; tension "
          f"{s['tension_sigma']:.2f} sigma (p = {s['tension_p']:.3g})")
    tu = s.get("theory_uncertainty")
    if tu:
        print(f"  with theory uncertainty ({model}): p_inside = "
              f"{tu['p_inside']:.4g} +- {tu['p_inside_err']:.2g}, uncertain {tu['n_uncertain']}, "
              f"tension {tu['tension_sigma']:.2f} sigma")
