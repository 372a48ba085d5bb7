"""Helpers of the reader tests: cards written beside the files, one-line error checks."""

from __future__ import annotations

import argparse
import sys
import warnings
from pathlib import Path

import pytest
import yaml

from eftsieve.errors import InputError

KIN = {"pion_mass_mev": 139.57}


def write_card(folder: Path, body: dict, name: str = "card.yaml") -> Path:
    """A chpt-su2 fit card with the given body (parameters lbar1, lbar2 unless given)."""
    card = {"format_version": 1, "name": "t", "theory": "chpt-su2", "kinematics": KIN,
            "parameters": [{"name": "lbar1", "convention": "lbar"},
                           {"name": "lbar2", "convention": "lbar"}]}
    card.update(body)
    path = folder / name
    path.write_text(yaml.safe_dump(card, sort_keys=False))
    return path


def assert_one_line(info: pytest.ExceptionInfo, file_name: str, field: str | None,
                    words: str) -> InputError:
    """The error names the file and the field, says what is wrong and gives a fix."""
    err = info.value
    assert isinstance(err, InputError)
    assert err.path is not None and Path(err.path).name == file_name, err.path
    if field is not None:
        assert err.field == field, err.field
    assert words in str(err), str(err)
    assert err.hint, "no fix given"
    assert "\n" not in err.one_line()
    return err


def cli_args(*argv: str) -> argparse.Namespace:
    """The check verb's parsed arguments, as the command line builds them."""
    from eftsieve.cli.main import build_parser

    args = build_parser().parse_args(["check", *argv])
    args.fit = args.fit[0]  # as cmd_check does for one fit
    return args


def import_arviz():
    """ArviZ, imported without its refactoring notice (pytest turns warnings into errors)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return pytest.importorskip("arviz")


def block_import(monkeypatch: pytest.MonkeyPatch, *names: str) -> None:
    """Make ``import name`` fail, as if the library were not installed."""
    for name in names:
        for mod in [m for m in sys.modules if m == name or m.startswith(name + ".")]:
            monkeypatch.delitem(sys.modules, mod)
        monkeypatch.setitem(sys.modules, name, None)
