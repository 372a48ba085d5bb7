"""The impose report, from the typed :class:`~eftsieve.impose.core.ImposeResult`: a
banner with the answer, the region's kinematics, per parameter the truncated mean,
standard deviation and 68%/95% intervals and the truncated covariance (ready to quote),
the diagnostics, and the fit, region, assumptions and papers behind the bounds."""

from __future__ import annotations

from pathlib import Path

from eftsieve.fit.model import Fit
from eftsieve.impose.core import ImposeResult
from eftsieve.numbers import fmt_kinematics, fmt_num, fmt_pm, fmt_prob
from eftsieve.region.model import Region
from eftsieve.report.check_report import (
    cautions_block,
    fit_block,
    references_block,
    region_block,
)
from eftsieve.report.document import Banner, Bullets, Document, Heading, Image, Para, Table
from eftsieve.tolerances import TINY_P_INSIDE

MODE_TEXT = {
    "reweight": "posterior samples kept inside the region with their weights (exact "
                "truncation of the posterior)",
    "exact": "i.i.d. draws from the fit's Gaussian truncated to the region by minimax "
             "exponential tilting (Botev 2017, arXiv:1603.04166)",
    "refit": "an emcee refit with the fit card's prior truncated by the region",
}


#: below this estimated share of the imposed samples inside a cone itself (exact solves on
#: a sample of its shell), the banner says the result is truncated to the outer facets only
IN_CONE_WARN = 0.95


def _mostly_undecided(note: dict) -> bool:
    """Whether at least half of the shell samples solved for a cone's note
    (:func:`eftsieve.impose.api.cone_shell_note`) stayed undecided."""
    from eftsieve.bounds.cone_region import mostly_undecided

    return mostly_undecided(int(note.get("marginal", 0)), int(note.get("checked", 0)))


def impose_banner(result: ImposeResult) -> Banner:
    """``imposed``, ``bounds-driven`` (p_inside before below the tiny threshold),
    ``outer facets only`` (a cone whose shell holds much of the result, exact solves
    putting less than :data:`IN_CONE_WARN` of it in the cone) or ``not converged`` (a
    refit that failed its convergence rule)."""
    f = result.figures
    p = f.get("p_inside_before")
    ptext = "" if p is None else f"; p_inside without positivity = {fmt_prob(p)}"
    n_before = len(result.before_samples)
    if p is not None and p >= 1.0 and result.mode != "exact" and n_before:
        # every sample inside: a count, not a probability of 1 (the rule of three gives
        # the one-sided 95% lower bound 1 - 3/N; common practice)
        ptext = (f"; p_inside without positivity > {1 - 3 / n_before:.4g} (all "
                 f"{n_before} samples inside; 95% lower bound)")
    n = f.get("n_samples", len(result.samples))
    if not result.converged:
        return Banner("not converged", f"the refit chain is not converged by the stated "
                      f"rule ({f.get('convergence_rule', '')}); do not use these samples "
                      "before running longer")
    shell = f.get("cone_shell") or {}
    est = shell.get("in_cone_estimate")
    rng = shell.get("in_cone_range")
    # most of the solved shell samples undecided: the estimate from the few decided ones
    # says little, the range says what is known
    undecided = _mostly_undecided(shell)
    if (est is not None or undecided) and p is not None:
        # the truncation used the outer facets: so does the probability it removed (a
        # check decides the shell and so gives a smaller p_inside)
        ptext = ptext.replace("; p_inside without", "; p_inside of the outer facets without")
    if undecided and rng and rng[0] < IN_CONE_WARN:
        marg, edge = int(shell["marginal"]), int(shell.get("on_boundary", 0))
        why = ("" if not edge else " (within the solver's accuracy of the boundary)"
               if edge == marg else f" ({edge} within the solver's accuracy of the boundary)")
        return Banner("outer facets only", f"positivity imposed with the cone's verified "
                      f"outer facets ({result.mode}, {n} samples){ptext}; exact solves of "
                      f"{shell['checked']} samples of its shell left {marg} undecided{why}, "
                      f"so between about {fmt_num(100 * rng[0], 3)}% and "
                      f"{fmt_num(100 * rng[1], 3)}% of the result lies in the cone itself: "
                      "it is not proven to be the posterior within the cone")
    if est is not None and est < IN_CONE_WARN:
        # the truncation used the cone's outer facets; exact solves on a sample of the
        # result say how much of it is in the cone itself
        return Banner("outer facets only", f"positivity imposed with the cone's verified "
                      f"outer facets ({result.mode}, {n} samples){ptext}; exact solves put "
                      f"only about {fmt_num(100 * est, 3)}% of the result in the cone "
                      "itself, so it is not the posterior within the cone")
    if result.driven_by_bounds:
        return Banner("bounds-driven", f"positivity imposed ({result.mode}, {n} samples)"
                      f"{ptext}, below {fmt_prob(TINY_P_INSIDE)}: the truncated result is "
                      "set by the bounds, not by the data")
    return Banner("imposed", f"positivity imposed ({result.mode}, {n} samples){ptext}")


#: what "without positivity" is in each mode (the same data and likelihood throughout)
WITHOUT_TEXT = {
    "reweight": "the fit's own posterior samples",
    "exact": "the fit's own Gaussian",
    "refit": "a second chain with the same prior, data and likelihood, without the region",
}


def posterior_block(result: ImposeResult) -> list:
    """Per parameter without -> with positivity (same data and likelihood), the fit
    card's own summary as a reference for a refit, and the truncated covariance."""
    post = result.posterior
    before = result.figures.get("before", {})
    card = result.figures.get("card")
    rows = []
    for p in post.parameters:
        b = before.get(p.name)
        ref = () if card is None else (fmt_pm(card[p.name]["mean"], card[p.name]["std"]),)
        rows.append((p.name, *ref, "" if b is None else fmt_pm(b["mean"], b["std"]),
                     fmt_pm(p.mean, p.std),
                     *(f"[{fmt_num(lo, 4)}, {fmt_num(hi, 4)}]"
                       for lo, hi in p.intervals.values())))
    ref_head = () if card is None else ("fit card (reference; may rest on other data)",)
    names = tuple(p.name for p in post.parameters)
    cov = tuple((n, *(fmt_num(v, 4) for v in row))
                for n, row in zip(names, post.covariance, strict=True))
    return [Heading("With positivity imposed"),
            Table(("parameter", *ref_head, "without positivity (mean +- sd)",
                   "with positivity (mean +- sd)", "68% interval", "95% interval"),
                  tuple(rows)),
            Para(f"Without positivity: {WITHOUT_TEXT[result.mode]}; with positivity: the "
                 "same, truncated to the region. Intervals (with positivity) are central "
                 "(equal tails), from the weighted sample quantiles. Truncated covariance:"),
            Table(("", *names), cov)]


def diagnostics_block(result: ImposeResult) -> list:
    s = result.figures
    rows = [("samples", str(s["n_samples"])), ("effective sample size", fmt_num(s["ess"], 5)),
            ("acceptance", fmt_num(s.get("acceptance"))),
            ("P(inside) without positivity", fmt_prob(s.get("p_inside_before")))]
    if result.mode == "reweight":
        rows += [("rows read", str(s["n_read"])), ("rows dropped (outside)", str(s["n_dropped"]))]
        if s.get("tau_rows") is not None:
            rows += [("autocorrelation time of the rows (truncated means, file order)",
                      fmt_num(s["tau_rows"])),
                     ("effective sample size after autocorrelation",
                      fmt_num(s["ess_autocorr"], 5))]
    if result.mode == "refit":
        rows += [("steps x walkers", f"{s['n_steps']} x {s['walkers']}"),
                 ("autocorrelation times", ", ".join(f"{k}: {fmt_num(v)}"
                                                     for k, v in s["tau"].items())),
                 ("converged", f"{'yes' if s['converged'] else 'no'} "
                               f"({s['convergence_rule']})"),
                 ("autocorrelation times without positivity",
                  ", ".join(f"{k}: {fmt_num(v)}"
                            for k, v in s.get("tau_without_positivity", {}).items())),
                 ("likelihood", s["likelihood"])]
    return [Heading("Mode and diagnostics"), Para(f"`{result.mode}`: {MODE_TEXT[result.mode]}."),
            Table(("quantity", "value"), tuple(rows))]


def cone_shell_text(note: dict) -> str:
    """One sentence on the samples of a cone's shell (eftsieve.impose.api.cone_shell_note)."""
    est = note.get("in_cone_estimate")
    rng = note.get("in_cone_range")
    if _mostly_undecided(note) and rng:
        # the few decided ones say little: only the range
        share = (f"; between about {fmt_num(100 * rng[0], 3)}% and {fmt_num(100 * rng[1], 3)}% of "
                 "the imposed samples lie in the cone (the undecided ones outside, inside)")
    else:
        share = ("" if est is None else f"; about {fmt_num(100 * est, 3)}% of the imposed "
                 "samples lie in the cone")
    return (f"truncated to the cone's verified outer facets: "
            f"{fmt_num(100 * note['shell_fraction'], 3)}% of the samples lie between its "
            f"inner and outer facets, where exact solves of {note['checked']} of them found "
            f"{note['inside']} inside, {note['outside']} outside and {note['marginal']} "
            f"undecided{share}")


def impose_document(fit: Fit, region: Region, result: ImposeResult,
                    images: dict[str, Path], kinematics: dict | None = None) -> Document:
    """The impose report (``kinematics``: the region's, as every verb prints them)."""
    doc = Document(f"Positivity imposed: {fit.name}")
    doc.add(impose_banner(result))
    if kinematics:
        doc.add(Bullets((f"Region kinematics: {fmt_kinematics(kinematics)}.",
                         f"Region `{region.theory}`, {len(region.facets)} facets, content "
                         f"hash `{region.hash[:16]}`.")))
    doc.add(*posterior_block(result), *diagnostics_block(result))
    note = result.figures.get("cone_shell")
    if note and note["shell_fraction"] > 0:
        doc.add(Heading("Shell of the cone"),
                Para(cone_shell_text(note)[0].upper() + cone_shell_text(note)[1:] + ". The "
                     "samples outside the cone are kept: the truncation is to an outer "
                     "approximation of the allowed set (docs/physics_cones.md)."))
    if "corner" in images:
        doc.add(Image(images["corner"], "corner plot without and with positivity "
                      "(same data and likelihood)"))
    doc.add(*fit_block(fit), *region_block(region), *cautions_block(region.theory),
            *references_block(region.theory))
    return doc
