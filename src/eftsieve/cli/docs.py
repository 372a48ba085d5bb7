"""The option tables of docs/cli.md, generated from the parser.

Each verb's section of docs/cli.md holds a table between the markers
``<!-- options:VERB -->`` and ``<!-- /options:VERB -->``.  :func:`update_cli_md`
rewrites those tables from :func:`eftsieve.cli.main.build_parser`;
``python -m eftsieve.cli.docs docs/cli.md`` runs it, and tests/cli/test_cli_docs.py
fails when the file and the parser disagree.
"""

from __future__ import annotations

import argparse
import re
import sys
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True)
class OptionRow:
    """One option of one verb, as docs/cli.md shows it.

    Attributes
    ----------
    names
        The option strings (``-o, --output``) or the positional's name (``FIT``).
    default
        The default as text: ``off`` for a flag, empty when there is none.
    choices
        The accepted values, comma-separated, or empty.
    meaning
        The help text.
    """

    names: str
    default: str
    choices: str
    meaning: str

    def to_dict(self) -> dict[str, str]:
        return {"names": self.names, "default": self.default, "choices": self.choices,
                "meaning": self.meaning}

    def markdown(self) -> str:
        cells = (f"`{self.names}`", f"`{self.default}`" if self.default else "",
                 ", ".join(f"`{c}`" for c in self.choices.split(", ")) if self.choices else "",
                 self.meaning)
        return "| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |"


def verb_parsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    """Verb name -> its sub-parser."""
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


def _default_text(action: argparse.Action) -> str:
    if isinstance(action, (argparse._StoreTrueAction, argparse._StoreFalseAction)):
        return "off" if action.default is False else "on"
    if action.default is None or action.default is argparse.SUPPRESS:
        return ""
    if isinstance(action.default, (list, tuple)):
        return ",".join(str(v) for v in action.default)
    return str(action.default)


def option_rows(sub: argparse.ArgumentParser) -> list[OptionRow]:
    """Every option of one verb (``-h`` left out), in the parser's order."""
    rows = []
    for action in sub._actions:
        if isinstance(action, argparse._HelpAction):
            continue
        names = (", ".join(action.option_strings) if action.option_strings
                 else str(action.metavar or action.dest).upper())
        choices = ", ".join(str(c) for c in action.choices) if action.choices else ""
        meaning = " ".join((action.help or "").split())
        rows.append(OptionRow(names, _default_text(action), choices, meaning))
    return rows


def options_table(sub: argparse.ArgumentParser) -> str:
    """The markdown table of one verb's options."""
    head = "| option | default | choices | meaning |\n|---|---|---|---|\n"
    return head + "\n".join(r.markdown() for r in option_rows(sub)) + "\n"


def _markers(verb: str) -> tuple[str, str]:
    return f"<!-- options:{verb} -->", f"<!-- /options:{verb} -->"


def table_in(text: str, verb: str) -> str | None:
    """The table between a verb's markers in docs/cli.md, or None if the markers are missing."""
    start, end = _markers(verb)
    m = re.search(re.escape(start) + r"\n(.*?)" + re.escape(end), text, re.S)
    return None if m is None else m.group(1)


def update_cli_md(text: str, parser: argparse.ArgumentParser) -> str:
    """``text`` with every verb's table regenerated (markers must already be there)."""
    for verb, sub in verb_parsers(parser).items():
        start, end = _markers(verb)
        m = re.search(re.escape(start) + r"\n.*?" + re.escape(end), text, re.S)
        if m is None:
            raise ValueError(f"docs/cli.md has no '{start}' ... '{end}' block for '{verb}'")
        text = text[:m.start()] + f"{start}\n{options_table(sub)}{end}" + text[m.end():]
    return text


def main(argv: Sequence[str] | None = None) -> int:
    """Rewrite the option tables of the given docs/cli.md in place."""
    from eftsieve.cli.main import build_parser

    args = list(sys.argv[1:] if argv is None else argv)
    path = Path(args[0] if args else "docs/cli.md")
    path.write_text(update_cli_md(path.read_text(), build_parser()))
    print(f"updated the option tables of {path}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
