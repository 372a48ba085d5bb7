"""Row sources of a check besides samples files: draws from a Gaussian summary.

:class:`GaussianDraws` offers the interface of :class:`eftsieve.io.samples.SamplesSource`
that the block engine uses (``file_parts``, ``iter_part``, ``weighted``): one partition
of ``draws`` rows, drawn in row order from ``default_rng(seed)``, so the rows and every
figure made from them do not depend on the chunk size.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from eftsieve.errors import InputError
from eftsieve.io.samples import Chunk, FilePart
from eftsieve.stats.gaussian import draw, psd_factor

#: the name of the one partition of Gaussian draws, in messages
DRAWS_NAME = "gaussian-draws"


@dataclass(frozen=True)
class GaussianDraws:
    """``draws`` rows of N(mean, cov) from a seeded generator.

    Attributes
    ----------
    mean, cov
        The Gaussian summary (cov positive semi-definite; a singular one gives draws on
        a subspace).
    draws
        The number of rows.
    seed
        The generator's seed.
    """

    mean: np.ndarray
    cov: np.ndarray
    draws: int
    seed: int

    weighted = False

    def file_parts(self) -> tuple[FilePart, ...]:
        if self.draws < 1:
            raise InputError(None, "--draws", f"need at least one draw, got {self.draws}",
                             "give a positive number")
        return (FilePart(0, Path(DRAWS_NAME), 0, self.draws),)

    def iter_part(self, part: FilePart, chunk_rows: int) -> Iterator[Chunk]:
        rng = np.random.default_rng(self.seed)
        factor = psd_factor(self.cov)
        done = 0
        while done < self.draws:
            n = min(chunk_rows, self.draws - done)
            yield Chunk(np.arange(done, done + n, dtype=np.int64),
                        draw(self.mean, factor, n, rng), None)
            done += n
