"""The Fit object and its loaders.

A *fit card* (YAML or JSON, ``format_version: 1``) describes a fit: its theory, each
parameter with its convention, the kinematics those conventions need, and either a
Gaussian summary (``mean`` with ``covariance``, or ``errors`` + ``correlation``) or a
``samples`` file.  Use :func:`load_fit` for a card and :func:`fit_from_samples` for a
bare samples file with the theory and convention given on the command line.

Validation runs in two stages: the schema (shapes and types, errors name the path such
as ``parameters[1].name``), then the semantics (a symmetric positive semi-definite
covariance, known parameter names, the scale or mass that each convention needs).
Nothing is ever repaired silently.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.fit.conventions import NONE, Convention, ConventionSpec, make_convention
from eftsieve.io.readers.columns import ColumnsSpec
from eftsieve.io.readers.options import ReadOptions
from eftsieve.io.samples import SamplesSource, detect_format
from eftsieve.tolerances import PSD_TOL, SYMMETRY_TOL

FORMAT_VERSION = 1


@dataclass(frozen=True)
class Parameter:
    """One fitted parameter.

    Attributes
    ----------
    name
        The parameter's name (``lbar1``, ``l2``, ``g3t``, or any nuisance name).
    convention
        How it is defined; ``none`` for parameters that no theory constrains.
    """

    name: str
    convention: Convention

    def to_dict(self) -> dict[str, object]:
        return {"name": self.name, "convention": self.convention.to_dict()}


@dataclass(frozen=True)
class Prior:
    """A prior on some parameters: independent uniform or normal factors.

    Attributes
    ----------
    kinds
        ``uniform`` or ``normal`` for each named parameter.
    params
        (low, high) for uniform, (mean, sigma) for normal.
    """

    kinds: dict[str, str]
    params: dict[str, tuple[float, float]]

    def to_dict(self) -> dict[str, object]:
        return {k: {self.kinds[k]: list(self.params[k])} for k in self.kinds}


@dataclass(frozen=True)
class Fit:
    """A fit of EFT constants: a Gaussian summary or a samples file, in the user's conventions.

    Attributes
    ----------
    name
        The fit's name.
    theory
        The theory name (``chpt-su2``, ``scalar-eft``).
    parameters
        The parameters in order.
    kinematics
        The kinematic inputs in MeV (``pion_mass_mev``, ``fpi_mev``, ``mu_mev``, ...).
    mean, cov
        The Gaussian summary, or None.
    samples
        The samples file, or None.
    prior
        The fit's stated prior, or None.
    source
        The card (or samples file) that was read.
    """

    name: str
    theory: str
    parameters: tuple[Parameter, ...]
    kinematics: dict[str, float]
    mean: np.ndarray | None = None
    cov: np.ndarray | None = None
    samples: SamplesSource | None = None
    prior: Prior | None = None
    source: Path | None = None
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.parameters)

    @property
    def is_gaussian(self) -> bool:
        return self.mean is not None

    def to_dict(self) -> dict[str, object]:
        out: dict[str, object] = {
            "name": self.name, "theory": self.theory,
            "parameters": [p.to_dict() for p in self.parameters],
            "kinematics": dict(self.kinematics),
            "source": None if self.source is None else str(self.source),
        }
        if self.mean is not None and self.cov is not None:
            out["mean"] = self.mean.tolist()
            out["covariance"] = self.cov.tolist()
        if self.samples is not None:
            out["samples"] = {"path": str(self.samples.path), "format": self.samples.fmt,
                              "columns": list(self.samples.columns),
                              "weight_column": self.samples.weight_column,
                              "options": (None if self.samples.options is None
                                          else self.samples.options.to_dict())}
        if self.prior is not None:
            out["prior"] = self.prior.to_dict()
        return out


def fit_from_samples(
    path: str | Path, theory: Any, convention: Convention, *, weight_column: str | None = None,
    kinematics: dict[str, float] | None = None, name: str | None = None,
    columns: ColumnsSpec | None = None, options: ReadOptions | None = None,
) -> Fit:
    """A Fit from a bare samples file (or gvar JSON dump): every numeric column is a
    parameter, unless ``columns`` (``--columns``) selects and renames them.

    Columns that the theory knows get ``convention``; the others are carried through as
    nuisance parameters (convention ``none``).
    """
    from eftsieve.io.readers.columns import resolve_columns
    from eftsieve.io.readers.options import check_applicable
    from eftsieve.io.samples import is_multi_file_path

    p = Path(path)
    if not (p.is_file() or is_multi_file_path(p)):
        raise InputError(p, None, "file not found", "check the path")
    th = theory
    fmt = detect_format(p, None, "--samples")
    opts = options or ReadOptions()
    check_applicable(opts, fmt, None, "--")
    mean = cov = source = None
    if fmt == "gvar-json":
        from eftsieve.fit.formats.gvar_json import read_gvar_json

        if weight_column is not None or (columns is not None and columns.weight is not None):
            raise InputError(p, "--weight-column", "a Gaussian summary has no weights",
                             "remove the weight column")
        keys = None if columns is None else [n if s is None else str(s) for n, s in
                                             zip(columns.names, columns.sources, strict=True)]
        g = read_gvar_json(p, keys, None if columns is None else columns.names, "--columns")
        names, mean, cov = g.names, g.mean, g.cov
        check_covariance(cov, len(names), p, "covariance of the selected keys")
    else:
        probe = SamplesSource(p, fmt, (), options=opts)
        table = probe.column_table()
        if columns is None and table.stores_names:
            columns, weight_column = _bare_columns(table.labels, weight_column, p)
        res = resolve_columns(columns, table, p, "--columns", None, weight_column)
        names = res.names
        source = SamplesSource(p, fmt, res.labels, res.weight, opts)
        source.validate_columns()
    params = tuple(Parameter(c, convention if c in th.parameter_names else Convention(NONE))
                   for c in names)
    if not any(pp.convention.name != NONE for pp in params):
        raise InputError(p, "columns", f"no column names a parameter of {th.name}",
                         f"accepted names: {', '.join(th.parameter_names)}; select and "
                         "rename with --columns lbar1=COLUMN,...")
    fit = Fit(name or p.stem, th.name, params, dict(kinematics or {}), mean, cov, source,
              source=p)
    th.validate_fit(fit)
    return fit


def _bare_columns(labels: Any, weight_column: str | None, path: Path
                  ) -> tuple[ColumnsSpec | None, str | None]:
    """Leave a bare file's sampler bookkeeping columns out and recognise its weight
    column, each with a printed notice (:mod:`eftsieve.fit.bookkeeping`)."""
    import warnings

    from eftsieve.errors import InputNotice
    from eftsieve.fit.bookkeeping import split_columns

    split = split_columns([str(c) for c in labels], weight_column)
    if split.weight is not None and weight_column is None:
        warnings.warn(InputNotice(f"{path.name}: column '{split.weight}' is used as the "
                                  "sample weight (choose others with --columns)"), stacklevel=3)
    if not split.bookkeeping:
        return None, split.weight
    warnings.warn(InputNotice(f"{path.name}: sampler bookkeeping column(s) "
                              f"{', '.join(split.bookkeeping)} left out of the parameters "
                              "(choose others with --columns)"), stacklevel=3)
    return (ColumnsSpec(split.parameters, (None,) * len(split.parameters), None, True),
            split.weight)


def check_covariance(cov: np.ndarray, n: int, path: Path | None, field_name: str) -> None:
    """Semantic checks on a covariance: shape, symmetry, positive semi-definiteness."""
    if cov.shape != (n, n):
        raise InputError(path, field_name, f"shape {cov.shape} does not match {n} parameters",
                         f"give a {n}x{n} matrix")
    if not np.isfinite(cov).all():
        raise InputError(path, field_name, "holds NaN or inf", "give finite numbers")
    from eftsieve.io import limits

    if np.max(np.abs(cov), initial=0.0) > limits.MAX_ABS_VALUE ** 2 / 1e6:
        raise InputError(path, field_name, "entries are outside the supported range (standard "
                         f"deviations above {limits.MAX_ABS_VALUE / 1e3:g})",
                         "rescale the parameters (e.g. a different unit)")
    scale = max(float(np.max(np.abs(cov))), 1e-300)
    asym = float(np.max(np.abs(cov - cov.T)))
    if asym > SYMMETRY_TOL * scale:
        i, j = np.unravel_index(np.argmax(np.abs(cov - cov.T)), cov.shape)
        raise InputError(path, field_name,
                         f"not symmetric: entry [{i}][{j}]={cov[i, j]:g} but [{j}][{i}]="
                         f"{cov[j, i]:g}", "make the matrix symmetric")
    eig = np.linalg.eigvalsh(cov)
    if eig[0] < -PSD_TOL * max(eig[-1], 1e-300):
        raise InputError(path, field_name,
                         f"not positive semi-definite: smallest eigenvalue {eig[0]:.6g}",
                         "supply a valid covariance; nothing is repaired silently")


def parse_convention(raw: Any, kin: dict[str, float], path: Path | None, where: str,
                     needs_convention: bool, specs: dict[str, ConventionSpec]) -> Convention:
    """Parse a convention entry (a name or a mapping) and check the kinematics it needs.

    ``specs`` are the conventions the fit's theory offers
    (:attr:`eftsieve.theories.base.Theory.convention_specs`).
    """
    accepted = ", ".join([*specs, NONE])
    if raw is None:
        raw = NONE if not needs_convention else None
    if raw is None:
        raise InputError(path, where, "missing convention", f"state one of {accepted}")
    extra: dict[str, Any] = {}
    if isinstance(raw, dict):
        extra = dict(raw)
        raw = extra.pop("name", None)
    if raw == NONE:
        return Convention(NONE)
    if raw not in specs:
        raise InputError(path, where, f"unknown convention '{raw}'", f"use one of {accepted}")
    spec = specs[raw]
    values = {}
    for key, what in spec.needs:
        value = extra.get(key, kin.get(key))
        if value is None:
            raise InputError(path, where, f"convention '{raw}' needs {what}",
                             f"add kinematics.{key} (MeV)")
        values[key] = _positive(value, path, f"{where}.{key}")
    return make_convention(spec, **values)


def _positive(x: Any, path: Path | None, where: str) -> float:
    try:
        v = float(x)
    except (TypeError, ValueError) as err:
        raise InputError(path, where, f"not a number: {x!r}", "give a value in MeV") from err
    if not np.isfinite(v) or v <= 0:
        raise InputError(path, where, f"must be positive and finite, got {v}", "give MeV")
    return v
