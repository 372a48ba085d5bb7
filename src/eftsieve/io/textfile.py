"""Read a user's text file (fit card, region file, CSV header) with clear errors.

:func:`read_text` refuses files over a size cap, folders, unreadable files, UTF-16/32
and other non-UTF-8 text with a one-line error naming the file and the fix.
:func:`parse_json` and :func:`parse_yaml` refuse duplicate keys and absurd nesting.
The error class is the caller's (:class:`~eftsieve.errors.InputError` for cards and
samples, :class:`~eftsieve.errors.RegionFileError` for regions).
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any, NoReturn

from eftsieve.errors import EftsieveError

#: make(path, problem, hint) -> the error to raise
ErrorFactory = Callable[[Path, str, str], EftsieveError]
_BOMS = ((b"\xff\xfe\x00\x00", "UTF-32"), (b"\x00\x00\xfe\xff", "UTF-32"),
         (b"\xff\xfe", "UTF-16"), (b"\xfe\xff", "UTF-16"))


def decode_utf8(raw: bytes, path: Path, make: ErrorFactory) -> str:
    """UTF-8 text of ``raw`` (a UTF-8 BOM is dropped); UTF-16/32 and other encodings are
    refused with the fix."""
    for bom, name in _BOMS:
        if raw.startswith(bom):
            raise make(path, f"the file is {name} encoded, not UTF-8",
                       "save it as UTF-8 (e.g. iconv -f UTF-16 -t UTF-8)")
    if raw[:4].count(0) >= 2:  # UTF-16 without a byte-order mark
        raise make(path, "the file looks UTF-16 encoded (NUL bytes), not UTF-8",
                   "save it as UTF-8")
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        raise make(path, f"the file is not UTF-8 text (byte 0x{raw[err.start]:02x} at "
                   f"offset {err.start})", "save it as UTF-8") from err


def read_text(path: str | Path, max_bytes: int, make: ErrorFactory, what: str) -> str:
    """The UTF-8 text of a file of at most ``max_bytes`` bytes."""
    p = Path(path)
    try:
        if p.is_dir():
            raise make(p, f"is a folder, not a {what}", f"give the {what} file itself")
        if not p.exists():
            raise make(p, "file not found", "check the path")
        size = p.stat().st_size
        if size > max_bytes:
            raise make(p, f"the {what} is too large ({size} bytes; the cap is {max_bytes})",
                       f"check that this is a {what}; raise eftsieve.io.limits if it is")
        with open(p, "rb") as fh:
            raw = fh.read(max_bytes + 1)
    except OSError as err:
        raise make(p, f"cannot read the file: {err.strerror}",
                   "check its permissions") from err
    return decode_utf8(raw, p, make)


def _depth_ok(text: str, max_depth: int) -> bool:
    """Whether brackets nest at most ``max_depth`` deep (a cheap scan before parsing)."""
    depth = best = 0
    for ch in text:
        if ch in "[{":
            depth += 1
            best = max(best, depth)
            if best > max_depth:
                return False
        elif ch in "]}":
            depth -= 1
    return True


def _no_duplicates(path: Path, make: ErrorFactory) -> Callable[[list[tuple[str, Any]]], dict]:
    def hook(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for k, v in pairs:
            if k in out:
                raise make(path, f"duplicate key '{k}'", "give each key once")
            out[k] = v
        return out
    return hook


def parse_json(text: str, path: Path, make: ErrorFactory, max_depth: int) -> Any:
    """JSON with duplicate keys and nesting deeper than ``max_depth`` refused."""
    if not _depth_ok(text, max_depth):
        raise make(path, f"lists or mappings nested more than {max_depth} deep",
                   "check that this is the right file")
    try:
        return json.loads(text, object_pairs_hook=_no_duplicates(path, make))
    except json.JSONDecodeError as err:
        raise make(path, f"not valid JSON ({err})", "fix the syntax") from err
    except RecursionError as err:
        raise make(path, "nested too deeply", "check that this is the right file") from err


def _yaml_loader(path: Path, make: ErrorFactory) -> type:
    from eftsieve.io.yaml12 import strict_loader

    def refuse(knode: Any, key: Any, reason: str) -> NoReturn:
        line = knode.start_mark.line + 1
        if reason == "duplicate":
            raise make(path, f"duplicate key '{key}' (line {line})", "give each key once")
        raise make(path, f"line {line}: a key that is not text", "use plain keys") from None

    return strict_loader(refuse)


def parse_yaml(text: str, path: Path, make: ErrorFactory, max_depth: int) -> Any:
    """Safe YAML (no tags that run code) with duplicate keys and deep nesting refused."""
    import yaml

    if not _depth_ok(text, max_depth):
        raise make(path, f"lists or mappings nested more than {max_depth} deep",
                   "check that this is the right file")
    try:
        return yaml.load(text, Loader=_yaml_loader(path, make))  # noqa: S506 (SafeLoader)
    except yaml.YAMLError as err:
        msg = " ".join(str(err).split())
        raise make(path, f"cannot parse YAML: {msg}", "fix the syntax") from err
    except RecursionError as err:
        raise make(path, "nested too deeply", "check that this is the right file") from err
