"""Schema and semantic validation of fit cards (``format_version: 1``).

:data:`FIT_CARD_SCHEMA` is a JSON Schema (draft 2020-12) of the card; docs/formats.md
prints it and a test checks that the two agree.  :func:`fit_from_card` validates in
two stages, first shapes and types (errors name the path, ``parameters[1].name``), then
the semantics.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.fit.model import (
    FORMAT_VERSION,
    Fit,
    Parameter,
    Prior,
    check_covariance,
    parse_convention,
)
from eftsieve.io.readers.columns import parse_columns, resolve_columns
from eftsieve.io.readers.options import check_applicable, parse_options
from eftsieve.io.samples import DECLARED_FORMATS, SamplesSource, detect_format

_NUM = {"type": "number"}
_MATRIX = {"type": "array", "items": {"type": "array", "items": _NUM}}
FIT_CARD_SCHEMA: dict[str, Any] = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "eftsieve fit card",
    "type": "object",
    "required": ["format_version", "name", "theory", "parameters"],
    "properties": {
        "format_version": {"const": FORMAT_VERSION},
        "name": {"type": "string"},
        "theory": {"type": "string"},
        "description": {"type": "string"},
        "kinematics": {"type": "object", "additionalProperties": _NUM},
        "parameters": {"type": "array", "minItems": 1, "items": {
            "type": "object", "required": ["name"],
            "properties": {"name": {"type": "string"},
                           "convention": {"type": ["string", "object"]}}}},
        "mean": {"type": "array", "items": _NUM},
        "covariance": _MATRIX,
        "errors": {"type": "array", "items": _NUM},
        "correlation": _MATRIX,
        "samples": {"type": "object", "required": ["path"], "properties": {
            "path": {"type": "string"},
            "format": {"enum": list(DECLARED_FORMATS)},
            "weight_column": {"type": "string"},
            "columns": {"oneOf": [
                {"type": "array", "items": {"type": "string"}, "minItems": 1},
                {"type": "object", "additionalProperties": {
                    "type": ["string", "integer"]}}]},
            "burn_in": {"type": "integer", "minimum": 0},
            "thin": {"type": "integer", "minimum": 1},
            "walkers": {"type": ["array", "string"], "items": {"type": "integer"}},
            "group": {"type": "string"}}},
        "gaussian": {"type": "object", "required": ["file"], "additionalProperties": False,
                     "properties": {
                         "file": {"type": "string"},
                         "format": {"enum": ["gvar-json"]},
                         "keys": {"type": ["array", "object"], "items": {"type": "string"},
                                  "additionalProperties": {"type": "string"}}}},
        "prior": {"type": "object", "additionalProperties": {
            "type": "object",
            "properties": {"uniform": {"type": "array", "items": _NUM, "minItems": 2,
                                       "maxItems": 2},
                           "normal": {"type": "array", "items": _NUM, "minItems": 2,
                                      "maxItems": 2}}}},
    },
    "oneOf": [{"required": ["mean"]}, {"required": ["samples"]}, {"required": ["gaussian"]}],
}

_TOP_KEYS = set(FIT_CARD_SCHEMA["properties"])


def _num_list(x: Any, path: Path, where: str, n: int | None = None) -> np.ndarray:
    if not isinstance(x, list) or not all(isinstance(v, (int, float)) and not isinstance(v, bool)
                                          for v in x):
        raise InputError(path, where, "must be a list of numbers", "see docs/formats.md")
    if n is not None and len(x) != n:
        raise InputError(path, where, f"has {len(x)} entries for {n} parameters",
                         f"give {n} numbers, one per parameter, in order")
    return np.asarray(x, dtype=float)


def _matrix(x: Any, path: Path, where: str) -> np.ndarray:
    if not isinstance(x, list) or not x or not all(isinstance(r, list) for r in x):
        raise InputError(path, where, "must be a list of rows", "see docs/formats.md")
    lens = {len(r) for r in x}
    if len(lens) != 1:
        raise InputError(path, where, f"rows of unequal length {sorted(lens)}",
                         "give a square matrix")
    for i, r in enumerate(x):
        _num_list(r, path, f"{where}[{i}]")
    return np.asarray(x, dtype=float)


def _schema_stage(card: dict[str, Any], path: Path) -> None:
    unknown = set(card) - _TOP_KEYS
    if unknown:
        raise InputError(path, sorted(unknown)[0], "unknown field",
                         f"allowed fields: {', '.join(sorted(_TOP_KEYS))}")
    for key in ("format_version", "name", "theory", "parameters"):
        if key not in card:
            raise InputError(path, key, "missing required field", "see docs/formats.md")
    if card["format_version"] != FORMAT_VERSION:
        raise InputError(path, "format_version", f"unsupported version {card['format_version']!r}",
                         f"this eftsieve reads format_version {FORMAT_VERSION}")
    for key in ("name", "theory"):
        if not isinstance(card[key], str):
            raise InputError(path, key, "must be a string", "quote the value")
    params = card["parameters"]
    if not isinstance(params, list) or not params:
        raise InputError(path, "parameters", "must be a non-empty list", "list the parameters")
    for i, p in enumerate(params):
        if not isinstance(p, dict) or not isinstance(p.get("name"), str):
            raise InputError(path, f"parameters[{i}].name", "missing or not a string",
                             "give each parameter a name")
    if sum(k in card for k in ("mean", "samples", "gaussian")) != 1:
        raise InputError(path, "mean/samples", "give exactly one of a Gaussian summary "
                         "(mean, or a gaussian file) or a samples file (samples)",
                         "see docs/formats.md")
    kin = card.get("kinematics", {})
    if not isinstance(kin, dict):
        raise InputError(path, "kinematics", "must be a mapping", "see docs/formats.md")


def _kinematics(raw: dict[str, Any], path: Path) -> dict[str, float]:
    """Kinematic inputs: finite numbers, and positive masses and scales (``*_mev``)."""
    kin = {}
    for k, v in raw.items():
        where = f"kinematics.{k}"
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise InputError(path, where, f"must be a number, got {v!r}",
                             "give the value in MeV, e.g. 139.57")
        if not np.isfinite(v) or (str(k).endswith("_mev") and v <= 0):
            raise InputError(path, where, f"must be a finite positive number, got {v!r}",
                             "give the value in MeV, e.g. 139.57")
        kin[str(k)] = float(v)
    return kin


def check_mean(mean: np.ndarray, path: Path | None, where: str) -> None:
    """A mean is finite and inside the range where squares do not overflow."""
    from eftsieve.io import limits

    if not np.isfinite(mean).all():
        i = int(np.argmin(np.isfinite(mean)))
        raise InputError(path, where, f"entry {i} is not finite ({mean[i]})",
                         "give finite numbers")
    big = np.abs(mean) > limits.MAX_ABS_VALUE
    if big.any():
        i = int(np.argmax(big))
        raise InputError(path, where, f"entry {i} ({mean[i]:.3g}) is outside the supported "
                         f"range |x| <= {limits.MAX_ABS_VALUE:g}",
                         "rescale the parameter (e.g. a different unit)")


def _gaussian(card: dict[str, Any], path: Path, n: int) -> tuple[np.ndarray, np.ndarray]:
    mean = _num_list(card["mean"], path, "mean", n)
    if "covariance" in card:
        if "errors" in card or "correlation" in card:
            raise InputError(path, "covariance", "give covariance or errors+correlation, not both",
                             "remove one")
        cov = _matrix(card["covariance"], path, "covariance")
        check_covariance(cov, n, path, "covariance")
        return mean, cov
    if "errors" not in card:
        raise InputError(path, "covariance", "a Gaussian summary needs covariance or errors",
                         "add covariance, or errors (+ correlation)")
    err = _num_list(card["errors"], path, "errors", n)
    if not np.isfinite(err).all() or (err < 0).any():
        raise InputError(path, "errors", "negative or non-finite standard error",
                         "errors must be finite and >= 0")
    corr = (_matrix(card["correlation"], path, "correlation") if "correlation" in card
            else np.eye(n))
    check_covariance(corr, n, path, "correlation")
    if not np.allclose(np.diag(corr), 1.0, atol=1e-12):
        raise InputError(path, "correlation", "diagonal entries must be 1", "give a correlation")
    cov = corr * np.outer(err, err)
    return mean, cov


def _samples(card: dict[str, Any], path: Path, names: tuple[str, ...]) -> SamplesSource:
    spec = card["samples"]
    if not isinstance(spec, dict) or not isinstance(spec.get("path"), str):
        raise InputError(path, "samples.path", "missing or not a string", "give the file path")
    from eftsieve.io.samples import is_multi_file_path

    file = (path.parent / spec["path"]).resolve()
    if not (file.is_file() or is_multi_file_path(file)):
        raise InputError(path, "samples.path", f"file not found: {file}",
                         "paths are relative to the card")
    try:
        fmt = detect_format(file, spec.get("format"))
    except InputError as err:
        raise InputError(path, "samples.format", f"{err.problem} in {file.name}",
                         err.hint) from err
    if fmt == "gvar-json":
        raise InputError(path, "samples.format", f"{file.name}: a .json file is read as a gvar "
                         "JSON dump, a Gaussian summary", "write gaussian: {file: ..., keys: "
                         "[...]}, or convert samples to .csv, .parquet or .npy")
    unknown = sorted(set(spec) - set(FIT_CARD_SCHEMA["properties"]["samples"]["properties"]))
    if unknown:
        raise InputError(path, f"samples.{unknown[0]}", "unknown field", "allowed: " + ", ".join(
            FIT_CARD_SCHEMA["properties"]["samples"]["properties"]))
    options = parse_options(spec, path)
    check_applicable(options, fmt, path)
    columns = parse_columns(spec.get("columns"), path, "samples.columns")
    probe = SamplesSource(file, fmt, (), options=options)
    res = resolve_columns(columns, probe.column_table(), path, "samples.columns", names,
                          spec.get("weight_column"))
    source = SamplesSource(file, fmt, res.labels, res.weight, options)
    source.validate_columns()
    return source


def _prior(card: dict[str, Any], path: Path, names: tuple[str, ...]) -> Prior | None:
    raw = card.get("prior")
    if raw is None:
        return None
    kinds: dict[str, str] = {}
    params: dict[str, tuple[float, float]] = {}
    for k, v in raw.items():
        where = f"prior.{k}"
        if k not in names:
            raise InputError(path, where, "not a parameter of this card",
                             f"parameters: {', '.join(names)}")
        if not isinstance(v, dict) or len(v) != 1 or next(iter(v)) not in ("uniform", "normal"):
            raise InputError(path, where, "must be one mapping entry",
                             "write {uniform: [lo, hi]} or {normal: [mu, sigma]}")
        kind, vals = next(iter(v.items()))
        a, b = _num_list(vals, path, f"{where}.{kind}", 2)
        if (kind == "uniform" and not a < b) or (kind == "normal" and not b > 0):
            raise InputError(path, where, f"invalid {kind} parameters {[a, b]}",
                             "uniform needs lo < hi; normal needs sigma > 0")
        kinds[k], params[k] = kind, (float(a), float(b))
    return Prior(kinds, params)


def fit_from_card(card: dict[str, Any], path: Path, get_theory: Callable[[str], Any]) -> Fit:
    """Validate a parsed card (schema, then semantics) and build the Fit.

    ``get_theory`` looks a theory up by name (:func:`eftsieve.theories.get_theory`); the
    theory supplies the parameter names, conventions and kinematic inputs it accepts.
    """
    card = _expand_shorthand(card)
    _schema_stage(card, path)
    try:
        theory = get_theory(card["theory"])
    except KeyError as err:
        raise InputError(path, "theory", str(err.args[0]), "run `eftsieve theories`") from err
    kin = _kinematics(card.get("kinematics", {}), path)
    for k in kin:
        if k not in theory.kinematic_inputs:
            raise InputError(path, f"kinematics.{k}", "unknown kinematic input",
                             f"{theory.name} takes {', '.join(theory.kinematic_inputs)} (MeV)")
    params = []
    for i, p in enumerate(card["parameters"]):
        needs = p["name"] in theory.parameter_names
        raw, pkin = p.get("convention"), kin
        if raw is None and needs:  # shorthand: the theory infers it from the names
            raw = theory.infer_convention(tuple(q["name"] for q in card["parameters"]))
            pkin = kin if raw is None else theory.with_convention_defaults(raw, kin, "kinematics.")
        conv = parse_convention(raw, pkin, path, f"parameters[{i}].convention",
                                needs, theory.convention_specs)
        if conv.name != "none" and p["name"] not in theory.parameter_names:
            raise InputError(path, f"parameters[{i}].name", f"unknown parameter '{p['name']}'",
                             f"accepted: {', '.join(theory.parameter_names)}; or give "
                             "convention: none for a nuisance parameter")
        params.append(Parameter(p["name"], conv))
    names = tuple(p.name for p in params)
    if len(set(names)) != len(names):
        raise InputError(path, "parameters", "duplicate parameter names", "name each once")
    mean = cov = None
    source = None
    extra: dict[str, Any] = {}
    if "mean" in card:
        mean, cov = _gaussian(card, path, len(names))
    elif "gaussian" in card:
        from eftsieve.fit.formats.gaussian_card import gaussian_from_card

        mean, cov, gfile = gaussian_from_card(card["gaussian"], path, names)
        check_covariance(cov, len(names), gfile, "covariance of the selected keys")
        extra["gaussian_file"] = str(gfile)
    else:
        source = _samples(card, path, names)
    if mean is not None:
        check_mean(mean, path, "mean" if "mean" in card else "gaussian.file")
    fit = Fit(card["name"], card["theory"], tuple(params), kin, mean, cov, source,
              _prior(card, path, names), path, extra)
    theory.validate_fit(fit)
    return fit


def _expand_shorthand(card: dict[str, Any]) -> dict[str, Any]:
    """``parameters: [lbar1, lbar2]`` -> ``[{name: lbar1}, {name: lbar2}]`` (a new dict;
    the parsed card is not modified)."""
    params = card.get("parameters")
    if isinstance(params, list) and any(isinstance(p, str) for p in params):
        return {**card, "parameters": [{"name": p} if isinstance(p, str) else p
                                       for p in params]}
    return card


def _card_error(path: Path, problem: str, hint: str) -> InputError:
    return InputError(path, None, problem, hint)


def read_card(path: str | Path) -> dict[str, Any]:
    """Read a YAML or JSON fit card into a dict, with clear errors.

    Refused with an :class:`~eftsieve.errors.InputError` naming the file: a missing or
    unreadable file, a folder, a file over :data:`eftsieve.io.limits.MAX_CARD_BYTES`,
    text that is not UTF-8, syntax errors, duplicate keys, nesting deeper than
    :data:`eftsieve.io.limits.MAX_NESTING`, and a top level that is not a mapping.
    """
    from eftsieve.io import limits
    from eftsieve.io.textfile import parse_json, parse_yaml, read_text

    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in {".json", ".yaml", ".yml"}:
        raise InputError(p, None, f"unsupported fit-card extension '{p.suffix}'",
                         "use .yaml, .yml or .json")
    text = read_text(p, limits.MAX_CARD_BYTES, _card_error, "fit card")
    if suffix == ".json":
        data = parse_json(text, p, _card_error, limits.MAX_NESTING)
    else:
        data = parse_yaml(text, p, _card_error, limits.MAX_NESTING)
    if not isinstance(data, dict):
        raise InputError(p, None, "the card must be a mapping at top level",
                         "see docs/formats.md")
    return data


def load_fit(path: str | Path, get_theory: Any) -> Fit:
    """Load and validate a fit card (YAML or JSON); ``get_theory`` looks theories up by name
    (the public :func:`eftsieve.load_fit` passes :func:`eftsieve.theories.get_theory`)."""
    p = Path(path)
    return fit_from_card(read_card(p), p, get_theory)
