"""Sign symmetries, pair sectors and dead pairs of forward tensors (bounds/sectors.py)."""

from __future__ import annotations

import numpy as np

from eftsieve.bounds.sectors import dead_pairs, pair_sectors, sign_charges
from eftsieve.theories import get_theory


def _invariant(tensors, q):
    d = (-1.0) ** q.astype(float)
    return np.allclose(np.einsum("aijkl,i,j,k,l->aijkl", tensors, d, d, d, d), tensors,
                       rtol=0, atol=1e-14)


def test_charges_are_symmetries_and_a_planted_entry_breaks_one():
    t = get_theory("transverse-w").problem().tensors
    q = sign_charges(t)
    assert len(q) >= 2                                  # x and y reflections at least
    assert all(_invariant(t, row) for row in q)
    planted = t.copy()
    planted[0, 0, 0, 0, 1] = planted[0, 0, 0, 1, 0] = 1.0   # one x-leg against three: odd
    q2 = sign_charges(planted)
    assert len(q2) < len(q) and all(_invariant(planted, row) for row in q2)


def test_no_symmetry_gives_one_sector_of_every_pair():
    rng = np.random.default_rng(0)
    t = rng.normal(size=(1, 2, 2, 2, 2))
    # only the flip of every mode at once is left (four factors -1), and it splits no pair
    np.testing.assert_array_equal(sign_charges(t), [[1, 1]])
    (only,) = pair_sectors(t)
    np.testing.assert_array_equal(only, np.arange(4))


def test_sectors_partition_the_live_pairs_and_dead_pairs_have_zero_diagonal():
    t = get_theory("photon-quartic").problem().tensors[:1]      # (F.F)^2 alone
    n = t.shape[-1]
    dead = dead_pairs(t)
    secs = pair_sectors(t)
    got = np.sort(np.concatenate(secs))
    np.testing.assert_array_equal(got, np.nonzero(~dead)[0])
    diag = t.reshape(1, n * n, n * n).diagonal(axis1=1, axis2=2)[0]
    # (F.F)^2 gives no elastic x-y channel: F_x . F_y = 0 in the forward frame
    assert dead.tolist() == [False, True, True, False]
    assert np.all(np.abs(diag[dead]) <= 1e-12 * np.abs(t).max())
    assert np.all(np.abs(diag[~dead]) > 1e-3 * np.abs(t).max())
