"""Argument parsers and handlers of the verbs ``check``, ``impose`` and ``demo``.

Each handler parses, calls the library, writes outputs and returns the exit code; no
physics or statistics happen here.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from eftsieve.tolerances import MARGINAL_BAND

EXIT_BELOW_THRESHOLD = 6


def add_fit_args(p: argparse.ArgumentParser, many: bool = False) -> None:
    if many:
        p.add_argument("fit", nargs="+", help="fit card(s) (.yaml/.json) or a bare samples "
                       "file (.csv/.parquet/.nc, a directory or glob of Parquet files)")
    else:
        p.add_argument("fit", help="fit card (.yaml/.json) or a bare samples file "
                       "(.csv/.parquet/.nc)")
    p.add_argument("--region", default=None, help="region file (default: build from the fit)")
    p.add_argument("-o", "--output", default=None, metavar="DIR", help="output directory")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--theory", default=None, help="theory of a bare samples file")
    p.add_argument("--convention", default=None, help="convention of a bare samples file")
    p.add_argument("--pion-mass", type=float, default=None, metavar="MEV",
                   help="pion mass of a bare samples file's lbar convention")
    p.add_argument("--scale", type=float, default=None, metavar="MEV",
                   help="scale mu of a bare samples file's lr or Lr convention")
    p.add_argument("--gap", type=float, default=None, metavar="MEV",
                   help="mass gap M of a bare samples file's dimensionful convention")
    p.add_argument("--weight-column", default=None, help="weight column of a bare samples file")
    p.add_argument("--columns", default=None, metavar="SPEC",
                   help="bare file: parameters to read, 'lbar1,lbar2' (names in order for "
                        ".npy and emcee files) or 'lbar1=COL,lbar2=l[1],weight=w'")
    p.add_argument("--burn-in", type=int, default=None, metavar="N",
                   help="emcee/NetCDF file: drop the first N iterations of each walker/chain")
    p.add_argument("--thin", type=int, default=None, metavar="K",
                   help="emcee/NetCDF file: keep every K-th iteration after the burn-in")
    p.add_argument("--keep-walkers", default=None, metavar="LIST",
                   help="emcee/NetCDF file: walkers (chains) to keep, '0:16' or '0,3,5'")
    g = p.add_argument_group("theory uncertainty of the bounds (docs/physics.md)")
    g.add_argument("--theory-uncertainty", choices=["none", "fixed", "power-counting"],
                   default="none", help="model of the facets' offset uncertainty")
    g.add_argument("--sigma", default=None, metavar="FAMILY=S,...",
                   help="fixed model: sigma per bound family, in the units of the bound")
    g.add_argument("--breakdown", type=float, default=None, metavar="MEV",
                   help="power-counting: breakdown scale Lambda_b (default 4 pi F_pi)")
    g.add_argument("--coefficient-prior", default="1,1", metavar="NU0,TAU0",
                   help="power-counting: scaled-inverse-chi2 prior of cbar^2 (default 1,1)")
    g.add_argument("--thresholds", default="0.05,0.95", metavar="LOW,HIGH",
                   help="P(satisfies) thresholds of the 'uncertain' verdict")


def add_check_parser(sub: Any) -> None:
    p = sub.add_parser("check", help="classify a fit against a region, with statistics")
    add_fit_args(p, many=True)
    p.add_argument("--engine", choices=["local", "dask"], default=None,
                   help="dask: classify Parquet files partition by partition on a cluster "
                        "(needs the [dask] extra); default: one process")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="dask scheduler address (default: a local cluster of 2 workers)")
    p.add_argument("--draws", type=int, default=200_000,
                   help="draws from a Gaussian summary (default 200000)")
    p.add_argument("--band", type=float, default=None,
                   help=f"marginal band in region coordinates (default: the theory's, "
                        f"{MARGINAL_BAND:g}; 1e-06 for l_i^r and L_i^r coordinates)")
    p.add_argument("--fail-below", type=float, default=None, metavar="P",
                   help=f"exit with code {EXIT_BELOW_THRESHOLD} when p_inside < P")
    p.add_argument("--chunk-rows", type=int, default=1_000_000, help="rows per chunk")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG plots")
    p.set_defaults(func=cmd_check)


def load_fit_arg(args: argparse.Namespace):
    """A Fit from a card, or from a bare samples file with --theory/--convention."""
    from eftsieve.conventions import Convention
    from eftsieve.errors import InputError
    from eftsieve.fit import CONVENTION_NEEDS, fit_from_samples, load_fit
    from eftsieve.fit_formats.columns import parse_columns_flag
    from eftsieve.fit_formats.gvar_json import is_gvar_json
    from eftsieve.fit_formats.options import parse_options

    path = Path(args.fit)
    if (path.suffix.lower() in {".yaml", ".yml", ".json"} and not path.is_dir()
            and not (path.suffix.lower() == ".json" and is_gvar_json(path))):
        return load_fit(path)
    if not args.theory or not args.convention:
        raise InputError(path, None, "a bare samples file needs its theory and convention",
                         "add --theory NAME --convention NAME (and --pion-mass, "
                         "--scale or --gap)")
    conv_name = args.convention
    given = {"pion_mass_mev": args.pion_mass, "mu_mev": args.scale,
             "gap_mev": getattr(args, "gap", None)}
    kin = {k: float(v) for k, v in given.items() if v is not None}
    need = CONVENTION_NEEDS.get(conv_name)
    if need is not None:
        key, what = need
        if key not in kin:
            flag = _KINEMATIC_FLAGS[key]
            raise InputError(None, flag, f"convention '{conv_name}' needs {what}",
                             f"add {flag} MEV")
        conv = Convention(conv_name, **{key: kin[key]})
    else:
        conv = Convention(conv_name)
    flags = {"burn_in": getattr(args, "burn_in", None), "thin": getattr(args, "thin", None),
             "walkers": getattr(args, "keep_walkers", None)}
    spec = getattr(args, "columns", None)
    return fit_from_samples(path, args.theory, conv, weight_column=args.weight_column,
                            kinematics=kin, options=parse_options(flags, None, "--"),
                            columns=None if spec is None else parse_columns_flag(spec))


#: the command-line flag that gives each kinematic input of a bare samples file
_KINEMATIC_FLAGS = {"pion_mass_mev": "--pion-mass", "mu_mev": "--scale", "gap_mev": "--gap"}


def uncertainty_from_args(args: argparse.Namespace):
    """UncertaintySettings from the command line (None for the model 'none')."""
    from eftsieve.errors import InputError
    from eftsieve.uncertainty import UncertaintySettings

    if args.theory_uncertainty == "none":
        return None

    def pair(text: str, opt: str) -> tuple[float, float]:
        try:
            a, b = (float(v) for v in text.split(","))
        except ValueError as err:
            raise InputError(None, opt, f"expected two numbers 'A,B', got {text!r}", "") from err
        return a, b

    sig: dict[str, float] = {}
    for item in (args.sigma or "").split(","):
        if not item.strip():
            continue
        if "=" not in item:
            raise InputError(None, "--sigma", f"expected FAMILY=SIGMA, got {item!r}",
                             "e.g. --sigma t-derivative=0.3")
        k, v = item.split("=", 1)
        try:
            sig[k.strip()] = float(v)
        except ValueError as err:
            raise InputError(None, "--sigma", f"not a number: {v!r}", "") from err
    if args.theory_uncertainty == "fixed" and not sig:
        raise InputError(None, "--sigma", "the fixed model needs a sigma per bound family",
                         "e.g. --sigma t-derivative=0.3,second-derivative=0.3")
    nu0, tau0 = pair(args.coefficient_prior, "--coefficient-prior")
    lo, hi = pair(args.thresholds, "--thresholds")
    return UncertaintySettings(args.theory_uncertainty, sig, args.breakdown, nu0, tau0, lo, hi)


def region_for(fit, args: argparse.Namespace, outdir: Path):
    """The region from --region, or built from the fit and saved next to the outputs."""
    from eftsieve.region import Region
    from eftsieve.theories import get_theory

    if args.region:
        return Region.load(args.region), str(args.region)
    th = get_theory(fit.theory)
    region = th.build_region(th.region_settings_for_fit(fit))
    path = outdir / "region.json"
    region.save(path)
    return region, str(path)


def _inputs(fit, args) -> list:
    ins = [fit.source, args.region]
    if fit.samples is not None:
        ins.append(fit.samples.path)
    if fit.extra.get("gaussian_file"):
        ins.append(fit.extra["gaussian_file"])
    return ins


def cmd_check(args: argparse.Namespace) -> int:
    """``eftsieve check``: one fit, or several cards with one summary table."""
    if len(args.fit) > 1:
        return cmd_check_many(args)
    args.fit = args.fit[0]
    return cmd_check_one(args)


def cmd_check_many(args: argparse.Namespace) -> int:
    from eftsieve.check import CheckSettings
    from eftsieve.region import Region
    from eftsieve.scale.many import check_many

    if uncertainty_from_args(args) is not None:
        from eftsieve.errors import InputError

        raise InputError(None, "--theory-uncertainty", "several cards run without a "
                         "theory-uncertainty model", "check the cards one at a time")
    outdir = Path(args.output or "checks")
    settings = CheckSettings(draws=args.draws, seed=args.seed, marginal_band=args.band,
                             chunk_rows=args.chunk_rows)
    many = check_many([Path(f) for f in args.fit], settings, outdir,
                      region=Region.load(args.region) if args.region else None,
                      region_path=args.region, engine=args.engine or "local",
                      scheduler=args.scheduler,
                      loader=lambda p: load_fit_arg(argparse.Namespace(**{**vars(args),
                                                                          "fit": str(p)})))
    for fit, res, d in zip(many.fits, many.results, many.outdirs, strict=True):
        _write_check_outputs(fit, res, d, args.no_plots)
    print(f"checked {len(many.fits)} fits; table {many.table}")
    for row in many.rows:
        print("  " + ", ".join(f"{k}={v}" for k, v in row.items()
                               if k in ("fit", "n_total", "p_inside", "tension_sigma")))
    below = [r for r in many.rows if args.fail_below is not None
             and float(r["p_inside"]) < args.fail_below]
    return EXIT_BELOW_THRESHOLD if below else 0


def _write_check_outputs(fit, result, outdir: Path, no_plots: bool) -> None:
    from eftsieve.io import atomic_write_json, atomic_write_text
    from eftsieve.report.check_report import check_document
    from eftsieve.report.document import to_html, to_markdown

    images = {} if no_plots else check_plots(result, fit, outdir)
    atomic_write_json(outdir / "summary.json", result.summary)
    doc = check_document(fit, result.region, result.summary, result.worst, images)
    atomic_write_text(outdir / "report.md", to_markdown(doc))
    atomic_write_text(outdir / "report.html", to_html(doc))


def cmd_check_one(args: argparse.Namespace) -> int:
    from eftsieve.check import CheckSettings
    from eftsieve.check_run import run_check
    from eftsieve.io import guard_inputs

    fit = load_fit_arg(args)
    outdir = Path(args.output or f"{Path(args.fit).stem}_check")
    names = ["summary.json", "flagged.csv", "report.md", "report.html", "corner.png",
             "region.png", "region.json"]
    guard_inputs([outdir / n for n in names], _inputs(fit, args))
    outdir.mkdir(parents=True, exist_ok=True)
    region, rpath = region_for(fit, args, outdir)
    settings = CheckSettings(draws=args.draws, seed=args.seed, marginal_band=args.band,
                             chunk_rows=args.chunk_rows)
    unc = uncertainty_from_args(args)
    multi = fit.samples is not None and fit.samples.is_multi_file
    if args.engine or args.scheduler or multi:
        from eftsieve.scale.local_engine import check_with_engine

        result = check_with_engine(args.engine or "local", fit, region, settings, outdir, rpath,
                                   scheduler=args.scheduler, uncertainty=unc)
    else:
        result = run_check(fit, region, settings, outdir, rpath, unc)
    _write_check_outputs(fit, result, outdir, args.no_plots)
    s = result.summary
    print(f"checked {s['n_total']} points of '{fit.name}' against {region.theory} "
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
        print(f"  with theory uncertainty ({args.theory_uncertainty}): p_inside = "
              f"{tu['p_inside']:.4g} +- {tu['p_inside_err']:.2g}, uncertain {tu['n_uncertain']}, "
              f"tension {tu['tension_sigma']:.2f} sigma")
    print(f"  report: {outdir / 'report.html'}")
    if args.fail_below is not None and s["p_inside"] < args.fail_below:
        print(f"  p_inside {s['p_inside']:.4g} < --fail-below {args.fail_below:g}")
        return EXIT_BELOW_THRESHOLD
    return 0


def check_plots(result, fit, outdir: Path) -> dict[str, Path]:
    """region.png and corner.png of a check; returns the written paths."""
    from eftsieve.report.plots import save_corner, save_region_plot

    region = result.region
    images = {}
    if region.dim in (1, 2) and len(result.plot_region_coords):
        tu = result.summary.get("theory_uncertainty")
        bands = (None if not tu else dict(enumerate(tu["model"]["sigma_median"])))
        images["region"] = save_region_plot(region, outdir / "region.png",
                                            samples=result.plot_region_coords,
                                            weights=result.plot_weights, bands=bands)
    # corner in region coordinates for the constrained parameters, the rest as they are
    import numpy as np

    cmap_cols = region_columns(result.summary["coordinate_map"]["jacobian"])
    data = result.plot_samples.copy()
    names = list(fit.names)
    for k, col in cmap_cols.items():
        data[:, col] = result.plot_region_coords[:, k]
        names[col] = f"{region.coordinates[k]} (region)"
    if len(data) > 1 and np.all(np.ptp(data, axis=0) > 0):
        images["corner"] = save_corner(outdir / "corner.png", data, names,
                                       weights=result.plot_weights, region=region,
                                       region_coords=cmap_cols)
    return images


def region_columns(jac) -> dict[int, int]:
    """Region coordinate k -> the single fit column it is made from (affine maps only)."""
    if jac is None:
        return {}
    cols = {}
    for k, row in enumerate(jac):
        nz = [i for i, v in enumerate(row) if abs(v) > 0]
        if len(nz) == 1:
            cols[k] = nz[0]
    return cols


def add_impose_parser(sub: Any) -> None:
    from eftsieve.impose.command import add_parser

    add_parser(sub)


def add_demo_parser(sub: Any) -> None:
    from eftsieve.demo import add_parser

    add_parser(sub)
