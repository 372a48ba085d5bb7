"""docs/cli.md agrees with the parser: every option of every verb, its default, its choices."""

from __future__ import annotations

import argparse
from pathlib import Path

import pytest

from eftsieve.cli.docs import option_rows, options_table, table_in, update_cli_md, verb_parsers
from eftsieve.cli.main import build_parser

CLI_MD = Path(__file__).parents[2] / "docs" / "cli.md"
VERBS = verb_parsers(build_parser())


def test_every_verb_of_the_architecture_is_documented():
    assert set(VERBS) == {"theories", "region", "check", "impose", "limits", "cite", "demo"}
    text = CLI_MD.read_text()
    for verb in VERBS:
        assert f"## `eftsieve {verb}" in text, verb


@pytest.mark.parametrize("verb", sorted(VERBS))
def test_every_option_appears_with_its_default_and_choices(verb):
    table = table_in(CLI_MD.read_text(), verb)
    assert table is not None, f"docs/cli.md has no options block for '{verb}'"
    lines = table.splitlines()
    for action in VERBS[verb]._actions:
        if isinstance(action, argparse._HelpAction):
            continue
        names = action.option_strings or [str(action.metavar or action.dest).upper()]
        row = next((ln for ln in lines if f"`{', '.join(names)}`" in ln.split("|")[1]), None)
        assert row is not None, f"{verb}: {names} missing from docs/cli.md"
        cells = [c.strip() for c in row.strip("|").split("|")]
        if isinstance(action, argparse._StoreTrueAction):
            assert cells[1] == "`off`", (verb, names)
        elif action.default is not None:
            assert cells[1] == f"`{action.default}`", (verb, names, cells[1])
        else:
            assert cells[1] == "", (verb, names)
        for choice in action.choices or ():
            assert f"`{choice}`" in cells[2], (verb, names, choice)


def test_tables_are_exactly_the_generated_ones():
    text = CLI_MD.read_text()
    assert update_cli_md(text, build_parser()) == text, (
        "docs/cli.md is out of date: run `python -m eftsieve.cli.docs docs/cli.md`")


def test_the_check_is_not_vacuous():
    """The two options the old docs missed are there, and a dropped row is caught."""
    check = VERBS["check"]
    names = [r.names for r in option_rows(check)]
    assert "--theory-uncertainty" in names and "--no-plots" in names
    row = next(r for r in option_rows(check) if r.names == "--theory-uncertainty")
    assert row.default == "none" and row.choices == "none, fixed, power-counting"
    table = options_table(check)
    text = CLI_MD.read_text()
    broken = text.replace(next(ln for ln in table.splitlines() if "--no-plots" in ln) + "\n", "")
    assert broken != text and update_cli_md(broken, build_parser()) != broken
