"""``eftsieve demo``: run the main job on the embedded, INVENTED example scenario.

The work is :func:`eftsieve.demo.run_demo`; this verb prints its lines as they come.
"""

from __future__ import annotations

import argparse
from typing import Any

HELP = "run region, check and impose on the invented example"


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser("demo", help=HELP, description=HELP)
    p.add_argument("-o", "--output", default="demo_output", help="output directory")
    p.set_defaults(func=cmd_demo)
    return p


def cmd_demo(args: argparse.Namespace) -> int:
    from eftsieve.demo import run_demo

    run_demo(args.output, echo=print)
    return 0
