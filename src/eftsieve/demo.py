"""The main job on the embedded, INVENTED example scenario, through the library.

The scenario (data_examples/, every file labelled as invented): a fictional lattice study
"Aurora" fits lbar1..lbar4 of SU(2) ChPT at three pion masses; its fit partly violates
positivity.  :func:`run_demo` builds the region, checks the Gaussian summary and the
posterior samples, imposes positivity on both, checks the Gaussian summary with the
power-counting truncation model, checks an invented SU(3) fit of L1, L2, L3 against the
SU(3) region and (through the one-loop matching) the SU(2) one, and an invented
scalar-EFT fit, and then (:mod:`eftsieve.demo_limits`) the published limits of an
invented vector-boson-scattering analysis.  Everything goes under one directory; the
few lines of the result say where, and what came out.  ``eftsieve demo`` prints them.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit
    from eftsieve.stats.truncation import UncertaintySettings

#: the first line of the demo, before any work is done
HEADER = "eftsieve demo: INVENTED example scenario (fictional 'Aurora' lattice study)"
#: draws of the Gaussian checks after the first two (they only need p_inside to ~1e-3)
SHORT_DRAWS = 50_000


@dataclass(frozen=True)
class DemoResult:
    """What the demo wrote and said.

    Attributes
    ----------
    outdir
        The output directory.
    lines
        The lines of the demo's account, :data:`HEADER` first.
    summaries
        Step name (the sub-folder, e.g. ``check_gaussian``) -> its summary.json content.
    """

    outdir: Path
    lines: tuple[str, ...]
    summaries: dict[str, dict[str, Any]] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"outdir": str(self.outdir), "lines": list(self.lines),
                "summaries": dict(self.summaries)}


def examples_dir() -> Path:
    """The embedded example files (inside the package when installed, else the repo)."""
    here = Path(__file__).resolve().parent
    for cand in (here / "data_examples", here.parents[1] / "data_examples"):
        if (cand / "aurora_gaussian.yaml").is_file():
            return cand
    from eftsieve.errors import InputError

    raise InputError(None, "data_examples", "the embedded example files are missing",
                     "reinstall eftsieve from its source tree")


class _Steps:
    """The demo's runs, each writing one sub-folder of ``out``."""

    def __init__(self, out: Path, shown: Path) -> None:
        self.out = out  # the staging folder of the output set
        self.shown = shown  # where it ends up: recorded paths name this
        self.summaries: dict[str, dict[str, Any]] = {}

    def _prepare(self, fit: Fit, sub: str, outputs: tuple[str, ...],
                 extra_inputs: tuple[Path, ...] = ()) -> Path:
        from eftsieve.io.atomic import guard_inputs

        outdir = self.out / sub
        ins = [fit.source, *extra_inputs]
        if fit.samples is not None:
            ins.append(fit.samples.path)
        guard_inputs([outdir / n for n in outputs], ins)
        outdir.mkdir(parents=True, exist_ok=True)
        return outdir

    def _final(self, path: str) -> str:
        """A path inside the staging folder, as it will be once the set is in place."""
        p = Path(path)
        return str(self.shown / p.relative_to(self.out)) if self.out in p.parents else path

    def check(self, card: Path, sub: str, region_path: Path | None, draws: int = 200_000,
              uncertainty: UncertaintySettings | None = None) -> dict[str, Any]:
        from eftsieve.api import load_fit, region_for
        from eftsieve.check.run import run_check
        from eftsieve.check.verdicts import CheckSettings
        from eftsieve.report.outputs import CHECK_OUTPUTS, write_check_outputs

        fit = load_fit(card)
        outdir = self._prepare(fit, sub, CHECK_OUTPUTS, () if region_path is None
                               else (region_path,))
        region, rpath = region_for(fit, region_path, outdir)
        rpath = self._final(rpath)
        result = run_check(fit, region, CheckSettings(draws=draws), outdir, rpath, uncertainty)
        write_check_outputs(fit, result, outdir)
        self.summaries[sub] = result.summary
        return result.summary

    def impose(self, card: Path, sub: str, region_path: Path) -> dict[str, Any]:
        from eftsieve.api import load_fit, load_region
        from eftsieve.impose.api import impose
        from eftsieve.impose.core import ImposeSettings
        from eftsieve.report.outputs import IMPOSE_OUTPUTS, write_impose_outputs

        fit = load_fit(card)
        outdir = self._prepare(fit, sub, IMPOSE_OUTPUTS, (region_path,))
        region = load_region(region_path)
        result = impose(fit, region, settings=ImposeSettings(progress=False))
        summary = write_impose_outputs(fit, region, result, outdir,
                                       region_path=self._final(str(region_path)))
        self.summaries[sub] = summary
        return summary


def run_demo(outdir: str | Path = "demo_output",
             echo: Callable[[str], None] | None = None) -> DemoResult:
    """Run the demo into ``outdir``; ``echo`` receives each line as soon as it is known.

    Returns
    -------
    DemoResult
        The lines (the same ones given to ``echo``) and every step's summary.
    """
    lines: list[str] = []

    def say(text: str) -> None:
        lines.append(text)
        if echo is not None:
            echo(text)

    from eftsieve.io.outset import output_set

    ex = examples_dir()
    out = Path(outdir)
    say(HEADER)
    with output_set(out, [ex]) as stage:
        steps = _Steps(stage, out)
        _demo_steps(ex, out, steps, say)
    return DemoResult(out, tuple(lines), dict(steps.summaries))


def _demo_steps(ex: Path, out: Path, steps: _Steps, say: Callable[[str], None]) -> None:
    """Every step of the demo, written into ``steps.out``; lines name the final ``out``."""
    region = _aurora_region(steps.out, ex / "aurora_gaussian.yaml")
    g = steps.check(ex / "aurora_gaussian.yaml", "check_gaussian", region)
    p = steps.check(ex / "aurora_posterior.yaml", "check_posterior", region)
    ig = steps.impose(ex / "aurora_gaussian.yaml", "impose_gaussian", region)
    ip = steps.impose(ex / "aurora_posterior.yaml", "impose_posterior", region)
    tu = steps.check(ex / "aurora_gaussian.yaml", "check_gaussian_theory_uncertainty", region,
                     SHORT_DRAWS, _power_counting())
    for line in _aurora_lines(out, g, p, ig, ip):
        say(line)
    t = tu["theory_uncertainty"]
    say(f"  with the power-counting truncation model: p_inside = {t['p_inside']:.3f} "
        f"(hard edges {t['hard']['p_inside']:.3f}), {t['n_uncertain']} of {tu['n_total']} "
        f"draws uncertain; report {out / 'check_gaussian_theory_uncertainty' / 'report.html'}")
    su3 = ex / "aurora_su3_gaussian.yaml"
    if su3.is_file():  # the SU(3) fit against its own region and, matched, the SU(2) one
        s3 = steps.check(su3, "check_su3", None, SHORT_DRAWS)
        s2 = steps.check(su3, "check_su3_as_su2", region, SHORT_DRAWS)
        say(verdict_line(f"SU(3) fit against {s3['theory']}", s3,
                         out / "check_su3" / "report.html"))
        say(verdict_line(f"SU(3) fit against {g['theory']} (one-loop matching)", s2,
                         out / "check_su3_as_su2" / "report.html"))
    scalar = ex / "scalar_gaussian.yaml"
    if scalar.is_file():
        s = steps.check(scalar, "check_scalar", None, SHORT_DRAWS)
        say(verdict_line(f"{s['theory']} fit", s, out / "check_scalar" / "report.html"))
    from eftsieve.demo_limits import CARD, run_vbs_demo

    if (ex / CARD).is_file():  # published limits of an invented VBS analysis
        steps.summaries.update(run_vbs_demo(ex, steps.out, out, say))


def _aurora_region(out: Path, card: Path) -> Path:
    """The default region of the card's theory, saved as out/region.json and drawn as
    out/region.png (the scenario's fits are all checked against it)."""
    from eftsieve.api import load_fit
    from eftsieve.region.build import build_region
    from eftsieve.report.plots import save_region_plot

    path = out / "region.json"
    # both bound families: the t-derivative one is opt-in (docs/physics.md, truncation
    # study), and the invented fit is built to violate it
    region = build_region(load_fit(card).theory,
                          {"families": ["second-derivative", "t-derivative"]})
    region.save(path)
    save_region_plot(region, out / "region.png")
    return path


def _power_counting() -> UncertaintySettings:
    from eftsieve.stats.truncation import UncertaintySettings

    return UncertaintySettings("power-counting")


def verdict_line(label: str, summary: dict[str, Any], report: Path) -> str:
    """One demo line, verdict first: 'label: VERDICT - reason (report ...)'."""
    v = summary.get("verdict") or {}
    return f"  {label}: {str(v.get('label', '?')).upper()} - {v.get('reason', '')} ({report})"


def _aurora_lines(out: Path, g: dict[str, Any], p: dict[str, Any], ig: dict[str, Any],
                  ip: dict[str, Any]) -> list[str]:
    lines = [f"  region: {out / 'region.json'} (plot {out / 'region.png'})",
             verdict_line("Gaussian fit", g, out / "check_gaussian" / "report.html")]
    bm = p["p_inside_mc_err_batch"]  # the chain's rows are correlated: batch means
    err = f"{bm:.1g} (batch means)" if bm is not None else f"{p['p_inside_err']:.1g}"
    lines.append(verdict_line("posterior", p, out / "check_posterior" / "report.html"))
    lines.append(f"    p_inside = {p['p_inside']:.3f} +- {err} of {p['n_total']} samples")
    for label, s in (("Gaussian, exact truncation", ig), ("posterior, reweighted", ip)):
        moves = ", ".join(f"{n} {s['before'][n]['mean']:.2f} -> {s['after'][n]['mean']:.2f}"
                          for n in list(s["before"])[:2])
        lines.append(f"  means under positivity ({label}): {moves}")
    return lines
