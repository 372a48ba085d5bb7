"""``eftsieve demo``: the main job on the embedded, INVENTED example scenario.

The scenario (data_examples/, every file labelled as invented): a fictional lattice study
"Aurora" fits lbar1..lbar4 of SU(2) ChPT at three pion masses; its fit partly violates
positivity.  The demo builds the region, checks the Gaussian summary and the posterior
samples, imposes positivity on both, checks an invented SU(3) fit of L1, L2, L3 against
the chpt-su3 region and (through the one-loop matching) the SU(2) one, and an invented
scalar-EFT fit, writing everything under one directory and printing a few lines.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
from pathlib import Path
from typing import Any


def examples_dir() -> Path:
    """The embedded example files (inside the package when installed, else the repo)."""
    here = Path(__file__).resolve().parent
    for cand in (here / "data_examples", here.parents[1] / "data_examples"):
        if (cand / "aurora_gaussian.yaml").is_file():
            return cand
    from eftsieve.errors import InputError

    raise InputError(None, "data_examples", "the embedded example files are missing",
                     "reinstall eftsieve from its source tree")


def add_parser(sub: Any) -> None:
    p = sub.add_parser("demo", help="run region, check and impose on the invented example")
    p.add_argument("-o", "--output", default="demo_output", help="output directory")
    p.set_defaults(func=cmd_demo)


def _run(argv: list[str]) -> int:
    from eftsieve.cli import main

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(argv)
    if code != 0:
        print(buf.getvalue())
        raise RuntimeError(f"demo step failed (exit {code}): eftsieve {' '.join(argv)}")
    return code


def cmd_demo(args: argparse.Namespace) -> int:
    ex = examples_dir()
    out = Path(args.output)
    out.mkdir(parents=True, exist_ok=True)
    region = out / "region.json"
    print("eftsieve demo: INVENTED example scenario (fictional 'Aurora' lattice study)")
    # both bound families (t-derivative is opt-in; docs/physics.md, truncation study)
    _run(["region", "--theory", "chpt-su2", "--family", "second-derivative,t-derivative",
          "-o", str(region), "--plot", str(out / "region.png")])
    steps = [("check", "aurora_gaussian.yaml", "check_gaussian"),
             ("check", "aurora_posterior.yaml", "check_posterior"),
             ("impose", "aurora_gaussian.yaml", "impose_gaussian"),
             ("impose", "aurora_posterior.yaml", "impose_posterior")]
    for verb, card, sub in steps:
        extra = ["--no-progress"] if verb == "impose" else []
        _run([verb, str(ex / card), "--region", str(region), "-o", str(out / sub), *extra])
    _run(["check", str(ex / "aurora_gaussian.yaml"), "--region", str(region), "-o",
          str(out / "check_gaussian_theory_uncertainty"), "--theory-uncertainty",
          "power-counting", "--draws", "50000"])
    _report(out)
    tu = json.loads((out / "check_gaussian_theory_uncertainty" / "summary.json").read_text())
    t = tu["theory_uncertainty"]
    print(f"  with the power-counting truncation model: p_inside = {t['p_inside']:.3f} "
          f"(hard edges {t['hard']['p_inside']:.3f}), {t['n_uncertain']} of {tu['n_total']} "
          f"draws uncertain; report {out / 'check_gaussian_theory_uncertainty' / 'report.html'}")
    su3 = ex / "aurora_su3_gaussian.yaml"
    if su3.is_file():  # the SU(3) fit against its own region and, matched, the SU(2) one
        _run(["check", str(su3), "-o", str(out / "check_su3"), "--draws", "50000"])
        _run(["check", str(su3), "--region", str(region), "-o", str(out / "check_su3_as_su2"),
              "--draws", "50000"])
        s3 = json.loads((out / "check_su3" / "summary.json").read_text())
        s2 = json.loads((out / "check_su3_as_su2" / "summary.json").read_text())
        print(f"  SU(3) fit (L1, L2, L3 at 770 MeV): p_inside = {s3['p_inside']:.3f} against "
              f"chpt-su3, {s2['p_inside']:.3f} against chpt-su2 through the one-loop matching "
              f"({out / 'check_su3' / 'report.html'})")
    scalar = ex / "scalar_gaussian.yaml"
    if scalar.is_file():
        _run(["check", str(scalar), "-o", str(out / "check_scalar"), "--draws", "50000"])
        s = json.loads((out / "check_scalar" / "summary.json").read_text())
        print(f"  scalar-eft fit: p_inside = {s['p_inside']:.3f}, tension "
              f"{s['tension_sigma']:.2f} sigma ({out / 'check_scalar' / 'report.html'})")
    return 0


def _report(out: Path) -> None:
    g = json.loads((out / "check_gaussian" / "summary.json").read_text())
    p = json.loads((out / "check_posterior" / "summary.json").read_text())
    ig = json.loads((out / "impose_gaussian" / "summary.json").read_text())
    print(f"  region: {out / 'region.json'} (plot {out / 'region.png'})")
    print(f"  Gaussian fit:  p_inside = {g['p_inside']:.3f} +- {g['p_inside_err']:.1g}, "
          f"tension {g['tension_sigma']:.2f} sigma (p = {g['tension_p']:.3g}); "
          f"report {out / 'check_gaussian' / 'report.html'}")
    bm = p["p_inside_mc_err_batch"]  # the chain's rows are correlated: batch means
    err = f"{bm:.1g} (batch means)" if bm is not None else f"{p['p_inside_err']:.1g}"
    print(f"  posterior:     p_inside = {p['p_inside']:.3f} +- {err} "
          f"of {p['n_total']} samples; report {out / 'check_posterior' / 'report.html'}")
    ip = json.loads((out / "impose_posterior" / "summary.json").read_text())
    for label, s in (("Gaussian, exact truncation", ig), ("posterior, reweighted", ip)):
        moves = ", ".join(f"{n} {s['before'][n]['mean']:.2f} -> {s['after'][n]['mean']:.2f}"
                          for n in ("lbar1", "lbar2"))
        print(f"  means under positivity ({label}): {moves}")
