"""``eftsieve limits``: published limits (an interval card or a HEPData record) against
positivity.

Parses the options, calls :mod:`eftsieve.limits.run` and
:func:`eftsieve.report.limits_report.write_limits_outputs`, and prints the table.  No
physics or statistics happen here.
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from eftsieve.cli.args import csv_list, nonnegative_int, positive_int
from eftsieve.fit.formats.hepdata import is_record

if TYPE_CHECKING:
    from eftsieve.region.model import Region

HELP = "what positivity leaves of published limits (interval card or HEPData record)"


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser("limits", help=HELP, description=HELP)
    p.add_argument("input", help="an interval card (.csv) or a HEPData record "
                   "(submission.yaml, or the folder holding it)")
    p.add_argument("--theory", default=None,
                   help="theory of a HEPData record (an interval card names it per row)")
    p.add_argument("--convention", default=None,
                   help="convention of a HEPData record's coefficients (theories that "
                        "offer several must be told; default none)")
    p.add_argument("--table", action="append", default=None, metavar="NAME",
                   help="HEPData: read only this table (repeat for several; default all)")
    p.add_argument("--region", action="append", default=None, metavar="FILE",
                   help="region file (repeat for several theories; default: build each "
                        "theory's region)")
    p.add_argument("--family", type=csv_list, default=None,
                   help="bound family of the regions built (default: the theory's)")
    p.add_argument("--no-exact", action="store_true",
                   help="do not settle the gap between inner and outer facets by exact "
                        "membership solves (report it as undecided)")
    p.add_argument("--draws", type=positive_int, default=200_000,
                   help="draws of the check of HEPData central values (default 200000)")
    p.add_argument("--seed", type=nonnegative_int, default=0, help="random seed (default 0)")
    p.add_argument("-o", "--output", default=None, metavar="DIR", help="output directory")
    p.add_argument("--no-plots", action="store_true", help="skip the PNG plots")
    p.add_argument("--json", action="store_true",
                   help="print summary.json to stdout instead of the table")
    p.add_argument("-q", "--quiet", action="store_true", help="print nothing but errors")
    p.set_defaults(func=cmd_limits)
    return p


class _Regions:
    """Each theory's region: a --region file of that theory, or built and saved."""

    def __init__(self, args: argparse.Namespace, stage: Path, outdir: Path) -> None:
        from eftsieve.api import load_region
        from eftsieve.errors import InputError

        self.given: dict[str, tuple[Region, str]] = {}
        self.files: dict[str, str] = {}
        for f in args.region or []:
            r = load_region(f)
            if r.theory in self.given:
                raise InputError(f, "--region", f"a second region of {r.theory} (the first "
                                 f"is {self.given[r.theory][1]})", "give one region per "
                                 "theory")
            self.given[r.theory] = (r, f)
            self.files[r.theory] = f
        self.family, self.stage, self.outdir = args.family, stage, outdir
        #: seconds each region built here took (for the hint to reuse it)
        self.seconds: dict[str, float] = {}
        self.quiet = bool(args.quiet or args.json)

    def refuse_unused(self, theories: set[str]) -> None:
        """A --region file whose theory no row or record uses was read for nothing: refuse
        it rather than let the user believe the result used it."""
        from eftsieve.errors import InputError

        for theory, f in self.files.items():
            if theory not in theories:
                raise InputError(f, "--region", f"is a region of {theory}, which the input "
                                 f"does not use (it uses {', '.join(sorted(theories))})",
                                 "give the region of the input's theory, or omit --region")

    def __call__(self, theory: str, coefficients: Sequence[str] = ()
                 ) -> tuple[Region, str | None]:
        from eftsieve.cli.args import build_region_named
        from eftsieve.theories import get_theory

        if theory in self.given:
            return self.given[theory]
        settings: dict[str, Any] = {"families": self.family} if self.family else {}
        # the theory's default region, widened to cover the card's coefficients
        settings.update(get_theory(theory).region_settings_for_coefficients(coefficients))
        t0 = time.monotonic()
        region = build_region_named(theory, settings, quiet=self.quiet)
        name = f"region_{theory}.json"
        self.seconds[theory] = time.monotonic() - t0
        region.save(self.stage / name)
        self.given[theory] = (region, str(self.outdir / name))
        return self.given[theory]


def cmd_limits(args: argparse.Namespace) -> int:
    from eftsieve.io.outset import output_set
    from eftsieve.report.limits_report import (
        LIMITS_OUTPUTS,
        limits_lines,
        write_limits_outputs,
    )

    path = Path(args.input)
    outdir = Path(args.output or f"{path.stem if not is_record(path) else 'hepdata'}_limits")
    with output_set(outdir, [path, *(args.region or [])], known=LIMITS_OUTPUTS) as stage:
        regions = _Regions(args, stage, outdir)
        result = _run(args, path, regions)
        write_limits_outputs(result, stage, plots=not args.no_plots)
    if args.json:
        import json

        print(json.dumps(result.to_dict(), indent=1, sort_keys=True, default=str))
    elif not args.quiet:
        print("\n".join(limits_lines(result, outdir)))
        from eftsieve.cli.progress import reuse_hint

        for theory, seconds in regions.seconds.items():
            if hint := reuse_hint(theory, seconds, regions.given[theory][1]):
                print(f"  {hint}")
    return 0


def _run(args: argparse.Namespace, path: Path, regions: _Regions) -> Any:
    from eftsieve.errors import InputError
    from eftsieve.limits.run import limits_from_card, limits_from_record

    exact = not args.no_exact
    if not is_record(path):
        if path.is_dir():
            raise InputError(path, None, "is a folder without a submission.yaml",
                             "give an interval card (.csv), a HEPData submission.yaml or "
                             "the folder holding it")
        if not path.exists():
            raise InputError(path, None, "file not found", "check the path")
        if path.suffix.lower() != ".csv":
            raise InputError(path, None, "is neither an interval card (.csv) nor a HEPData "
                             "record", "give a .csv interval card or a submission.yaml")
        for opt in ("theory", "convention", "table"):
            if getattr(args, opt):
                raise InputError(None, f"--{opt}", "applies to HEPData records only",
                                 "an interval card states theory and convention per row")
        from eftsieve.fit.formats.interval_card import read_interval_card
        from eftsieve.theories import get_theory

        rows = read_interval_card(path, get_theory)
        regions.refuse_unused({r.theory for r in rows})
        return limits_from_card(path, regions, exact=exact, rows=rows)
    if not args.theory:
        raise InputError(path, None, "a HEPData record does not name its theory",
                         "add --theory NAME (see `eftsieve theories`)")
    conv = record_convention(args.theory, args.convention)
    regions.refuse_unused({args.theory})
    region, rpath = regions(args.theory)
    return limits_from_record(path, args.theory, conv, region, rpath, tables=args.table,
                              exact=exact, draws=args.draws, seed=args.seed)


def record_convention(theory: str, name: str | None) -> Any:
    """The declared convention of a record's coefficients (refused when the theory offers
    several and none is given)."""
    from eftsieve.errors import InputError
    from eftsieve.fit.formats.interval_card import declared_convention
    from eftsieve.theories import get_theory

    try:
        th = get_theory(theory)
    except KeyError as err:
        raise InputError(None, "--theory", str(err.args[0]), "run `eftsieve theories`") from err
    return declared_convention(th, name, {}, None, "--convention")
