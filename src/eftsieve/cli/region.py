"""``eftsieve region``: build the allowed region of a theory and save it."""

from __future__ import annotations

import argparse
import json
from typing import Any

from eftsieve.cli.args import add_region_args, build_region_named, region_settings_from_args

HELP = "build the allowed region of a theory"


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser("region", help=HELP, description=HELP)
    add_region_args(p)
    p.add_argument("-o", "--output", required=True, help="region file to write (JSON)")
    p.add_argument("--plot", default=None, help="also draw the region to this PNG")
    p.add_argument("--json", action="store_true", help="print the region summary as JSON")
    p.set_defaults(func=cmd_region)
    return p


def cmd_region(args: argparse.Namespace) -> int:
    from eftsieve.api import get_theory
    from eftsieve.errors import InputError
    from eftsieve.executors import dask_map, processes, serial
    from eftsieve.region.build import describe_region

    try:
        parallel = get_theory(args.theory).parallel_build
    except KeyError as err:
        raise InputError(None, "--theory", str(err.args[0]), "run `eftsieve theories`") from err
    if (args.engine or args.scheduler) and not parallel:
        raise InputError(None, "--engine", f"{args.theory} regions are built in one process "
                         "(they take about a second)", "drop --engine/--scheduler")
    if args.scheduler and args.engine != "dask":
        raise InputError(None, "--scheduler", "a scheduler address needs the dask engine",
                         "add --engine dask")
    if args.engine == "dask":
        executor = dask_map(args.scheduler)
    elif args.engine == "processes":
        import os

        cores = os.sched_getaffinity(0) if hasattr(os, "sched_getaffinity") else None
        executor = processes(max(1, len(cores) if cores else (os.cpu_count() or 1)))
    else:
        executor = serial
    from eftsieve.io.outset import output_files

    targets = {"-o": args.output, **({"--plot": args.plot} if args.plot else {})}
    with output_files(targets) as stage:  # both files, or the previous ones
        region = build_region_named(args.theory, region_settings_from_args(args),
                                    executor=executor, quiet=args.json)
        region.save(stage["-o"])
        if args.plot:
            from eftsieve.report.plots import save_region_plot

            save_region_plot(region, stage["--plot"])
    if args.json:
        print(json.dumps(region.summary(), indent=2))
    else:
        from eftsieve.numbers import fmt_kinematics

        print(describe_region(region, args.output))
        kin = get_theory(region.theory).region_kinematics(region)
        print(f"  kinematics: {fmt_kinematics(kin)}")
        # how an elastic build proved its inner points when the branch and bound could
        # not run (the standing cautions are in the region file and every report)
        for note in region.notes:
            if note.startswith("elastic inner points"):
                print(f"  note: {note}")
    return 0
