"""The public Python API: load a fit, build or load a region, check, impose.

Everything here is re-exported by :mod:`eftsieve`; heavy libraries load only when a
function needs them.  docs/api.md shows the calls as doctests.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from eftsieve.check.result import CheckResult
    from eftsieve.executors import Executor
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region
    from eftsieve.theories.base import Theory


def load_fit(path: str | Path) -> Fit:
    """Load and validate a fit card (YAML or JSON, docs/formats.md)."""
    from eftsieve.fit.card import load_fit as _load
    from eftsieve.theories import get_theory

    return _load(path, get_theory)


def load_region(path: str | Path) -> Region:
    """Read a region file and verify its content hash."""
    from eftsieve.region.model import Region

    return Region.load(path)


def build_region(theory: str, *, executor: Executor | None = None, **settings: Any) -> Region:
    """Build the allowed region of ``theory``.

    ``settings`` are the theory's region settings (``eftsieve theories`` lists them);
    an unknown one is an :class:`~eftsieve.errors.InputError` that names the known ones.
    ``executor`` (:mod:`eftsieve.executors`) runs independent solves; it never enters the
    region or its hash.
    """
    from eftsieve.region.build import build_region as _build

    return _build(theory, settings, executor)


def check(fit: Fit, region: Region | None = None, *, draws: int = 200_000, seed: int = 0,
          band: float | None = None, chunk_rows: int = 1_000_000, uncertainty: Any = None,
          engine: str = "local", scheduler: str | None = None,
          outdir: str | Path | None = None, region_file: str | None = None) -> CheckResult:
    """Classify a fit against a region (default: its theory's region for the fit's
    kinematics) and compute p_inside, the tension and the Bayes factor.

    Returns a frozen :class:`~eftsieve.check.result.CheckResult`; flagged.csv goes to
    ``outdir`` when one is given.
    """
    from eftsieve.check.run import run_check
    from eftsieve.check.verdicts import CheckSettings
    from eftsieve.theories import get_theory

    if region is None:
        th = get_theory(fit.theory)
        region = th.build_region(th.region_settings_for_fit(fit))
    settings = CheckSettings(draws=draws, seed=seed, marginal_band=band,
                             chunk_rows=chunk_rows)
    return run_check(fit, region, settings, None if outdir is None else Path(outdir),
                     region_file, uncertainty, engine=engine, scheduler=scheduler)


def get_theory(name: str) -> Theory:
    """The theory called ``name`` (:func:`theories` lists them); KeyError otherwise."""
    from eftsieve.theories import get_theory as _get

    return _get(name)


def theories() -> tuple[str, ...]:
    """The names of the theories this installation provides."""
    from eftsieve.theories import available_theories

    return available_theories()
