"""``eftsieve check``: classify one fit, or several cards, against a region.

Parses the options, calls the check run and
:func:`eftsieve.report.outputs.write_check_outputs`, prints a few lines and chooses the
exit code.  No physics or statistics happen here.
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path
from typing import TYPE_CHECKING, Any

from eftsieve.cli.args import (
    add_fit_args,
    finite_float,
    input_files,
    is_card,
    load_fit_arg,
    nonnegative_float,
    nonnegative_int,
    positive_int,
    region_for,
    uncertainty_from_args,
)
from eftsieve.numbers import fmt_kinematics, fmt_num, fmt_pct, fmt_pm, fmt_prob, fmt_sigma
from eftsieve.tolerances import MARGINAL_BAND

if TYPE_CHECKING:
    from eftsieve.check.result import CheckResult

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
    p.add_argument("--shell-solves", type=nonnegative_int, default=1000, metavar="N",
                   help="exact solves per partition (file, or the Gaussian draws) for the "
                        "points between a cone's inner and outer facets; beyond N they stay "
                        "marginal (default 1000; 0: none)")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG plots")
    p.add_argument("--flagged-format", choices=["csv", "parquet"], default="csv",
                   help="file of the rows not inside: flagged.csv or flagged.parquet "
                        "(default csv)")
    p.add_argument("--flagged-limit", type=nonnegative_int, default=None, metavar="N",
                   help="write at most N flagged rows, the first in row order (default: "
                        "all); the terminal and the report say when rows were left out")
    p.add_argument("--flagged-margins", action="store_true",
                   help="also write each flagged row's margin to every facet (margin_0, ...); "
                        "off by default: on a many-facet region it multiplies the file's size")
    p.add_argument("--flagged", action="store_true",
                   help="write the flagged file for the synthetic draws of a Gaussian card too "
                        "(default: only for the rows of a samples file)")
    p.add_argument("--json", action="store_true",
                   help="print summary.json to stdout instead of the text summary")
    p.add_argument("-q", "--quiet", action="store_true",
                   help="print nothing but errors (the exit code and the output folder "
                        "carry the result)")
    p.set_defaults(func=cmd_check)
    return p


def _settings(args: argparse.Namespace) -> Any:
    from eftsieve.check.verdicts import CheckSettings

    return CheckSettings(draws=args.draws, seed=args.seed, marginal_band=args.band,
                         chunk_rows=args.chunk_rows, flagged_format=args.flagged_format,
                         flagged_margins=args.flagged_margins,
                         flagged_limit=args.flagged_limit, shell_solves=args.shell_solves)


def cmd_check(args: argparse.Namespace) -> int:
    """One fit, or several cards with one summary table."""
    if len(args.fit) > 1:
        return cmd_check_many(args)
    args.fit = args.fit[0]
    return cmd_check_one(args)


def cmd_check_many(args: argparse.Namespace) -> int:
    from eftsieve.api import load_region
    from eftsieve.check.many import check_many
    from eftsieve.errors import InputError
    from eftsieve.report.outputs import write_check_outputs

    if uncertainty_from_args(args) is not None:
        raise InputError(None, "--theory-uncertainty", "several cards run without a "
                         "theory-uncertainty model", "check the cards one at a time")
    masses = args.pion_mass or []
    if args.family or len(masses) > 1 or (masses and any(is_card(f) for f in args.fit)):
        flag = "--family" if args.family else "--pion-mass"
        raise InputError(None, flag, "several fits are checked against one region file, or "
                         "each against its own default region", "build the region once with "
                         f"`eftsieve region {flag} ...` and pass it with --region (one "
                         "--pion-mass value stays the mass of bare samples files)")
    from eftsieve.api import check_kinematics
    from eftsieve.io.outset import output_set

    outdir = Path(args.output or "checks")
    inputs = [args.region, *args.fit]
    region = load_region(args.region) if args.region else None

    def loader(p: Path) -> Any:
        fit = load_fit_arg(argparse.Namespace(**{**vars(args), "fit": str(p)}))
        if region is not None:  # every card's kinematics against the one region file
            check_kinematics(fit, region, args.region,
                             getattr(args, "allow_kinematics_mismatch", False))
        return fit

    with output_set(outdir, inputs) as stage:
        many = check_many([Path(f) for f in args.fit], _settings(args), stage,
                          region=region, region_path=args.region,
                          engine=args.engine or "local", scheduler=args.scheduler,
                          final_outdir=outdir, loader=loader)
        for fit, res, d in zip(many.fits, many.results, many.outdirs, strict=True):
            write_check_outputs(fit, res, d, plots=not args.no_plots)
    if not args.quiet:
        for res, card in zip(many.results, args.fit, strict=True):
            v = res.verdict
            print(f"{v.label}: {Path(card).name} ('{res.fit.name}') - {v.reason}")
            print(f"  tension: {v.tension_text}; kinematics: {fmt_kinematics(res.kinematics)}")
        print(f"checked {len(many.fits)} fits; table {outdir / many.table.name}")
    below = [r for r in many.rows if args.fail_below is not None
             and float(r["p_inside"]) < args.fail_below]
    return EXIT_BELOW_THRESHOLD if below else 0


def cmd_check_one(args: argparse.Namespace) -> int:
    from eftsieve.check.run import run_check
    from eftsieve.cli.progress import reuse_hint
    from eftsieve.io.outset import output_set
    from eftsieve.report.check_report import corner_cap_text, flagged_file_text
    from eftsieve.report.outputs import CHECK_OUTPUTS, write_check_outputs

    fit = load_fit_arg(args)
    outdir = Path(args.output or f"{Path(args.fit).stem}_check")
    settings = _settings(args)
    unc = uncertainty_from_args(args)
    with output_set(outdir, input_files(fit, args), known=CHECK_OUTPUTS) as stage:
        t_region = time.monotonic()
        region, rpath = region_for(fit, args, stage)
        t_region = time.monotonic() - t_region
        if args.region is None:  # built and saved into the set: record its final place
            rpath = str(outdir / "region.json")
        flag_dir = stage if (not fit.is_gaussian or args.flagged) else None
        from eftsieve.cli.progress import progress_for

        bar = progress_for(args.quiet, args.json) if (args.engine or "local") == "local" \
            else None
        try:
            result = run_check(fit, region, settings, flag_dir, rpath, unc,
                               engine=args.engine or "local", scheduler=args.scheduler,
                               progress=bar)
        finally:
            if bar is not None:
                bar.close()
        written = write_check_outputs(fit, result, stage, plots=not args.no_plots)
    if args.json:
        import json

        print(json.dumps(result.to_dict(), indent=1, sort_keys=True, default=str))
    elif not args.quiet:
        print("\n".join(summary_lines(result, rpath)))
        print(f"  report: {outdir / 'report.html'}")
        if "corner" in written and corner_cap_text(len(fit.names)):
            print(f"  {corner_cap_text(len(fit.names))}")
        if flag_dir is not None and settings.flagged_limit is not None:
            print(f"  {flagged_file_text(result)}".replace("`", ""))
        if args.region is None and (hint := reuse_hint(region.theory, t_region, rpath)):
            print(f"  {hint}")
    if args.fail_below is not None and result.p_inside < args.fail_below:
        if not args.quiet and not args.json:
            print(f"  p_inside {fmt_prob(result.p_inside)} < --fail-below {args.fail_below:g}")
        return EXIT_BELOW_THRESHOLD
    return 0


def summary_lines(result: CheckResult, rpath: str | None) -> list[str]:
    """What the terminal shows after a check: the verdict first, then the kinematics the
    region was built at, the counts, p_inside and the tension, all from the typed result."""
    from eftsieve.check.verdict import p_inside_clause

    v = result.verdict
    c = result.counts
    what = ("Gaussian draws" if result.source == "gaussian" else
            "weighted rows" if result.plot_weights is not None else "rows")
    unc = f", uncertain {c.uncertain}" if c.uncertain else ""
    lines = [f"verdict: {v.label} - {v.reason}",
             f"  checked {c.total} {what} of '{result.fit.name}' against "
             f"{result.region.theory} ({len(result.region.facets)} facets, region {rpath})",
             f"  kinematics: {fmt_kinematics(result.kinematics)}",
             f"  inside {c.inside}, marginal {c.marginal}, outside {c.outside}{unc}",
             f"  {p_inside_clause(v.p_inside_text)}; tension: {v.tension_text}"]
    tu = result.theory_uncertainty
    if tu:
        lines.append(f"  with theory uncertainty ({tu['model']['settings']['model']}): p_inside = "
                     f"{fmt_pm(tu['p_inside'], tu['p_inside_err'])}, uncertain "
                     f"{tu['n_uncertain']}, tension {fmt_sigma(tu['tension_sigma'])}")
    if result.shell is not None:
        lines.append("  " + shell_line(result))
    worst = v.facets[0] if v.facets else None
    if worst is not None and worst.p_violate > 0:
        at = facet_mass_text(result.region, worst.index)
        lines.append(f"  most violated: {worst.label}{f' ({at})' if at else ''}, "
                     f"{fmt_pct(worst.p_violate)} of the probability ({worst.inequality})")
    return lines


def shell_line(result: CheckResult) -> str:
    """The terminal's line on the exact solves of a cone's shell."""
    sh = result.shell
    if sh is None:
        return ""
    text = (f"shell (between inner and outer cones): {sh.n_shell} points "
            f"({fmt_pct(sh.shell_fraction)}); inside {sh.n_inside}, outside "
            f"{sh.n_outside} ({sh.n_learned} by learned facets, no solve), left marginal "
            f"{sh.n_marginal}")
    if sh.reasons:
        text += " (" + "; ".join(f"{r}: {n}" for r, n in sh.reasons[:2]) + ")"
    text += f"; {sh.n_solves} exact solves"
    if sh.n_marginal:
        text += (f"; p_inside counts the marginal ones as inside, so it may be lower by up to "
                 f"{fmt_prob(sh.marginal_fraction)}")
    return text


def facet_mass_text(region: Any, index: int) -> str:
    """The mass(es) a facet holds at, when the region was built at several masses (a
    region at several pion masses: which mass gives the facet), else ''."""
    parts = []
    for key, value in region.facets[index].point.items():
        plural = key.replace("_mass_", "_masses_")
        many = region.settings.get(plural)
        if plural != key and isinstance(many, (list, tuple)) and len(many) > 1:
            parts.append(f"{key.removesuffix('_mev')} = {fmt_num(value, 6)} MeV")
    return ", ".join(parts)
