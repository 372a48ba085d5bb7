"""The interval card: a CSV table of published one-coefficient intervals.

One row per interval (docs/formats.md, "Interval card")::

    theory,coefficient,low,high,cl,others,convention,units,source
    transverse-w,fT0,-0.28,0.31,95,,none,TeV^-4,"arXiv:2005.01173, Table 4"

``others`` holds the values at which the other coefficients were held, as
``fT1=0; fT2=0`` (empty: every other coefficient of the theory at 0).  ``cl`` is a
confidence level in percent (``95``, ``95%``) or as a fraction (``0.95``).  Optional
columns: ``label`` (a short name for the row), ``kinematics`` (``key=value; ...``, the
inputs a convention needs) and ``note``.  Lines starting with ``#`` before the header are
comments (a demo card says there that it is invented).

Use :func:`read_interval_card`; it validates the shape and the numbers here, and the
theory's names and conventions through ``theories`` (passed in, so that this module
knows no theory).
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from eftsieve.errors import InputError
from eftsieve.fit.conventions import NONE, Convention
from eftsieve.fit.model import parse_convention

REQUIRED = ("theory", "coefficient", "low", "high", "cl", "convention", "units", "source")
OPTIONAL = ("others", "label", "kinematics", "note")
#: largest interval card read, in bytes
MAX_BYTES = 4 * 1024 * 1024


@dataclass(frozen=True)
class IntervalRow:
    """One published interval on one coefficient.

    Attributes
    ----------
    line
        The row's line number in the file (1-based, for messages).
    theory, coefficient
        The theory and the coefficient the interval is on.
    low, high
        The interval (low <= high).
    cl
        Its confidence level, a fraction in (0, 1).
    others
        The values the other coefficients were held at (names of the card).
    others_free
        The other coefficients were free (profiled or marginalised, the ``others`` cell
        ``free``): the row is checked against the cone's projection onto its coefficient.
    convention
        The convention the coefficients are stated in, checked against the theory's.
    units, source, label, note
        As written.
    """

    line: int
    theory: str
    coefficient: str
    low: float
    high: float
    cl: float
    others: dict[str, float]
    convention: Convention
    units: str
    source: str
    label: str = ""
    note: str = ""
    kinematics: dict[str, float] = field(default_factory=dict)
    others_free: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {"line": self.line, "theory": self.theory, "coefficient": self.coefficient,
                "low": self.low, "high": self.high, "cl": self.cl,
                "others": "free" if self.others_free else self.others,
                "convention": self.convention.to_dict(), "units": self.units,
                "source": self.source, "label": self.label, "note": self.note,
                "kinematics": self.kinematics}


def _error(path: Path, problem: str, hint: str) -> InputError:
    return InputError(path, None, problem, hint)


#: the fix of a cell that must hold a finite number (an end of an interval, a value in
#: ``others`` or ``kinematics``)
NUMBER_FIX = ("write a plain finite number, e.g. -0.28 or 1.5e-2 (an open-ended interval "
              "is not a published limit: give both ends)")
#: the fix of a bad ``cl`` cell
CL_FIX = "write the confidence level as 95, 95% or 0.95"


def _number(text: str, path: Path, where: str, fix: str = NUMBER_FIX) -> float:
    try:
        value = float(text)
    except ValueError as err:
        shown = f"not a number: {text!r}" if text else "is empty"
        raise InputError(path, where, shown, fix) from err
    if not math.isfinite(value):
        raise InputError(path, where, f"must be finite, got {text!r}", fix)
    return value


def parse_cl(text: str, path: Path, where: str) -> float:
    """``95``, ``95%`` or ``0.95`` -> 0.95 (a fraction in (0, 1) or a percent in
    (1, 100); anything else is refused with the fix)."""
    raw = text.strip().rstrip("%").strip()
    value = _number(raw, path, where, CL_FIX)
    frac = value / 100.0 if (text.strip().endswith("%") or value > 1) else value
    if not 0 < frac < 1:
        raise InputError(path, where, f"confidence level {text!r} is not in (0, 100)%",
                         CL_FIX)
    return frac


#: the fix for a malformed ``others`` cell: its three forms
OTHERS_FIX = ("leave it empty for every other coefficient at 0, write 'free' if they were "
              "free, or give NAME=VALUE pairs such as fT1=0; fT2=0.1")


def parse_assignments(text: str, path: Path, where: str,
                      fix: str = "write e.g. fT1=0; fT2=0") -> dict[str, float]:
    """``a=0; b=0.1`` -> {"a": 0.0, "b": 0.1} (empty text: {})."""
    out: dict[str, float] = {}
    for item in text.replace(",", ";").split(";"):
        if not item.strip():
            continue
        if "=" not in item:
            raise InputError(path, where, f"expected NAME=VALUE, got {item.strip()!r}", fix)
        k, v = (s.strip() for s in item.split("=", 1))
        if not k:
            raise InputError(path, where, f"no name before '=' in {item.strip()!r}",
                             "write e.g. fT1=0; fT2=0")
        if k in out:
            raise InputError(path, where, f"'{k}' is given twice", "give each name once")
        out[k] = _number(v, path, f"{where}.{k}")
    return out


def _table(path: Path) -> tuple[list[str], list[tuple[int, list[str]]]]:
    from eftsieve.io.textfile import read_text

    text = read_text(path, MAX_BYTES, _error, "CSV interval card")
    if "\x00" in text:
        raise InputError(path, None, "holds NUL bytes: not a text table",
                         "give the interval card as a UTF-8 CSV file")
    lines = text.splitlines()
    start = 0
    while start < len(lines) and (not lines[start].strip() or
                                  lines[start].lstrip().startswith("#")):
        start += 1
    reader = csv.reader(io.StringIO("\n".join(lines[start:])))
    rows = []
    try:
        for r in reader:  # a quoted cell may span lines: number rows by their first line
            n = start + reader.line_num - _newlines(r)
            if _newlines(r):  # an unclosed quote swallows the rows below it
                raise InputError(path, f"line {n}", f"a quoted cell runs over "
                                 f"{_newlines(r) + 1} lines (an unclosed quote?)",
                                 "close the quote: every cell holds one line")
            rows.append((n, r))
    except csv.Error as err:
        raise InputError(path, f"line {start + reader.line_num}", f"not a CSV row ({err})",
                         "close every quoted cell") from err
    if not rows:
        raise InputError(path, None, "no header line", f"the first line names the columns: "
                         f"{','.join(REQUIRED)}")
    header = [h.strip() for h in rows[0][1]]
    missing = [c for c in REQUIRED if c not in header]
    if missing:
        raise InputError(path, f"header.{missing[0]}", "missing column",
                         f"columns: {','.join(REQUIRED)} (optional {','.join(OPTIONAL)})")
    unknown = [c for c in header if c not in REQUIRED + OPTIONAL]
    if unknown:
        raise InputError(path, f"header.{unknown[0]}", "unknown column",
                         f"allowed: {','.join(REQUIRED + OPTIONAL)}")
    if len(set(header)) != len(header):
        raise InputError(path, "header", "a column is named twice", "name each column once")
    body = [(n, r) for n, r in rows[1:] if any(c.strip() for c in r)]
    if not body:
        raise InputError(path, None, "no intervals below the header", "add one row per "
                         "published interval")
    return header, body


def _newlines(row: list[str]) -> int:
    return sum(c.count("\n") for c in row)


def _duplicates(p: Path, header: list[str], body: list[tuple[int, list[str]]]) -> None:
    """Refuse a row that repeats an earlier one, or that the report could not tell apart
    from an earlier one (same theory, coefficient, CL, others, convention, source and
    label, other numbers): every row read is accounted for once."""
    seen: dict[tuple[str, ...], int] = {}
    keyed: dict[tuple[str, ...], int] = {}
    key_cols = [c for c in header if c not in ("low", "high")]
    for n, raw in body:
        cells = dict(zip(header, (c.strip() for c in raw), strict=True))
        full = tuple(cells[c] for c in header)
        if full in seen:
            raise InputError(p, f"line {n}", f"repeats line {seen[full]} cell for cell",
                             "delete the duplicate row")
        seen[full] = n
        key = tuple(cells[c] for c in key_cols)
        if key in keyed:
            raise InputError(p, f"line {n}", f"gives another interval for the same "
                             f"coefficient, CL, others, convention, source and label as line "
                             f"{keyed[key]}", "tell the rows apart with a label column "
                             "(e.g. observed, expected), or delete one")
        keyed[key] = n


def read_interval_card(path: str | Path, theory_of: Callable[[str], Any]
                       ) -> tuple[IntervalRow, ...]:
    """Read and validate an interval card.

    Parameters
    ----------
    path
        The CSV file.
    theory_of
        Theory name -> :class:`~eftsieve.theories.base.Theory` (KeyError for an unknown
        name), e.g. :func:`eftsieve.theories.get_theory`.

    Returns
    -------
    tuple of IntervalRow
        The rows in file order.
    """
    p = Path(path)
    header, body = _table(p)
    out = []
    for n, raw in body:
        if len(raw) != len(header):
            raise InputError(p, f"line {n}", f"has {len(raw)} cells for {len(header)} "
                             "columns", "quote cells that hold commas")
    _duplicates(p, header, body)
    for n, raw in body:
        out.append(_row(p, n, dict(zip(header, (c.strip() for c in raw), strict=True)),
                        theory_of))
    return tuple(out)


def _row(p: Path, n: int, cells: dict[str, str], theory_of: Callable[[str], Any]
         ) -> IntervalRow:
    where = f"line {n}"
    try:
        th = theory_of(cells["theory"])
    except KeyError as err:
        raise InputError(p, f"{where}.theory", str(err.args[0]),
                         "run `eftsieve theories`") from err
    coef = cells["coefficient"]
    if coef not in th.parameter_names:
        raise InputError(p, f"{where}.coefficient", f"'{coef}' is not a parameter of "
                         f"{th.name}", f"use one of {', '.join(th.parameter_names)}")
    low = _number(cells["low"], p, f"{where}.low")
    high = _number(cells["high"], p, f"{where}.high")
    if low > high:
        raise InputError(p, f"{where}.low", f"low {low:g} is above high {high:g}",
                         "swap them")
    others_free = cells.get("others", "").strip().lower() == "free"
    if others_free and not callable(getattr(th, "problem", None)):
        raise InputError(p, f"{where}.others", f"'free' needs a positivity-cone theory; "
                         f"{th.name} is not one", "give the values the other coefficients "
                         "were held at")
    others = {} if others_free else parse_assignments(cells.get("others", ""), p,
                                                       f"{where}.others", OTHERS_FIX)
    bad = [k for k in others if k == coef or k not in th.parameter_names]
    if bad:
        raise InputError(p, f"{where}.others.{bad[0]}", "is the row's coefficient or not a "
                         f"parameter of {th.name}", "list only the other coefficients")
    for key in ("units", "source"):
        if not cells[key]:
            raise InputError(p, f"{where}.{key}", "is empty", "state the units (e.g. TeV^-4)"
                             if key == "units" else "cite the paper (arXiv id and table)")
    kin = parse_assignments(cells.get("kinematics", ""), p, f"{where}.kinematics")
    conv = declared_convention(th, cells["convention"], kin, p, f"{where}.convention")
    return IntervalRow(n, th.name, coef, low, high, parse_cl(cells["cl"], p, f"{where}.cl"),
                       others, conv, cells["units"], cells["source"], cells.get("label", ""),
                       cells.get("note", ""), kin, others_free)


def declared_convention(theory: Any, raw: str | None, kin: dict[str, float],
                        path: Path | None, where: str) -> Convention:
    """The convention a result declares for ``theory``'s coefficients, never guessed.

    A theory that offers conventions (sign or normalisation maps) must be told one of
    them: an empty entry and ``none`` are refused, and so is an unknown name, each with
    the theory's conventions as the fix.  A theory that offers none takes ``none`` (or
    an empty entry).
    """
    specs = theory.convention_specs
    name = (raw or "").strip()
    if specs:
        fix = f"state one of {', '.join(specs)} (see `eftsieve theories`)"
        if name in ("", NONE):
            what = "missing convention" if not name else f"'{NONE}' is not enough"
            raise InputError(path, where, f"{what}: {theory.name} coefficients need a stated "
                             "convention (the same numbers mean different coefficients in "
                             "different conventions; eftsieve does not guess)", fix)
        if name not in specs:
            raise InputError(path, where, f"unknown convention '{name}' for {theory.name}",
                             fix)
    elif name not in ("", NONE):
        raise InputError(path, where, f"{theory.name} has no conventions, got '{name}'",
                         "omit --convention" if where.startswith("--")
                         else f"write {NONE} (or leave the cell empty)")
    return parse_convention(name or None, kin, path, where, bool(specs), specs)
