"""The Region: a precomputed allowed set, as linear facets with certificates.

A region lives in a theory's own coordinates (``coordinates``, in a stated
``convention``).  Each :class:`Facet` is one inequality ``normal . x >= offset`` with
the certificate that proves it: the bound family, the channel, the kinematic point or
dual functional, the value of the bound and the solver status.

Some regions also know an *inner* set (points that a real positive spectrum reaches,
for the sum-rule bounds of ``scalar-eft``): a point inside the inner set is certainly
allowed, a point outside the outer facets is certainly excluded, and a point between
them is numerically undecided.  Regions without an inner set use their facets for both.

A region is data: :meth:`Region.save` writes JSON with a content hash over everything
else in the file, and :meth:`Region.load` recomputes and checks it.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve._version import __version__
from eftsieve.errors import RegionFileError, SolverError
from eftsieve.io.atomic import atomic_write_json
from eftsieve.tolerances import REDUNDANCY_TOL

REGION_FORMAT_VERSION = 1
_FACET_KEYS = ("normal", "offset", "family", "channel", "value", "status")


@dataclass(frozen=True)
class Facet:
    """One linear inequality ``normal . x >= offset`` with its certificate.

    Attributes
    ----------
    normal
        The inward normal in the region's coordinates.
    offset
        The right-hand side.
    family
        The bound family that proves it (``second-derivative``, ``t-derivative``, ...).
    channel
        The scattering channel (``pi0 pi0``, ...), or the functional's name.
    point
        The kinematic point (``s``, ``t`` in units of M^2, ...) or other locating data.
    value
        The value of the bound at that point (``offset`` over the normal's norm, for 1-D
        statements such as ``lbar2 >= 1.35`` it is the bound itself).
    status
        The solver or optimiser status that produced it (``optimal`` only).
    extra
        Further certificate data (dual functional coefficients, ...).
    """

    normal: tuple[float, ...]
    offset: float
    family: str
    channel: str
    point: dict[str, float] = field(default_factory=dict)
    value: float = float("nan")
    status: str = "optimal"
    extra: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"normal": [float(v) for v in self.normal],
                               "offset": float(self.offset), "family": self.family,
                               "channel": self.channel, "value": float(self.value),
                               "status": self.status}
        out.update({k: float(v) for k, v in self.point.items()})
        if self.extra:
            out["extra"] = self.extra
        return out

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Facet:
        point = {k: float(v) for k, v in d.items() if k not in _FACET_KEYS + ("extra",)}
        return cls(tuple(float(v) for v in d["normal"]), float(d["offset"]), str(d["family"]),
                   str(d["channel"]), point, float(d.get("value", float("nan"))),
                   str(d.get("status", "optimal")), dict(d.get("extra", {})))

    def label(self) -> str:
        """``family / channel at s=..., t=...`` (kinematic points rounded for reading)."""
        pt = ", ".join(f"{k}={0.0 if abs(v) < 1e-6 else v:.4g}" for k, v in self.point.items()
                       if k != "pion_mass_mev")
        return f"{self.family} / {self.channel}" + (f" at {pt}" if pt else "")

    def inequality(self, coordinates: tuple[str, ...], drop: float = 1e-6) -> str:
        """The facet as readable text, e.g. ``lbar1 + 2 lbar2 >= 5.568``.  Terms smaller
        than ``drop`` times the largest are left out of the text (and counted at its end):
        numerical facets of many coordinates carry such dust; the stored normal keeps them."""
        terms = []
        top = max((abs(c) for c in self.normal), default=0.0)
        small = 0
        for c, name in zip(self.normal, coordinates, strict=True):
            if abs(c) < 1e-12:
                continue
            if abs(c) < drop * top:
                small += 1
                continue
            mag = "" if abs(abs(c) - 1) < 1e-12 else f"{abs(c):.6g} "
            sign = "-" if c < 0 else "+"
            terms.append((sign, f"{mag}{name}"))
        text = " ".join(f"{s} {t}" for s, t in terms).lstrip("+ ")
        if text.startswith("- "):
            text = "-" + text[2:]
        if small:
            text += f" (+ {small} term{'s' if small > 1 else ''} below {drop:g} of the largest)"
        return f"{text} >= {self.offset:.6g}"


@dataclass(frozen=True)
class Region:
    """An allowed region in a theory's coordinates.

    Attributes
    ----------
    theory
        The theory name.
    coordinates
        Parameter names, in the order of the facet normals.
    convention
        The convention of the coordinates with its kinematics.
    facets
        The outer (rigorous) facets.
    settings
        The settings that built the region.
    inner_facets
        Facets of the inner set, or empty when the inner set equals the outer one.
    inner_vertices
        Vertices of the inner set, if known.
    eftsieve_version
        The version that built it.
    """

    theory: str
    coordinates: tuple[str, ...]
    convention: dict[str, Any]
    facets: tuple[Facet, ...]
    settings: dict[str, Any] = field(default_factory=dict)
    inner_facets: tuple[Facet, ...] = ()
    inner_vertices: tuple[tuple[float, ...], ...] = ()
    eftsieve_version: str = __version__
    notes: tuple[str, ...] = ()

    # ---- geometry -------------------------------------------------------------
    @property
    def dim(self) -> int:
        return len(self.coordinates)

    def arrays(self, inner: bool = False) -> tuple[np.ndarray, np.ndarray]:
        """(A, b) with unit-norm rows, so that A x - b is the signed distance."""
        facets = self.inner_facets if (inner and self.inner_facets) else self.facets
        a = np.array([f.normal for f in facets], dtype=float).reshape(len(facets), self.dim)
        b = np.array([f.offset for f in facets], dtype=float)
        norms = np.linalg.norm(a, axis=1)
        return a / norms[:, None], b / norms

    def margins(self, x: np.ndarray, inner: bool = False) -> np.ndarray:
        """Signed distances of points (n, dim) to every facet, shape (n, m); positive inside."""
        a, b = self.arrays(inner)
        return np.asarray(x, dtype=float) @ a.T - b

    def contains(self, x: np.ndarray) -> np.ndarray:
        """Boolean mask of points satisfying every outer facet."""
        return np.asarray((self.margins(x) >= 0).all(axis=1))

    def chebyshev_center(self, box: float = 1e3) -> tuple[np.ndarray, float]:
        """The centre and radius of the largest ball inside the region (LP), clipped to a box."""
        from scipy.optimize import linprog

        a, b = self.arrays()
        d = self.dim
        # maximise r subject to a_i . x - r >= b_i, |x_j| <= box
        c = np.zeros(d + 1)
        c[-1] = -1.0
        a_ub = np.hstack([-a, np.ones((len(b), 1))])
        res = linprog(c, A_ub=a_ub, b_ub=-b, bounds=[(-box, box)] * d + [(0, box)],
                      method="highs")
        if res.status != 0:
            raise SolverError(res.message, "Chebyshev centre LP of the region")
        if res.x[-1] <= 0:
            raise SolverError("empty", "Chebyshev centre LP: the region has no interior")
        return res.x[:d], float(res.x[-1])

    # ---- persistence ------------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        body: dict[str, Any] = {
            "region_format_version": REGION_FORMAT_VERSION,
            "theory": self.theory, "coordinates": list(self.coordinates),
            "convention": self.convention, "facets": [f.to_dict() for f in self.facets],
            "settings": self.settings, "eftsieve_version": self.eftsieve_version,
            "notes": list(self.notes),
        }
        if self.inner_facets:
            body["inner_facets"] = [f.to_dict() for f in self.inner_facets]
        if self.inner_vertices:
            body["inner_vertices"] = [list(v) for v in self.inner_vertices]
        body["hash"] = content_hash(body)
        return body

    @property
    def hash(self) -> str:
        return str(self.to_dict()["hash"])

    def save(self, path: str | Path) -> Path:
        """Write the region as JSON, atomically."""
        from eftsieve.errors import InputError

        if Path(path).is_dir():
            raise InputError(path, "-o", "is a folder, not a region file name",
                             "give a file name such as region.json")
        return atomic_write_json(path, self.to_dict())

    @classmethod
    def from_dict(cls, d: dict[str, Any], path: str | Path | None = None) -> Region:
        try:
            stored = d["hash"]
            body = {k: v for k, v in d.items() if k != "hash"}
            found = content_hash(body)
            if stored != found:
                raise RegionFileError(path, "content hash mismatch: the file was edited or "
                                      "corrupted; rebuild it with `eftsieve region`",
                                      expected_hash=found, found_hash=str(stored))
            _check_body(d, path)
            region = cls(
                d["theory"], tuple(d["coordinates"]), dict(d["convention"]),
                tuple(Facet.from_dict(f) for f in d["facets"]), dict(d.get("settings", {})),
                tuple(Facet.from_dict(f) for f in d.get("inner_facets", [])),
                tuple(tuple(float(x) for x in v) for v in d.get("inner_vertices", [])),
                str(d.get("eftsieve_version", "")), tuple(d.get("notes", [])))
        except (KeyError, TypeError, ValueError) as err:
            raise RegionFileError(path, f"malformed region file ({type(err).__name__}: "
                                  f"{err})") from err
        _check_geometry(region, path)
        return region

    @classmethod
    def load(cls, path: str | Path) -> Region:
        """Read a region file and verify its content hash."""
        from eftsieve.io import limits
        from eftsieve.io.textfile import parse_json, read_text

        p = Path(path)
        text = read_text(p, limits.MAX_REGION_BYTES, _region_error, "region file")
        data = parse_json(text, p, _region_error, limits.MAX_NESTING)
        if not isinstance(data, dict):
            raise RegionFileError(p, "malformed region file (not a JSON object)")
        return cls.from_dict(data, p)

    def summary(self) -> dict[str, Any]:
        """A short JSON-able description (for ``eftsieve region --json``)."""
        return {"theory": self.theory, "coordinates": list(self.coordinates),
                "convention": self.convention, "n_facets": len(self.facets),
                "facets": [f.to_dict() for f in self.facets], "hash": self.hash,
                "settings": self.settings}


#: facet statuses that say the solve behind a facet failed (never a bound)
_FAILED_STATUS = ("infeasible", "unbounded", "fail", "error", "inaccurate", "timeout",
                  "max_iter", "unknown")


def _malformed(path: Any, field: str, problem: str) -> RegionFileError:
    return RegionFileError(path, f"region is empty or malformed: {field}: {problem} "
                           "(fix: rebuild it with `eftsieve region`)")


def _check_body(d: dict[str, Any], path: Any) -> None:
    """Shapes and values of a region file's body, before any geometry."""
    version = d.get("region_format_version")
    if version != REGION_FORMAT_VERSION:
        raise RegionFileError(path, f"region_format_version: unsupported value {version!r} "
                              f"(this eftsieve reads {REGION_FORMAT_VERSION}; rebuild it with "
                              "`eftsieve region`)")
    if not isinstance(d.get("theory"), str):
        raise _malformed(path, "theory", "must be a string")
    coords = d.get("coordinates")
    if (not isinstance(coords, list) or not coords
            or not all(isinstance(c, str) for c in coords) or len(set(coords)) != len(coords)):
        raise _malformed(path, "coordinates", "must be a non-empty list of distinct names")
    conv = d.get("convention")
    if not isinstance(conv, dict):
        raise _malformed(path, "convention", "must be a mapping")
    for k, v in conv.items():
        if k.endswith("_mev") and v is not None and (
                isinstance(v, bool) or not isinstance(v, (int, float))
                or not np.isfinite(v) or v <= 0):
            raise _malformed(path, f"convention.{k}", f"must be a positive mass, got {v!r}")
    for key in ("facets", "inner_facets"):
        facets = d.get(key, [])
        if not isinstance(facets, list) or (key == "facets" and not facets):
            raise _malformed(path, key, "no facets")
        for i, f in enumerate(facets):
            _check_facet(f, len(coords), path, f"{key}[{i}]")


def _check_facet(f: Any, dim: int, path: Any, where: str) -> None:
    if not isinstance(f, dict):
        raise _malformed(path, where, "must be a mapping")
    n, off = f.get("normal"), f.get("offset")
    if not isinstance(n, list) or len(n) != dim:
        raise _malformed(path, f"{where}.normal", f"must list {dim} numbers, one per "
                         "coordinate")
    nums = [*n, off]
    if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in nums):
        raise _malformed(path, where, "normal and offset must be numbers")
    if not np.all(np.isfinite(nums)):
        raise _malformed(path, where, "normal or offset is not finite")
    if not np.any(np.asarray(n, dtype=float) != 0):
        raise _malformed(path, f"{where}.normal", "is zero")
    status = str(f.get("status", "optimal")).lower()
    if any(bad in status for bad in _FAILED_STATUS):
        raise RegionFileError(path, f"{where}.status: '{status}': the solve behind this "
                              "facet did not succeed, so it is no bound (fix: rebuild the "
                              "region with `eftsieve region`)")


def _interior_point(a: np.ndarray, b: np.ndarray, scale: float,
                    iterations: int = 2000) -> np.ndarray | None:
    """A point strictly inside ``a x >= b`` by the relaxation method for linear
    inequalities (Motzkin & Schoenberg, Canad. J. Math. 6 (1954) 393): project onto the
    most violated half-space, shifted inwards by a margin, until none is violated; None
    when it does not get there (the caller then decides with an LP).  It spares loading
    a region the import of scipy.optimize (about 0.6 s) in the usual case."""
    norms = np.linalg.norm(a, axis=1)
    if not len(b) or not np.all(norms > 0):
        return None
    u, c = a / norms[:, None], b / norms
    x = np.zeros(a.shape[1])
    for margin in (1e-3 * scale, 1e-6 * scale):
        for _ in range(iterations):
            gap = u @ x - c - margin
            i = int(np.argmin(gap))
            if gap[i] >= 0:
                return x
            x = x - gap[i] * u[i]
    return None


def _check_geometry(region: Region, path: Any) -> None:
    """The region has an interior (a ball of positive radius fits inside)."""
    a, b = region.arrays()
    scale = max(1.0, float(np.max(np.abs(b)))) if len(b) else 1.0
    x = _interior_point(a, b, scale)
    if x is not None and np.all(a @ x - b > 1e-9 * scale * np.linalg.norm(a, axis=1)):
        return  # a ball of radius > 1e-9 scale fits around x
    from scipy.optimize import linprog

    scale = max(1.0, float(np.max(np.abs(b))))
    box = 1e6 * scale
    c = np.zeros(region.dim + 1)
    c[-1] = -1.0
    res = linprog(c, A_ub=np.hstack([-a, np.ones((len(b), 1))]), b_ub=-b,
                  bounds=[(-box, box)] * region.dim + [(0, box)], method="highs")
    if res.status == 2 or (res.status == 0 and res.x[-1] <= 1e-9 * scale):
        raise _malformed(path, "facets", "the facets leave no interior (empty or flat)")


def _region_error(path: Path, problem: str, hint: str) -> RegionFileError:
    return RegionFileError(path, problem + (f" (fix: {hint})" if hint else ""))


def content_hash(body: dict[str, Any]) -> str:
    """SHA-256 of the canonical JSON of a region body (keys sorted, floats repr)."""
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), allow_nan=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def irredundant(facets: list[Facet], box: float = 1e4) -> list[Facet]:
    """Drop facets implied by the others (LP test per facet), keeping the order.

    A facet ``a . x >= b`` is redundant when min a . x over the other facets (and a large
    box) is >= b up to :data:`REDUNDANCY_TOL`.  Facets with parallel normals keep only the
    strongest.
    """
    from scipy.optimize import linprog

    if len(facets) <= 1:
        return list(facets)
    units = []
    for f in facets:
        n = np.asarray(f.normal, dtype=float)
        units.append((n / np.linalg.norm(n), f.offset / np.linalg.norm(n)))
    keep = list(range(len(facets)))
    for i in range(len(facets)):
        others = [j for j in keep if j != i]
        if not others:
            continue
        a = np.array([units[j][0] for j in others])
        b = np.array([units[j][1] for j in others])
        res = linprog(units[i][0], A_ub=-a, b_ub=-b, bounds=[(-box, box)] * len(units[i][0]),
                      method="highs")
        if res.status == 2:  # the others are infeasible: keep everything, caller decides
            continue
        if res.status != 0:
            raise SolverError(res.message, f"redundancy LP for facet {i}")
        bi = float(units[i][1])
        if res.fun >= bi - REDUNDANCY_TOL * max(1.0, abs(bi)):
            keep.remove(i)
    return [facets[i] for i in keep]
