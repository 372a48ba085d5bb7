"""NumPy samples: ``.npy`` arrays of shape (n, d) and ``.npz`` archives of 1-d arrays.

* ``.npy`` (``numpy.save(path, x)``) of shape (n, d) or (n,) stores no names: its
  columns are ``0..d-1`` and take names from the card (parameters in order, or
  ``samples.columns``) or from ``--columns lbar1,lbar2``.  A structured array (named
  fields) names its columns by its fields.
* ``.npz`` (``numpy.savez(path, lbar1=a, lbar2=b, w=weights)``) holds one array per
  parameter, each of shape (n,), named by its key; an (n, k) array gives columns
  ``key[0]..key[k-1]``.  Every array must have the same n.

Files are memory-mapped where NumPy allows (``.npy``) and read with
``allow_pickle=False``: object arrays are refused, never unpickled.
"""

from __future__ import annotations

import zipfile
from collections.abc import Iterator, Sequence
from pathlib import Path

import numpy as np

from eftsieve.errors import InputError
from eftsieve.io.readers.columns import ColumnTable


def _load_npy(path: Path) -> np.ndarray:
    try:
        arr = np.load(path, mmap_mode="r", allow_pickle=False)
    except ValueError as err:
        raise InputError(path, None, f"cannot read without unpickling: {err}",
                         "save a numeric array: numpy.save(path, x.astype(float))") from err
    except OSError as err:
        raise InputError(path, None, f"not a .npy file: {err}",
                         "write it with numpy.save(path, x)") from err
    if arr.dtype.names is None and not np.issubdtype(arr.dtype, np.number):
        raise InputError(path, None, f"dtype {arr.dtype} is not numeric",
                         "save numbers, shape (n, d)")
    if arr.dtype.names is None and arr.ndim not in (1, 2):
        raise InputError(path, None, f"shape {arr.shape}; expected (n, d) or (n,)",
                         "reshape to one row per sample: x.reshape(n, -1)")
    if arr.dtype.names is not None and arr.ndim != 1:
        raise InputError(path, None, f"a structured array of shape {arr.shape}",
                         "save one record per sample, shape (n,)")
    return arr


def _npz_arrays(path: Path) -> dict[str, np.ndarray]:
    try:
        with np.load(path, allow_pickle=False) as z:
            arrays = {k: z[k] for k in z.files}
    except (ValueError, OSError, zipfile.BadZipFile) as err:
        raise InputError(path, None, f"cannot read without unpickling: {err}",
                         "write it with numpy.savez(path, lbar1=a, lbar2=b)") from err
    if not arrays:
        raise InputError(path, None, "the archive holds no array", "save one per parameter")
    lengths = {k: (a.shape[0] if a.ndim else None) for k, a in arrays.items()}
    bad = [k for k, a in arrays.items() if a.ndim not in (1, 2)
           or not np.issubdtype(a.dtype, np.number)]
    if bad:
        raise InputError(path, bad[0], f"array '{bad[0]}' has shape {arrays[bad[0]].shape} "
                         f"and dtype {arrays[bad[0]].dtype}",
                         "store numbers of shape (n,) (or (n, k)) per parameter")
    if len(set(lengths.values())) != 1:
        raise InputError(path, None, f"arrays of different lengths {lengths}",
                         "store one value per sample in every array")
    return arrays


def _npz_labels(arrays: dict[str, np.ndarray]) -> list[tuple[str, str, int | None]]:
    out: list[tuple[str, str, int | None]] = []
    for k, a in arrays.items():
        if a.ndim == 1:
            out.append((k, k, None))
        else:
            out.extend((f"{k}[{j}]", k, j) for j in range(a.shape[1]))
    return out


def column_table(path: Path, fmt: str) -> ColumnTable:
    """The columns of a .npy or .npz file."""
    if fmt == "npz":
        labels = tuple(lab for lab, _, _ in _npz_labels(_npz_arrays(path)))
        return ColumnTable(labels, True)
    arr = _load_npy(path)
    if arr.dtype.names is not None:
        return ColumnTable(tuple(arr.dtype.names), True)
    d = 1 if arr.ndim == 1 else arr.shape[1]
    return ColumnTable(tuple(str(i) for i in range(d)), False)


def iter_frames(path: Path, fmt: str, labels: Sequence[str], chunk_rows: int) -> Iterator:
    """Yield DataFrames holding the requested labels, rows in file order."""
    import pandas as pd

    if fmt == "npz":
        arrays = _npz_arrays(path)
        where = {lab: (k, j) for lab, k, j in _npz_labels(arrays)}
        cols = {lab: (arrays[where[lab][0]] if where[lab][1] is None
                      else arrays[where[lab][0]][:, where[lab][1]]) for lab in labels}
        n = len(next(iter(arrays.values())))
    else:
        arr = _load_npy(path)
        n = arr.shape[0]
        if arr.dtype.names is not None:
            cols = {lab: arr[lab] for lab in labels}
        else:
            cols = {lab: (arr if arr.ndim == 1 else arr[:, int(lab)]) for lab in labels}
    for lo in range(0, n, chunk_rows):
        yield pd.DataFrame({lab: np.asarray(c[lo:lo + chunk_rows]) for lab, c in cols.items()})
