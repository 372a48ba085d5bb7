"""One partition (one file) of a check, and the exact merge of partitions in order.

:func:`run_partition` checks the rows of one file block by block (see
:mod:`eftsieve.check.blocks` for the canonical order) and returns everything the client
needs: the sums of every block, the partition's flagged rows (one
:class:`~eftsieve.check.outputs.FlaggedRows` per block, numbers only; the client's
:class:`~eftsieve.check.outputs.FlaggedWriter` formats them block by block in Arrow),
and the partition's candidates for the worst points and for the plot subsample.
:class:`CheckMerger` takes blocks or whole partitions strictly in global row order,
writes the flagged rows, and refuses any gap, overlap or missing partition with an
error that names it.  The local engine feeds it block by block in-process, the Dask
engine partition by partition from the workers; both call the same block function and
write flagged rows in the same per-block batches, so their results are bit-identical.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.check.blocks import (
    Ranked,
    Selection,
    apply_map,
    empty_ranked,
    iter_blocks,
    sample_keys,
)
from eftsieve.check.outputs import FlaggedRows, FlaggedWriter
from eftsieve.check.prefetch import read_ahead
from eftsieve.check.result import N_WORST, CheckResult, WorstPoint, summarize
from eftsieve.check.shell import (
    ShellBudget,
    ShellSums,
    ShellTally,
    has_shell_solver,
    resolve_shell,
    shell_budget,
)
from eftsieve.check.verdicts import CheckSettings, Verdicts, classify
from eftsieve.errors import InputError, TaskFailedError
from eftsieve.executors import InputFailure
from eftsieve.fit.model import Fit
from eftsieve.io.samples import Chunk, FilePart
from eftsieve.region.model import Region
from eftsieve.stats.accumulate import Accumulator, BlockSums, block_sums
from eftsieve.stats.truncation import FacetUncertainty, prob_satisfies, verdicts_from_probability
from eftsieve.theories.base import CoordinateMap


@contextmanager
def blas_threads(n: int | None) -> Iterator[None]:
    """Limit BLAS (and OpenMP) threads to ``n`` within the block (None: unchanged).

    The streaming check multiplies n x 2 arrays, where BLAS threads only spin (they
    doubled the CPU time on a 2-core machine).  Uses threadpoolctl when installed;
    without it the command line sets ``OPENBLAS_NUM_THREADS`` and friends at process
    start (:mod:`eftsieve.cli`), and this does nothing.
    """
    if n is None:
        yield
        return
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        yield
        return
    with threadpool_limits(limits=n):
        yield


def describe_part(part: FilePart, n_parts: int) -> str:
    """A partition's name for messages."""
    rows = ("" if part.n_rows is None else
            f", rows {part.start}..{part.start + part.n_rows - 1}")
    return f"partition {part.index} of {n_parts} ({part.path.name}{rows})"


@dataclass(frozen=True)
class PartitionJob:
    """Everything needed to check one file, on any machine that can read it.

    Attributes
    ----------
    part
        The file (or the draws) and its first global row.
    fit
        The fit.
    source
        Where the rows come from: the fit's samples source, or its Gaussian draws
        (:class:`eftsieve.check.sources.GaussianDraws`); anything with ``iter_part``,
        ``file_parts`` and ``weighted``.
    region, cmap
        The region and the map from the fit's parameters to its coordinates.
    settings
        The check settings (band, chunk rows, seed, plot points).
    write_flagged
        Whether to return the flagged rows.
    uncertainty
        A theory-uncertainty model of the facets, or None for hard facets.
    """

    part: FilePart
    fit: Fit
    source: Any
    region: Region
    cmap: CoordinateMap
    settings: CheckSettings
    write_flagged: bool
    uncertainty: FacetUncertainty | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"part": self.part.to_dict(), "fit": self.fit.name,
                "settings": self.settings.to_dict(),
                "region_hash": self.region.hash, "write_flagged": self.write_flagged}


@dataclass(frozen=True)
class BlockOutput:
    """What one block contributes.

    Attributes
    ----------
    first_row, n
        The block's first global row and its row count.
    sums
        Its weighted sums.
    flagged
        Its flagged rows, or None.
    worst
        Its most violated rows (key: min margin; payload: y, worst facet).
    sample
        Its plot-subsample candidates (key: random; payload: [values, y], weights).
    shell
        Its shell's exact decisions (:mod:`eftsieve.check.shell`; empty sums without an
        exact solver).
    """

    first_row: int
    n: int
    sums: BlockSums
    flagged: FlaggedRows | None
    worst: Ranked
    sample: Ranked
    shell: ShellSums = ShellSums()

    def to_dict(self) -> dict[str, Any]:
        return {"first_row": self.first_row, "n": self.n, "sums": self.sums.to_dict(),
                "shell": self.shell.to_dict()}


@dataclass(frozen=True)
class PartitionResult:
    """What one partition returns to the client.

    Attributes
    ----------
    index, file
        The partition's index and file.
    first_row, n_rows
        Its first global row and the rows it checked.
    blocks
        The sums of its blocks, in order.
    flagged
        Its flagged rows, one entry per block that has any, in row order.
    worst, sample
        Its candidates for the worst points and for the plot subsample.
    shell
        The shell sums of its blocks, in order.
    """

    index: int
    file: str
    first_row: int
    n_rows: int
    blocks: tuple[BlockSums, ...]
    flagged: tuple[FlaggedRows, ...]
    worst: Ranked
    sample: Ranked
    shell: tuple[ShellSums, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {"index": self.index, "file": self.file, "first_row": self.first_row,
                "n_rows": self.n_rows, "n_blocks": len(self.blocks),
                "n_flagged": self.n_flagged}

    @property
    def n_flagged(self) -> int:
        return sum(len(f) for f in self.flagged)


#: a block that flags fewer than one row in this many lets the next one find the worst
#: facets of its flagged rows only (a speed choice; the results are the same)
FEW_FLAGGED = 4


def empty_worst(dim: int) -> Ranked:
    """No worst points yet (payload: region point, worst facet)."""
    return empty_ranked((dim, None), (float, np.int32))


def empty_sample(width: int, weighted: bool) -> Ranked:
    """No subsample rows yet (payload: [values, region point], weights or None)."""
    return empty_ranked((width, None), (float, float if weighted else None))


@dataclass(frozen=True)
class Cutoffs:
    """Keys above which a row can no longer enter a partition's selections.

    A partition that already holds ``k`` rows with keys at most ``t`` keeps no later row
    with a key above ``t`` (later rows have larger row numbers, so ties go to the rows
    held), so skipping those rows leaves the (key, row)-smallest selection exactly as it
    was: the same rows in every engine, chunk size and file split.

    Attributes
    ----------
    sample
        Largest plot-subsample key still admitted (1.0: every row).
    worst
        Largest min margin still admitted to the worst points (0.0: every violation).
    """

    sample: float = 1.0
    worst: float = 0.0

    @classmethod
    def of(cls, sample: Selection, worst: Selection) -> Cutoffs:
        """The cut-offs implied by a partition's selections so far."""
        return cls(min(sample.cutoff, 1.0), min(worst.cutoff, 0.0))

    def to_dict(self) -> dict[str, Any]:
        return {"sample": self.sample, "worst": self.worst}


def process_block(job: PartitionJob, block: Chunk, keys: np.random.Generator,
                  cut: Cutoffs | None = None, shell: ShellBudget | None = None,
                  few_flagged: bool = False) -> BlockOutput:
    """Classify one block and compute everything it contributes.

    ``keys`` draws one plot-subsample key per row (always, so that it stays positioned at
    the next row); only rows under the :class:`Cutoffs` become candidates, so the cost of
    the subsample and of the worst points falls as the partition proceeds.  With a
    ``shell`` budget (regions with an exact solver, hard facets) the block's marginal
    points are decided exactly while the partition's budget lasts
    (:func:`eftsieve.check.shell.resolve_shell`).  With ``few_flagged`` (the previous
    block flagged few rows) the worst facet is found only for the rows flagged or
    ranked (:func:`eftsieve.check.verdicts.classify` with ``all_worst=False``: the same
    facets, found at less cost when few rows need them).
    """
    st = job.settings
    cut = cut or Cutoffs()
    y = apply_map(job.cmap, block.values)
    # the verdicts may still change (shell solves, an uncertainty model): all facets then
    v = classify(y, job.region, st.band(job.region), all_worst=not few_flagged
                 or job.uncertainty is not None or shell is not None)
    shell_sums = ShellSums()
    if shell is not None and job.uncertainty is None:
        v, shell_sums = resolve_shell(v, y, block.rows, block.weights, shell)
    soft = None
    if job.uncertainty is not None:
        soft = prob_satisfies(y, job.region, job.uncertainty)
        v = Verdicts(verdicts_from_probability(soft, job.uncertainty.settings), v.min_margin,
                     v.worst, v.satisfies)
    flagged = None
    if job.write_flagged:
        sel = np.flatnonzero(v.verdict != 0)
        if len(sel):
            flagged = FlaggedRows(block.rows[sel], block.values[sel], y[sel], v.verdict[sel],
                                  v.min_margin[sel], v.worst[sel])
    neg = np.flatnonzero(v.min_margin < 0 if cut.worst >= 0 else v.min_margin <= cut.worst)
    worst = Ranked(v.min_margin[neg], block.rows[neg], (y[neg], v.worst[neg])).smallest(N_WORST)
    r = keys.random(len(block.rows))
    if cut.sample < 1.0:
        cand = np.flatnonzero(r <= cut.sample)
        r, rows, vals, yc = r[cand], block.rows[cand], block.values[cand], y[cand]
        w = None if block.weights is None else block.weights[cand]
    else:
        rows, vals, yc, w = block.rows, block.values, y, block.weights
    sample = Ranked(r, rows, (np.hstack([vals, yc]), w)).smallest(st.plot_points)
    return BlockOutput(int(block.rows[0]), len(block.rows),
                       block_sums(y, block.weights, v.verdict, v.satisfies, soft), flagged, worst,
                       sample, shell_sums)


def run_partition(job: PartitionJob, sink: Callable[[BlockOutput], None] | None = None
                  ) -> PartitionResult:
    """Check one file block by block.

    With a ``sink`` every block is handed over as soon as it is done (and the result
    carries only the row count); without, the blocks are collected into the result.
    The next chunk is read on a second thread meanwhile
    (:func:`eftsieve.check.prefetch.read_ahead`; the same chunks in the same order).
    """
    keys = sample_keys(job.settings.seed, job.part.start)
    dim = job.region.dim
    blocks: list[BlockSums] = []
    worst = Selection(empty_worst(dim), N_WORST)
    sample = Selection(empty_sample(len(job.fit.names) + dim, job.source.weighted),
                       job.settings.plot_points)
    flagged: list[FlaggedRows] = []
    shells: list[ShellSums] = []
    budget = None if job.uncertainty is not None else shell_budget(job.region, job.settings)
    n = 0
    few = False
    chunks = read_ahead(job.source.iter_part(job.part, job.settings.chunk_rows))
    for block in iter_blocks(chunks):
        out = process_block(job, block, keys, Cutoffs.of(sample, worst), budget, few)
        few = FEW_FLAGGED * out.n > int(out.sums.counts[1:].sum())
        n += out.n
        worst.add(out.worst)
        sample.add(out.sample)
        if sink is not None:
            sink(out)
            continue
        blocks.append(out.sums)
        shells.append(out.shell)
        if out.flagged is not None:
            flagged.append(out.flagged)
    return PartitionResult(job.part.index, str(job.part.path), job.part.start, n,
                           tuple(blocks), tuple(flagged), worst.result(), sample.result(),
                           tuple(shells))


def partition_task(job: PartitionJob, hook: Callable[[FilePart], None] | None = None
                   ) -> PartitionResult | InputFailure:
    """The function a worker runs: the hook (if any), then :func:`run_partition`.

    Invalid input comes back as a :class:`InputFailure` value, so that it is not
    retried and reaches the client intact (eftsieve's errors do not survive pickling).
    """
    if hook is not None:
        hook(job.part)
    try:
        with blas_threads(job.settings.blas_threads):
            return run_partition(job)
    except InputError as err:
        return InputFailure(job.part.index, err.path, err.field, err.problem, err.hint)


class CheckMerger:
    """Merges blocks or partitions strictly in global row order into one check result.

    Parameters
    ----------
    fit, region, settings
        What is checked.
    parts
        The source's partitions, in order.
    flagged
        The writer of flagged.csv, or None.
    """

    def __init__(self, fit: Fit, region: Region, settings: CheckSettings,
                 parts: tuple[FilePart, ...], flagged: FlaggedWriter | None,
                 weighted: bool) -> None:
        self.fit, self.region, self.settings, self.parts = fit, region, settings, parts
        self.flagged = flagged
        self.acc = Accumulator(region.dim)
        self.worst = Selection(empty_worst(region.dim), N_WORST)
        self.sample = Selection(empty_sample(len(fit.names) + region.dim, weighted),
                                settings.plot_points)
        self.n_merged = 0
        self.done: list[dict[str, Any]] = []
        self.shell = ShellTally() if has_shell_solver(region) else None

    def add_block(self, out: BlockOutput) -> None:
        """Merge one block (the next in row order)."""
        self._expect_row(out.first_row, "block")
        self._absorb(out.sums, out.flagged)
        self._absorb_shell(out.shell)
        self.worst.add(out.worst)
        self.sample.add(out.sample)

    def add_partition(self, res: PartitionResult) -> None:
        """Merge one whole partition (the next in row order) and verify its rows."""
        part = self.parts[res.index]
        label = describe_part(part, len(self.parts))
        self._expect_row(res.first_row, label)
        if sum(b.n for b in res.blocks) != res.n_rows:
            raise TaskFailedError(label, f"returned {res.n_rows} rows but blocks holding "
                                  f"{sum(b.n for b in res.blocks)}", "rerun; report a bug if "
                                  "it persists")
        for sums in res.blocks:
            self._absorb(sums, None)
        for shell in res.shell:
            self._absorb_shell(shell)
        if self.flagged is not None:
            for rows in res.flagged:
                self.flagged.write_rows(rows)
        self.worst.add(res.worst)
        self.sample.add(res.sample)
        self.end_partition(res.index, res.first_row, res.n_rows)

    def end_partition(self, index: int, first_row: int, n_rows: int) -> None:
        """Record a finished partition; its rows must match the file's metadata."""
        part = self.parts[index]
        label = describe_part(part, len(self.parts))
        if index != len(self.done):
            raise TaskFailedError(label, f"merged out of order (expected partition "
                                  f"{len(self.done)})", "report a bug")
        if self.n_merged - first_row != n_rows or first_row != part.start or (
                part.n_rows is not None and n_rows != part.n_rows):
            raise TaskFailedError(label, f"checked {n_rows} rows from row {first_row}, but "
                                  f"the file holds {part.n_rows} rows from row {part.start}",
                                  "the file changed during the run or is damaged")
        self.done.append({"file": part.name, "first_row": first_row, "rows": n_rows})

    def _expect_row(self, first_row: int, what: str) -> None:
        if first_row != self.n_merged:
            raise TaskFailedError(what, f"starts at row {first_row} but rows up to "
                                  f"{self.n_merged - 1} were merged (a gap or an overlap)",
                                  "report a bug")

    def _absorb(self, sums: BlockSums, flagged: FlaggedRows | None) -> None:
        self.acc.absorb(sums)
        if flagged is not None and self.flagged is not None:
            self.flagged.write_rows(flagged)
        self.n_merged += sums.n

    def _absorb_shell(self, sums: ShellSums) -> None:
        if self.shell is not None:
            self.shell.absorb(sums)

    def check_complete(self) -> None:
        """Every partition merged, and the rows add up; otherwise name what is missing."""
        missing = [describe_part(p, len(self.parts)) for p in self.parts[len(self.done):]]
        if missing:
            raise TaskFailedError(", ".join(missing), "never merged; the result would miss "
                                  "its rows", "rerun; check the workers' logs")
        expected = sum(d["rows"] for d in self.done)
        if self.acc.n_total != expected or self.n_merged != expected:
            raise TaskFailedError("check", f"{self.acc.n_total} rows summed but {expected} "
                                  "rows read", "report a bug")
        n_flag = int(self.acc.counts[1:].sum())
        if self.flagged is not None and self.flagged.n != n_flag:
            raise TaskFailedError(self.flagged.path.name, f"{self.flagged.n} rows written "
                                  f"but {n_flag} rows are not inside", "report a bug")

    def result(self, cmap: CoordinateMap, region_path: str | None,
               engine: dict[str, Any]) -> CheckResult:
        """The check result (with the engine and its partitions, worst points, subsample)."""
        self.check_complete()
        worst = self.worst.result().ordered()
        points, facet_idx = (np.asarray(p) for p in worst.payload)
        facets = self.region.facets
        worst_rows = tuple(WorstPoint(int(r), tuple(float(v) for v in y), float(m),
                                      facets[int(f)].label())
                           for m, r, y, f in zip(worst.keys, worst.rows, points, facet_idx,
                                                 strict=True))
        sample = self.sample.result().ordered()
        data = np.asarray(sample.payload[0])
        k = len(self.fit.names)
        shell = None if self.shell is None else self.shell.summary(
            self.acc.sw, self.acc.sw2, self.settings.shell_solves)
        return summarize(self.fit, self.region, cmap, self.settings, self.acc, region_path,
                         engine={**engine, "partitions": list(self.done)}, worst=worst_rows,
                         plot_samples=data[:, :k], plot_weights=sample.payload[1],
                         plot_region_coords=data[:, k:], shell=shell)


@dataclass(frozen=True)
class Prepared:
    """What every engine needs before it reads a row.

    Attributes
    ----------
    cmap
        The map of the fit's parameters to the region's coordinates
        (:func:`eftsieve.theories.coordinate_map`, matchings included).
    source
        The rows: the fit's samples source, or its Gaussian draws.
    uncertainty
        The facets' theory-uncertainty model, or None for hard facets.
    """

    cmap: CoordinateMap
    source: Any
    uncertainty: FacetUncertainty | None

    def to_dict(self) -> dict[str, Any]:
        return {"coordinate_map": self.cmap.to_dict(),
                "uncertainty": None if self.uncertainty is None else self.uncertainty.to_dict()}


def prepare(fit: Fit, region: Region, settings: CheckSettings,
            uncertainty: Any = None) -> Prepared:
    """The coordinate map, the row source and the uncertainty model of a check.

    ``uncertainty`` is an :class:`eftsieve.stats.truncation.UncertaintySettings` (or None);
    the model ``none`` means hard facets.
    """
    from eftsieve.check.sources import GaussianDraws
    from eftsieve.stats.truncation import facet_uncertainty
    from eftsieve.theories import coordinate_map

    cmap = coordinate_map(fit, region)
    if fit.mean is not None and fit.cov is not None:
        source: Any = GaussianDraws(fit.mean, fit.cov, settings.draws, settings.seed)
    else:
        source = fit.samples
    fu = None
    if uncertainty is not None and uncertainty.model != "none":
        fu = facet_uncertainty(region, uncertainty)
    return Prepared(cmap, source, fu)


def finish(result: CheckResult, prep: Prepared, acc: Accumulator) -> CheckResult:
    """Add the statistics under the theory-uncertainty model, if there is one (the model
    then decides the verdicts, and no shell is solved exactly)."""
    if prep.uncertainty is None:
        return result
    from dataclasses import replace

    from eftsieve.stats.truncation_stats import model_statistics

    result = replace(result, shell=None)
    stats = model_statistics(result.fit, result.region, prep.cmap, prep.uncertainty, acc,
                             result.to_dict(), result.settings.seed)
    return replace(result, theory_uncertainty=stats)
