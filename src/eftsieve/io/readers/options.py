"""Reading options of chain files: burn-in, thinning, walker (or chain) selection, group.

They come from the card (``samples.burn_in``, ``samples.thin``, ``samples.walkers``,
``samples.group``) or from the flags ``--burn-in``, ``--thin``, ``--walkers``.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from eftsieve.errors import InputError

OPTION_KEYS = ("burn_in", "thin", "walkers", "group")


@dataclass(frozen=True)
class ReadOptions:
    """How to read a chain file.

    Attributes
    ----------
    burn_in
        Leading iterations (emcee) or draws (NetCDF) dropped from every walker or chain.
    thin
        Keep every ``thin``-th of the rest (emcee's ``get_chain(discard, thin)``
        convention: positions ``burn_in + thin - 1, burn_in + 2 thin - 1, ...``).
    walkers
        The walkers (emcee) or chains (NetCDF, by position) to keep, in this order;
        None keeps all.
    group
        The HDF5 group of an emcee backend (default: the one the file holds).
    """

    burn_in: int = 0
    thin: int = 1
    walkers: tuple[int, ...] | None = None
    group: str | None = None

    @property
    def is_default(self) -> bool:
        return self == ReadOptions()

    def keep(self, n: int) -> range:
        """Positions kept out of ``n`` iterations or draws."""
        return range(self.burn_in + self.thin - 1, n, self.thin)

    def to_dict(self) -> dict[str, Any]:
        return {"burn_in": self.burn_in, "thin": self.thin,
                "walkers": None if self.walkers is None else list(self.walkers),
                "group": self.group}


def parse_walkers(raw: Any, path: Path | str | None, where: str) -> tuple[int, ...] | None:
    """A list of indices, or a text ``0:16`` / ``0,3,5`` / ``0:32:2``."""
    if raw is None:
        return None
    try:
        if isinstance(raw, str):
            if ":" in raw:
                parts = [int(v) if v.strip() else None for v in raw.split(":")]
                if len(parts) > 3 or parts[1] is None:
                    raise ValueError(raw)
                step = parts[2] if len(parts) == 3 and parts[2] is not None else 1
                out = tuple(range(parts[0] or 0, parts[1], step))
            else:
                out = tuple(int(v) for v in raw.split(","))
        elif isinstance(raw, list) and all(isinstance(v, int) and not isinstance(v, bool)
                                           for v in raw):
            out = tuple(raw)
        else:
            raise ValueError(raw)
    except (ValueError, TypeError) as err:
        raise InputError(path, where, f"cannot read {raw!r}",
                         "give a list of 0-based indices, or START:STOP[:STEP]") from err
    if not out or min(out) < 0 or len(set(out)) != len(out):
        raise InputError(path, where, f"needs distinct non-negative indices, got {raw!r}",
                         "e.g. [0, 1, 2] or 0:16")
    return out


def parse_options(spec: dict[str, Any], path: Path | str | None,
                  prefix: str = "samples.") -> ReadOptions:
    """ReadOptions from a card's samples mapping (or a dict of flag values)."""
    def name(key: str) -> str:
        return prefix + (_FLAGS.get(key, key) if prefix == "--" else key)

    def count(key: str, low: int, default: int) -> int:
        v = spec.get(key)
        if v is None:
            return default
        if isinstance(v, bool) or not isinstance(v, int) or v < low:
            raise InputError(path, name(key), f"must be an integer >= {low}, got {v!r}",
                             f"give a whole number >= {low}")
        return v

    group = spec.get("group")
    if group is not None and not isinstance(group, str):
        raise InputError(path, name("group"), "must be a string", "name the HDF5 group")
    return ReadOptions(count("burn_in", 0, 0), count("thin", 1, 1),
                       parse_walkers(spec.get("walkers"), path, name("walkers")), group)


#: the command-line flag of each option
_FLAGS = {"burn_in": "burn-in", "thin": "thin", "walkers": "keep-walkers", "group": "group"}


def check_applicable(options: ReadOptions, fmt: str, path: Path | str | None,
                     prefix: str = "samples.") -> None:
    """Refuse options that the format does not use (silently ignoring them misleads)."""
    if fmt == "emcee":
        return
    if fmt == "netcdf":
        if options.group is not None:
            raise InputError(path, prefix + "group", "a NetCDF file is read from its "
                             "'posterior' group", "remove the group option")
        return
    if not options.is_default:
        where = ("--burn-in/--thin/--keep-walkers" if prefix == "--"
                 else prefix + "burn_in/thin/walkers/group")
        raise InputError(path, where, f"a {fmt} file holds "
                         "no chains to select from", "remove these options, or cut the "
                         "file before")
