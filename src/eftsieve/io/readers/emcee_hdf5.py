"""emcee HDF5 backends (``emcee.backends.HDFBackend``), read with h5py only.

The backend's group (default ``mcmc``) holds the attributes ``nwalkers``, ``ndim`` and
``iteration`` (the steps written so far), the dataset ``chain`` of shape
(iterations, walkers, ndim) and ``log_prob`` of shape (iterations, walkers).  Rows past
``iteration`` (space grown for steps not yet run) are never read.  ``accepted``,
``blobs`` and the random state are ignored.  The backend stores no parameter names:
they come from the card (parameters in order, or ``samples.columns``) or ``--columns``.

Rows are walker-major: walker ``w0``'s kept draws in order, then ``w1``'s, ...; the
row index is ``k * n_kept + j`` for the k-th selected walker and its j-th kept draw.
Batch means over consecutive rows then never mix draws of different walkers (except at
a walker boundary), which is what correlated chains need.  The column ``log_prob`` can
be mapped like any other.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.io.readers.columns import ColumnTable
from eftsieve.io.readers.options import ReadOptions

LOG_PROB = "log_prob"
#: bytes of chain read per HDF5 access (several walkers at once, never more than this)
READ_BUDGET = 256 << 20
HOW_TO = "write it with emcee.backends.HDFBackend(path) passed to EnsembleSampler(backend=)"


def _h5py(path: Path):
    try:
        import h5py
    except ImportError as err:
        raise InputError(path, None, "reading HDF5 needs h5py",
                         "pip install 'eftsieve[netcdf]' (or h5py)") from err
    return h5py


def backend_groups(path: Path) -> list[str]:
    """Names of the groups that look like emcee backends (root included as '/')."""
    h5py = _h5py(path)
    found: list[str] = []
    try:
        with h5py.File(path, "r") as f:
            def visit(name: str, obj: Any) -> None:
                if isinstance(obj, h5py.Group) and _looks_like_backend(obj):
                    found.append(name)
            if _looks_like_backend(f):
                found.append("/")
            f.visititems(visit)
    except OSError as err:
        raise InputError(path, None, f"cannot read HDF5: {err}", HOW_TO) from err
    return found


def _looks_like_backend(g: Any) -> bool:
    return ("chain" in g and "log_prob" in g and "iteration" in g.attrs
            and getattr(g["chain"], "ndim", 0) == 3)


def is_emcee_file(path: Path) -> bool:
    """True when an HDF5 file holds at least one emcee backend group."""
    try:
        return bool(backend_groups(path))
    except InputError:
        return False


def _group_name(path: Path, options: ReadOptions) -> str:
    groups = backend_groups(path)
    if options.group is not None:
        want = options.group.strip("/") or "/"
        if want not in groups:
            raise InputError(path, "samples.group", f"no emcee backend in group "
                             f"'{options.group}'", f"backends found: {groups or 'none'}")
        return want
    if not groups:
        raise InputError(path, None, "no emcee backend (a group with 'chain', 'log_prob' "
                         "and the 'iteration' attribute)", HOW_TO)
    if len(groups) > 1:
        raise InputError(path, "samples.group", f"several emcee backends {groups}",
                         "choose one with samples.group")
    return groups[0]


def _shape(path: Path, g: Any) -> tuple[int, int, int]:
    """(iterations written, walkers, ndim), checked against the datasets."""
    chain = g["chain"]
    it = int(g.attrs["iteration"])
    n_alloc, nw, nd = chain.shape
    if it <= 0:
        raise InputError(path, "iteration", "the backend holds no steps",
                         "run the sampler with this backend first")
    if it > n_alloc or g["log_prob"].shape[:2] != (n_alloc, nw):
        raise InputError(path, "chain", f"iteration {it} exceeds the stored "
                         f"{n_alloc} steps, or log_prob does not match chain",
                         "the file is damaged; rewrite it")
    return it, nw, nd


def column_table(path: Path, options: ReadOptions) -> ColumnTable:
    """The chain's dimensions as unnamed columns ``0..ndim-1``, plus ``log_prob``."""
    h5py = _h5py(path)
    name = _group_name(path, options)
    with h5py.File(path, "r") as f:
        _, _, nd = _shape(path, f[name])
    return ColumnTable(tuple(str(i) for i in range(nd)), False, {}, {LOG_PROB: LOG_PROB})


def _walkers(path: Path, options: ReadOptions, nw: int) -> tuple[int, ...]:
    if options.walkers is None:
        return tuple(range(nw))
    bad = [w for w in options.walkers if w >= nw]
    if bad:
        raise InputError(path, "samples.walkers", f"walker(s) {bad} beyond the {nw} "
                         "walkers of the file", f"give indices 0..{nw - 1}")
    return options.walkers


def iter_frames(path: Path, labels: Sequence[str], chunk_rows: int,
                options: ReadOptions) -> Iterator:
    """Yield DataFrames with the requested labels, walker-major, at most chunk_rows each."""
    import pandas as pd

    h5py = _h5py(path)
    name = _group_name(path, options)
    with h5py.File(path, "r") as f:
        g = f[name]
        it, nw, nd = _shape(path, g)
        keep = options.keep(it)
        if len(keep) == 0:
            raise InputError(path, "samples.burn_in", f"burn-in {options.burn_in} and thin "
                             f"{options.thin} leave no draw of the {it} iterations",
                             "lower the burn-in or the thinning")
        dims = [int(lab) for lab in labels if lab != LOG_PROB]
        sl = slice(keep.start, keep.stop, keep.step)
        walkers = _walkers(path, options, nw)
        # read a few walkers per HDF5 access (each stored chunk spans several walkers)
        per = max(1, min(g["chain"].chunks[1] if g["chain"].chunks else 1,
                         READ_BUDGET // max(1, len(keep) * nd * 8)))
        for lo_w in range(0, len(walkers), per):
            group = walkers[lo_w:lo_w + per]
            order = sorted(set(group))
            block = g["chain"][sl, order, :]
            lp = g["log_prob"][sl, order] if LOG_PROB in labels else None
            for w in group:
                k = order.index(w)
                cols: dict[str, np.ndarray] = {str(d): block[:, k, d] for d in dims}
                if lp is not None:
                    cols[LOG_PROB] = lp[:, k]
                frame = pd.DataFrame(cols, copy=False)
                for lo in range(0, len(frame), chunk_rows):
                    yield frame.iloc[lo:lo + chunk_rows]
