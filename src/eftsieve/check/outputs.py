"""flagged.csv: the rows that are not inside, written atomically.

:class:`FlaggedWriter` writes to a temporary file beside the target, moved into place
by :meth:`FlaggedWriter.commit`; :func:`flagged_output` does that around a block of
work and removes the temporary file when the block raises.
"""

from __future__ import annotations

import csv
import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from eftsieve.check.verdicts import VERDICT_NAMES
from eftsieve.fit.model import Fit
from eftsieve.io.samples import Chunk
from eftsieve.region.model import Region


class FlaggedWriter:
    """Writes flagged rows to a temporary CSV (vectorised per chunk), moved into place by
    :meth:`commit`."""

    def __init__(self, path: Path, fit: Fit, region: Region) -> None:
        self.path = path
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, self.tmp = tempfile.mkstemp(prefix=".flagged.", suffix=".csv", dir=path.parent)
        self.fh = open(fd, "w", newline="", encoding="utf-8")
        self.region = region
        self.columns = ["row", "verdict", *fit.names,
                        *[f"{c} (region)" for c in region.coordinates], "min_margin",
                        *[f"margin_{i}" for i in range(len(region.facets))],
                        "worst_facet", "family", "channel", "point"]
        csv.writer(self.fh).writerow(self.columns)
        self.facet_text = [(f.family, f.channel,
                            ";".join(f"{a}={v:.6g}" for a, v in f.point.items()))
                           for f in region.facets]
        self.n = 0

    def write(self, chunk: Chunk, y: np.ndarray, verdict: np.ndarray, min_margin: np.ndarray,
              worst: np.ndarray) -> None:
        import pandas as pd

        sel = np.nonzero(verdict != 0)[0]
        if not len(sel):
            return
        margins = self.region.margins(y[sel])
        w = worst[sel]
        text = np.array(self.facet_text, dtype=object).reshape(len(self.facet_text), 3)[w]
        data = np.hstack([chunk.values[sel], y[sel], min_margin[sel, None], margins])
        frame = pd.DataFrame(data, columns=self.columns[2:-4])
        frame.insert(0, "verdict", np.array(VERDICT_NAMES, dtype=object)[verdict[sel]])
        frame.insert(0, "row", chunk.rows[sel])
        frame["worst_facet"] = w
        frame["family"], frame["channel"], frame["point"] = text[:, 0], text[:, 1], text[:, 2]
        frame.to_csv(self.fh, header=False, index=False, float_format="%.17g")
        self.n += len(sel)

    def commit(self) -> None:
        self.fh.flush()
        os.fsync(self.fh.fileno())
        self.fh.close()
        from eftsieve.io.atomic import umask_mode

        os.chmod(self.tmp, umask_mode())
        os.replace(self.tmp, self.path)

    def abort(self) -> None:
        if not self.fh.closed:
            self.fh.close()
        Path(self.tmp).unlink(missing_ok=True)


@contextmanager
def flagged_output(outdir: Path | None, fit: Fit, region: Region) -> Iterator[FlaggedWriter | None]:
    """A FlaggedWriter for ``outdir/flagged.csv`` (None without an outdir): moved into place
    when the block succeeds, removed when it raises, so the file is never half-written."""
    if outdir is None:
        yield None
        return
    writer = FlaggedWriter(outdir / "flagged.csv", fit, region)
    try:
        yield writer
    except BaseException:
        writer.abort()
        raise
    writer.commit()
