"""The report of ``eftsieve limits``, from the typed :class:`~eftsieve.limits.run.LimitsResult`.

:func:`limits_document` builds the report (Markdown and HTML from one model),
:func:`limits_lines` the terminal table, and :func:`write_limits_outputs` the whole
output set (summary.json, intervals.csv, report.md, report.html and the plots).
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import TYPE_CHECKING, Any

from eftsieve.limits.line import SIGN_TEXT
from eftsieve.numbers import fmt_num, fmt_prob
from eftsieve.report.document import Banner, Bullets, Document, Heading, Image, Para, Table

if TYPE_CHECKING:
    from eftsieve.limits.intervals import TruncatedInterval
    from eftsieve.limits.run import LimitsResult

#: every file a limits run may write (plots are named after their tables)
LIMITS_OUTPUTS = ("summary.json", "intervals.csv", "report.md", "report.html",
                  "intervals.png")
#: how the ends of an allowed part were decided, for people
METHOD_TEXT = {"facets": "facets (exact)", "bisection": "bisection (exact membership)",
               "boundary": "facets (end on the cone's boundary)",
               "undecided": "undecided",
               "projection": "projection (others free; sign of the coefficient)"}


def _iv(iv: tuple[float, float] | None, digits: int = 3) -> str:
    if iv is None:
        return "excluded"
    if iv[0] == iv[1]:          # one point kept (e.g. a coefficient excluded for either sign)
        return f"only {fmt_num(iv[0] + 0.0, digits)}"
    return f"[{fmt_num(iv[0], digits)}, {fmt_num(iv[1], digits)}]"


def _sets(sets: list[list[float]]) -> str:
    return " u ".join(_iv((a, b)) for a, b in sets) or "none"


def how(t: TruncatedInterval) -> str:
    """How a truncated interval was decided: an excluded one by the outer facets alone."""
    return METHOD_TEXT["facets"] if t.allowed is None else METHOD_TEXT[t.cut.method]


def interval_rows(rows: tuple[TruncatedInterval, ...]) -> tuple[tuple[str, ...], ...]:
    out = []
    for t in rows:
        r = t.row
        others = "all free" if r.others_free else (
            ", ".join(f"{k}={fmt_num(v)}" for k, v in r.others.items()) or "all 0")
        out.append((r.label or r.coefficient, r.coefficient, _iv((r.low, r.high)),
                    f"{fmt_num(100 * r.cl)}%", others, r.convention.name, _iv(t.allowed),
                    _iv(t.sure) if t.sure is not None else "none proven",
                    fmt_num(t.fraction_allowed), t.status, how(t), r.units,
                    r.source))
    return tuple(out)


INTERVAL_HEADER = ("row", "coefficient", "published", "CL", "others", "convention",
                   "allowed part", "surely allowed", "fraction", "status", "ends decided by",
                   "units", "source")


def banner(result: LimitsResult) -> Banner:
    parts = []
    if result.intervals:
        n = len(result.intervals)
        cut = sum(t.status == "truncated" for t in result.intervals)
        gone = sum(t.status == "excluded" for t in result.intervals)
        und = sum(t.status == "undecided" for t in result.intervals)
        parts.append(f"{cut} of {n} intervals truncated, {gone} excluded entirely"
                     + (f", {und} undecided" if und else ""))
    for s in result.scans:
        parts.append(f"scan '{s.table}': p_inside = {fmt_prob(s.p_inside)}")
    for c in result.contours:
        parts.append(f"contour '{c.table}' ({c.label}): {fmt_num(c.fraction_inside)} of its "
                     "area allowed")
    if result.gaussian:
        parts.append(f"central values: {result.gaussian['verdict']}, p_inside = "
                     f"{fmt_prob(result.gaussian['p_inside'])}")
    return Banner("positivity", "; ".join(parts) or "nothing to report")


def _sign_blocks(result: LimitsResult) -> list[Any]:
    blocks: list[Any] = []
    for theory, rules in result.signs.items():
        free = [s.coefficient for s in rules if s.rule == "free"]
        rows = tuple((s.coefficient, s.text.split(" ", 1)[1], METHOD_TEXT[s.cut.method],
                      s.free_text) for s in rules)
        blocks += [Heading(f"Single-coefficient signs ({theory})", 3),
                   Table(("coefficient", "alone, positivity requires", "allowed side decided by",
                          "with every other coefficient free"), rows),
                   Para("Unconstrained in sign alone: " + (", ".join(free) if free else "none")
                        + ". The last column is the cone's projection onto the coefficient "
                        "(the card's coefficients only; '-': not computed): a facet there "
                        "holds up to its residual r, i.e. unless another coefficient exceeds "
                        "m/r for a point outside by m (docs/physics_cones.md).")]
    return blocks


def _scan_blocks(result: LimitsResult, images: dict[str, Path]) -> list[Any]:
    if not result.scans:
        return []
    rows = []
    for s in result.scans:
        for name in s.coefficients:
            rows.append((s.table, name, fmt_prob(s.p_inside),
                         _sets(s.intervals_before[name]["0.68"]),
                         _sets(s.intervals[name]["0.68"]),
                         _sets(s.intervals_before[name]["0.95"]),
                         _sets(s.intervals[name]["0.95"]), METHOD_TEXT[s.method]))
    blocks: list[Any] = [Heading("Likelihood scans"),
                         Table(("table", "coefficient", "p_inside", "68% HPD, scan",
                                "68% HPD, truncated", "95% HPD, scan", "95% HPD, truncated",
                                "allowed part decided by"), tuple(rows))]
    for s in result.scans:
        blocks.append(Bullets((f"`{s.table}`: prior {s.prior}.", f"Numerics: {s.numerics}.")))
        if s.p_inside != s.p_inside_sure:
            blocks.append(Para(f"p_inside of the surely allowed part: "
                               f"{fmt_prob(s.p_inside_sure)}."))
        if s.table in images:
            blocks.append(Image(images[s.table], f"scan {s.table}"))
    return blocks


def _contour_blocks(result: LimitsResult, images: dict[str, Path]) -> list[Any]:
    if not result.contours:
        return []
    rows = tuple((c.table, c.label, ", ".join(c.coefficients), fmt_num(c.area),
                  fmt_num(c.fraction_inside), fmt_num(c.fraction_sure), METHOD_TEXT[c.method])
                 for c in result.contours)
    blocks: list[Any] = [Heading("Contours"),
                         Table(("table", "contour", "coefficients", "area", "fraction allowed",
                                "fraction surely allowed", "decided by"), rows),
                         Para("Fractions of the contour's area in the plane of its two "
                              "coefficients (a flat measure), not probabilities.")]
    for c in result.contours:
        key = f"{c.table}::{c.label}"
        if key in images:
            blocks.append(Image(images[key], f"contour {c.table}"))
    return blocks


def limits_document(result: LimitsResult, images: dict[str, Path]) -> Document:
    """The report of a limits run."""
    from eftsieve.report.check_report import cautions_block, references_block

    doc = Document(f"Published limits against positivity: {Path(result.source).name}")
    doc.add(banner(result), Bullets(tuple(result.notes)))
    if result.intervals:
        doc.add(Heading("One-coefficient intervals"),
                Table(INTERVAL_HEADER, interval_rows(result.intervals)))
        if "intervals" in images:
            doc.add(Image(images["intervals"], "published and allowed intervals"))
        notes = [f"{t.row.label or t.row.coefficient}: {n}" for t in result.intervals
                 for n in t.cut.notes]
        if notes:
            doc.add(Para("How the ends that needed more than the facets were decided:"),
                    Bullets(tuple(notes)))
    doc.add(*_sign_blocks(result), *_scan_blocks(result, images),
            *_contour_blocks(result, images))
    if result.gaussian:
        g = result.gaussian
        held = ", ".join(g["held_at_zero"]) or "none"
        doc.add(Heading("Central values with a covariance"),
                Para(f"`{g['fit']}` ({', '.join(g['parameters'])}; held at zero: {held}): "
                     f"**{g['verdict']}** - {g['reason']}."))
    reg = tuple((t, ", ".join(r["coordinates"]), str(r["n_facets"]), str(r["n_inner_facets"]),
                 str(r["family"]), f"`{r['hash'][:16]}`", str(r["file"] or "built"))
                for t, r in result.regions.items())
    doc.add(Heading("Regions"), Table(("theory", "coordinates", "outer facets", "inner facets",
                                       "family", "hash", "file"), reg))
    for theory in result.regions:
        doc.add(*cautions_block(theory), *references_block(theory))
    return doc


def limits_lines(result: LimitsResult, outdir: Path | None = None) -> list[str]:
    """What the terminal shows: the banner, then one line per interval, sign, scan and
    contour."""
    b = banner(result)
    lines = [f"{b.label}: {b.text}"]
    if result.intervals:
        head = f"  {'row':<26} {'published':>16} {'allowed part':>16} {'status':<10} how"
        lines.append(head)
        for t in result.intervals:
            lines.append(f"  {(t.row.label or t.row.coefficient)[:26]:<26} "
                         f"{_iv((t.row.low, t.row.high)):>16} {_iv(t.allowed):>16} "
                         f"{t.status:<10} {how(t)}")
    for theory, rules in result.signs.items():
        lines.append(f"  signs alone ({theory}): " + "; ".join(s.text for s in rules))
        free = [f"{s.coefficient} {SIGN_TEXT[s.free_rule]}" for s in rules
                if s.free_rule is not None]
        if free:
            lines.append("  signs with every other coefficient free: " + "; ".join(free))
    for s in result.scans:
        hp = "; ".join(f"{n} 95% {_sets(s.intervals[n]['0.95'])}" for n in s.coefficients)
        lines.append(f"  scan '{s.table}': p_inside = {fmt_prob(s.p_inside)}; truncated {hp}")
    for c in result.contours:
        lines.append(f"  contour '{c.table}' ({c.label}): {fmt_num(c.fraction_inside)} of the "
                     "area allowed")
    if result.gaussian:
        g = result.gaussian
        lines.append(f"  central values: {g['verdict']} - {g['reason']}")
    if outdir is not None:
        lines.append(f"  report: {outdir / 'report.html'}")
    return lines


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9]+", "_", text).strip("_").lower() or "table"


def write_limits_outputs(result: LimitsResult, outdir: str | Path, *, plots: bool = True
                         ) -> dict[str, Path]:
    """summary.json, intervals.csv (interval cards), report.md, report.html and PNGs."""
    from eftsieve.io.atomic import atomic_write_json, atomic_write_text
    from eftsieve.report.document import to_html, to_markdown

    outdir = Path(outdir)
    images = limits_plots(result, outdir) if plots else {}
    written = dict(images)
    written["summary"] = atomic_write_json(outdir / "summary.json", result.to_dict())
    if result.intervals:
        import csv
        import io

        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(["line", "coefficient", "low", "high", "cl", "allowed_low", "allowed_high",
                    "sure_low", "sure_high", "status", "method", "source"])
        for t in result.intervals:
            a = t.allowed or (None, None)
            s = t.sure or (None, None)
            w.writerow([t.row.line, t.row.coefficient, t.row.low, t.row.high, t.row.cl,
                        *a, *s, t.status, t.cut.method, t.row.source])
        written["intervals"] = atomic_write_text(outdir / "intervals.csv", buf.getvalue())
    doc = limits_document(result, images)
    written["report_md"] = atomic_write_text(outdir / "report.md", to_markdown(doc))
    written["report_html"] = atomic_write_text(outdir / "report.html", to_html(doc))
    return written


def limits_plots(result: LimitsResult, outdir: Path) -> dict[str, Path]:
    """One PNG per interval set, scan and contour (keys: ``intervals``, the scan's table,
    ``table::label`` for contours)."""
    from eftsieve.report import limits_plots as lp

    images: dict[str, Path] = {}
    if result.intervals:
        images["intervals"] = lp.plot_intervals(result.intervals, outdir / "intervals.png")
    free = sorted({c for info in result.regions.values() for c in info.get("free", [])})
    for s in result.scans:
        name = outdir / f"scan_{_slug(s.table)}.png"
        held = _held(s.coefficients, free)
        images[s.table] = (lp.plot_scan_1d(s, name, held=held) if len(s.coefficients) == 1
                           else lp.plot_scan_2d(s, s.cut, name, held=held))
    for k, c in enumerate(result.contours):
        if c.cut is None:
            continue
        images[f"{c.table}::{c.label}"] = lp.plot_contour(
            c, c.cut, outdir / f"contour_{_slug(c.table)}_{k}.png",
            held=_held(c.coefficients, free))
    return images


def _held(shown: tuple[str, ...], free: list[str]) -> str:
    """What a plot's other coefficients are: held at zero, or free (a projection)."""
    if not free:
        return "other coefficients held at zero"
    names = [c for c in free if c not in shown]
    short = ", ".join(names[:4]) + (f" and {len(names) - 4} more" if len(names) > 4 else "")
    return f"free (projection): {short}; any others held at zero"
