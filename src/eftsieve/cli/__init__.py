"""The ``eftsieve`` command line: one module per verb, parsing only; the library does the work."""

from __future__ import annotations

from eftsieve.cli.main import main

__all__ = ["main"]
