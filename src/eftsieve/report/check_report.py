"""The check report: the fit, the region with certificates, the statistics, the worst
points, and the assumptions and cautions behind the bounds."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from eftsieve.check.result import WorstPoint
from eftsieve.fit.model import Fit
from eftsieve.region.model import Region
from eftsieve.report.cautions import ASSUMPTIONS, cautions_for
from eftsieve.report.document import Bullets, Document, Heading, Image, Para, Table


def fmt_g(x: Any, fmt: str = ".4g") -> str:
    if x is None:
        return "n/a"
    try:
        return format(float(x), fmt)
    except (TypeError, ValueError):
        return str(x)


def fit_block(fit: Fit) -> list:
    rows = tuple((p.name, p.convention.describe()) for p in fit.parameters)
    kin = ", ".join(f"{k} = {v:g}" for k, v in fit.kinematics.items()) or "none stated"
    src = "Gaussian summary (mean + covariance)" if fit.is_gaussian else (
        f"samples file `{fit.samples.path.name}` ({fit.samples.fmt})" if fit.samples else "")
    return [Heading("Fit"), Para(f"`{fit.name}`, theory `{fit.theory}`, {src}; kinematics: {kin}."),
            Table(("parameter", "convention"), rows)]


def region_block(region: Region) -> list:
    conv = ", ".join(f"{k} = {v}" for k, v in region.convention.items())
    rows = []
    for i, f in enumerate(region.facets):
        pt = ", ".join(f"{k} = {v:g}" if k.endswith("_mev") else
                       f"{k} = {0.0 if abs(v) < 1e-6 else v:.4g}" for k, v in f.point.items())
        shift = f.extra.get("truncation_shift_region")
        status = f.status if shift is None else f"{f.status}; truncation shift {shift:.3g}"
        rows.append((str(i), f.inequality(region.coordinates), f.family, f.channel, pt,
                     status))
    blocks = [Heading("Region"),
              Para(f"Theory `{region.theory}` in ({', '.join(region.coordinates)}); {conv}. "
                   f"Content hash `{region.hash[:16]}`. Kinematic points s, t are in units "
                   "of M_pi^2."),
              Table(("facet", "inequality", "family", "channel", "point", "status"),
                    tuple(rows))]
    if region.inner_facets and any("truncation_shift" in f.extra for f in region.facets):
        blocks.append(Para(f"The inner set ({len(region.inner_facets)} facets) is the one-loop "
                           "bound; the outer facets above are relaxed by each facet's "
                           "truncation shift (calibrated on loop-consistent models, "
                           f"truncation model `{region.settings.get('truncation')}`, heavy "
                           f"scale {region.settings.get('heavy_scale_mev')} MeV; "
                           "docs/physics.md). Points between them are `uncertain`."))
    elif region.inner_facets:
        blocks.append(Para(f"The region also has an inner set of {len(region.inner_facets)} "
                           "facets, reached by explicit positive heavy-state spectra: points "
                           "inside it are consistent with every sum rule and null constraint "
                           "up to the stated order; points between it and the outer "
                           "(verified dual) facets are numerically undecided (`marginal`)."))
    if region.notes:
        blocks.append(Bullets(tuple(region.notes)))
    return blocks


#: integrated autocorrelation times above this get a sentence in the report
TAU_NOTE = 2.0


def _batch_rows(s: dict[str, Any]) -> tuple[tuple[str, str], ...]:
    """The batch-means error of p_inside (posterior samples only; Gaussian draws are iid)."""
    if s.get("source") != "samples" or "n_batches" not in s:
        return ()
    if s.get("p_inside_mc_err_batch") is None:
        return (("p_inside error, correlated draws (batch means)",
                 f"not estimated ({s['n_batches']} batches of {s['batch_rows']} rows; "
                 "too few rows, or every row on one side)"),)
    return (("p_inside error, correlated draws (batch means)",
             f"+- {fmt_g(s['p_inside_mc_err_batch'], '.2g')} ({s['n_batches']} batches of "
             f"{s['batch_rows']} rows, in file order)"),
            ("autocorrelation time of the inside indicator", fmt_g(s["tau_inside"], ".3g")))


def _tau_note(s: dict[str, Any]) -> list:
    tau = s.get("tau_inside") if s.get("source") == "samples" else None
    if tau is None or tau <= TAU_NOTE:
        return []
    return [Para(f"The samples are correlated in file order (autocorrelation time of the "
                 f"inside indicator about {tau:.3g} rows): quote the batch-means error of "
                 "p_inside, not the sample-fraction one, which assumes independent draws. "
                 "The batch-means error needs the rows in draw order within each chain; "
                 "walkers interleaved step by step can hide longer correlations.")]


def mapping_block(s: dict[str, Any]) -> list:
    """How the fit's parameters become the region's coordinates (the summary's map)."""
    desc = (s.get("coordinate_map") or {}).get("description") or []
    if not desc:
        return []
    kind = "affine" if s["coordinate_map"].get("affine") else "nonlinear"
    return [Para(f"From the fit to the region's coordinates ({kind} map):"),
            Bullets(tuple(desc))]


def stats_block(s: dict[str, Any]) -> list:
    band = s["settings"]["marginal_band"]
    rows = (("rows read (n_total)", str(s["n_total"])),
            ("inside / marginal / outside",
             f"{s['n_inside']} / {s['n_marginal']} / {s['n_outside']}"),
            ("marginal band", f"{band:g} (distance to a facet, region coordinates)"),
            ("p_inside", f"{fmt_g(s['p_inside'], '.6g')} +- {fmt_g(s['p_inside_err'], '.2g')} "
                         f"({s['p_inside_method']})"),
            ("p_inside (sample fraction)", f"{fmt_g(s['p_inside_mc'], '.6g')} +- "
                                           f"{fmt_g(s['p_inside_mc_err'], '.2g')}"),
            ("effective sample size", fmt_g(s["ess"], ".6g")),
            *_batch_rows(s),
            ("minimal Mahalanobis distance", fmt_g(s["mahalanobis_min"])),
            ("closest allowed point", ", ".join(fmt_g(v, ".5g") for v in s["closest_point"])),
            ("tension p-value (chi-bar-squared)", fmt_g(s["tension_p"])),
            ("tension (one-sided Gaussian sigma)", fmt_g(s["tension_sigma"], ".3g")),
            ("Bayes factor (truncated / untruncated prior)",
             fmt_g(s["bayes_factor"]) + (f" +- {fmt_g(s['bayes_factor_err'], '.2g')}"
                                      if s["bayes_factor"] is not None else "")
             + f" ({s['bayes_factor_note']})"))
    return [Heading("Statistics"), Table(("quantity", "value"), rows), *_tau_note(s),
            Para("The tension p-value uses the chi-bar-squared distribution of the minimal "
                 "Mahalanobis distance squared, with the weights of the least favourable "
                 "tangent cone of the region (Shapiro 1988; Silvapulle & Sen 2005, Sec. 3.4); "
                 f"weights {', '.join(fmt_g(w, '.3f') for w in s['chibar2_weights'])} "
                 f"({s['tension_cone']}).")]


def uncertainty_block(s: dict[str, Any], region: Region) -> list:
    tu = s.get("theory_uncertainty")
    if not tu:
        return []
    m = tu["model"]
    st = m["settings"]
    rows = [("p_inside", fmt_g(tu["hard"]["p_inside"], ".5g"),
             f"{fmt_g(tu['p_inside'], '.5g')} +- {fmt_g(tu['p_inside_err'], '.2g')}"),
            ("tension (sigma)", fmt_g(tu["hard"]["tension_sigma"], ".3g"),
             fmt_g(tu["tension_sigma"], ".3g")),
            ("tension p-value", fmt_g(tu["hard"]["tension_p"]), fmt_g(tu["tension_p"])),
            ("Bayes factor", fmt_g(tu["hard"]["bayes_factor"]), fmt_g(tu["bayes_factor"]))]
    frows = []
    for i, f in enumerate(region.facets):
        q = "" if m["q"] is None else fmt_g(m["q"][i], ".3g")
        frows.append((str(i), f.inequality(region.coordinates), fmt_g(m["sigma_median"][i], ".3g"),
                      q))
    text = (f"Model `{st['model']}`; verdict `uncertain` for {st['p_low']:g} < "
            f"P(satisfies every facet) < {st['p_high']:g} ({tu['n_uncertain']} points). "
            f"Correlation between facets: {tu['correlation']}. The tension under the model is "
            "the Bonferroni bound over single-facet tests with the offset uncertainty added.")
    if st["model"] == "power-counting":
        post = m["posterior"]
        text += (f" Breakdown scale Lambda_b = {m['breakdown_mev_used']:.6g} MeV; prior "
                 f"cbar^2 ~ ScaledInvChi2({st['nu0']:g}, {st['tau0']:g}^2); posterior "
                 f"ScaledInvChi2({post['nu']:g}, {post['tau2']:.3g}) from the coefficients "
                 f"{', '.join(fmt_g(c, '.3g') for c in m['coefficients'])}.")
    return [Heading("Theory uncertainty of the bounds"), Para(text),
            Table(("quantity", "hard edges (none)", st["model"]), tuple(rows)),
            Table(("facet", "inequality", "sigma of the offset (median)", "Q"), tuple(frows))]


def worst_block(worst: tuple[WorstPoint, ...], limit: int = 10) -> list:
    if not worst:
        return [Heading("Flagged points"), Para("No point violates a facet.")]
    rows = tuple((str(w.row), ", ".join(fmt_g(v, ".5g") for v in w.region_point),
                  fmt_g(w.min_margin, ".4g"), w.facet) for w in worst[:limit])
    return [Heading("Most violated points"),
            Para("All outside and marginal rows, with every margin and certificate, are in "
                 "`flagged.csv`."),
            Table(("row", "point (region coordinates)", "margin", "most violated facet"), rows)]


def cautions_block(theory: str) -> list:
    return [Heading("What the bounds assume"), Bullets(ASSUMPTIONS),
            Heading("Cautions"), Bullets(cautions_for(theory))]


def check_document(fit: Fit, region: Region, summary: dict[str, Any],
                   worst: tuple[WorstPoint, ...], images: dict[str, Path]) -> Document:
    doc = Document(f"Positivity check: {fit.name}")
    doc.add(*fit_block(fit), *region_block(region), *mapping_block(summary),
            *stats_block(summary),
            *uncertainty_block(summary, region), *worst_block(worst))
    for name, alt in (("region", "region with posterior contours"),
                      ("corner", "corner plot with region boundary")):
        if name in images:
            doc.add(Image(images[name], alt))
    doc.add(*cautions_block(region.theory))
    return doc
