"""Gaussian summaries from gvar's JSON dump, read without gvar.

``gvar.gdump(g, 'fit.json', method='json')`` (gvar >= 11; lsqfit users dump ``fit.p``)
writes one JSON object.  The fields this reader relies on:

``means``
    list of floats: the means of the flattened buffer (every GVar of ``g``, then, with
    ``add_dependencies=True``, the primary GVars it depends on).
``bcovs``
    list of blocks ``[idx, bcov, primary, derivs]`` (older dumps: ``[idx, bcov]``).
    ``idx`` are buffer positions; ``bcov`` is either a 2-d covariance matrix of those
    positions or, for the block of uncorrelated GVars (the first block), a 1-d list of
    standard deviations.  Different blocks are uncorrelated.  ``primary``/``derivs``
    (how derived GVars depend on primary ones, for error budgets) are ignored: the
    covariance already contains everything.
``bufsize``
    the number of buffer entries that belong to ``g`` itself.
``keys`` and ``layouts`` (a dictionary dump)
    ``keys`` is the ``repr`` of the list of keys (a string; a JSON list is accepted too)
    and is parsed with :func:`ast.literal_eval`, never evaluated.  ``layouts[i]`` is
    ``[start, []]`` for a scalar key or ``[[start, stop, step], shape]`` for an array.
``shape`` (an array dump)
    the array's shape; its entries are named ``[0]``, ``[1]``, ... (``[0,1]`` in 2-d),
    a single GVar is named ``[]``.

``fix_cov`` is ignored.  A pickle (``gvar.dump``, or ``gvar.gdump`` to ``.pickle``) is
refused, never unpickled.

Entries are selected by *key*: a scalar key by its name (``'c'``; a non-string key by
its ``repr``, ``"(1, 'x')"``), an element of an array-valued key as ``l[0]`` or
``m[1,0]`` (also ``m[1][0]``).  :func:`read_gvar_json` returns the means and the full
covariance of the selected entries.
"""

from __future__ import annotations

import ast
import json
import re
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import InputError

PICKLE_SUFFIXES = (".pickle", ".pkl", ".p")
HOW_TO_JSON = "write it with gvar.gdump(g, 'fit.json', method='json')"
_INDEX = re.compile(r"^(?P<base>.*?)(?P<idx>(\[[0-9,\s]*\])+)$")


@dataclass(frozen=True)
class GaussianSummary:
    """Means and covariance of selected entries of a gvar dump.

    Attributes
    ----------
    names
        The entry names (``l[0]``) or the parameter names they were mapped to.
    mean
        Means, shape (p,).
    cov
        Covariance, shape (p, p).
    keys
        The dump's entry name for each parameter.
    """

    names: tuple[str, ...]
    mean: np.ndarray
    cov: np.ndarray
    keys: tuple[str, ...]

    def to_dict(self) -> dict[str, Any]:
        return {"names": list(self.names), "mean": self.mean.tolist(),
                "covariance": self.cov.tolist(), "keys": list(self.keys)}


def is_gvar_json(path: Path) -> bool:
    """True when the file parses as a JSON object with gvar's ``means`` and ``bcovs``."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(1)
            if head != b"{":
                return False
            fh.seek(0)
            data = json.load(fh)
    except (OSError, ValueError):
        return False
    return isinstance(data, dict) and "means" in data and "bcovs" in data


def refuse_pickle(path: Path, where: str) -> None:
    """Raise when the file is a pickle (by its first byte or its extension)."""
    try:
        with open(path, "rb") as fh:
            first = fh.read(2)
    except OSError as err:
        raise InputError(path, where, f"cannot read: {err}", "check the path") from err
    if (first[:1] == b"\x80") or path.suffix.lower() in PICKLE_SUFFIXES:
        raise InputError(path, where, "a pickle (gvar's default dump) is never unpickled",
                         HOW_TO_JSON)


def load_dump(path: Path, where: str = "gaussian.file") -> dict[str, Any]:
    """Parse and check the fields of a gvar JSON dump."""
    refuse_pickle(path, where)
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except (UnicodeDecodeError, ValueError) as err:
        raise InputError(path, where, f"not JSON: {err}", HOW_TO_JSON) from err
    if not isinstance(data, dict) or "means" not in data or "bcovs" not in data:
        raise InputError(path, where, "not a gvar JSON dump (no 'means' and 'bcovs')",
                         HOW_TO_JSON)
    if not isinstance(data["means"], list) or not all(
            isinstance(v, (int, float)) and not isinstance(v, bool) for v in data["means"]):
        raise InputError(path, f"{where}:means", "must be a list of numbers", HOW_TO_JSON)
    return data


def entry_names(data: dict[str, Any], path: Path, where: str) -> tuple[list[str], list[int]]:
    """Every entry of the dump: its name and its buffer position, in buffer order."""
    if "keys" in data:
        keys = _parse_keys(data["keys"], path, where)
        layouts = data.get("layouts")
        if not isinstance(layouts, list) or len(layouts) != len(keys):
            raise InputError(path, f"{where}:layouts", "missing, or not one per key",
                             HOW_TO_JSON)
        names, pos = [], []
        for key, lay in zip(keys, layouts, strict=True):
            label = key if isinstance(key, str) else repr(key)
            for n, p in _layout_entries(label, lay, path, where):
                names.append(n)
                pos.append(p)
        return names, pos
    shape = data.get("shape")
    if not isinstance(shape, list):
        raise InputError(path, f"{where}:shape", "a dump holds 'keys' or 'shape'", HOW_TO_JSON)
    if not shape:
        return ["[]"], [0]
    idx = list(np.ndindex(*shape))
    return [_index_text(i) for i in idx], list(range(len(idx)))


def _parse_keys(raw: Any, path: Path, where: str) -> list[Any]:
    if isinstance(raw, list):
        return raw
    try:
        keys = ast.literal_eval(raw) if isinstance(raw, str) else None
    except (ValueError, SyntaxError) as err:
        raise InputError(path, f"{where}:keys", f"cannot parse the keys: {err}",
                         "use keys that are strings, numbers or tuples of them") from err
    if not isinstance(keys, list):
        raise InputError(path, f"{where}:keys", "not a list of keys", HOW_TO_JSON)
    return keys


def _layout_entries(label: str, lay: Any, path: Path, where: str):
    bad = InputError(path, f"{where}:layouts", f"bad layout for key '{label}'", HOW_TO_JSON)
    if not (isinstance(lay, list) and len(lay) == 2 and isinstance(lay[1], list)):
        raise bad
    sl, shape = lay
    if not shape:
        if not isinstance(sl, int):
            raise bad
        return [(label, sl)]
    if not (isinstance(sl, list) and len(sl) == 3 and isinstance(sl[0], int)):
        raise bad
    start, stop, step = sl[0], sl[1], (sl[2] or 1)
    pos = range(start, stop, step)
    idx = list(np.ndindex(*shape))
    if len(pos) != len(idx):
        raise bad
    return [(label + _index_text(i), p) for i, p in zip(idx, pos, strict=True)]


def _index_text(i: tuple[int, ...]) -> str:
    return "[" + ",".join(str(int(v)) for v in i) + "]"


def normalise_key(text: str) -> str:
    """``m[1][0]`` and ``m[1, 0]`` become ``m[1,0]``; other names are unchanged."""
    m = _INDEX.match(text)
    if not m:
        return text
    parts = re.findall(r"\[([0-9,\s]*)\]", m.group("idx"))
    nums = [p.strip() for part in parts for p in part.split(",") if p.strip()]
    return m.group("base") + "[" + ",".join(str(int(n)) for n in nums) + "]"


def full_covariance(data: dict[str, Any], path: Path, where: str) -> np.ndarray:
    """The covariance of the whole buffer, assembled from the blocks."""
    n = len(data["means"])
    cov = np.zeros((n, n))
    seen = np.zeros(n, dtype=bool)
    if not isinstance(data["bcovs"], list):
        raise InputError(path, f"{where}:bcovs", "must be a list of blocks", HOW_TO_JSON)
    for b, block in enumerate(data["bcovs"]):
        field = f"{where}:bcovs[{b}]"
        if not isinstance(block, list) or len(block) not in (2, 4):
            raise InputError(path, field, "a block is [idx, bcov, primary, derivs]", HOW_TO_JSON)
        try:
            idx = np.asarray(block[0], dtype=np.int64).reshape(-1)
            bcov = np.asarray(block[1], dtype=float)
        except (TypeError, ValueError) as err:
            raise InputError(path, field, f"not numbers: {err}", HOW_TO_JSON) from err
        if idx.size and (idx.min() < 0 or idx.max() >= n):
            raise InputError(path, field, f"position outside the {n} means", HOW_TO_JSON)
        if seen[idx].any() or len(set(idx.tolist())) != idx.size:
            raise InputError(path, field, "a position appears in two blocks", HOW_TO_JSON)
        seen[idx] = True
        if bcov.ndim == 1 and bcov.shape == idx.shape:
            cov[idx, idx] = bcov * bcov  # standard deviations of uncorrelated entries
        elif bcov.shape == (idx.size, idx.size):
            cov[np.ix_(idx, idx)] = bcov
        else:
            raise InputError(path, field, f"bcov of shape {bcov.shape} for {idx.size} "
                             "positions", HOW_TO_JSON)
    return cov


def read_gvar_json(path: str | Path, keys: Sequence[str] | None = None,
                   names: Sequence[str] | None = None,
                   where: str = "gaussian") -> GaussianSummary:
    """Means and covariance of the selected entries of a gvar JSON dump.

    Parameters
    ----------
    path
        The dump.
    keys
        Entry names to select (``lbar1``, ``l[0]``, ``m[1,0]``); None selects all.
    names
        The parameter name of each selected entry (default: the entry names).
    where
        The card field named in errors.

    Examples
    --------
    >>> s = read_gvar_json("fit.json", keys=["l[0]", "l[1]"],
    ...                    names=["lbar1", "lbar2"])  # doctest: +SKIP
    """
    p = Path(path)
    data = load_dump(p, f"{where}.file")
    ent, pos = entry_names(data, p, f"{where}.file")
    index: dict[str, list[int]] = {}
    for e, q in zip(ent, pos, strict=True):
        index.setdefault(normalise_key(e), []).append(q)
    chosen = list(ent) if keys is None else [normalise_key(str(k)) for k in keys]
    twice = [k for k in chosen if len(index.get(k, ())) > 1]
    if twice:
        raise InputError(p, f"{where}.keys", f"{twice[0]!r} names two entries of the dump "
                         "(a key and an element of an array key)",
                         "rename the keys of the dumped dictionary")
    missing = [k for k in chosen if k not in index]
    if missing:
        shown = ", ".join(ent[:20]) + (" ..." if len(ent) > 20 else "")
        raise InputError(p, f"{where}.keys", f"no entry {missing[0]!r} in the dump",
                         f"the dump holds {shown}")
    sel = np.array([index[k][0] for k in chosen], dtype=np.int64)
    cov = full_covariance(data, p, f"{where}.file")
    mean = np.asarray(data["means"], dtype=float)[sel]
    out_names = tuple(chosen) if names is None else tuple(names)
    if len(out_names) != len(chosen):
        raise InputError(p, f"{where}.keys", f"{len(chosen)} keys for {len(out_names)} "
                         "parameters", "give one key per parameter")
    return GaussianSummary(out_names, mean, cov[np.ix_(sel, sel)], tuple(chosen))
