"""Region building for chpt-su3 on one core, against the 30 s target (issue: SU(3) region)."""

from __future__ import annotations

import sys

from common import best_time, one_core, table


def main() -> str:
    one_core()
    from eftsieve.theories import get_theory

    try:
        th = get_theory("chpt-su3")
    except KeyError:                      # not yet registered: use the module directly
        from eftsieve.theories.chpt_su3.theory import THEORY as th
    th.build_region({"families": ["second-derivative"], "processes": ["pi pi"]})  # warm up
    rows = []
    for label, settings, repeat in [
            ("full 3-D region, both families, default grid", {}, 3),
            ("second-derivative only", {"families": ["second-derivative"]}, 3),
            ("t-derivative only", {"families": ["t-derivative"]}, 3),
            ("tree level, SU(3)-symmetric masses (all processes)",
             {"loops": False, "kaon_mass_mev": 139.57, "eta_mass_mev": 139.57}, 3),
            ("full 3-D region, fine grid", {"grid": "fine"}, 1)]:
        t = best_time(lambda s=settings: th.build_region(s), repeat=repeat)
        n = len(th.build_region(settings).facets) if repeat > 1 else "-"
        rows.append([label, f"{t:.2f} s", str(n), f"{30.0 / t:.1f}x"])
    return table("Region build, chpt-su3 (one core)",
                 ["build", "time", "facets", "target 30 s / time"], rows)


if __name__ == "__main__":
    sys.exit(0 if main() else 1)
