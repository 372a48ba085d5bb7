"""Building regions by theory name, and describing them in a few lines.

Use :func:`build_region` from scripts; the command line calls it for ``eftsieve region``
and ``eftsieve check`` without ``--region``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from eftsieve.errors import InputError
from eftsieve.region import Region


def build_region(theory: str, settings: dict[str, Any]) -> Region:
    """Build the region of ``theory`` with the given settings (missing keys: defaults)."""
    from eftsieve.theories import get_theory

    try:
        th = get_theory(theory)
    except KeyError as err:
        raise InputError(None, "--theory", str(err.args[0]), "run `eftsieve theories`") from err
    return th.build_region(settings)


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
    for f in region.facets:
        shift = f.extra.get("truncation_shift_region")
        note = f"; relaxed by {shift:.3g} for truncation" if shift is not None else ""
        lines.append(f"  {f.inequality(region.coordinates):<28} [{f.label()}; {f.status}{note}]")
    if region.inner_facets and any("truncation_shift" in f.extra for f in region.facets):
        lines.append(f"  inner set: {len(region.inner_facets)} facets (the one-loop bounds; "
                     "points between inner and outer facets are uncertain)")
    elif region.inner_facets:
        lines.append(f"  inner set: {len(region.inner_facets)} facets (reached by explicit "
                     "positive spectra: consistent with every sum rule used)")
    lines.append(f"  hash {region.hash[:16]}")
    return "\n".join(lines)
