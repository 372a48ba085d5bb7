"""The impose report: what was imposed, how the posterior moved, and the diagnostics."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from eftsieve.fit.model import Fit
from eftsieve.region.model import Region
from eftsieve.report.check_report import cautions_block, fit_block, fmt_g, region_block
from eftsieve.report.document import Bullets, Document, Heading, Image, Para, Table

MODE_TEXT = {
    "reweight": "posterior samples kept inside the region with their weights (exact "
                "truncation of the posterior)",
    "exact": "i.i.d. draws from the fit's Gaussian truncated to the region by minimax "
             "exponential tilting (Botev 2017, arXiv:1603.04166)",
    "refit": "an emcee refit with the fit card's prior truncated by the region",
}


def impose_document(fit: Fit, region: Region, s: dict[str, Any],
                    images: dict[str, Path]) -> Document:
    doc = Document(f"Positivity imposed: {fit.name}")
    doc.add(Heading("Mode"), Para(f"`{s['mode']}`: {MODE_TEXT[s['mode']]}."))
    rows = [("samples", str(s["n_samples"])), ("effective sample size", fmt_g(s["ess"], ".5g")),
            ("acceptance", fmt_g(s.get("acceptance"), ".4g")),
            ("P(inside) before", fmt_g(s.get("p_inside_before"), ".5g"))]
    if s["mode"] == "reweight":
        rows += [("rows read", str(s["n_read"])), ("rows dropped (outside)", str(s["n_dropped"]))]
        if s.get("tau_rows") is not None:
            rows += [("autocorrelation time of the rows (truncated means, file order)",
                      fmt_g(s["tau_rows"], ".3g")),
                     ("effective sample size after autocorrelation",
                      fmt_g(s["ess_autocorr"], ".5g"))]
    if s["mode"] == "refit":
        rows += [("steps x walkers", f"{s['n_steps']} x {s['walkers']}"),
                 ("autocorrelation times", ", ".join(f"{k}: {v:.1f}" for k, v in s["tau"].items())),
                 ("converged", f"{s['converged']} ({s['convergence_rule']})"),
                 ("likelihood", s["likelihood"])]
    doc.add(Table(("quantity", "value"), tuple(rows)))
    mrows = tuple((n, f"{fmt_g(s['before'][n]['mean'])} +- {fmt_g(s['before'][n]['std'], '.3g')}",
                   f"{fmt_g(s['after'][n]['mean'])} +- {fmt_g(s['after'][n]['std'], '.3g')}")
                  for n in fit.names)
    doc.add(Heading("How the posterior moved"), Table(("parameter", "before", "after"), mrows))
    if s["mode"] == "refit" and not s["converged"]:
        doc.add(Bullets(("The chain is NOT converged by the stated rule; do not use these "
                         "samples for inference before running longer.",)))
    if "corner" in images:
        doc.add(Image(images["corner"], "corner plot before and after"))
    doc.add(*fit_block(fit), *region_block(region), *cautions_block(region.theory))
    return doc
