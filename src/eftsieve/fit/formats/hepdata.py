"""HEPData records: ``submission.yaml`` and its table files, read with PyYAML.

A record is a ``submission.yaml`` (a stream of YAML documents: an optional header, then
one document per table with ``name``, ``description`` and ``data_file``) and one YAML
file per table holding ``independent_variables`` and ``dependent_variables``, each a
list of ``{header: {name, units}, qualifiers: [...], values: [{value, errors}, ...]}``
(the HEPData submission format, https://hepdata-submission.readthedocs.io).

:func:`read_record` reads the tables; :func:`classify` sorts each into one of the
layouts eftsieve supports (docs/formats.md, "HEPData records") and refuses any other
with a one-line error naming the file, the field and the fix:

``scan-1d``
    one independent variable, a coefficient; dependent variables that are all scan
    quantities (one scan each, e.g. observed and expected).
``scan-2d``
    two independent coefficients on a full rectangular grid; dependent scan quantities.
``contour``
    one independent coefficient and one or more dependent coefficients: each dependent
    variable is one closed contour, its points in order.
``central``
    one independent variable whose values are coefficient names, one dependent variable
    with the central values and a symmetric error.
``covariance`` / ``correlation``
    two independent variables of coefficient names, one dependent variable named
    covariance or correlation.

Coefficients are recognised in variable headers by their names with LaTeX markup
dropped (``$f_{T0}/\\Lambda^4$`` is ``fT0``); the scan quantity by its header
(``Delta chi^2``, ``-2 Delta ln L``, ``2 Delta NLL``: taken as it is; ``Delta NLL``,
``-Delta ln L``: doubled).
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, NoReturn

import numpy as np

from eftsieve.errors import InputError

#: the layouts eftsieve reads
LAYOUTS = ("scan-1d", "scan-2d", "contour", "central", "covariance", "correlation")
#: largest submission.yaml or table file read, in bytes
MAX_BYTES = 32 * 1024 * 1024
#: normalised header fragments of the scan quantity -> factor turning a value into
#: -2 Delta ln L (checked in order; the first match wins)
SCAN_QUANTITIES = (("deltachi2", 1.0), ("dchi2", 1.0), ("chi2", 1.0),
                   ("2deltalnl", 1.0), ("2dlnl", 1.0), ("2lnl", 1.0), ("2deltalogl", 1.0),
                   ("2logl", 1.0), ("2deltanll", 1.0), ("2dnll", 1.0), ("2nll", 1.0),
                   ("deltanll", 2.0), ("dnll", 2.0), ("nll", 2.0), ("deltalnl", 2.0),
                   ("deltalogl", 2.0))
_GREEK = {"Δ": "delta", "χ": "chi", "²": "2", "Λ": "lambda", "ζ": "zeta"}


@dataclass(frozen=True)
class Variable:
    """One variable of a table.

    Attributes
    ----------
    name, units
        The header.
    values
        Numbers (float array) or, for a variable of names, a tuple of strings.
    errors
        Symmetric errors (float array, NaN where none), or None.
    qualifiers
        Qualifier name -> value.
    where
        ``independent_variables[0]`` etc., for messages.
    """

    name: str
    units: str
    values: Any
    errors: np.ndarray | None
    qualifiers: dict[str, str]
    where: str

    @property
    def numeric(self) -> bool:
        return isinstance(self.values, np.ndarray)


@dataclass(frozen=True)
class HepTable:
    """One table of a record, with its layout once classified.

    Attributes
    ----------
    name, description
        From submission.yaml.
    path
        The table's data file.
    independent, dependent
        Its variables.
    layout
        One of :data:`LAYOUTS` (empty before :func:`classify`).
    coefficients
        The coefficient names of its variables (scan and contour layouts), in the order
        x, y, ...
    factor
        For scans: the factor that turns the (first) dependent values into -2 Delta ln L;
        ``extra["factors"]`` holds one per dependent variable.
    """

    name: str
    description: str
    path: Path
    independent: tuple[Variable, ...]
    dependent: tuple[Variable, ...]
    layout: str = ""
    coefficients: tuple[str, ...] = ()
    factor: float = 1.0
    extra: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "file": self.path.name, "layout": self.layout,
                "coefficients": list(self.coefficients), "factor": self.factor,
                "variables": [v.name for v in self.independent + self.dependent]}


def _yaml_error(path: Path, problem: str, hint: str) -> InputError:
    return InputError(path, None, problem, hint)


def _record_loader() -> type:
    """PyYAML's safe loader (YAML 1.2 numbers) refusing a key given twice in a mapping:
    a second ``values:`` would silently replace the first."""
    import yaml

    from eftsieve.io.yaml12 import strict_loader

    def refuse(knode: Any, key: Any, reason: str) -> NoReturn:
        what = f"duplicate key {key!r}" if reason == "duplicate" else "a key that is not text"
        raise yaml.constructor.ConstructorError(None, None, what, knode.start_mark)

    return strict_loader(refuse, plain=lambda key: isinstance(key, (str, int, float, bool)))


def _yaml_problem(err: Exception) -> str:
    """A YAML error in one short phrase with its line and column."""
    problem = getattr(err, "problem", None) or " ".join(str(err).split())[:120]
    mark = getattr(err, "problem_mark", None)
    where = f" (line {mark.line + 1}, column {mark.column + 1})" if mark is not None else ""
    return f"{problem}{where}"


def _load_all(path: Path, what: str = "HEPData file") -> list[Any]:
    import yaml

    from eftsieve.io.textfile import read_text

    text = read_text(path, MAX_BYTES, _yaml_error, what)
    try:
        return [d for d in yaml.load_all(text, Loader=_record_loader())  # noqa: S506
                if d is not None]
    except yaml.YAMLError as err:
        problem = _yaml_problem(err)
        raise InputError(path, None, f"not valid YAML: {problem}",
                         "give each key once" if problem.startswith("duplicate key") else
                         "correct the YAML syntax (the HEPData submission format: "
                         "hepdata-submission.readthedocs.io)") from err
    except RecursionError as err:
        raise InputError(path, None, "lists or mappings nested too deeply",
                         "check that this is a HEPData submission.yaml or table file") from err


def read_record(path: str | Path, tables: Sequence[str] | None = None
                ) -> tuple[HepTable, ...]:
    """The tables of a record (``submission.yaml``, or the folder holding it).

    ``tables`` selects tables by name (all by default); an unknown name is an error
    that lists the record's tables.
    """
    p = Path(path)
    if p.is_dir() and (p / "submission.yaml").is_file():
        p = p / "submission.yaml"
    docs = _load_all(p, "HEPData submission.yaml")
    entries = [(i, d) for i, d in enumerate(docs) if isinstance(d, dict) and "data_file" in d]
    if not entries:
        raise InputError(p, "data_file", "no table in the record",
                         "give a HEPData submission.yaml whose documents name data_file")
    names = [str(d.get("name", "")) for _, d in entries]
    for k, n in enumerate(names):
        if n in names[:k]:
            raise InputError(p, f"document {entries[k][0]}.name", f"two tables are named "
                             f"{n!r}", "give each table its own name (HEPData requires it)")
    if tables:
        unknown = [t for t in tables if t not in names]
        if unknown:
            raise InputError(p, "name", f"no table named {unknown[0]!r}",
                             f"tables: {', '.join(repr(n) for n in names)}")
        entries = [e for e in entries if str(e[1].get("name", "")) in tables]
    return tuple(_table(p, i, d) for i, d in entries)


def _table(sub: Path, i: int, doc: dict[str, Any]) -> HepTable:
    file = doc["data_file"]
    if not isinstance(file, str):
        raise InputError(sub, f"document {i}.data_file", "must be a file name",
                         "name the table's YAML file")
    path = sub.parent / file
    if sub.parent.resolve() not in path.resolve().parents:
        raise InputError(sub, f"document {i}.data_file", f"{file!r} lies outside the "
                         "record's folder", "keep the table files beside submission.yaml")
    if not path.exists():
        raise InputError(sub, f"document {i}.data_file", f"the table file {file!r} of "
                         f"table {doc.get('name', file)!r} is not in the record's folder",
                         "put the table file beside submission.yaml, or correct data_file")
    data = _load_all(path, "HEPData table file")
    if len(data) != 1 or not isinstance(data[0], dict):
        raise InputError(path, None, "a table file holds one mapping",
                         "give independent_variables and dependent_variables")
    body = data[0]
    ind = _variables(path, body, "independent_variables")
    dep = _variables(path, body, "dependent_variables")
    first = ind[0]
    for v in ind[1:] + dep:
        if len(v.values) != len(first.values):
            raise InputError(path, f"{v.where}.values", f"has {len(v.values)} values, "
                             f"{first.where} has {len(first.values)}",
                             "give one value per row in every variable")
    return HepTable(str(doc.get("name", file)), str(doc.get("description", "")), path,
                    ind, dep)


def _variables(path: Path, body: dict[str, Any], key: str) -> tuple[Variable, ...]:
    raw = body.get(key)
    if not isinstance(raw, list) or not raw:
        raise InputError(path, key, "missing or empty", "see docs/formats.md, HEPData records")
    return tuple(_variable(path, v, f"{key}[{j}]") for j, v in enumerate(raw))


def _variable(path: Path, raw: Any, where: str) -> Variable:
    if not isinstance(raw, dict) or not isinstance(raw.get("header"), dict):
        raise InputError(path, f"{where}.header", "missing", "give header: {name: ...}")
    head = raw["header"]
    quals = {str(q.get("name")): str(q.get("value")) for q in raw.get("qualifiers") or []
             if isinstance(q, dict)}
    vals = raw.get("values")
    if not isinstance(vals, list) or not vals:
        raise InputError(path, f"{where}.values", "missing or empty", "give the values")
    entries = []
    for k, v in enumerate(vals):
        if not isinstance(v, dict) or "value" not in v:
            hint = ("binned values (low/high) are not read: give the bin centres as value"
                    if isinstance(v, dict) and "low" in v else "write {value: ...}")
            raise InputError(path, f"{where}.values[{k}]", "no value", hint)
        entries.append(v)
    texts = [_maybe_number(e["value"]) for e in entries]
    if all(isinstance(t, str) for t in texts):
        values: Any = tuple(str(t).strip() for t in texts)
    else:
        bad = [k for k, t in enumerate(texts) if isinstance(t, bool)
               or not isinstance(t, (int, float)) or not np.isfinite(t)]
        if bad:
            raise InputError(path, f"{where}.values[{bad[0]}].value", f"not a finite number: "
                             f"{texts[bad[0]]!r}", "give a finite number at every point (no "
                             "NaN, inf or '-' placeholders: drop the point from every "
                             "variable instead)")
        values = np.asarray(texts, dtype=float)
    errs = np.array([_symerror(e) for e in entries], dtype=float)
    neg = np.flatnonzero(errs < 0)
    if neg.size:
        raise InputError(path, f"{where}.values[{neg[0]}].errors", f"negative symmetric "
                         f"error {errs[neg[0]]:g}", "give the error's size (symerror >= 0)")
    return Variable(str(head.get("name", "")), str(head.get("units", "")), values,
                    None if np.isnan(errs).all() else errs, quals, where)


def _maybe_number(v: Any) -> Any:
    """A value written as a numeric string ('0.25') is that number; other text stays."""
    if isinstance(v, str):
        try:
            return float(v)
        except ValueError:
            return v
    return v


def _symerror(entry: dict[str, Any]) -> float:
    errors = entry.get("errors") or []
    total = [e.get("symerror") for e in errors if isinstance(e, dict) and "symerror" in e]
    if len(total) != 1 or isinstance(total[0], bool) or not isinstance(total[0], (int, float)):
        return float("nan")
    return float(total[0])


def normalise(text: str) -> str:
    """A header with markup dropped: ``$f_{T0}/\\Lambda^4$`` -> ``fT0Lambda4``."""
    for k, v in _GREEK.items():
        text = text.replace(k, v)
    return re.sub(r"[^A-Za-z0-9]", "", text)


def match_coefficient(header: str, names: Sequence[str]) -> str | None:
    """The coefficient a header names (the longest name it starts with), or None."""
    norm = normalise(header)
    hits = [n for n in names if normalise(n) and norm.startswith(normalise(n))]
    if not hits:
        return None
    best = max(len(normalise(n)) for n in hits)
    top = [n for n in hits if len(normalise(n)) == best]
    return top[0] if len(top) == 1 else None


def scan_factor(header: str) -> float | None:
    """The factor turning a scan column into -2 Delta ln L, from its header, or None."""
    norm = normalise(header).lower()
    for frag, factor in SCAN_QUANTITIES:
        if frag in norm:
            return factor
    return None


def _fix(names: Sequence[str]) -> str:
    return (f"supported layouts: {', '.join(LAYOUTS)} (docs/formats.md, HEPData records); "
            f"name coefficients as {', '.join(names[:3])}, ...; select tables with --table")


def classify(table: HepTable, names: Sequence[str]) -> HepTable:
    """The table with its layout, coefficients and scan factor; InputError naming the
    file, the variable and the fix when it fits no supported layout."""
    from dataclasses import replace

    ind, dep = table.independent, table.dependent
    if len(ind) > 2:
        raise InputError(table.path, "independent_variables", f"{len(ind)} independent "
                         "variables; the supported layouts have one or two", _fix(names))
    ind_coef = [match_coefficient(v.name, names) if v.numeric else None for v in ind]
    if all(ind_coef) and len(ind) in (1, 2) and all(v.numeric for v in ind):
        coefs = tuple(c for c in ind_coef if c is not None)
        if len(set(coefs)) != len(coefs):
            raise InputError(table.path, f"{ind[1].where}.header.name", "names the same "
                             f"coefficient as {ind[0].where}", _fix(names))
        factors = [scan_factor(v.name) for v in dep]
        if all(f is not None for f in factors):  # one scan per column (observed, expected)
            for v in dep:
                _check_scan(table, v)
            return replace(table, layout=f"scan-{len(ind)}d", coefficients=coefs,
                           factor=float(factors[0] or 1.0),
                           extra={**table.extra, "factors": [float(f or 1.0) for f in factors]})
        dep_coef = [match_coefficient(v.name, names) if v.numeric else None for v in dep]
        if len(ind) == 1 and all(dep_coef) and coefs[0] not in dep_coef:
            ys = tuple(c for c in dep_coef if c is not None)
            if len(set(ys)) != 1:
                raise InputError(table.path, "dependent_variables", "the contours of one "
                                 f"table name different coefficients {sorted(set(ys))}",
                                 "one table per pair of coefficients")
            for v in dep:
                _check_contour(table, ind[0], v)
            return replace(table, layout="contour", coefficients=(coefs[0], ys[0]))
        bad = dep[0]
        raise InputError(table.path, f"{bad.where}.header.name", f"{bad.name!r} is neither "
                         "a scan quantity (Delta chi^2, -2 Delta ln L, Delta NLL) nor a "
                         "coefficient", _fix(names))
    return _classify_gaussian(table, names)


def _check_contour(table: HepTable, x: Variable, y: Variable) -> None:
    """A contour is a polygon: at least 3 distinct points enclosing a non-zero area."""
    pts = np.column_stack([x.values, y.values])
    distinct = len(np.unique(pts, axis=0))
    if distinct < 3:
        raise InputError(table.path, f"{y.where}.values", f"a contour needs at least 3 "
                         f"distinct points, got {distinct}", "give the contour's points in "
                         "order around it")
    xs, ys = pts[:, 0], pts[:, 1]  # the shoelace formula (signed parts of a crossed
    area = 0.5 * abs(np.dot(xs, np.roll(ys, -1)) - np.dot(ys, np.roll(xs, -1)))  # one cancel)
    if not area > 1e-12 * float(np.ptp(xs) * np.ptp(ys)):
        raise InputError(table.path, f"{y.where}.values", "the contour encloses no area (its "
                         "points lie on a line, or it crosses itself so that its parts "
                         "cancel)", "give the contour's points in order around it")
    hit = first_crossing(pts)
    if hit is not None:
        i, j = hit
        raise InputError(table.path, f"{y.where}.values", f"the contour crosses itself (its "
                         f"edges from point {i + 1} and from point {j + 1} intersect), so its "
                         "area is not the area inside it", "give one closed contour with its "
                         "points in order around it (several islands: one table each)")


def first_crossing(pts: np.ndarray) -> tuple[int, int] | None:
    """The first pair (i, j) of non-adjacent edges of a closed polygon that cross properly
    (edge k runs from point k to point k + 1, the last one back to the first), or None.

    Orientation tests with a relative tolerance: touching or collinear edges do not count,
    only edges whose end points lie strictly on opposite sides of each other.
    """
    p = np.asarray(pts, dtype=float)
    if len(p) > 1 and np.array_equal(p[0], p[-1]):
        p = p[:-1]
    n = len(p)
    if n < 4:
        return None
    a, b = p, np.roll(p, -1, axis=0)
    scale = float(np.ptp(p[:, 0]) * np.ptp(p[:, 1])) or 1.0
    tol = 1e-12 * scale

    def orient(o: np.ndarray, u: np.ndarray, v: np.ndarray) -> np.ndarray:
        return (u[..., 0] - o[..., 0]) * (v[..., 1] - o[..., 1]) - \
            (u[..., 1] - o[..., 1]) * (v[..., 0] - o[..., 0])

    for i in range(n - 2):
        j = np.arange(i + 2, n if i > 0 else n - 1)   # edge n-1 is adjacent to edge 0
        if not len(j):
            continue
        d1, d2 = orient(a[i], b[i], a[j]), orient(a[i], b[i], b[j])
        d3, d4 = orient(a[j], b[j], a[i]), orient(a[j], b[j], b[i])
        cross = (((d1 > tol) & (d2 < -tol)) | ((d1 < -tol) & (d2 > tol))) & \
            (((d3 > tol) & (d4 < -tol)) | ((d3 < -tol) & (d4 > tol)))
        if cross.any():
            return i, int(j[np.argmax(cross)])
    return None


def _check_scan(table: HepTable, dep: Variable) -> None:
    if not dep.numeric:
        raise InputError(table.path, f"{dep.where}.values", "the scan values are not numbers",
                         "give numbers")
    if np.max(dep.values) <= 0 < -np.min(dep.values):
        raise InputError(table.path, f"{dep.where}.header.name", f"{dep.name!r}: every "
                         "value is negative, so this is Delta ln L, not -2 Delta ln L",
                         "copy the record and name the quantity as it is, e.g. -Delta ln L")


def _classify_gaussian(table: HepTable, names: Sequence[str]) -> HepTable:
    from dataclasses import replace

    ind, dep = table.independent, table.dependent
    labels = [v for v in ind if not v.numeric]
    if len(labels) != len(ind) or len(dep) != 1 or not dep[0].numeric:
        where = next((v.where for v in ind if v.numeric
                      and match_coefficient(v.name, names) is None), "independent_variables")
        raise InputError(table.path, f"{where}.header.name", "the table fits no supported "
                         "layout", _fix(names))
    for v in labels:
        unknown = [t for t in v.values if t not in names]
        if unknown:
            raise InputError(table.path, f"{v.where}.values", f"{unknown[0]!r} is not a "
                             "coefficient of the theory", f"use {', '.join(names)}")
    head = normalise(dep[0].name).lower()
    if len(ind) == 1:
        twice = [t for k, t in enumerate(ind[0].values) if t in ind[0].values[:k]]
        if twice:
            raise InputError(table.path, f"{ind[0].where}.values", f"{twice[0]!r} has two "
                             "central values", "give each coefficient once")
        if dep[0].errors is None or np.isnan(dep[0].errors).any():
            raise InputError(table.path, f"{dep[0].where}.values", "central values need one "
                             "symmetric error each (errors: [{symerror: ...}])",
                             "give the total symmetric error of every value")
        return replace(table, layout="central", coefficients=tuple(ind[0].values))
    kind = ("covariance" if "covariance" in head else
            "correlation" if "correlation" in head else "")
    if len(ind) != 2 or not kind:
        raise InputError(table.path, f"{dep[0].where}.header.name", f"{dep[0].name!r}: a "
                         "table of two coefficient names must hold a covariance or a "
                         "correlation", "name the quantity 'covariance' or 'correlation'")
    return replace(table, layout=kind)


def gaussian_fit(path: Path, tables: Sequence[HepTable], theory: Any, convention: Any) -> Any:
    """A Gaussian :class:`~eftsieve.fit.model.Fit` from a record's ``central`` table and
    its ``covariance`` or ``correlation`` table (uncorrelated errors without one)."""
    from eftsieve.fit.model import Fit, Parameter, check_covariance

    central = [t for t in tables if t.layout == "central"]
    mats = [t for t in tables if t.layout in ("covariance", "correlation")]
    for what, found in (("central-value", central), ("covariance", mats)):
        if len(found) > 1:
            raise InputError(path, "name", f"several {what} tables "
                             f"({', '.join(repr(t.name) for t in found)})",
                             "select one of each with --table")
    c = central[0]
    names = tuple(c.independent[0].values)
    mean = np.asarray(c.dependent[0].values, dtype=float)
    err = np.asarray(c.dependent[0].errors, dtype=float)
    cov = np.diag(err ** 2)
    if mats:
        m = mats[0]
        full = np.full((len(names), len(names)), np.nan)
        for a, b, val in zip(m.independent[0].values, m.independent[1].values,
                             m.dependent[0].values, strict=True):
            if a not in names or b not in names:
                raise InputError(m.path, "independent_variables.values", f"{a!r}/{b!r} has "
                                 "no central value", f"the central table names {names}")
            if not np.isnan(full[names.index(a), names.index(b)]):
                raise InputError(m.path, "independent_variables.values", f"the entry "
                                 f"{a!r}/{b!r} is given twice", "give each pair once")
            full[names.index(a), names.index(b)] = val
        full = np.where(np.isnan(full), full.T, full)
        if np.isnan(full).any():
            raise InputError(m.path, "dependent_variables[0].values", "the matrix misses "
                             "entries", "give every pair of coefficients (one triangle is "
                             "enough)")
        cov = full * np.outer(err, err) if m.layout == "correlation" else full
        check_covariance(cov, len(names), m.path, "dependent_variables[0]")
    params = tuple(Parameter(n, convention) for n in names)
    return Fit(c.name, theory.name, params, {}, mean=mean, cov=cov, source=path,
               extra={"hepdata_tables": [t.name for t in central + mats]})


def held_at_zero(fit: Any, coordinates: Sequence[str]) -> Any:
    """A Gaussian fit of some of ``coordinates``, with the others added at zero with zero
    variance (a Gaussian on a subspace: the record held them at zero)."""
    from dataclasses import replace

    from eftsieve.fit.model import Parameter

    missing = [c for c in coordinates if c not in fit.names]
    if not missing or not all(n in coordinates for n in fit.names):
        return fit
    conv = fit.parameters[0].convention
    n, m = len(fit.names), len(missing)
    cov = np.zeros((n + m, n + m))
    cov[:n, :n] = fit.cov
    return replace(fit, parameters=fit.parameters + tuple(Parameter(c, conv) for c in missing),
                   mean=np.concatenate([fit.mean, np.zeros(m)]), cov=cov,
                   extra={**fit.extra, "held_at_zero": missing})


def is_record(path: str | Path) -> bool:
    """A HEPData record: a submission.yaml, or a folder holding one."""
    p = Path(path)
    return p.name == "submission.yaml" or (p.is_dir() and (p / "submission.yaml").is_file())


def fit_from_record(path: str | Path, theory: Any, convention: Any) -> Any:
    """The Gaussian fit of a record's central-value and covariance tables (scans and
    contours are left to ``eftsieve limits``; coefficients the record does not give are
    held at zero).

    Every table is classified as ``eftsieve limits`` classifies it, so a malformed table
    is refused with its file and field, whatever its layout: a damaged covariance table
    is never skipped in silence (the fit would then have uncorrelated errors).
    """
    p = Path(path)
    found = [t for t in (classify(t, theory.parameter_names) for t in read_record(p))
             if t.layout in ("central", "covariance", "correlation")]
    if not any(t.layout == "central" for t in found):
        raise InputError(p, "dependent_variables", "no table of central values with errors",
                         "use `eftsieve limits` for scans, contours and intervals")
    sub = p / "submission.yaml" if p.is_dir() else p
    return held_at_zero(gaussian_fit(sub, found, theory, convention), theory.coordinates)
