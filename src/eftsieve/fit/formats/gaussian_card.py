"""The card field ``gaussian``: a Gaussian summary kept in a file of the user's library.

Shape::

    gaussian:
      file: fit.json          # relative to the card
      format: gvar-json       # optional: the only format so far, also detected
      keys: {lbar1: "l[0]", lbar2: "l[1]"}   # or a list, one key per parameter in order

Without ``keys`` each parameter is the dump entry of its own name.  The covariance
between the selected entries is the full one of the dump (every block).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.fit.formats.gvar_json import read_gvar_json

GAUSSIAN_FORMATS = ("gvar-json",)
GAUSSIAN_KEYS = ("file", "format", "keys")


def gaussian_from_card(spec: Any, card: Path, names: Sequence[str]
                       ) -> tuple[np.ndarray, np.ndarray, Path]:
    """Mean, covariance and file of the card's ``gaussian`` entry, in parameter order."""
    if not isinstance(spec, dict) or not isinstance(spec.get("file"), str):
        raise InputError(card, "gaussian.file", "missing or not a string",
                         "write gaussian: {file: fit.json, keys: [...]}")
    unknown = sorted(set(spec) - set(GAUSSIAN_KEYS))
    if unknown:
        raise InputError(card, f"gaussian.{unknown[0]}", "unknown field",
                         f"allowed: {', '.join(GAUSSIAN_KEYS)}")
    fmt = spec.get("format", "gvar-json")
    if fmt not in GAUSSIAN_FORMATS:
        raise InputError(card, "gaussian.format", f"unsupported format {fmt!r}",
                         f"use one of {', '.join(GAUSSIAN_FORMATS)}")
    file = (card.parent / spec["file"]).resolve()
    if not file.is_file():
        raise InputError(card, "gaussian.file", f"file not found: {file}",
                         "paths are relative to the card")
    keys = _keys(spec.get("keys"), card, names)
    summary = read_gvar_json(file, keys, names)
    return summary.mean, summary.cov, file


def _keys(raw: Any, card: Path, names: Sequence[str]) -> list[str]:
    if raw is None:
        return list(names)
    if isinstance(raw, list):
        if len(raw) != len(names) or not all(isinstance(k, str) for k in raw):
            raise InputError(card, "gaussian.keys", f"a list of {len(raw)} entries for "
                             f"{len(names)} parameters", "give one key (string) per "
                             "parameter, in order, or a mapping {parameter: key}")
        return list(raw)
    if isinstance(raw, dict):
        unknown = [k for k in raw if k not in names]
        if unknown:
            raise InputError(card, f"gaussian.keys.{unknown[0]}", "not a parameter of this "
                             "card", f"parameters: {', '.join(names)}")
        bad = [k for k, v in raw.items() if not isinstance(v, str)]
        if bad:
            raise InputError(card, f"gaussian.keys.{bad[0]}", "must be a string",
                             "quote the key, e.g. \"l[0]\"")
        return [raw.get(n, n) for n in names]
    raise InputError(card, "gaussian.keys", "must be a list or a mapping",
                     "write keys: {lbar1: \"l[0]\"} or keys: [\"l[0]\", \"l[1]\"]")
