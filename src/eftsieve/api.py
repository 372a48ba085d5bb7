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
    from eftsieve.impose.core import ImposeResult
    from eftsieve.region.model import Region
    from eftsieve.theories.base import Theory


def load_fit(path: str | Path) -> Fit:
    """Load and validate a fit card (YAML or JSON, docs/formats.md)."""
    from eftsieve.fit.card import load_fit as _load
    from eftsieve.theories import get_theory

    return _load(path, get_theory)


def load_samples(path: str | Path, theory: str | None = None, convention: str | None = None, *,
                 weight_column: str | None = None, name: str | None = None,
                 columns: str | None = None, burn_in: int | None = None,
                 thin: int | None = None, walkers: str | None = None,
                 **kinematics: float | None) -> Fit:
    """A fit from a bare samples file (CSV, Parquet, NetCDF, emcee HDF5, .npy/.npz, or a
    gvar JSON dump): every numeric column is a parameter, unless ``columns``
    (``"lbar1,lbar2"`` or ``"lbar1=COL,lbar2=l[1],weight=w"``) selects and renames them.

    Columns that ``theory`` knows get ``convention`` (with the kinematic values it needs,
    e.g. ``mu_mev=770``); the others are carried through as nuisance parameters.
    ``burn_in``, ``thin`` and ``walkers`` apply to sampler files (docs/formats.md).

    Without ``theory`` and ``convention`` they are inferred from the column names when
    exactly one theory claims them (``lbar1, lbar2``), with a printed notice
    (:class:`~eftsieve.errors.InputNotice`); a kinematic input with a theory default
    (the physical pion mass for lbar) is taken with a notice too.
    """
    from eftsieve.errors import InputError
    from eftsieve.fit.conventions import NONE, Convention, make_convention
    from eftsieve.fit.model import fit_from_samples
    from eftsieve.io.readers.columns import parse_columns_flag
    from eftsieve.io.readers.options import parse_options
    from eftsieve.theories import get_theory

    if theory is None or convention is None:
        theory, convention = infer_theory(path, theory, convention, columns)
    try:
        th = get_theory(theory)
    except KeyError as err:
        raise InputError(None, "--theory", str(err.args[0]), "run `eftsieve theories`") from err
    kin = {k: float(v) for k, v in kinematics.items() if v is not None}
    if convention == NONE:
        conv = Convention(NONE)
    elif convention not in th.convention_specs:
        raise InputError(None, "--convention", f"{th.name} has no convention '{convention}'",
                         f"use one of {', '.join(th.conventions)}")
    else:
        spec = th.convention_specs[convention]
        kin = th.with_convention_defaults(convention, kin)
        for key, what in spec.needs:
            if key not in kin:
                raise InputError(None, key, f"convention '{convention}' needs {what}",
                                 f"give {key} (MeV)")
        conv = make_convention(spec, **{k: kin[k] for k, _ in spec.needs})
    opts = parse_options({"burn_in": burn_in, "thin": thin, "walkers": walkers}, None, "--")
    return fit_from_samples(path, th, conv, weight_column=weight_column, kinematics=kin,
                            name=name, options=opts,
                            columns=None if columns is None else parse_columns_flag(columns))


def infer_theory(path: str | Path, theory: str | None, convention: str | None,
                 columns: str | None) -> tuple[str, str]:
    """The theory and convention a bare samples file's column names imply, asked of every
    theory (:meth:`~eftsieve.theories.base.Theory.infer_convention`); InputError unless
    exactly one answers."""
    import warnings

    from eftsieve.errors import InputError, InputNotice
    from eftsieve.theories import available_theories, get_theory

    names = _column_names(path, columns)
    pool = [theory] if theory else list(available_theories())
    found = [(t, c) for t in pool for c in [get_theory(t).infer_convention(names)]
             if c is not None and (convention is None or c == convention)]
    if len(found) != 1:
        what = "no theory claims" if not found else "several theories claim"
        raise InputError(path, "--theory", f"{what} the columns {', '.join(names)}",
                         "add --theory NAME --convention NAME (see `eftsieve theories`)")
    t, c = found[0]
    warnings.warn(InputNotice(f"{Path(path).name}: columns {', '.join(names)} read as "
                              f"theory {t}, convention {c} (override with --theory and "
                              "--convention)"), stacklevel=3)
    return t, c


def _column_names(path: str | Path, columns: str | None) -> tuple[str, ...]:
    """The parameter names a bare file offers (its columns, or the --columns names)."""
    from eftsieve.fit.bookkeeping import split_columns
    from eftsieve.io.readers.columns import parse_columns_flag
    from eftsieve.io.readers.options import ReadOptions
    from eftsieve.io.samples import SamplesSource, detect_format

    if columns is not None:
        return tuple(parse_columns_flag(columns).names)
    p = Path(path)
    table = SamplesSource(p, detect_format(p, None, "--samples"), (),
                          options=ReadOptions()).column_table()
    return split_columns([str(c) for c in table.labels], None).parameters


def default_region(fit: Fit) -> Region:
    """The region of the fit's theory at the fit's own kinematics (the theory's defaults
    for everything else)."""
    import warnings

    from eftsieve.errors import InputNotice
    from eftsieve.theories import get_theory

    th = get_theory(fit.theory)
    for text in th.region_default_notices(fit):
        warnings.warn(InputNotice(text), stacklevel=2)
    return th.build_region(th.region_settings_for_fit(fit))


def region_for(fit: Fit, region_path: str | Path | None, outdir: Path, *,
               allow_mismatch: bool = False) -> tuple[Region, str]:
    """The region file given (loaded and verified), or the fit's own region built with
    :func:`default_region` and saved as ``outdir/region.json``; with the path used.

    A region file whose kinematics disagree with the fit's stated ones is refused
    (InputError naming both) unless ``allow_mismatch``.
    """
    if region_path is not None:
        region = load_region(region_path)
        check_kinematics(fit, region, str(region_path), allow_mismatch)
        return region, str(region_path)
    region = default_region(fit)
    path = Path(outdir) / "region.json"
    region.save(path)
    return region, str(path)


def check_kinematics(fit: Fit, region: Region, region_path: str | None = None,
                     allow_mismatch: bool = False) -> None:
    """Refuse a region built at other kinematics than the fit states (the theory of the
    region compares them), unless ``allow_mismatch``, which warns instead."""
    import warnings

    from eftsieve.errors import InputError, KinematicsWarning
    from eftsieve.theories import get_theory

    try:
        problems = get_theory(region.theory).kinematics_mismatch(fit, region)
    except KeyError:
        return
    if not problems:
        return
    text = "; ".join(problems)
    if allow_mismatch:
        warnings.warn(KinematicsWarning(f"region {region_path}: {text} (allowed by "
                                        "--allow-kinematics-mismatch)"), stacklevel=2)
        return
    key = problems[0].split(":")[0]
    raise InputError(fit.source, f"kinematics.{key}", f"disagrees with the region file "
                     f"{region_path}: {text}", "rebuild the region at the fit's kinematics "
                     "(drop --region), or pass --allow-kinematics-mismatch")


def load_region(path: str | Path) -> Region:
    """Read a region file and verify its content hash."""
    from eftsieve.region.model import Region
    from eftsieve.theories import check_region

    region = Region.load(path)
    check_region(region, path)
    return region


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
          outdir: str | Path | None = None, region_file: str | None = None,
          shell_solves: int = 1000) -> CheckResult:
    """Classify a fit against a region (default: its theory's region for the fit's
    kinematics) and compute p_inside, the tension and the Bayes factor.

    Returns a frozen :class:`~eftsieve.check.result.CheckResult`; flagged.csv goes to
    ``outdir`` when one is given.  ``shell_solves`` caps the exact membership solves per
    partition for points between a positivity cone's inner and outer facets.
    """
    from eftsieve.check.run import run_check
    from eftsieve.check.verdicts import CheckSettings

    if region is None:
        region = default_region(fit)
    settings = CheckSettings(draws=draws, seed=seed, marginal_band=band,
                             chunk_rows=chunk_rows, shell_solves=shell_solves)
    return run_check(fit, region, settings, None if outdir is None else Path(outdir),
                     region_file, uncertainty, engine=engine, scheduler=scheduler)


def impose(fit: Fit, region: Region | None = None, *, mode: str | None = None,
           samples: int = 20_000, seed: int = 0, uncertainty: Any = None, data: Any = None,
           likelihood: Any = None, progress: bool = False) -> ImposeResult:
    """Re-sample a fit with positivity imposed as a truncation of its prior.

    ``mode`` is ``exact`` (Gaussian summaries), ``reweight`` (posterior samples) or
    ``refit`` (with ``data``, an observables file, or ``likelihood``, a callable or
    ``"module:function"``); None chooses from the fit.  Returns a frozen
    :class:`~eftsieve.impose.core.ImposeResult`.
    """
    from eftsieve.impose.api import impose as _impose
    from eftsieve.impose.core import ImposeSettings

    if region is None:
        region = default_region(fit)
    settings = ImposeSettings(mode=mode, n_samples=samples, seed=seed, progress=progress)
    return _impose(fit, region, mode=mode, settings=settings, uncertainty=uncertainty,
                   data=data, likelihood=likelihood)


def get_theory(name: str) -> Theory:
    """The theory called ``name`` (:func:`theories` lists them); KeyError otherwise."""
    from eftsieve.theories import get_theory as _get

    return _get(name)


def theories() -> tuple[str, ...]:
    """The names of the theories this installation provides."""
    from eftsieve.theories import available_theories

    return available_theories()
