"""Argument helpers shared by the verbs: fit, region, uncertainty and bare-samples options.

Each ``add_*`` function adds a group of options to a parser; each ``*_from_args``
function turns the parsed options into the library's own settings objects.  Parsing
only: the library does the work.
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path
from typing import TYPE_CHECKING, Any

from eftsieve.theories import DEFAULT_THEORY

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region
    from eftsieve.stats.truncation import UncertaintySettings

#: the command-line flag that gives each kinematic input of a bare samples file
KINEMATIC_FLAGS = {"pion_mass_mev": "--pion-mass", "mu_mev": "--scale", "gap_mev": "--gap"}
#: region option (argparse dest) -> the key of the region settings it fills
REGION_SETTINGS = {"family": "families", "pion_mass": "pion_masses_mev", "fpi": "fpi_mev",
                   "convention": "convention", "scale": "mu_mev", "grid": "grid",
                   "order": "order", "spins": "spins", "coordinates": "coordinates",
                   "truncation": "truncation", "heavy_scale": "heavy_scale_mev",
                   "sin2_theta_w": "sin2_theta_w", "free": "free"}


def _number(text: str, kind: type) -> Any:
    try:
        value = kind(text)
    except ValueError as err:
        raise argparse.ArgumentTypeError(f"expected {'an integer' if kind is int else 'a number'}"
                                         f", got {text!r}") from err
    if kind is float and not math.isfinite(value):
        raise argparse.ArgumentTypeError(f"must be a finite number, got {text!r}")
    return value


def positive_int(text: str) -> int:
    """argparse type: an integer >= 1."""
    value = _number(text, int)
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {value}")
    return int(value)


def nonnegative_int(text: str) -> int:
    """argparse type: an integer >= 0."""
    value = _number(text, int)
    if value < 0:
        raise argparse.ArgumentTypeError(f"must be 0 or more, got {value}")
    return int(value)


def positive_float(text: str) -> float:
    """argparse type: a finite number > 0 (masses, scales)."""
    value = _number(text, float)
    if value <= 0:
        raise argparse.ArgumentTypeError(f"must be positive, got {value:g}")
    return float(value)


def nonnegative_float(text: str) -> float:
    """argparse type: a finite number >= 0 (bands)."""
    value = _number(text, float)
    if value < 0:
        raise argparse.ArgumentTypeError(f"must be 0 or more, got {value:g}")
    return float(value)


def finite_float(text: str) -> float:
    """argparse type: any finite number."""
    return float(_number(text, float))


def probability(text: str) -> float:
    """argparse type: a number in [0, 1]."""
    value = _number(text, float)
    if not 0 <= value <= 1:
        raise argparse.ArgumentTypeError(f"must lie in [0, 1], got {value:g}")
    return float(value)


def csv_list(text: str) -> list[str]:
    """``a,b, c`` -> ``["a", "b", "c"]`` (empty items dropped)."""
    return [t.strip() for t in text.split(",") if t.strip()]


class ExtendCsv(argparse.Action):
    """``--family a,b --family c`` -> ``["a", "b", "c"]``: comma lists, repeatable."""

    def __call__(self, parser: argparse.ArgumentParser, namespace: argparse.Namespace,
                 values: Any, option_string: str | None = None) -> None:
        given = csv_list(str(values))
        if not given:
            raise argparse.ArgumentError(self, f"expected a name, got {values!r}")
        setattr(namespace, self.dest, list(getattr(namespace, self.dest, None) or []) + given)


#: help of the options shared by region, check and impose (one wording for all verbs)
FAMILY_HELP = ("bound families, comma-separated, or the flag repeated (default: the "
               "theory's default families; see `eftsieve theories`)")
PION_MASS_HELP = ("pion mass(es) in MeV, one flag followed by one or several values "
                  "(default 139.57); several build one region that holds at every mass "
                  "and need a convention that does not depend on the pion mass")


def add_region_args(p: argparse.ArgumentParser) -> None:
    """The options that choose and tune a region build."""
    p.add_argument("--theory", default=DEFAULT_THEORY,
                   help=f"theory name (default {DEFAULT_THEORY}; see `eftsieve theories`)")
    p.add_argument("--family", action=ExtendCsv, default=None, metavar="FAMILY[,FAMILY]",
                   help=FAMILY_HELP)
    p.add_argument("--pion-mass", type=positive_float, nargs="+", action="extend", default=None,
                   metavar="MEV", help=PION_MASS_HELP)
    p.add_argument("--fpi", type=positive_float, default=None, metavar="MEV",
                   help="F_pi in MeV (default 92.07)")
    p.add_argument("--convention", default=None,
                   help="convention of the region's coordinates (default: the theory's; "
                        "see `eftsieve theories`)")
    p.add_argument("--scale", type=positive_float, default=None, metavar="MEV",
                   help="renormalisation scale mu in MeV of a scale-dependent convention "
                        "(default 770)")
    p.add_argument("--grid", choices=["default", "fine"], default=None,
                   help="kinematic scan density (theories with a kinematic scan)")
    p.add_argument("--truncation", default=None, metavar="MODEL",
                   help="truncation treatment built into the region (theories that offer "
                        "one; `none` for the hard one-loop facets)")
    p.add_argument("--heavy-scale", type=positive_float, default=None, metavar="MEV",
                   help="heavy scale of the truncation model in MeV (theories that offer one)")
    p.add_argument("--order", type=positive_int, default=None,
                   help="expansion order (theories with sum rules)")
    p.add_argument("--spins", type=nonnegative_int, default=None, metavar="JMAX",
                   help="spin cut-off of the heavy-state grid (theories with sum rules)")
    p.add_argument("--coordinates", type=csv_list, default=None,
                   help="region coordinates, e.g. g3t,g4t (theories that offer a choice; "
                        "with --free, the one or two kept coefficients)")
    p.add_argument("--free", type=csv_list, default=None, metavar="NAMES",
                   help="coefficients left free (any value) instead of zero, or 'all' for "
                        "every coefficient not in --coordinates: the region is the cone's "
                        "projection onto one or two --coordinates (positivity-cone "
                        "theories, extremal or elastic family)")
    p.add_argument("--sin2-theta-w", type=positive_float, default=None, metavar="X",
                   help="weak mixing angle sin^2(theta_W) of theories with hatted field "
                        "strengths (the default is the theory's; it does not move the cone)")
    p.add_argument("--engine", choices=["local", "processes", "dask"], default=None,
                   help="processes (a local process pool, one per core) or dask: solve the "
                        "independent directions of a region build in parallel (theories "
                        "with parallel builds; the region's hash does not depend on it)")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="dask scheduler address (default: a local cluster of 2 workers)")


def region_settings_from_args(args: argparse.Namespace) -> dict[str, Any]:
    """Collect the region options that were given (None means: theory default)."""
    return {v: getattr(args, k) for k, v in REGION_SETTINGS.items()
            if getattr(args, k, None) is not None}


def add_fit_args(p: argparse.ArgumentParser, many: bool = False) -> None:
    """The fit, its region, the output folder and the seed; then the bare-samples and
    theory-uncertainty groups."""
    if many:
        p.add_argument("fit", nargs="+", help="fit card(s) (.yaml/.json) or a bare samples "
                       "file (.csv/.parquet/.nc, a directory or glob of Parquet files)")
    else:
        p.add_argument("fit", help="fit card (.yaml/.json) or a bare samples file "
                       "(.csv/.parquet/.nc)")
    p.add_argument("--region", default=None, help="region file (default: build from the fit)")
    p.add_argument("--allow-kinematics-mismatch", action="store_true",
                   help="use a --region file built at other kinematics than the fit states "
                        "(default: refuse)")
    p.add_argument("-o", "--output", default=None, metavar="DIR", help="output directory")
    p.add_argument("--seed", type=nonnegative_int, default=0, help="random seed (default 0)")
    g = p.add_argument_group("region built from the fit (without --region; as `eftsieve "
                             "region` does)")
    g.add_argument("--family", action=ExtendCsv, default=None, metavar="FAMILY[,FAMILY]",
                   help=FAMILY_HELP)
    add_samples_args(p)
    add_uncertainty_args(p)


def add_samples_args(p: argparse.ArgumentParser) -> None:
    """What a bare samples file (no fit card) needs: theory, convention, kinematics."""
    g = p.add_argument_group("bare samples file (no fit card)")
    g.add_argument("--theory", default=None, help="theory of a bare samples file")
    g.add_argument("--convention", default=None, help="convention of a bare samples file")
    g.add_argument("--pion-mass", type=positive_float, nargs="+", action="extend",
                   default=None, metavar="MEV",
                   help="one value: the pion mass of a bare samples file's convention, if it "
                        "needs one; with a card, or several values: the masses the region is "
                        "built at, as `eftsieve region --pion-mass` does")
    g.add_argument("--scale", type=positive_float, default=None, metavar="MEV",
                   help="scale mu of a bare samples file's convention, if it needs one")
    g.add_argument("--gap", type=positive_float, default=None, metavar="MEV",
                   help="mass gap M of a bare samples file's convention, if it needs one")
    g.add_argument("--weight-column", default=None, help="weight column of a bare samples file")
    g.add_argument("--columns", default=None, metavar="SPEC",
                   help="bare file: parameters to read, 'a,b' (names in order for .npy and "
                        "sampler files) or 'a=COL,b=l[1],weight=w'")
    g.add_argument("--burn-in", type=nonnegative_int, default=None, metavar="N",
                   help="emcee/NetCDF file: drop the first N iterations of each walker/chain")
    g.add_argument("--thin", type=positive_int, default=None, metavar="K",
                   help="emcee/NetCDF file: keep every K-th iteration after the burn-in")
    g.add_argument("--keep-walkers", default=None, metavar="LIST",
                   help="emcee/NetCDF file: walkers (chains) to keep, '0:16' or '0,3,5'")


def add_uncertainty_args(p: argparse.ArgumentParser) -> None:
    """The theory-uncertainty model of the bounds' offsets."""
    g = p.add_argument_group("theory uncertainty of the bounds (docs/physics.md)")
    g.add_argument("--theory-uncertainty", choices=["none", "fixed", "power-counting"],
                   default="none", help="model of the facets' offset uncertainty")
    g.add_argument("--sigma", default=None, metavar="FAMILY=S,...",
                   help="fixed model: sigma per bound family, in the units of the bound")
    g.add_argument("--breakdown", type=positive_float, default=None, metavar="MEV",
                   help="power-counting: breakdown scale Lambda_b (default 4 pi F_pi)")
    g.add_argument("--coefficient-prior", default="1,1", metavar="NU0,TAU0",
                   help="power-counting: scaled-inverse-chi2 prior of cbar^2 (default 1,1)")
    g.add_argument("--thresholds", default="0.05,0.95", metavar="LOW,HIGH",
                   help="P(satisfies) thresholds of the 'uncertain' verdict")


def load_fit_arg(args: argparse.Namespace) -> Fit:
    """A Fit from a card, or from a bare samples file with --theory/--convention."""
    from eftsieve.api import load_fit, load_samples
    from eftsieve.errors import InputError
    from eftsieve.fit.formats.gvar_json import is_gvar_json

    path = Path(args.fit)
    from eftsieve.fit.formats.hepdata import is_record

    if is_record(path):  # a HEPData record's central values and covariance
        return _record_fit(path, args)
    card_like = path.suffix.lower() in {".yaml", ".yml", ".json"}
    if card_like and path.is_dir():
        raise InputError(path, None, "is a folder, not a fit card",
                         "give the card file (a folder of Parquet parts needs a name without "
                         "a card extension)")
    if card_like and not (path.suffix.lower() == ".json" and is_gvar_json(path)):
        return load_fit(path)
    masses = list(args.pion_mass or [])
    if len(masses) > 1 and args.theory and args.convention:  # refuse before any notice
        from eftsieve.theories import get_theory

        try:
            spec = get_theory(args.theory).convention_specs.get(args.convention)
        except KeyError:
            spec = None
        if spec is not None and "pion_mass_mev" in dict(spec.needs):
            raise several_masses_error(path, args.convention)
    given = {"pion_mass_mev": masses[0] if len(masses) == 1 else None, "mu_mev": args.scale,
             "gap_mev": getattr(args, "gap", None)}
    try:
        return load_samples(path, args.theory, args.convention,
                            weight_column=args.weight_column, columns=args.columns,
                            burn_in=args.burn_in, thin=args.thin, walkers=args.keep_walkers,
                            **given)
    except InputError as err:  # name the flag that gives a missing kinematic input
        if err.field == "pion_mass_mev" and len(masses) > 1:
            raise InputError(None, "--pion-mass", f"the samples' convention needs one pion "
                             f"mass ({err.problem}), but {len(masses)} were given",
                             "give the file's own mass as one value; build a region at "
                             "several masses with `eftsieve region` and pass --region"
                             ) from err
        if err.field in KINEMATIC_FLAGS:
            flag = KINEMATIC_FLAGS[err.field]
            raise InputError(None, flag, err.problem, f"add {flag} MEV") from err
        raise


def _record_fit(path: Path, args: argparse.Namespace) -> Fit:
    """The Gaussian fit of a HEPData record (--theory needed, --convention where the theory
    offers several)."""
    from eftsieve.errors import InputError
    from eftsieve.fit.formats.hepdata import fit_from_record
    from eftsieve.fit.model import parse_convention
    from eftsieve.theories import get_theory

    if not args.theory:
        raise InputError(path, None, "a HEPData record does not name its theory",
                         "add --theory NAME (see `eftsieve theories`)")
    try:
        th = get_theory(args.theory)
    except KeyError as err:
        raise InputError(None, "--theory", str(err.args[0]), "run `eftsieve theories`") from err
    conv = parse_convention(args.convention, {}, None, "--convention",
                            bool(th.convention_specs), th.convention_specs)
    return fit_from_record(path, th, conv)


def _pair(text: str, opt: str) -> tuple[float, float]:
    from eftsieve.errors import InputError

    try:
        a, b = (float(v) for v in text.split(","))
    except ValueError as err:
        raise InputError(None, opt, f"expected two numbers 'A,B', got {text!r}", "") from err
    return a, b


def _sigmas(text: str | None) -> dict[str, float]:
    from eftsieve.errors import InputError

    sig: dict[str, float] = {}
    for item in (text or "").split(","):
        if not item.strip():
            continue
        if "=" not in item:
            raise InputError(None, "--sigma", f"expected FAMILY=SIGMA, got {item!r}",
                             "e.g. --sigma t-derivative=0.3")
        k, v = item.split("=", 1)
        try:
            sig[k.strip()] = float(v)
        except ValueError as err:
            raise InputError(None, "--sigma", f"not a number: {v!r}", "") from err
    return sig


def uncertainty_from_args(args: argparse.Namespace) -> UncertaintySettings | None:
    """UncertaintySettings from the command line (None for the model 'none')."""
    from eftsieve.errors import InputError
    from eftsieve.stats.truncation import UncertaintySettings

    if args.theory_uncertainty == "none":
        return None
    sig = _sigmas(args.sigma)
    if args.theory_uncertainty == "fixed" and not sig:
        raise InputError(None, "--sigma", "the fixed model needs a sigma per bound family",
                         "e.g. --sigma t-derivative=0.3,second-derivative=0.3")
    nu0, tau0 = _pair(args.coefficient_prior, "--coefficient-prior")
    lo, hi = _pair(args.thresholds, "--thresholds")
    return UncertaintySettings(args.theory_uncertainty, sig, args.breakdown, nu0, tau0, lo, hi)


def region_for(fit: Fit, args: argparse.Namespace, outdir: Path) -> tuple[Region, str]:
    """The region from --region, or built from the fit (with --family and --pion-mass,
    see :func:`region_overrides`) and saved as ``outdir/region.json``."""
    from eftsieve.api import region_for as _region_for
    from eftsieve.cli.progress import heartbeat

    allow = getattr(args, "allow_kinematics_mismatch", False)
    overrides = region_overrides(fit, args)
    quiet = bool(getattr(args, "quiet", False)) or args.region is not None
    with heartbeat(f"building the {fit.theory} region", quiet):
        if not overrides:
            return _region_for(fit, args.region, outdir, allow_mismatch=allow)
        return _built_region(fit, overrides, outdir, allow), str(Path(outdir) / "region.json")


def is_card(path: str | Path) -> bool:
    """A fit card (YAML/JSON, not a gvar JSON dump), as opposed to a bare samples file."""
    from eftsieve.fit.formats.gvar_json import is_gvar_json

    p = Path(path)
    suffix = p.suffix.lower()
    return suffix in {".yaml", ".yml", ".json"} and not (
        suffix == ".json" and p.is_file() and is_gvar_json(p))


def _region_masses(args: argparse.Namespace) -> tuple[float, ...]:
    """The masses --pion-mass gives the region: every value, except the one value that is
    a bare samples file's own pion mass (that one is already the fit's kinematics)."""
    masses = tuple(getattr(args, "pion_mass", None) or ())
    if len(masses) == 1 and not is_card(args.fit):
        return ()
    return masses


def region_overrides(fit: Fit, args: argparse.Namespace) -> dict[str, Any]:
    """The region settings that check and impose take from the command line.

    ``--family`` chooses the bound families.  ``--pion-mass`` with a card, or with
    several values, gives the masses the region is built at, as ``eftsieve region
    --pion-mass`` does: several values build one region that holds at every mass, whose
    coordinates are in the fit's own convention, which must then not depend on the pion
    mass.  Both options refuse --region (the region is then already built).
    """
    from eftsieve.errors import InputError

    out: dict[str, Any] = {}
    if getattr(args, "family", None):
        out["families"] = tuple(args.family)
    masses = _region_masses(args)
    if masses:
        out["pion_masses_mev"] = masses
    if out and args.region is not None:
        flag = "--family" if "families" in out else "--pion-mass"
        raise InputError(None, flag, "chooses how the region is built, but --region gives "
                         "a region that is already built", f"drop --region to build the "
                         f"region here, or drop {flag} (or rebuild the file with `eftsieve "
                         f"region {flag} ...`)")
    if len(masses) > 1:
        out.update(_mass_independent_convention(fit))
    return out


def several_masses_error(source: Any, convention: str) -> Exception:
    """The refusal of several --pion-mass values for a fit stated at one pion mass."""
    from eftsieve.errors import InputError

    return InputError(source, "--pion-mass", "several pion masses build one region that "
                      "holds at every mass, in a convention that does not depend on the "
                      f"pion mass; the fit is in {convention}, stated at one pion mass",
                      "give one --pion-mass, or build the region with `eftsieve region "
                      "--pion-mass M1 M2 --convention ...` (see `eftsieve theories`) and "
                      "pass --region")


def _mass_independent_convention(fit: Fit) -> dict[str, Any]:
    """Region settings putting its coordinates in the fit's convention, which must be one
    convention that needs no pion mass (a region at several masses needs such)."""
    from eftsieve.theories import get_theory

    th = get_theory(fit.theory)
    convs = {p.convention.name: p.convention for p in fit.parameters
             if p.convention.name != "none"}
    spec = th.convention_specs.get(next(iter(convs))) if len(convs) == 1 else None
    needs = [k for k, _ in spec.needs] if spec is not None else ["pion_mass_mev"]
    if "convention" not in th.setting_names or "pion_mass_mev" in needs:
        raise several_masses_error(fit.source, ", ".join(sorted(convs)) or "none")
    conv = convs[next(iter(convs))]
    out: dict[str, Any] = {"convention": conv.name}
    out.update({k: conv.get(k) for k in needs if k in th.setting_names})
    return out


def _built_region(fit: Fit, overrides: dict[str, Any], outdir: Path, allow: bool
                  ) -> Region:
    """The fit's default region with ``overrides``, saved into ``outdir``; a card's stated
    kinematics must agree with it (as with a --region file)."""
    import warnings

    from eftsieve.api import check_kinematics
    from eftsieve.errors import InputError, InputNotice
    from eftsieve.theories import get_theory

    th = get_theory(fit.theory)
    if "pion_masses_mev" not in overrides:
        for text in th.region_default_notices(fit):
            warnings.warn(InputNotice(text), stacklevel=2)
    settings = {**th.region_settings_for_fit(fit), **overrides}
    region = build_region_named(fit.theory, settings, quiet=True)  # region_for shows it
    problems = th.kinematics_mismatch(fit, region)
    if problems and not allow:
        raise InputError(fit.source, "--pion-mass", "the region asked for disagrees with "
                         f"the fit's stated kinematics: {'; '.join(problems)}",
                         "include the fit's own pion mass among the --pion-mass values, or "
                         "pass --allow-kinematics-mismatch")
    check_kinematics(fit, region, "built with --pion-mass", allow)
    region.save(Path(outdir) / "region.json")
    return region


def build_region_named(theory: str, settings: dict[str, Any], executor: Any = None,
                       quiet: bool = False) -> Region:
    """:func:`eftsieve.api.build_region`, with an error about a region setting naming the
    command-line flag that gave it (``--pion-mass`` for ``pion_masses_mev``); a build
    that takes more than two seconds says so on a terminal's stderr (unless ``quiet``)."""
    from eftsieve.api import build_region
    from eftsieve.cli.progress import heartbeat
    from eftsieve.errors import InputError

    flags = {v: "--" + k.replace("_", "-") for k, v in REGION_SETTINGS.items()}
    try:
        with heartbeat(f"building the {theory} region", quiet):
            return build_region(theory, executor=executor, **settings)
    except InputError as err:
        if err.path is None and err.field in flags:
            raise InputError(None, flags[err.field], err.problem, err.hint) from err
        raise


def input_files(fit: Fit, args: argparse.Namespace, *extra: str | None) -> list[Any]:
    """Every input file of a run (the card, the region, the samples, extras), so that no
    output is written over one of them."""
    ins: list[Any] = [fit.source, args.region, *extra]
    if fit.samples is not None:
        ins.append(fit.samples.path)
    if fit.extra.get("gaussian_file"):
        ins.append(fit.extra["gaussian_file"])
    return ins
