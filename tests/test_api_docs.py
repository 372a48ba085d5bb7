"""docs/api.md runs: its examples are doctests against the invented demo data."""

from __future__ import annotations

import doctest
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_api_page_examples_run(monkeypatch):
    monkeypatch.chdir(ROOT)
    result = doctest.testfile(str(ROOT / "docs" / "api.md"), module_relative=False,
                              optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.attempted >= 8
    assert result.failed == 0
