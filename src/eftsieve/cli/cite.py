"""``eftsieve cite``: BibTeX for the papers behind a theory or a region file.

The references are each theory's own (:attr:`eftsieve.theories.base.Theory.references`);
:mod:`eftsieve.report.bibtex` renders them.
"""

from __future__ import annotations

import argparse
from typing import Any

HELP = "print BibTeX for the papers behind a theory or a region"


def add_parser(sub: Any) -> argparse.ArgumentParser:
    p = sub.add_parser("cite", help=HELP, description=HELP + " (default: every theory)")
    which = p.add_mutually_exclusive_group()
    which.add_argument("--theory", default=None, help="theory name (default: every theory)")
    which.add_argument("--region", default=None, help="region file: cite its theory")
    p.add_argument("-o", "--output", default=None, metavar="FILE",
                   help="write the BibTeX to this file instead of printing it")
    p.set_defaults(func=cmd_cite)
    return p


def cmd_cite(args: argparse.Namespace) -> int:
    from eftsieve.errors import InputError
    from eftsieve.report.bibtex import references_for, to_bibtex
    from eftsieve.theories import available_theories, get_theory

    if args.region:
        from eftsieve.region.model import Region

        names: tuple[str, ...] = (Region.load(args.region).theory,)
    elif args.theory:
        names = (args.theory,)
    else:
        names = available_theories()
    try:
        theories = [get_theory(n) for n in names]
    except KeyError as err:
        raise InputError(args.region, "--theory" if not args.region else "theory",
                         str(err.args[0]), "run `eftsieve theories`") from err
    refs = references_for(theories)
    text = to_bibtex(refs)
    if args.output:
        from eftsieve.io.atomic import atomic_write_text
        from eftsieve.io.outset import output_files

        with output_files({"-o": args.output}, [args.region]) as stage:
            atomic_write_text(stage["-o"], text)
        print(f"wrote {len(refs)} references to {args.output}")
    else:
        print(text, end="")
    return 0
