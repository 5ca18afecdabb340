"""Counter-based generator (tracker.rng): Philox-4x64-10 words, uniformity, independence, determinism.

Reference generator: numpy.random.Philox, the same Philox-4x64-10 of Salmon et al.,
"Parallel random numbers: as easy as 1, 2, 3", SC'11 (2011). numpy increments its
256-bit counter before producing a block, so counter c here is numpy's c - 1.
"""

import numpy as np
import pytest
from scipy import stats

from tracker.rng import KEY_TAG, raw_blocks, uniform, uniform2, uniform_array

U64 = 2**64


def numpy_block(counter_words, k0, k1):
    value = (sum(int(w) << (64 * i) for i, w in enumerate(counter_words)) - 1) % 2**256
    return np.random.Philox(counter=value, key=k0 + (k1 << 64)).random_raw(4)


@pytest.mark.parametrize("counter", [(0, 0, 0, 0), (1, 2, 3, 4), (U64 - 1, 5, 6, 7), (0, U64 - 1, U64 - 1, U64 - 1),
                                     (2**40 + 17, 123456789, 2**63 + 1, 0)])
@pytest.mark.parametrize("key", [(0, 0), (5, 3), (2**62 + 5, 2**63 + 7), (U64 - 1, KEY_TAG)])
def test_blocks_match_numpy_philox_bit_for_bit(counter, key):
    words = np.array([[np.uint64(w) for w in counter]])
    ours = raw_blocks(words, np.uint64(key[0]), np.uint64(key[1]))[0]
    assert np.array_equal(ours, numpy_block(counter, *key))


def test_uniform_is_the_first_word_of_the_block_mapped_into_the_open_interval():
    seed, particle, step, stream = 42, 7, 1000, 3
    word = numpy_block((step, particle, stream, 0), seed, KEY_TAG)[0]
    expected = ((int(word) >> 11) + 0.5) / 2.0**53
    assert uniform(seed, particle, step, stream) == expected
    a, b = uniform2(seed, particle, step, stream)
    assert a == expected and 0.0 < b < 1.0 and b != a


def grid(n_particles, n_steps, stream=0):
    p, s = np.meshgrid(np.arange(n_particles), np.arange(n_steps), indexing="ij")
    return p.ravel().astype(np.int64), s.ravel().astype(np.int64), np.full(p.size, stream, dtype=np.int64)


def test_uniform_over_neighbouring_counters_passes_kolmogorov_smirnov():
    # 200 particles x 1000 consecutive steps: the structured counters a kernel uses
    values = uniform_array(2024, *grid(200, 1000))
    assert values.min() > 0.0 and values.max() < 1.0
    assert stats.kstest(values, "uniform").pvalue > 1e-3


@pytest.mark.parametrize("shift", ["step", "particle", "stream", "seed"])
def test_neighbouring_counters_are_independent(shift):
    # pairs (counter, counter + 1 in one coordinate): chi^2 on a 16 x 16 grid of the pairs
    # (independent uniforms fill it evenly; scipy.stats.chi2_contingency), and the correlation
    # coefficient within 5 standard errors of 0 (common practice, no source)
    p, s, st = grid(100, 1000)
    a = uniform_array(11, p, s, st)
    if shift == "seed":
        b = uniform_array(12, p, s, st)
    else:
        b = uniform_array(11, p + (shift == "particle"), s + (shift == "step"), st + (shift == "stream"))
    counts, _, _ = np.histogram2d(a, b, bins=16, range=[[0, 1], [0, 1]])
    assert stats.chi2_contingency(counts)[1] > 1e-3
    assert abs(np.corrcoef(a, b)[0, 1]) < 5.0 / np.sqrt(a.size)


def test_same_counter_same_number_and_seed_changes_everything():
    p, s, st = grid(50, 50)
    first = uniform_array(7, p, s, st)
    assert np.array_equal(first, uniform_array(7, p, s, st))
    other = uniform_array(8, p, s, st)
    assert np.count_nonzero(first == other) == 0


def test_order_of_evaluation_does_not_matter():
    # what makes kernels independent of thread count and block layout: a value depends on its counter only
    p, s, st = grid(30, 40)
    order = np.random.default_rng(0).permutation(p.size)
    shuffled = uniform_array(3, p[order], s[order], st[order])
    assert np.array_equal(shuffled, uniform_array(3, p, s, st)[order])
