"""Reading an emcee HDF5 backend walker-major (issue 19), with comparators side by side.

- ours: eftsieve's emcee reader streaming 100000 iterations x 32 walkers x 4 dims
  (3.2 million rows) walker-major into chunks, via a fit card;
- what a user would do otherwise: emcee's own ``HDFBackend.get_chain()`` and a
  ``numpy.moveaxis`` to walker-major order (the whole chain in memory at once);
- plain h5py: read the dataset whole and reorder (the I/O floor).

The file has emcee's layout (group ``mcmc``, datasets ``chain`` and ``log_prob`` with
unlimited first axis, attribute ``iteration``); it is written with h5py in blocks,
because emcee writes one step per file access, which takes minutes for 10^5 steps.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import h5py
import numpy as np
from common import best_time, one_core, table

IT, NW, ND = 100_000, 32, 4


def write_backend(path: Path) -> None:
    rng = np.random.default_rng(0)
    with h5py.File(path, "w") as f:
        g = f.create_group("mcmc")
        g.attrs.update(version="3.1.6", nwalkers=NW, ndim=ND, has_blobs=False, iteration=IT)
        g.create_dataset("accepted", data=np.zeros(NW))
        chain = g.create_dataset("chain", (IT, NW, ND), maxshape=(None, NW, ND), dtype="f8")
        g.create_dataset("log_prob", (IT, NW), maxshape=(None, NW), dtype="f8")
        for lo in range(0, IT, 10_000):
            chain[lo:lo + 10_000] = rng.normal(size=(10_000, NW, ND))


def main() -> None:
    one_core()
    import emcee

    from eftsieve.io.readers.emcee_hdf5 import iter_frames
    from eftsieve.io.readers.options import ReadOptions

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "chain.h5"
        write_backend(path)
        labels = [str(i) for i in range(ND)]

        def ours():
            return sum(len(fr) for fr in iter_frames(path, labels, 1_000_000, ReadOptions()))

        def with_emcee():
            x = emcee.backends.HDFBackend(str(path), read_only=True).get_chain()
            return np.ascontiguousarray(np.moveaxis(x, 1, 0)).reshape(-1, ND)

        def plain():
            with h5py.File(path, "r") as f:
                x = f["mcmc/chain"][:]
            return np.ascontiguousarray(np.moveaxis(x, 1, 0)).reshape(-1, ND)

        t = {name: best_time(fn) for name, fn in
             (("ours", ours), ("emcee", with_emcee), ("h5py", plain))}
        rows = [[name, f"{sec:.2f}", f"{sec / t['ours']:.2f}"] for name, sec in t.items()]
        table(f"emcee backend, {IT} x {NW} x {ND}, walker-major", ["reader", "seconds",
              "ratio to ours"], rows)


if __name__ == "__main__":
    main()
