"""The ``eftsieve`` command line: parse arguments, call the library, choose the exit code.

No physics and no statistics live here.  Every :class:`~eftsieve.errors.EftsieveError`
is printed as one line (what failed, where, how to fix it) with its exit code; a
traceback appears only with ``--debug``.

Exit codes: 0 success, 2 input error, 3 region-file error, 4 solver error, 5 sampling
refused, 6 ``check --fail-below`` threshold not met, 70 internal error.
"""

from __future__ import annotations

import argparse
import json
import logging
import sys
from collections.abc import Sequence
from typing import Any

from eftsieve._version import __version__

EXIT_OK = 0
EXIT_BELOW_THRESHOLD = 6
EXIT_INTERNAL = 70


def _csv(text: str) -> list[str]:
    return [t.strip() for t in text.split(",") if t.strip()]


def _add_region_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("--theory", default="chpt-su2", help="theory name (default chpt-su2)")
    p.add_argument("--family", type=_csv, default=None,
                   help="comma-separated bound families (default: all of the theory)")
    p.add_argument("--pion-mass", type=float, nargs="+", action="extend", default=None,
                   metavar="MEV",
                   help="pion mass(es) in MeV (default 139.57); several need --convention lr")
    p.add_argument("--fpi", type=float, default=None, metavar="MEV",
                   help="F_pi in MeV (default 92.07)")
    p.add_argument("--convention", default=None,
                   help="convention of the region's coordinates (see `eftsieve theories`)")
    p.add_argument("--scale", type=float, default=None, metavar="MEV",
                   help="renormalisation scale mu in MeV for --convention lr (default 770)")
    p.add_argument("--grid", choices=["default", "fine"], default=None,
                   help="kinematic scan density (chpt-su2)")
    p.add_argument("--order", type=int, default=None, help="expansion order (scalar-eft)")
    p.add_argument("--spins", type=int, default=None, metavar="JMAX",
                   help="spin cut-off of the heavy-state grid (scalar-eft)")
    p.add_argument("--coordinates", type=_csv, default=None,
                   help="region coordinates, e.g. g3t,g4t (scalar-eft)")
    p.add_argument("--engine", choices=["local", "dask"], default=None,
                   help="scalar-eft: solve the directions of a 2-D region in parallel on dask")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="dask scheduler address (default: a local cluster of 2 workers)")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="eftsieve",
        description="Positivity bounds (causality, unitarity, crossing) on fitted EFT constants.")
    parser.add_argument("--version", action="version", version=f"eftsieve {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks and debug logs")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")

    p = sub.add_parser("theories", help="list theories, their parameters and conventions")
    p.add_argument("--json", action="store_true", help="print JSON")

    p = sub.add_parser("region", help="build the allowed region of a theory")
    _add_region_args(p)
    p.add_argument("-o", "--output", required=True, help="region file to write (JSON)")
    p.add_argument("--plot", default=None, help="also draw the region to this PNG")
    p.add_argument("--json", action="store_true", help="print the region summary as JSON")

    from eftsieve.cli.check import add_check_parser, add_demo_parser, add_impose_parser

    add_check_parser(sub)
    add_impose_parser(sub)
    add_demo_parser(sub)
    return parser


def region_settings_from_args(args: argparse.Namespace) -> dict:
    """Collect the region options that were given (None means: theory default)."""
    keys = {"family": "families", "pion_mass": "pion_masses_mev", "fpi": "fpi_mev",
            "convention": "convention", "scale": "mu_mev", "grid": "grid", "order": "order",
            "spins": "spins", "coordinates": "coordinates", "engine": "engine",
            "scheduler": "scheduler"}
    return {v: getattr(args, k) for k, v in keys.items()
            if getattr(args, k, None) is not None}


def cmd_theories(args: argparse.Namespace) -> int:
    from eftsieve.theories import available_theories, get_theory

    infos = [get_theory(n).describe() for n in available_theories()]
    if args.json:
        print(json.dumps(infos, indent=2))
        return EXIT_OK
    for info in infos:
        print(f"{info['name']}: {info['summary']}")
        print(f"  parameters:      {', '.join(info['parameters'])}")
        print(f"  region coords:   {', '.join(info['region_coordinates'])}")
        print(f"  conventions:     {', '.join(info['conventions'])}")
        print(f"  bound families:  {', '.join(info['bound_families'])}")
        print("  kinematic inputs:")
        for k, v in info["kinematic_inputs"].items():
            d = "" if v["default"] is None else f" (default {v['default']:g})"
            print(f"    {k}: {v['meaning']}{d}")
    return EXIT_OK


def cmd_region(args: argparse.Namespace) -> int:
    from eftsieve.errors import InputError
    from eftsieve.executors import dask_map, serial
    from eftsieve.region.build import build_region, describe_region
    from eftsieve.theories import get_theory

    try:
        parallel = get_theory(args.theory).parallel_build
    except KeyError as err:
        raise InputError(None, "--theory", str(err.args[0]), "run `eftsieve theories`") from err
    if (args.engine or args.scheduler) and not parallel:
        raise InputError(None, "--engine", f"{args.theory} regions are built in one process "
                         "(they take about a second)", "drop --engine/--scheduler")
    executor = dask_map(args.scheduler) if args.engine == "dask" else serial
    settings = {k: v for k, v in region_settings_from_args(args).items()
                if k not in ("engine", "scheduler")}
    region = build_region(args.theory, settings, executor)
    region.save(args.output)
    if args.plot:
        from eftsieve.report.plots import save_region_plot

        save_region_plot(region, args.plot)
    if args.json:
        print(json.dumps(region.summary(), indent=2))
    else:
        print(describe_region(region, args.output))
    return EXIT_OK


def _one_line_warning(verb: str, fallback: Any) -> Any:
    """A showwarning that prints eftsieve's own warnings as one line, without source code."""
    from eftsieve.errors import EftsieveWarning

    def show(message: Any, category: type, filename: str, lineno: int, file: Any = None,
             line: str | None = None) -> None:
        if issubclass(category, EftsieveWarning):
            print(f"eftsieve {verb}: warning: {message}", file=sys.stderr)
        else:
            fallback(message, category, filename, lineno, file, line)
    return show


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``eftsieve`` command."""
    parser = build_parser()
    args = parser.parse_args(argv)
    level = logging.DEBUG if args.debug else logging.WARNING
    logging.basicConfig(level=level, format="%(levelname)s %(name)s: %(message)s")
    for handler in logging.getLogger().handlers:  # libraries' INFO chatter stays quiet
        handler.setLevel(level)
    if args.verb is None:
        parser.print_help()
        return 2
    import warnings

    from eftsieve.errors import EftsieveError

    handlers = {"theories": cmd_theories, "region": cmd_region}
    try:
        with warnings.catch_warnings():
            if not args.debug:
                warnings.showwarning = _one_line_warning(args.verb, warnings.showwarning)
            if args.verb in handlers:
                return handlers[args.verb](args)
            return int(args.func(args))
    except EftsieveError as err:
        if args.debug:
            raise
        print(f"eftsieve {args.verb}: error: {err.one_line()}", file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt:
        print("eftsieve: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # the reader of our output went away (e.g. `| head`)
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 141
    except Exception as err:  # an internal error: say so, point to --debug
        if args.debug:
            raise
        print(f"eftsieve {args.verb}: internal error: {type(err).__name__}: {err} "
              "(rerun with --debug for the traceback, and please report it)", file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
