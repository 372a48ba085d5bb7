"""Building regions by theory name, and describing them in a few lines.

Use :func:`eftsieve.build_region` from scripts; :func:`build_regions` builds several
independent regions with an executor (:mod:`eftsieve.executors`) chosen by the caller.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from eftsieve.errors import InputError
from eftsieve.executors import Executor, InputFailure, raise_failures, serial
from eftsieve.region.model import Region


def build_region(theory: str, settings: dict[str, Any],
                 executor: Executor | None = None) -> Region:
    """Build the region of ``theory``; unknown settings are an error naming the known ones.

    ``executor`` runs the independent solves of theories that have them
    (``Theory.parallel_build``); it never enters the region or its hash.
    """
    from eftsieve.theories import get_theory

    try:
        th = get_theory(theory)
    except KeyError as err:
        raise InputError(None, "--theory", str(err.args[0]), "run `eftsieve theories`") from err
    th.check_settings(settings)
    return th.build_region(dict(settings), executor=executor or serial)


#: facets listed by :func:`describe_region` (a cone of many coefficients has hundreds)
MAX_LISTED_FACETS = 30


def describe_region(region: Region, path: str | Path | None = None) -> str:
    """A short human-readable description of a region and its facets."""
    conv = ", ".join(f"{k}={v}" for k, v in region.convention.items())
    lines = [f"region for {region.theory} in ({', '.join(region.coordinates)}) [{conv}]"]
    if path is not None:
        lines[0] += f" -> {path}"
    fams = sorted({f.family for f in region.facets})
    truncation = region.settings.get("truncation") if isinstance(region.settings, dict) else None
    if truncation is not None:
        heavy = region.settings.get("heavy_scale_mev")
        lines.append(f"  families: {', '.join(fams)}; truncation model: {truncation}"
                     + (f" (heavy scale {heavy:g} MeV)" if truncation != "none" else ""))
    for f in region.facets[:MAX_LISTED_FACETS]:
        shift = f.extra.get("truncation_shift_region")
        note = f"; relaxed by {shift:.3g} for truncation" if shift is not None else ""
        lines.append(f"  {f.inequality(region.coordinates):<28} [{f.label()}; {f.status}{note}]")
    if len(region.facets) > MAX_LISTED_FACETS:
        lines.append(f"  ... and {len(region.facets) - MAX_LISTED_FACETS} more facets "
                     f"({len(region.facets)} in all, each in the region file with its "
                     "certificate)")
    if region.inner_facets and any("truncation_shift" in f.extra for f in region.facets):
        lines.append(f"  inner set: {len(region.inner_facets)} facets (the one-loop bounds; "
                     "points between inner and outer facets are uncertain)")
    elif region.inner_facets and "cone_problem" in region.settings:
        lines.append(f"  inner set: {len(region.inner_facets)} facets ("
                     f"{region.inner_facets[0].channel}; points between the inner and outer "
                     "facets get exact solves in eftsieve check)")
    elif "projection" in region.settings:
        proj = region.settings["projection"]
        lines.append(f"  projection: {len(proj['free'])} coefficients free (any value, not "
                     f"zero): {', '.join(proj['free'])}; outer facets hold up to a residual "
                     f"<= {proj['max_residual']:.1e} (docs/physics_cones.md)")
        n_in = len(region.inner_facets)
        lines.append(f"  inner set: {n_in} facet{'' if n_in == 1 else 's'} (projections of "
                     "proven points of the full cone; points between the inner and outer "
                     "facets stay marginal)")
    elif region.inner_facets:
        lines.append(f"  inner set: {len(region.inner_facets)} facets (reached by explicit "
                     "positive spectra: consistent with every sum rule used)")
    lines.append(f"  hash {region.hash[:16]}")
    return "\n".join(lines)


@dataclass(frozen=True)
class RegionTask:
    """One region build: ``build_region(theory, settings)``.

    Attributes
    ----------
    theory
        The theory name.
    settings
        The build settings.
    label
        A name for messages (default: theory and settings).
    """

    theory: str
    settings: dict[str, Any]
    label: str | None = None

    def name(self, index: int, n: int) -> str:
        what = self.label or f"{self.theory} {self.settings}"
        return f"region build {index} of {n} ({what})"

    def to_dict(self) -> dict[str, Any]:
        return {"theory": self.theory, "settings": dict(self.settings), "label": self.label}


def build_region_task(theory: str, settings: dict[str, Any]
                      ) -> tuple[Region, list[tuple[type[Warning], str]]] | InputFailure:
    """Build one region (on a worker); its warnings are returned to be re-issued."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            region = build_region(theory, settings)
        except InputError as err:
            return InputFailure(-1, err.path, err.field, err.problem, err.hint)
    return region, [(w.category, str(w.message)) for w in caught]


def build_regions(tasks: Sequence[RegionTask | tuple[str, dict[str, Any]]],
                  executor: Executor = serial) -> list[Region]:
    """Build independent regions with ``executor``; the regions in task order.

    Each task is a :class:`RegionTask` or a ``(theory, settings)`` pair.  Warnings raised
    by a build (e.g. :class:`~eftsieve.errors.KinematicsWarning`) are re-issued here, and
    a task that stopped on invalid input raises its InputError.
    """
    todo = [t if isinstance(t, RegionTask) else RegionTask(t[0], dict(t[1])) for t in tasks]
    names = [t.name(i, len(todo)) for i, t in enumerate(todo)]
    results = executor(build_region_task, [(t.theory, t.settings) for t in todo], names)
    raise_failures(results)
    out = []
    for name, (region, caught) in zip(names, results, strict=True):
        for category, message in caught:
            warnings.warn(f"{name}: {message}", category, stacklevel=2)
        out.append(region)
    return out


def parallel_region_builds(tasks: Sequence[RegionTask | tuple[str, dict[str, Any]]],
                           scheduler: str | None = None, *, retries: int = 2,
                           timeout: float | None = None) -> list[Region]:
    """:func:`build_regions` on a Dask cluster (``scheduler``, or a local one)."""
    from eftsieve.executors import dask_map
    from eftsieve.io.dask_client import require_dask

    require_dask()
    return build_regions(tasks, dask_map(scheduler, retries=retries, timeout=timeout))
