"""``eftsieve theories``: list the theories with their parameters and conventions."""

from __future__ import annotations

import argparse
import json
from typing import Any

HELP = "list theories, their parameters and conventions"


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser("theories", help=HELP, description=HELP)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=cmd_theories)
    return p


def cmd_theories(args: argparse.Namespace) -> int:
    from eftsieve.theories import available_theories, get_theory

    infos = [get_theory(n).describe() for n in available_theories()]
    if args.json:
        print(json.dumps(infos, indent=2))
        return 0
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
    return 0
