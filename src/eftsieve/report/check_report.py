"""The check report, built from the typed :class:`~eftsieve.check.result.CheckResult`.

The verdict banner and the kinematics the region was built at come first, then the
per-facet table, the fit, the region with certificates, the statistics, the worst
points, the assumptions and cautions behind the bounds, and a footer with the verdict
thresholds and the papers to cite.  Every figure is written by :mod:`eftsieve.numbers`,
as in the terminal.
"""

from __future__ import annotations

from pathlib import Path

from eftsieve.check.result import CheckResult, WorstPoint
from eftsieve.check.verdict import FacetViolation, p_inside_clause
from eftsieve.fit.model import Fit
from eftsieve.numbers import fmt_kinematics, fmt_num, fmt_pct, fmt_pm, fmt_prob, fmt_sigma
from eftsieve.region.model import Region
from eftsieve.report.cautions import ASSUMPTIONS, cautions_for
from eftsieve.report.document import Banner, Bullets, Document, Heading, Image, Para, Table


def fit_block(fit: Fit) -> list:
    rows = tuple((p.name, p.convention.describe()) for p in fit.parameters)
    kin = ", ".join(f"{k} = {fmt_num(v, 6)}" for k, v in fit.kinematics.items()) or "none stated"
    src = "Gaussian summary (mean + covariance)" if fit.is_gaussian else (
        f"samples file `{fit.samples.path.name}` ({fit.samples.fmt})" if fit.samples else "")
    return [Heading("Fit"), Para(f"`{fit.name}`, theory `{fit.theory}`, {src}; kinematics: {kin}."),
            Table(("parameter", "convention"), rows)]


#: facets listed in a report's tables (a cone of many coefficients has hundreds)
MAX_REPORT_FACETS = 25


def region_block(region: Region) -> list:
    conv = ", ".join(f"{k} = {fmt_num(v, 6) if isinstance(v, float) else v}"
                     for k, v in region.convention.items())
    rows = []
    for i, f in enumerate(region.facets[:MAX_REPORT_FACETS]):
        pt = ", ".join(f"{k} = {fmt_num(v, 6)}" if k.endswith("_mev") else
                       f"{k} = {fmt_num(0.0 if abs(v) < 1e-6 else v)}"
                       for k, v in f.point.items())
        shift = f.extra.get("truncation_shift_region")
        status = f.status if shift is None else f"{f.status}; truncation shift {fmt_num(shift)}"
        rows.append((str(i), f.inequality(region.coordinates), f.family, f.channel, pt,
                     status))
    blocks = [Heading("Region"),
              Para(f"Theory `{region.theory}` in ({', '.join(region.coordinates)}); {conv}. "
                   f"Content hash `{region.hash[:16]}`. Kinematic points s, t are in units "
                   "of M_pi^2."),
              Table(("facet", "inequality", "family", "channel", "point", "status"),
                    tuple(rows))]
    if len(region.facets) > MAX_REPORT_FACETS:
        blocks.append(Para(f"The first {MAX_REPORT_FACETS} of the {len(region.facets)} "
                           "facets are listed; the region file holds them all, each with its "
                           "certificate."))
    if region.inner_facets and any("truncation_shift" in f.extra for f in region.facets):
        blocks.append(Para(f"The inner set ({len(region.inner_facets)} facets) is the one-loop "
                           "bound; the outer facets above are relaxed by each facet's "
                           "truncation shift (calibrated on loop-consistent models, "
                           f"truncation model `{region.settings.get('truncation')}`, heavy "
                           f"scale {region.settings.get('heavy_scale_mev')} MeV; "
                           "docs/physics.md). Points between them are `uncertain`."))
    elif region.inner_facets and "cone_problem" in region.settings:
        blocks.append(Para(f"The region is a positivity cone: the outer facets above are "
                           f"verified dual certificates, and the inner cone "
                           f"({len(region.inner_facets)} facets) is spanned by rays proven "
                           "inside by explicit solutions"
                           + (" (a simplicial cone: in many dimensions it holds only a "
                              "small part of the cone)" if "simplicial" in
                              region.inner_facets[0].channel else "")
                           + ". Points between them (the shell) are decided by one exact "
                           "solve each (section Shell)."))
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


def header_block(result: CheckResult) -> list:
    """The verdict banner and what the answer rests on: the points, the region's
    kinematics and its hash."""
    v = result.verdict
    what = "Gaussian draws" if result.source == "gaussian" else "rows"

    return [Banner(v.label, v.reason + "."),
            Bullets((f"Region kinematics: {fmt_kinematics(result.kinematics)}.",
                     f"Checked {result.n_total} {what} of `{result.fit.name}` against "
                     f"`{result.region.theory}` ({len(result.region.facets)} facets, content "
                     f"hash `{result.region.hash[:16]}`).",
                     f"{p_inside_clause(v.p_inside_text)}; tension: {v.tension_text}."))]


def _distance(v: FacetViolation) -> str:
    if v.distance_sigma >= 0:
        return f"{fmt_sigma(v.distance_sigma)} inside"
    return f"{fmt_sigma(v.distance_sigma)} outside"


def facet_table_block(result: CheckResult) -> list:
    """Each facet with its certificate, the mean's signed distance and the probability
    that violates it, most violated first."""
    facets = result.verdict.facets
    if not facets:
        return []
    exact = facets[0].method == "exact"
    prob = "probability violating it" if exact else (
        "weighted fraction violating it" if result.plot_weights is not None
        else "fraction of rows violating it")
    rows = tuple((str(v.index), v.inequality, v.label, _distance(v),
                  fmt_pct(v.p_violate) if exact else
                  f"{fmt_pct(v.p_violate)} +- {fmt_pct(v.p_violate_err)}")
                 for v in facets[:MAX_REPORT_FACETS])
    note = ("exact for the Gaussian summary" if exact else
            f"from a uniform subsample of {len(result.plot_region_coords)} of the rows")
    more = (f" The {MAX_REPORT_FACETS} most violated of the {len(facets)} facets are "
            "listed; summary.json and the region file hold them all."
            if len(facets) > MAX_REPORT_FACETS else "")
    return [Heading("Facets, most violated first"),
            Para(f"Distance: how far the fit's mean lies from the facet, in standard "
                 f"deviations of the fit along the facet's normal. The {prob} is {note}."
                 + more),
            Table(("facet", "inequality", "certificate", "mean", prob), rows)]


def _batch_rows(result: CheckResult) -> tuple[tuple[str, str], ...]:
    """The batch-means error of p_inside (posterior samples only; Gaussian draws are iid)."""
    bm = result.batch
    if result.source != "samples":
        return ()
    name = "p_inside error, correlated draws (batch means)"
    if bm.std_error != bm.std_error:  # NaN: not estimated
        return ((name, f"not estimated ({bm.n_batches} batches of {bm.batch_rows} rows; "
                       "too few rows, or every row on one side)"),)
    return ((name, f"+- {fmt_num(bm.std_error, 2)} ({bm.n_batches} batches of "
                   f"{bm.batch_rows} rows, in file order)"),
            ("autocorrelation time of the inside indicator", fmt_num(bm.tau)))


def _tau_note(result: CheckResult) -> list:
    tau = result.batch.tau if result.source == "samples" else None
    if tau is None or not tau > TAU_NOTE:
        return []
    return [Para(f"The samples are correlated in file order (autocorrelation time of the "
                 f"inside indicator about {fmt_num(tau)} rows): quote the batch-means error "
                 "of p_inside, not the sample-fraction one, which assumes independent draws. "
                 "The batch-means error needs the rows in draw order within each chain; "
                 "walkers interleaved step by step can hide longer correlations.")]


def mapping_block(result: CheckResult) -> list:
    """How the fit's parameters become the region's coordinates."""
    cmap = result.coordinate_map
    if not cmap.description:
        return []
    kind = "affine" if cmap.is_affine else "nonlinear"
    return [Para(f"From the fit to the region's coordinates ({kind} map):"),
            Bullets(tuple(cmap.description))]


def _tension_rows(result: CheckResult) -> tuple[tuple[str, str], ...]:
    t, v = result.tension, result.verdict
    if v.mean_inside:
        return (("tension", v.tension_text),)
    return (("tension", v.tension_text),
            ("minimal Mahalanobis distance", fmt_num(t.mahalanobis_min)),
            ("closest allowed point", ", ".join(fmt_num(x) for x in t.closest_point)),
            ("tension p-value (chi-bar-squared)", fmt_prob(t.p_value)))


def stats_block(result: CheckResult) -> list:
    c, b, t = result.counts, result.bayes, result.tension
    what = "Gaussian draws" if result.source == "gaussian" else "rows read"
    frac = "weighted fraction" if result.plot_weights is not None else "fraction"
    bayes = ("n/a" if b.value is None else fmt_pm(b.value, b.error)) + f" ({b.reason})"
    rows = ((what, str(c.total)),
            ("inside / marginal / outside", f"{c.inside} / {c.marginal} / {c.outside}"),
            ("marginal band", f"{fmt_num(result.band)} (distance to a facet, region "
                              "coordinates)"),
            ("p_inside", f"{result.verdict.p_inside_text} ({result.p_inside_method})"),
            (f"p_inside (sample {frac})", fmt_pm(result.p_inside_mc, result.p_inside_mc_err)),
            ("effective sample size", fmt_num(result.ess, 6)),
            *_batch_rows(result), *_tension_rows(result),
            ("Bayes factor (truncated / untruncated prior)", bayes))
    cone = ("" if result.verdict.mean_inside else
            f"; weights {', '.join(format(w, '.3f') for w in t.weights)} ({t.cone})")
    return [Heading("Statistics"), Table(("quantity", "value"), rows), *_tau_note(result),
            Para("The tension p-value uses the chi-bar-squared distribution of the minimal "
                 "Mahalanobis distance squared, with the weights of the least favourable "
                 "tangent cone of the region (Shapiro 1988; Silvapulle & Sen 2005, Sec. 3.4)"
                 f"{cone}.")]


def shell_block(result: CheckResult) -> list:
    """The exact solves of the shell between a cone's inner and outer facets (cone
    regions only)."""
    sh = result.shell
    if sh is None:
        return []
    rows = (("points in the shell", f"{sh.n_shell} ({fmt_pct(sh.shell_fraction)} of the "
                                    "points, weighted)"),
            ("decided inside", str(sh.n_inside)), ("decided outside", str(sh.n_outside)),
            ("of them outside by a learned facet (no solve)", str(sh.n_learned)),
            ("left marginal", str(sh.n_marginal)),
            ("exact solves (budget per partition)", f"{sh.n_solves} ({sh.budget})"),
            ("change of p_inside by the solves", fmt_pm(sh.p_correction,
                                                        sh.p_correction_err)),
            ("left marginal (weighted fraction; p_inside may be lower by up to this)",
             fmt_prob(sh.marginal_fraction)))
    blocks = [Heading("Shell"),
              Para("Points between the inner cone and the outer facets are decided by one "
                   "exact membership solve each: `inside` only with a verified solution, "
                   "`outside` only with a verified separating certificate; a failed or "
                   "inaccurate solve, or a point beyond the solve budget, stays `marginal` "
                   "and counts as inside the outer facets in p_inside. Each separating "
                   "certificate is a valid facet of the whole cone, so it is kept and tried "
                   "on the later points of the same partition (in row order): a point it "
                   "excludes is `outside` without a solve (a learned facet)."),
              Table(("quantity", "value"), rows)]
    if sh.reasons:
        blocks.append(Table(("why left marginal", "points"),
                            tuple((r, str(n)) for r, n in sh.reasons)))
    return blocks


def uncertainty_block(result: CheckResult) -> list:
    tu, region = result.theory_uncertainty, result.region
    if not tu:
        return []
    m = tu["model"]
    st = m["settings"]
    rows = [("p_inside", fmt_prob(tu["hard"]["p_inside"]), fmt_pm(tu["p_inside"],
                                                                  tu["p_inside_err"])),
            ("tension (sigma)", fmt_num(tu["hard"]["tension_sigma"]),
             fmt_num(tu["tension_sigma"])),
            ("tension p-value", fmt_prob(tu["hard"]["tension_p"]), fmt_prob(tu["tension_p"])),
            ("Bayes factor", fmt_num(tu["hard"]["bayes_factor"]), fmt_num(tu["bayes_factor"]))]
    frows = []
    for i, f in enumerate(region.facets):
        q = "" if m["q"] is None else fmt_num(m["q"][i])
        frows.append((str(i), f.inequality(region.coordinates), fmt_num(m["sigma_median"][i]),
                      q))
    text = (f"Model `{st['model']}`; verdict `uncertain` for {fmt_num(st['p_low'])} < "
            f"P(satisfies every facet) < {fmt_num(st['p_high'])} ({tu['n_uncertain']} "
            f"points). Correlation between facets: {tu['correlation']}. The tension under "
            "the model is the Bonferroni bound over single-facet tests with the offset "
            "uncertainty added.")
    if st["model"] == "power-counting":
        post = m["posterior"]
        text += (f" Breakdown scale Lambda_b = {fmt_num(m['breakdown_mev_used'], 6)} MeV; "
                 f"prior cbar^2 ~ ScaledInvChi2({fmt_num(st['nu0'])}, {fmt_num(st['tau0'])}^2);"
                 f" posterior ScaledInvChi2({fmt_num(post['nu'])}, {fmt_num(post['tau2'])}) "
                 f"from the coefficients {', '.join(fmt_num(c) for c in m['coefficients'])}.")
    return [Heading("Theory uncertainty of the bounds"), Para(text),
            Table(("quantity", "hard edges (none)", st["model"]), tuple(rows)),
            Table(("facet", "inequality", "sigma of the offset (median)", "Q"), tuple(frows))]


def worst_block(result: CheckResult, limit: int = 10) -> list:
    """The most violated rows of a samples file (synthetic Gaussian draws are not shown)."""
    worst: tuple[WorstPoint, ...] = result.worst
    if result.source == "gaussian":
        return [Heading("Flagged points"),
                Para("The points of a Gaussian card are synthetic draws, so none is listed "
                     "here and flagged.csv is not written (`eftsieve check --flagged` writes "
                     "it); the per-facet table above gives the exact probabilities.")]
    if not worst:
        return [Heading("Flagged rows"), Para("No row violates a facet.")]
    rows = tuple((str(w.row), ", ".join(fmt_num(x) for x in w.region_point),
                  fmt_num(w.min_margin), w.facet) for w in worst[:limit])
    return [Heading("Most violated rows"),
            Para(flagged_file_text(result)),
            Table(("row", "point (region coordinates)", "margin", "most violated facet"), rows)]


def flagged_file_text(result: CheckResult) -> str:
    """What the flagged file holds: every row not inside, or the first N of them."""
    c = result.counts
    n = c.marginal + c.outside + c.uncertain
    limit = result.settings.flagged_limit
    name = f"flagged.{result.settings.flagged_format}"
    if limit is not None and n > limit:
        return (f"`{name}` holds the first {limit} of the {n} rows that are not inside "
                f"(row order; `--flagged-limit {limit}`), each with its smallest margin and "
                "worst facet.")
    return (f"Every row that is not inside ({n}) is in `{name}`, with its smallest margin "
            "and worst facet (`--flagged-margins` adds the margin to every facet).")


def cautions_block(theory: str) -> list:
    return [Heading("What the bounds assume"), Bullets(ASSUMPTIONS),
            Heading("Cautions"), Bullets(cautions_for(theory))]


def verdict_footer(thresholds: dict[str, float]) -> list:
    """How the fit verdict is decided (docs/verdict.md)."""
    return [Heading("How the verdict is decided"),
            Bullets((f"`consistent`: tension below {fmt_num(thresholds['tension_sigma'])} "
                     f"sigma and p_inside >= {fmt_prob(thresholds['tension_p_inside'])}.",
                     f"`tension`: tension from {fmt_num(thresholds['tension_sigma'])} sigma, or "
                     f"p_inside below {fmt_prob(thresholds['tension_p_inside'])}.",
                     f"`excluded`: tension from {fmt_num(thresholds['excluded_sigma'])} sigma, "
                     f"or p_inside below {fmt_prob(thresholds['excluded_p_inside'])}.",
                     "`uncertain`: the verdict with hard facets differs from the verdict "
                     "under the theory-uncertainty model of the bounds, or would differ if "
                     "the shell points left undecided were outside the cone.",
                     "p_inside enters with its error: the thresholds are applied to p + 2 "
                     "err (for p = 0, at least the rule-of-three bound 3/n), so sampling "
                     "error alone never makes a fit tense or excluded.",
                     "Sigma is the one-sided Gaussian equivalent of the tension p-value; the "
                     "thresholds are the usual two- and three-sigma conventions (common "
                     "practice)."))]


def references_block(theory: str) -> list:
    """The papers behind the region (the same list as ``eftsieve cite``)."""
    from eftsieve.report.bibtex import references_for
    from eftsieve.theories import get_theory

    try:
        refs = references_for([get_theory(theory)])
    except KeyError:
        return []
    if not refs:
        return []
    items = tuple(f"{', '.join(r['authors'])}, \"{r['title']}\", "
                  + (f"{r['journal']} {r.get('volume', '')} ({r['year']}) {r.get('pages', '')}"
                     if r.get("journal") else str(r["year"])).strip()
                  + (f", arXiv:{r['eprint']}" if r.get("eprint") else "") for r in refs)
    return [Heading("Cite"), Para("The bounds in this report rest on these papers "
                                  "(`eftsieve cite` prints them as BibTeX):"), Bullets(items)]


def corner_cap_text(n_params: int) -> str:
    """One line when the corner plot shows fewer parameters than the fit has, else ''."""
    from eftsieve.io import limits

    cap = limits.MAX_PLOT_COLUMNS
    if n_params <= cap:
        return ""
    return (f"The corner plot shows {cap} of the fit's {n_params} parameters (the cap "
            f"eftsieve.io.limits.MAX_PLOT_COLUMNS = {cap}): those the region constrains "
            "first, then the others in fit order.")


def check_document(result: CheckResult, images: dict[str, Path]) -> Document:
    """The check report of a typed result (``images``: name -> PNG path)."""
    fit, region = result.fit, result.region
    doc = Document(f"Positivity check: {fit.name}")
    doc.add(*header_block(result), *facet_table_block(result), *fit_block(fit),
            *region_block(region), *mapping_block(result), *stats_block(result),
            *shell_block(result), *uncertainty_block(result), *worst_block(result))
    for name, alt in (("region", "region with posterior contours"),
                      ("corner", "corner plot with region boundary")):
        if name in images:
            doc.add(Image(images[name], alt))
    if "corner" in images and corner_cap_text(len(fit.names)):
        doc.add(Para(corner_cap_text(len(fit.names))))
    doc.add(*cautions_block(region.theory), *verdict_footer(result.verdict.thresholds),
            *references_block(region.theory))
    return doc
