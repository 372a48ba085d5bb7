"""``eftsieve check cards/*.yaml``: several fits, one summary table.

:func:`check_many` loads every card, builds each distinct region once (as distributed
futures with the Dask engine), checks every fit into its own directory
``OUTDIR/<card stem>/`` (flagged.csv, summary.json and, when built, region.json) and
returns one table row per card, in the order given, also written to
``OUTDIR/checks.csv`` (:data:`TABLE_NAME`) by :func:`write_summary_table`.  With the Dask
engine all cards' partitions are submitted before the first is merged, so small cards
run side by side.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from eftsieve.check.engines.local import local_check
from eftsieve.check.result import CheckResult
from eftsieve.check.run import ENGINES
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError
from eftsieve.executors import Executor, serial
from eftsieve.fit.card import load_fit
from eftsieve.fit.model import Fit
from eftsieve.io.atomic import atomic_write_json, atomic_write_text, guard_inputs
from eftsieve.region.model import Region

TABLE_NAME = "checks.csv"
SUMMARY_COLUMNS = ("card", "fit", "theory", "n_total", "n_inside", "n_marginal", "n_outside",
                   "n_uncertain", "p_inside", "p_inside_err", "p_inside_method", "tension_sigma",
                   "tension_p", "bayes_factor", "region_hash", "engine", "outdir")


@dataclass(frozen=True)
class ManyResult:
    """The checks of several cards.

    Attributes
    ----------
    rows
        One summary-table row (a dict with :data:`SUMMARY_COLUMNS`) per card, in order.
    results
        The :class:`~eftsieve.check.run.CheckResult` of each card.
    fits
        The loaded fits.
    outdirs
        Each card's output directory.
    table
        The CSV file of the rows.
    """

    rows: tuple[dict[str, Any], ...]
    results: tuple[CheckResult, ...]
    fits: tuple[Fit, ...]
    outdirs: tuple[Path, ...]
    table: Path

    def to_dict(self) -> dict[str, Any]:
        return {"rows": [dict(r) for r in self.rows],
                "outdirs": [str(d) for d in self.outdirs], "table": str(self.table)}


def card_outdirs(cards: Sequence[Path], outdir: Path) -> list[Path]:
    """``outdir / <card stem>`` for every card; two cards with one stem are an error."""
    seen: dict[str, Path] = {}
    for c in cards:
        if c.stem in seen:
            raise InputError(c, None, f"two cards share the name '{c.stem}' (also "
                             f"{seen[c.stem]}); their outputs would collide",
                             "rename one of them")
        seen[c.stem] = c
    return [outdir / c.stem for c in cards]


def table_row(card: Path, outdir: Path, summary: dict[str, Any]) -> dict[str, Any]:
    """The summary-table row of one check."""
    row = {k: summary.get(k) for k in SUMMARY_COLUMNS}
    row.update(card=str(card), engine=summary.get("engine", {}).get("name", "run_check"),
               outdir=str(outdir))
    return row


def write_summary_table(rows: Sequence[dict[str, Any]], path: str | Path) -> Path:
    """Write the rows as CSV (columns :data:`SUMMARY_COLUMNS`), atomically."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(SUMMARY_COLUMNS), extrasaction="raise",
                       lineterminator="\n")
    w.writeheader()
    for r in rows:
        missing = [c for c in SUMMARY_COLUMNS if c not in r]
        if missing:
            raise ValueError(f"summary row for {r.get('card')} lacks {missing}")
        w.writerow({k: "" if r[k] is None else r[k] for k in SUMMARY_COLUMNS})
    return atomic_write_text(path, buf.getvalue())


def _region_plan(fits: Sequence[Fit]) -> tuple[list[tuple[str, dict[str, Any]]], list[int]]:
    """Distinct (theory, settings) builds and, per fit, the index of its build."""
    from eftsieve.theories import get_theory

    builds: list[tuple[str, dict[str, Any]]] = []
    keys: dict[str, int] = {}
    which = []
    for fit in fits:
        st = get_theory(fit.theory).region_settings_for_fit(fit)
        key = json.dumps([fit.theory, st], sort_keys=True)
        if key not in keys:
            keys[key] = len(builds)
            builds.append((fit.theory, st))
        which.append(keys[key])
    return builds, which


def _regions(fits: Sequence[Fit], dirs: Sequence[Path], region: Region | None,
             region_path: str | None, executor: Executor,
             shown: Path) -> list[tuple[Region, str | None]]:
    """The region of each fit: the one given, or built (once per distinct settings)."""
    if region is not None:
        return [(region, region_path)] * len(fits)
    from eftsieve.region.build import build_regions

    builds, which = _region_plan(fits)
    built = build_regions(builds, executor)
    out: list[tuple[Region, str | None]] = []
    for d, i in zip(dirs, which, strict=True):
        path = d / "region.json"
        built[i].save(path)
        out.append((built[i], str(shown / d.name / "region.json")))
    return out


def _load(path: Path) -> Fit:
    from eftsieve.theories import get_theory

    return load_fit(path, get_theory)


def check_many(cards: Sequence[str | Path], settings: CheckSettings, outdir: str | Path, *,
               region: Region | None = None, region_path: str | None = None,
               engine: str = "local", scheduler: str | None = None, retries: int = 2,
               loader: Callable[[Path], Fit] | None = None,
               partition_timeout: float | None = None,
               final_outdir: str | Path | None = None) -> ManyResult:
    """Check several fit cards; one table row per card, in the order given.

    Parameters
    ----------
    cards
        Fit cards (or, with ``loader``, anything it can load).
    settings
        Check settings, shared by all cards.
    outdir
        Parent directory; card ``x.yaml`` writes into ``outdir/x/``, the table goes to
        ``outdir/checks.csv``.
    region, region_path
        One region for every card, or None to build each card's default region.
    engine
        ``local`` or ``dask``.
    scheduler, retries, partition_timeout
        Dask options (see :func:`~eftsieve.check.engines.dask.dask_check`).
    loader
        Turns a path into a Fit (default :func:`eftsieve.fit.model.load_fit`).
    final_outdir
        Where ``outdir`` will end up when it is a staging folder
        (:func:`eftsieve.io.outset.output_set`): the paths recorded in the table and the
        summaries name it, and no input may lie there.
    """
    if engine not in ENGINES:
        raise InputError(None, "--engine", f"unknown engine '{engine}'",
                         f"use one of {', '.join(ENGINES)}")
    if engine == "dask":
        from eftsieve.io.dask_client import require_dask

        require_dask()
    if engine == "local" and scheduler is not None:
        raise InputError(None, "--scheduler", "a scheduler address needs the dask engine",
                         "add --engine dask, or drop --scheduler")
    paths = [Path(c) for c in cards]
    if not paths:
        raise InputError(None, "FIT", "no fit cards given", "name at least one card")
    dirs = card_outdirs(paths, Path(outdir))
    fits = [(loader or _load)(p) for p in paths]
    ins = [region_path, *paths, *(f.samples.path for f in fits if f.samples)]
    outs = [Path(outdir) / TABLE_NAME]
    outs += [d / n for d in dirs for n in ("flagged.csv", "summary.json", "region.json")]
    guard_inputs(outs, ins)
    shown = Path(final_outdir) if final_outdir is not None else Path(outdir)
    if final_outdir is not None:
        from eftsieve.io.outset import refuse_inputs

        refuse_inputs(shown, ins)
    for d in dirs:
        d.mkdir(parents=True, exist_ok=True)
    if engine == "dask":
        results = _check_all_dask(fits, dirs, settings, region, region_path, scheduler,
                                  retries, partition_timeout, shown)
    else:
        regs = _regions(fits, dirs, region, region_path, serial, shown)
        results = [local_check(f, r, settings, d, rp)
                   for f, d, (r, rp) in zip(fits, dirs, regs, strict=True)]
    rows = []
    for p, d, res in zip(paths, dirs, results, strict=True):
        atomic_write_json(d / "summary.json", res.summary)
        rows.append(table_row(p, shown / d.name, res.summary))
    table = write_summary_table(rows, Path(outdir) / TABLE_NAME)
    return ManyResult(tuple(rows), tuple(results), tuple(fits), tuple(dirs), table)


def _check_all_dask(fits: Sequence[Fit], dirs: Sequence[Path], settings: CheckSettings,
                    region: Region | None, region_path: str | None, scheduler: str | None,
                    retries: int, timeout: float | None,
                    shown: Path) -> list[CheckResult]:
    """Submit every card's partitions, then merge card by card in order."""
    from eftsieve.check.engines.dask import collect_check, submit_check
    from eftsieve.io.dask_client import cancel, client_map, connect

    with connect(scheduler) as client:
        regs = _regions(fits, dirs, region, region_path, client_map(client, retries=retries),
                        shown)
        subs = [submit_check(client, f, r, settings, write_flagged=True, region_path=rp,
                             retries=retries)
                for f, (r, rp) in zip(fits, regs, strict=True)]
        results = []
        try:
            for d, sub in zip(dirs, subs, strict=True):
                results.append(collect_check(sub, d, timeout))
        except BaseException:
            for s in subs:
                cancel(s.futures)
            raise
    return results
