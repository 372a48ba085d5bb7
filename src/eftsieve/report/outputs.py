"""Write the output set of a check or an impose run into one directory.

The command line and the demo call these; a script may call them too.  Every file is
written atomically (:mod:`eftsieve.io.atomic`), so a folder holds either the new file or
the previous one.

Use :func:`write_check_outputs` after a check (summary.json, report.md, report.html and
the plots; ``flagged.csv`` is written by the check run itself) and
:func:`write_impose_outputs` after an impose run (samples.parquet, optionally
samples.csv, summary.json, report.md and the before/after corner plot).
:data:`CHECK_OUTPUTS` and :data:`IMPOSE_OUTPUTS` name every file a run may write, so a
caller can refuse an output folder that would overwrite an input
(:func:`eftsieve.io.atomic.guard_inputs`).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from eftsieve.check.run import CheckResult
    from eftsieve.fit.model import Fit
    from eftsieve.impose.core import ImposeResult
    from eftsieve.region.model import Region

#: every file a check may write into its output folder
CHECK_OUTPUTS = ("summary.json", "flagged.csv", "report.md", "report.html", "corner.png",
                 "region.png", "region.json")
#: every file an impose run may write into its output folder
IMPOSE_OUTPUTS = ("samples.parquet", "samples.csv", "summary.json", "corner_before_after.png",
                  "report.md", "report.html", "region.json")
#: rows of each sample set drawn in the before/after corner plot
CORNER_ROWS = 50_000


def write_check_outputs(fit: Fit, result: CheckResult, outdir: str | Path, *,
                        plots: bool = True) -> dict[str, Path]:
    """Write summary.json, report.md, report.html and (with ``plots``) the PNG plots.

    Parameters
    ----------
    fit
        The checked fit.
    result
        What the check returned (its ``summary`` becomes summary.json).
    outdir
        The output folder (must exist).
    plots
        Draw region.png (1-D and 2-D regions) and corner.png.

    Returns
    -------
    dict
        Output name (``summary``, ``report_md``, ``report_html``, ``region``, ``corner``)
        -> path written.
    """
    from eftsieve.io.atomic import atomic_write_json, atomic_write_text
    from eftsieve.report.check_report import check_document
    from eftsieve.report.document import to_html, to_markdown

    outdir = Path(outdir)
    images = check_plots(result, fit, outdir) if plots else {}
    written = dict(images)
    written["summary"] = atomic_write_json(outdir / "summary.json", result.summary)
    doc = check_document(result, images)
    written["report_md"] = atomic_write_text(outdir / "report.md", to_markdown(doc))
    written["report_html"] = atomic_write_text(outdir / "report.html", to_html(doc))
    return written


def check_plots(result: CheckResult, fit: Fit, outdir: Path) -> dict[str, Path]:
    """region.png and corner.png of a check; returns the written paths."""
    from eftsieve.check.verdicts import classify
    from eftsieve.report.plot_base import is_cone
    from eftsieve.report.plots import save_corner, save_region_plot

    region = result.region
    images: dict[str, Path] = {}
    if (region.dim in (1, 2) or is_cone(region)) and len(result.plot_region_coords):
        tu = result.summary.get("theory_uncertainty")
        bands = (None if not tu else dict(enumerate(tu["model"]["sigma_median"])))
        codes = classify(result.plot_region_coords, region, result.band).verdict
        view = plot_view(result, fit) if region.dim == 2 else None
        samples = (result.plot_region_coords if view is None
                   else result.plot_samples[:, list(view[1])])
        images["region"] = save_region_plot(region, outdir / "region.png",
                                            samples=samples, weights=result.plot_weights,
                                            verdicts=codes, bands=bands,
                                            view=None if view is None else view[0])
    # corner in region coordinates for the constrained parameters, the rest as they are
    cmap_cols = region_columns(result.summary["coordinate_map"]["jacobian"])
    data = result.plot_samples.copy()
    names = list(fit.names)
    for k, col in cmap_cols.items():
        data[:, col] = result.plot_region_coords[:, k]
        names[col] = region.coordinates[k]
    keep = plotted_columns(len(names), cmap_cols)
    data, names = data[:, keep], [names[i] for i in keep]
    cmap_cols = {k: keep.index(c) for k, c in cmap_cols.items() if c in keep}
    if corner_drawable(data):
        images["corner"] = save_corner(outdir / "corner.png", data, names,
                                       weights=result.plot_weights, region=region,
                                       region_coords=cmap_cols)
    return images


def plot_view(result: CheckResult, fit: Fit) -> tuple[Any, tuple[int, int]] | None:
    """Axes in the fit's convention when its two columns map onto the region's two
    coordinates by an invertible affine map other than the identity; else None."""
    from eftsieve.report.plot_base import PlotView

    cmap = result.coordinate_map
    if not cmap.is_affine or cmap.jacobian is None:
        return None
    jac = np.asarray(cmap.jacobian, dtype=float)
    cols = tuple(int(c) for c in np.flatnonzero(np.abs(jac).sum(axis=0) > 0))
    if len(cols) != 2 or jac.shape[0] != 2:
        return None
    block = jac[:, list(cols)]
    shift = np.zeros(2) if cmap.shift is None else np.asarray(cmap.shift, dtype=float)
    names = (fit.names[cols[0]], fit.names[cols[1]])
    if abs(np.linalg.det(block)) <= 1e-300 or (
            np.allclose(block, np.eye(2)) and not shift.any()
            and names == tuple(result.region.coordinates)):
        return None
    conv = fit.parameters[cols[0]].convention
    text = conv.name + (f" at {', '.join(f'{k[:-4]} = {v:g} MeV' for k, v in conv.values)}"
                        if conv.values else "")
    return PlotView(names, block, shift, f"axes in the fit's convention, {text}"), \
        (cols[0], cols[1])


def plotted_columns(n: int, constrained: dict[int, int]) -> list[int]:
    """The columns drawn in a corner plot: the constrained ones first, then the others,
    at most :data:`eftsieve.io.limits.MAX_PLOT_COLUMNS` in all (fit order kept)."""
    from eftsieve.io import limits

    first = sorted(set(constrained.values()))
    rest = [i for i in range(n) if i not in first]
    return sorted((first + rest)[:limits.MAX_PLOT_COLUMNS])


def corner_drawable(data: np.ndarray) -> bool:
    """A corner plot needs more rows than columns and a spread in every column."""
    return bool(len(data) > data.shape[1] + 1 and np.all(np.isfinite(data))
                and np.all(np.ptp(data, axis=0) > 0))


def region_columns(jac: Any) -> dict[int, int]:
    """Region coordinate k -> the single fit column it is made from (affine maps only)."""
    if jac is None:
        return {}
    cols = {}
    for k, row in enumerate(jac):
        nz = [i for i, v in enumerate(row) if abs(v) > 0]
        if len(nz) == 1:
            cols[k] = nz[0]
    return cols


def impose_summary(fit: Fit, region: Region, result: ImposeResult,
                   region_path: str | None) -> dict[str, Any]:
    """summary.json of an impose run: the result's figures with the fit and the region."""
    from eftsieve._version import __version__
    from eftsieve.theories import get_theory

    return {**result.to_dict(), "fit": fit.name, "theory": fit.theory,
            "region_hash": region.hash, "region_file": region_path,
            "kinematics": get_theory(region.theory).region_kinematics(region),
            "eftsieve_version": __version__, "converged": result.converged,
            "driven_by_bounds": result.driven_by_bounds}


def write_impose_outputs(fit: Fit, region: Region, result: ImposeResult, outdir: str | Path,
                         *, region_path: str | None = None, csv: bool = False,
                         plots: bool = True) -> dict[str, Any]:
    """Write samples.parquet (and samples.csv), summary.json, report.md, report.html and
    the corner plot.

    Parameters
    ----------
    fit, region, result
        The fit, the region imposed and what :func:`eftsieve.impose.api.impose` returned.
    outdir
        The output folder (must exist).
    region_path
        The region file, recorded in summary.json.
    csv
        Also write samples.csv.
    plots
        Draw corner_before_after.png.

    Returns
    -------
    dict
        The summary written to summary.json.
    """
    from eftsieve.io.atomic import atomic_write_json, atomic_write_text
    from eftsieve.report.document import to_html, to_markdown
    from eftsieve.report.impose_report import impose_document

    outdir = Path(outdir)
    write_samples(result, outdir, csv)
    corner = impose_corner(result, fit, region, outdir) if plots else None
    images = {"corner": corner} if corner is not None else {}
    summary = impose_summary(fit, region, result, region_path)
    atomic_write_json(outdir / "summary.json", summary)
    doc = impose_document(fit, region, result, images, summary["kinematics"])
    atomic_write_text(outdir / "report.md", to_markdown(doc))
    atomic_write_text(outdir / "report.html", to_html(doc))
    return summary


def write_samples(result: ImposeResult, outdir: Path, csv: bool) -> list[Path]:
    """samples.parquet (and samples.csv): the parameters, a weight column and the row."""
    import pandas as pd

    from eftsieve.io.atomic import atomic_write_with

    frame = pd.DataFrame(result.samples, columns=list(result.names))
    frame["weight"] = 1.0 if result.weights is None else result.weights
    frame["row"] = result.rows if result.rows is not None else np.arange(len(frame))
    paths = [atomic_write_with(outdir / "samples.parquet",
                               lambda t: frame.to_parquet(t, index=False))]
    if csv:
        paths.append(atomic_write_with(outdir / "samples.csv",
                                       lambda t: frame.to_csv(t, index=False)))
    return paths


def impose_corner(result: ImposeResult, fit: Fit, region: Region,
                  outdir: Path) -> Path | None:
    """corner_before_after.png with the region boundary (in the fit's own coordinates
    where the map is the identity on the constrained columns)."""
    from eftsieve.report.plots import save_corner
    from eftsieve.theories import coordinate_map

    cmap = coordinate_map(fit, region)
    before, after = result.before_samples.copy(), result.samples.copy()
    names = list(fit.names)
    cols = region_columns(None if cmap.jacobian is None else cmap.jacobian.tolist())
    for k, c in cols.items():
        before[:, c] = cmap(result.before_samples)[:, k]
        after[:, c] = cmap(result.samples)[:, k]
        names[c] = region.coordinates[k]
    shown = plotted_columns(len(names), cols)
    if shown != list(range(len(names))):
        before, after = before[:, shown], after[:, shown]
        names = [names[i] for i in shown]
        cols = {k: shown.index(c) for k, c in cols.items() if c in shown}
    keep = min(len(before), CORNER_ROWS)
    if not corner_drawable(before[:keep]) or not corner_drawable(after[:CORNER_ROWS]):
        return None
    return save_corner(outdir / "corner_before_after.png", before[:keep], names,
                       weights=None if result.before_weights is None
                       else result.before_weights[:keep],
                       region=region, region_coords=cols, overlay=after[:CORNER_ROWS],
                       overlay_weights=None if result.weights is None
                       else result.weights[:CORNER_ROWS],
                       labels=("without positivity", "with positivity"))
