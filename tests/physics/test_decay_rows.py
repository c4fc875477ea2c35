"""The row-wise LLP decay draws (decays.decay_draws + decay_prepare) against the
event-by-event ones (decays.decay_draws_1): every row they fill has the same
distribution (two-sample KS test, scipy.stats.ks_2samp), and the draw counts
agree with the counter.

The two consume the stream in another order, so the values differ; what must
agree is the law of each quantity, which the event-by-event samplers are tested
for against their references in test_angular.py and test_threebody.py.
"""

import numpy as np
import pytest
from numba import njit
from scipy import stats

from toymc.physics import decays as dc
from toymc.physics.layout import SUB_BLOCK, S

ALPHA = 1e-3
BLOCKS = 20
MASS = 0.7  # GeV, above every channel's threshold
REF = np.zeros(8)  # beam four-vectors: unused for pol 0 and 1
BEAMS = np.array([0.0, 0.0, 5.0, 5.0, 0.0, 0.0, -5.0, 5.0])  # e-, e+ (GeV) for pol 2

#: (channel code, pol, rows filled)
CASES = [(dc.GG, 0, 4), (dc.PIPIPI0, 0, 11), (dc.PI0PI0PI0, 0, 17), (dc.EE, 0, 4),
         (dc.MUMU, 1, 4), (dc.PIPI, 0, 4), (dc.PIPI, 1, 4)]


@njit
def _rows(rng, ch, pol, me_code, betaf2, kc, blocks, rows, row_wise, ref):
    m = SUB_BLOCK
    W = np.empty(dc.DECAY_ROWS * S)
    idx = np.empty(m, dtype=np.int64)
    out = np.empty((rows, blocks * m))
    counter = np.zeros(3, dtype=np.int64)
    for b in range(blocks):
        if row_wise:
            dc.decay_draws(rng, counter, m, ch, pol, betaf2, me_code, MASS, kc, ref, W, 0, idx)
            dc.decay_prepare(m, ch, pol, W, 0)
        else:
            for i in range(m):
                dc.decay_draws_1(rng, counter, ch, pol, betaf2, me_code, MASS, kc, 0.0, 0.0, 0.0,
                                 ref, W, 0, i)
        for r in range(rows):
            out[r, b * m:(b + 1) * m] = W[r * S:r * S + m]
    return out, counter


@pytest.mark.parametrize("ch,pol,rows", CASES)
def test_row_wise_decay_draws_match_event_by_event(ch, pol, rows):
    betaf2, _ = dc.pair_constants(ch, MASS, dc.KCONST)
    me = 1 if ch == dc.PIPIPI0 else 0
    a, ca = _rows(np.random.default_rng(31), ch, pol, me, betaf2, dc.KCONST, BLOCKS, rows, True, REF)
    b, cb = _rows(np.random.default_rng(32), ch, pol, me, betaf2, dc.KCONST, BLOCKS, rows, False, REF)
    n = BLOCKS * SUB_BLOCK
    assert ca[2] == cb[2] == n  # one exponential per decay
    assert ca[1] == cb[1] == 0
    for r in range(rows):
        assert np.isfinite(a[r]).all()
        assert stats.ks_2samp(a[r], b[r]).pvalue > ALPHA, f"row {r}"


def test_unlisted_polarisation_falls_back_to_event_by_event():
    """pol 2 has no row-wise branch: decay_draws gives exactly what decay_draws_1 gives."""
    betaf2, _ = dc.pair_constants(dc.EE, MASS, dc.KCONST)
    a, ca = _rows(np.random.default_rng(5), dc.EE, 2, 0, betaf2, dc.KCONST, 2, 4, True, BEAMS)
    b, cb = _rows(np.random.default_rng(5), dc.EE, 2, 0, betaf2, dc.KCONST, 2, 4, False, BEAMS)
    np.testing.assert_array_equal(a, b)
    np.testing.assert_array_equal(ca, cb)
