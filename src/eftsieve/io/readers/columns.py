"""Which columns of a samples file are the fit's parameters, and which is the weight.

Every samples reader describes its file as a :class:`ColumnTable`: one flat column per
scalar quantity, each with a canonical label (a CSV header, ``lbar[0]`` for an element
of a vector variable, ``0``, ``1``, ... for a file that stores no names), plus aliases
(coordinate labels that name the elements of a vector variable).

A *columns specification* comes from the card field ``samples.columns`` or the flag
``--columns``.  It selects and renames parameters and may declare the weight column:

* a list ``[lbar1, lbar2]`` names the parameters.  In a file that stores names it
  selects the columns of those names; in one that stores none (``.npy``, emcee) it names
  the file's columns in order and must name each of them;
* a mapping ``{lbar1: L1, lbar2: "l[1]", weight: w}`` takes each parameter from the
  given column (a label, an alias, or a 0-based position); the key ``weight`` declares
  the weight column;
* the flag form is ``lbar1,lbar2`` (a list) or ``lbar1=L1,lbar2=l[1],weight=w`` (a
  mapping; a bare entry maps a name to itself).

Use :func:`parse_columns` for a card value, :func:`parse_columns_flag` for the flag and
:func:`resolve_columns` to turn either into file labels.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from eftsieve.errors import InputError

#: the key of a columns mapping that declares the weight column
WEIGHT_KEY = "weight"


@dataclass(frozen=True)
class ColumnTable:
    """The flat columns of a samples file.

    Attributes
    ----------
    labels
        Canonical label of each flat column, in file order.
    stores_names
        False for files that hold no names (``.npy`` arrays, emcee chains): their labels
        are the positions ``0``, ``1``, ...
    aliases
        Other names of columns (coordinate labels of vector variables); an alias that
        names two columns maps to None and is refused when used.
    preferred
        The name a bare file gives each column's parameter (an alias when there is a
        unique one, else the label).
    """

    labels: tuple[str, ...]
    stores_names: bool = True
    aliases: Mapping[str, int | None] = field(default_factory=dict)
    extra: Mapping[str, str] = field(default_factory=dict)

    @property
    def preferred(self) -> tuple[str, ...]:
        names = list(self.labels)
        for alias, i in self.aliases.items():
            if i is not None and alias not in self.labels:
                names[i] = alias
        return tuple(names)

    def to_dict(self) -> dict[str, Any]:
        return {"labels": list(self.labels), "stores_names": self.stores_names,
                "aliases": dict(self.aliases), "extra": dict(self.extra)}


@dataclass(frozen=True)
class ColumnsSpec:
    """A parsed columns specification.

    Attributes
    ----------
    names
        The parameter names it gives, in order.
    sources
        For each name the file column it comes from: a label (str), a 0-based position
        (int), or None for a list entry (the column of the same name, or the entry's
        position in a file that stores no names).
    weight
        The declared weight column (label or position), or None.
    is_list
        True for the list form.
    """

    names: tuple[str, ...]
    sources: tuple[str | int | None, ...]
    weight: str | int | None = None
    is_list: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {"names": list(self.names), "sources": list(self.sources),
                "weight": self.weight, "is_list": self.is_list}


@dataclass(frozen=True)
class ResolvedColumns:
    """Parameters and the file labels they are read from.

    Attributes
    ----------
    names
        Parameter names, in order.
    labels
        The canonical file label of each parameter.
    weight
        The canonical label of the weight column, or None.
    """

    names: tuple[str, ...]
    labels: tuple[str, ...]
    weight: str | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"names": list(self.names), "labels": list(self.labels), "weight": self.weight}


def parse_columns(raw: Any, path: Path | str | None, where: str) -> ColumnsSpec | None:
    """Parse a card value (list or mapping) into a :class:`ColumnsSpec`; None stays None."""
    if raw is None:
        return None
    if isinstance(raw, list):
        if not raw or not all(isinstance(v, str) and v for v in raw):
            raise InputError(path, where, "a list must hold non-empty parameter names",
                             "write [lbar1, lbar2] or a mapping {lbar1: column}")
        names = [v for v in raw if v != WEIGHT_KEY]
        if len(names) != len(raw):
            raise InputError(path, where, f"'{WEIGHT_KEY}' in a list is ambiguous",
                             f"declare the weight with a mapping entry {WEIGHT_KEY}: COLUMN")
        return _checked(ColumnsSpec(tuple(names), (None,) * len(names), None, True),
                        path, where)
    if isinstance(raw, dict):
        weight = None
        keys: list[str] = []
        sources: list[str | int | None] = []
        for k, v in raw.items():
            if not isinstance(k, str) or isinstance(v, bool) or not isinstance(v, (str, int)):
                raise InputError(path, f"{where}.{k}", "must map a name to a column label "
                                 "or a 0-based position", "write NAME: COLUMN")
            if isinstance(v, int) and v < 0:
                raise InputError(path, f"{where}.{k}", f"negative position {v}",
                                 "positions count from 0")
            if k == WEIGHT_KEY:
                weight = v
            else:
                keys.append(k)
                sources.append(v)
        return _checked(ColumnsSpec(tuple(keys), tuple(sources), weight, False), path, where)
    raise InputError(path, where, "must be a list of names or a mapping NAME: COLUMN",
                     "see docs/formats.md, 'Columns'")


def parse_columns_flag(text: str, flag: str = "--columns") -> ColumnsSpec:
    """Parse ``--columns``: ``a,b`` (list) or ``a=A,b=1,weight=w`` (mapping).

    Commas inside brackets belong to the entry (``m[0,1]``); a source of digits only
    is a 0-based position.
    """
    items = _split_outside_brackets(text)
    if not items or any(not it for it in items):
        raise InputError(None, flag, f"empty entry in {text!r}",
                         "write NAME,NAME or NAME=COLUMN,...")
    if not any("=" in it for it in items):
        return parse_columns(items, None, flag)  # type: ignore[return-value]
    mapping: dict[str, str | int] = {}
    for it in items:
        key, _, src = it.partition("=")
        key, src = key.strip(), (src.strip() if "=" in it else key.strip())
        if not key or not src or key in mapping:
            raise InputError(None, flag, f"bad or repeated entry {it!r}",
                             "write NAME=COLUMN once per name")
        mapping[key] = int(src) if src.isdigit() else src
    return parse_columns(mapping, None, flag)  # type: ignore[return-value]


def _split_outside_brackets(text: str) -> list[str]:
    out: list[str] = []
    cur: list[str] = []
    depth = 0
    for ch in text:
        depth += (ch == "[") - (ch == "]")
        if ch == "," and depth == 0:
            out.append("".join(cur).strip())
            cur = []
        else:
            cur.append(ch)
    out.append("".join(cur).strip())
    return out


def _checked(spec: ColumnsSpec, path: Path | str | None, where: str) -> ColumnsSpec:
    if len(set(spec.names)) != len(spec.names):
        dup = sorted({n for n in spec.names if spec.names.count(n) > 1})
        raise InputError(path, where, f"parameter(s) {dup} named twice", "name each once")
    if not spec.names:
        raise InputError(path, where, "names no parameter", "name at least one parameter")
    return spec


def resolve_columns(spec: ColumnsSpec | None, table: ColumnTable, file: Path | str,
                    where: str, params: Sequence[str] | None = None,
                    weight: str | None = None) -> ResolvedColumns:
    """Map parameters to file labels.

    Parameters
    ----------
    spec
        The columns specification, or None (parameters take the columns of their own
        names; in a file without names, the card's parameters take the columns in
        order; a bare file takes every column).
    table
        The file's columns.
    file, where
        The file and the field named in errors (``samples.columns`` or ``--columns``).
    params
        The card's parameters, or None for a bare file (the spec, or the file, names them).
    weight
        A weight column declared elsewhere (``samples.weight_column``, ``--weight-column``).
    """
    wsrc = _merge_weight(spec, weight, file, where)
    wlabel = None if wsrc is None else _lookup(wsrc, table, file, f"{where}.{WEIGHT_KEY}")
    names, sources = _names_and_sources(spec, table, file, where, params, wlabel)
    labels = tuple(_lookup(s, table, file, f"{where}.{n}" if spec else where)
                   for n, s in zip(names, sources, strict=True))
    twice = sorted({lab for lab in labels if labels.count(lab) > 1})
    if twice:
        raise InputError(file, where, f"column '{twice[0]}' is given to two parameters",
                         "map each parameter to its own column")
    if wlabel is not None and wlabel in labels:
        raise InputError(file, where, f"column '{wlabel}' is both a parameter and the weight",
                         "map the weight to its own column")
    return ResolvedColumns(tuple(names), labels, wlabel)


def _merge_weight(spec, weight, file, where):
    if spec is not None and spec.weight is not None:
        if weight is not None and str(weight) != str(spec.weight):
            raise InputError(file, where, f"weight column given twice ('{spec.weight}' and "
                             f"'{weight}')", "declare the weight column once")
        return spec.weight
    return weight


def _names_and_sources(spec, table, file, where, params, wlabel=None):
    if spec is None:
        if params is not None and table.stores_names:
            return list(params), list(params)
        if params is not None:
            if len(params) != len(table.labels):
                raise InputError(file, where, f"the file stores no names and holds "
                                 f"{len(table.labels)} columns for {len(params)} parameters",
                                 "map each parameter to a 0-based position, e.g. "
                                 "{lbar1: 0, lbar2: 1}")
            return list(params), list(range(len(params)))
        if not table.stores_names:
            raise InputError(file, where, f"the file stores no parameter names "
                             f"({len(table.labels)} columns)",
                             "name them in order, e.g. --columns lbar1,lbar2")
        names = [n for n, lab in zip(table.preferred, table.labels, strict=True)
                 if lab != wlabel]
        return names, list(names)
    if params is not None:
        unknown = [n for n in spec.names if n not in params]
        if unknown:
            raise InputError(file, f"{where}.{unknown[0]}", "not a parameter of this card",
                             f"parameters: {', '.join(params)}")
    if spec.is_list and not table.stores_names:
        if len(spec.names) != len(table.labels):
            raise InputError(file, where, f"the list names {len(spec.names)} columns but the "
                             f"file holds {len(table.labels)}",
                             "name every column in order, or map names to positions")
        by_name = dict(zip(spec.names, range(len(spec.names)), strict=True))
    else:
        by_name = {n: (n if s is None else s) for n, s in zip(spec.names, spec.sources,
                                                                strict=True)}
    names = list(params) if params is not None else list(spec.names)
    if params is not None and not table.stores_names:
        missing = [n for n in names if n not in by_name]
        if missing:
            raise InputError(file, where, f"no column given for {missing} (the file stores "
                             "no names)", "map every parameter to a 0-based position")
    return names, [by_name.get(n, n) for n in names]


def _lookup(src: str | int, table: ColumnTable, file, where: str) -> str:
    if isinstance(src, int):
        if not 0 <= src < len(table.labels):
            raise InputError(file, where, f"position {src} is outside the file's "
                             f"{len(table.labels)} columns", "positions count from 0")
        return table.labels[src]
    if src in table.labels:
        if src in table.aliases:
            raise InputError(file, where, f"'{src}' names a column and is a coordinate label "
                             "of another variable", "map the parameter to 'var[i]'")
        return src
    if src in table.aliases:
        i = table.aliases[src]
        if i is None:
            raise InputError(file, where, f"'{src}' labels several columns",
                             "map the parameter to 'var[i]' explicitly")
        return table.labels[i]
    if not table.stores_names and src.isdigit():
        return _lookup(int(src), table, file, where)
    if src in table.extra:
        return table.extra[src]
    shown = ", ".join(list(table.labels)[:20]) + (" ..." if len(table.labels) > 20 else "")
    raise InputError(file, where, f"no column '{src}'", f"the file has {shown}")
