"""The published-limits part of ``eftsieve demo``, on an INVENTED VBS analysis.

The fictional experiment "Borealis" (data_examples/vbs_intervals.csv and
data_examples/vbs_hepdata/, written by data_examples/make_vbs_limits.py, every file
labelled as invented) publishes one-coefficient intervals, a 2-D likelihood scan and a
2-D contour.  :func:`run_vbs_demo` puts them through :mod:`eftsieve.limits` and writes
the two output sets ``limits_intervals`` and ``limits_hepdata`` into the demo folder.
The theory and convention are read from the card (the generator sets them once).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

from eftsieve.numbers import fmt_num, fmt_prob

#: the demo inputs, inside the examples folder
CARD, RECORD = "vbs_intervals.csv", "vbs_hepdata"


def run_vbs_demo(ex: Path, stage: Path, shown: Path, say: Callable[[str], None]
                 ) -> dict[str, dict[str, Any]]:
    """Run the VBS demo from the examples folder ``ex`` into ``stage`` (lines name the
    final folder ``shown``); returns each step's summary."""
    from eftsieve.fit.formats.interval_card import read_interval_card
    from eftsieve.limits.run import limits_from_card, limits_from_record
    from eftsieve.region.build import build_region
    from eftsieve.report.limits_report import write_limits_outputs
    from eftsieve.theories import get_theory

    rows = read_interval_card(ex / CARD, get_theory)
    theory, convention = rows[0].theory, rows[0].convention
    region = build_region(theory, {})
    region.save(stage / f"region_{theory}.json")
    rpath = str(shown / f"region_{theory}.json")

    def regions(name: str, coefficients: Any = ()) -> tuple[Any, str | None]:
        # the demo card uses the default region's coefficients only
        return (region, rpath) if name == theory else (build_region(name, {}), None)

    cards = limits_from_card(ex / CARD, regions)
    record = limits_from_record(ex / RECORD / "submission.yaml", theory, convention, region,
                                rpath)
    out: dict[str, dict[str, Any]] = {}
    for sub, res in (("limits_intervals", cards), ("limits_hepdata", record)):
        (stage / sub).mkdir(parents=True, exist_ok=True)
        write_limits_outputs(res, stage / sub)
        out[sub] = res.to_dict()
    say(f"  INVENTED VBS analysis 'Borealis' ({theory}):")
    for t in cards.intervals:
        say(f"    {t.row.label}: [{fmt_num(t.row.low)}, {fmt_num(t.row.high)}] -> "
            + ("excluded" if t.allowed is None else
               f"[{fmt_num(t.allowed[0])}, {fmt_num(t.allowed[1])}]") + f" ({t.status})")
    for s in record.scans:
        say(f"    scan '{s.table}': p_inside = {fmt_prob(s.p_inside)} (flat prior on the "
            "scanned range)")
    for c in record.contours:
        say(f"    contour '{c.table}' ({c.label}): {fmt_num(c.fraction_inside)} of its area "
            "allowed")
    say(f"    reports {shown / 'limits_intervals' / 'report.html'}, "
        f"{shown / 'limits_hepdata' / 'report.html'}")
    return out
