"""Region building for chpt-su2 on one core, against the 2 s target (issue: SU(2) region)."""

from __future__ import annotations

import sys

from common import best_time, one_core, table


def main() -> str:
    one_core()
    from eftsieve.theories import get_theory

    th = get_theory("chpt-su2")
    th.build_region({"families": ["second-derivative"]})  # warm imports and caches
    rows = []
    for label, settings in [("both families, default grid", {}),
                            ("second-derivative only", {"families": ["second-derivative"]}),
                            ("t-derivative only", {"families": ["t-derivative"]}),
                            ("both families, fine grid", {"grid": "fine"}),
                            ("three pion masses in lr(mu)",
                             {"pion_masses_mev": [139.57, 250.0, 330.0], "convention": "lr"})]:
        t = best_time(lambda s=settings: th.build_region(s), repeat=3)
        rows.append([label, f"{t:.3f} s", f"{2.0 / t:.1f}x"])
    return table("Region build, chpt-su2 (one core)", ["build", "time", "target 2 s / time"],
                 rows)


if __name__ == "__main__":
    sys.exit(0 if main() else 1)
