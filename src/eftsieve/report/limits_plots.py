"""Plots of published limits against positivity: intervals, scans and contours.

Each function draws one PNG and returns its path; the figures are closed.  Excluded
parts are hatched grey, allowed parts drawn in colour, so the plots read without colour.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from eftsieve.limits.contours import ContourResult
    from eftsieve.limits.intervals import TruncatedInterval
    from eftsieve.limits.plane import PlaneCut
    from eftsieve.limits.scans import ScanResult

BEFORE, AFTER, EXCLUDED = "#8a96a3", "#1f6f8b", "#d9dde2"


def _plt() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _save(fig: Any, path: Path) -> Path:
    from eftsieve.io.atomic import atomic_write_with

    out = atomic_write_with(path, lambda t: fig.savefig(t, dpi=110, bbox_inches="tight",
                                                        format="png"))
    _plt().close(fig)
    return out


def plot_intervals(rows: tuple[TruncatedInterval, ...], path: Path) -> Path:
    """Published intervals (grey) and the parts positivity allows (colour), one per row."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7.5, 0.45 * len(rows) + 1.2))
    for k, t in enumerate(rows):
        y = len(rows) - 1 - k
        scale = max(abs(t.row.low), abs(t.row.high)) or 1.0
        ax.plot([t.row.low / scale, t.row.high / scale], [y, y], color=BEFORE, lw=6,
                solid_capstyle="butt", label="published" if k == 0 else None)
        if t.allowed is not None:
            ax.plot([t.allowed[0] / scale, t.allowed[1] / scale], [y, y], color=AFTER, lw=3,
                    solid_capstyle="butt", label="allowed by positivity" if k == 0 else None)
            if t.allowed[0] == t.allowed[1]:          # a single point (e.g. only 0) is kept
                ax.plot([t.allowed[0] / scale], [y], "o", color=AFTER, ms=5)
        frac = abs(t.fraction_allowed) + 0.0 if t.allowed is not None else 0.0
        note = ("excluded" if t.allowed is None else
                f"<= {frac:.0%} (undecided)" if t.status == "undecided"
                else f"only {t.allowed[0] + 0.0:g} kept" if t.allowed[0] == t.allowed[1]
                else f"{frac:.0%} kept")
        ax.text(1.05, y, note, ha="left", va="center", fontsize=8)
    ax.axvline(0, color="k", lw=0.6)
    ax.set_yticks(range(len(rows)))
    ax.set_yticklabels([t.row.label or f"{t.row.coefficient} (line {t.row.line})"
                        for t in reversed(rows)], fontsize=8)
    ax.set_xlabel("value / max(|low|, |high|) of the published interval")
    ax.set_xlim(-1.1, 1.6)
    ax.legend(loc="lower left", fontsize=8, frameon=False, bbox_to_anchor=(0, 1), ncol=2)
    return _save(fig, path)


def _sub(held: str) -> str:
    """A second title line saying what the coefficients not shown are."""
    return f"\n{held}" if held else ""


def plot_scan_1d(scan: ScanResult, path: Path, units: str = "", held: str = "") -> Path:
    """The posterior of a 1-D scan before and after the truncation."""
    plt = _plt()
    g = scan.grid
    x, dens, inside = g["x"], g["density"], g["inside"]
    w = np.gradient(x)
    norm = float((dens * w).sum())  # plotting normalisation only
    fig, ax = plt.subplots(figsize=(6, 3.6))
    ax.plot(x, dens / norm, color=BEFORE, lw=1.5, label="scan, flat prior")
    trunc = dens * inside
    if trunc.any():
        ax.plot(x, trunc / float((trunc * w).sum()), color=AFTER, lw=2,
                label="truncated by positivity")
    ax.fill_between(x, 0, (dens / norm).max() * 1.05, where=~inside, color=EXCLUDED,
                    hatch="//", edgecolor="#9aa4ae", lw=0, label="excluded")
    ax.set_xlabel(scan.coefficients[0] + (f" [{units}]" if units else ""))
    ax.set_ylabel("posterior density")
    ax.set_title(f"{scan.table}: p_inside = {scan.p_inside:.3g}" + _sub(held), fontsize=10)
    ax.legend(fontsize=8, frameon=False)
    return _save(fig, path)


def _shade_excluded(ax: Any, cut: PlaneCut, xlim: tuple[float, float],
                    ylim: tuple[float, float]) -> None:
    gx, gy = np.meshgrid(np.linspace(*xlim, 300), np.linspace(*ylim, 300))
    inside = cut.contains(np.column_stack([gx.ravel(), gy.ravel()])).reshape(gx.shape)
    ax.contourf(gx, gy, (~inside).astype(float), levels=[0.5, 1.5], colors=[EXCLUDED],
                hatches=["//"])
    ax.contour(gx, gy, inside.astype(float), levels=[0.5], colors=["#55606b"], linewidths=1)


def _lines(ax: Any, paths: Any, color: str, style: str, label: str) -> None:
    for k, seg in enumerate(paths):
        seg = np.asarray(seg)
        ax.plot(seg[:, 0], seg[:, 1], color=color, ls=style, lw=1.6,
                label=label if k == 0 else None)


def plot_scan_2d(scan: ScanResult, cut: PlaneCut, path: Path, held: str = "") -> Path:
    """HPD contours of a 2-D scan before (dashed) and after (solid) the truncation."""
    plt = _plt()
    g = scan.grid
    xlim, ylim = (g["x"][0], g["x"][-1]), (g["y"][0], g["y"][-1])
    fig, ax = plt.subplots(figsize=(5.6, 5))
    _shade_excluded(ax, cut, xlim, ylim)
    for lv, style in (("0.68", "-"), ("0.95", "--")):
        _lines(ax, scan.contours_before.get(lv, []), BEFORE, style, f"scan {lv} HPD")
        _lines(ax, scan.contours.get(lv, []), AFTER, style, f"truncated {lv} HPD")
    ax.set_xlim(*xlim)
    ax.set_ylim(*ylim)
    ax.set_xlabel(scan.coefficients[0])
    ax.set_ylabel(scan.coefficients[1])
    ax.set_title(f"{scan.table}: p_inside = {scan.p_inside:.3g} (hatched: excluded)"
                 + _sub(held), fontsize=10)
    ax.legend(fontsize=7, frameon=True, loc="upper right")
    return _save(fig, path)


def plot_contour(res: ContourResult, cut: PlaneCut, path: Path, held: str = "") -> Path:
    """A published contour and its part inside the allowed wedge."""
    plt = _plt()
    pts = np.asarray(res.points)
    span = np.ptp(pts, axis=0).max() * 0.15
    xlim = (pts[:, 0].min() - span, pts[:, 0].max() + span)
    ylim = (pts[:, 1].min() - span, pts[:, 1].max() + span)
    fig, ax = plt.subplots(figsize=(5.6, 5))
    _shade_excluded(ax, cut, xlim, ylim)
    closed = np.vstack([pts, pts[:1]])
    ax.plot(closed[:, 0], closed[:, 1], color=BEFORE, lw=1.5, label=f"published ({res.label})")
    if len(res.truncated) >= 3:
        tr = np.asarray(res.truncated)
        ax.fill(tr[:, 0], tr[:, 1], color=AFTER, alpha=0.35,
                label=f"allowed part: {res.fraction_inside:.3g} of the area")
    ax.set_xlim(*xlim)
    ax.set_ylim(*ylim)
    ax.set_xlabel(res.coefficients[0])
    ax.set_ylabel(res.coefficients[1])
    ax.set_title(f"{res.table} (hatched: excluded by positivity)" + _sub(held), fontsize=10)
    ax.legend(fontsize=8, loc="upper right")
    return _save(fig, path)
