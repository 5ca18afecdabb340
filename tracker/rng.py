"""Counter-based random numbers for kernels: Philox-4x64-10 keyed by (seed, particle, step, stream).

A counter-based generator has no state: the random number for a given
(seed, particle index, step, stream) is a pure function of those integers, so
a run gives bit-identical results whatever the thread count, the order in
which particles are processed or how they are split into blocks.

Implemented: Philox-4x64 with 10 rounds, J. K. Salmon, M. A. Moraes,
R. O. Dror and D. E. Shaw, "Parallel random numbers: as easy as 1, 2, 3",
Proc. SC'11 (2011), sec. 4 (the Philox S-box, round structure, multipliers and
Weyl key increments). The output words are checked bit-for-bit against
``numpy.random.Philox`` (the same 4x64-10 generator) in tests/test_rng.py.

Counter and key layout (our choice):

    counter = (step, particle, stream, 0)      key = (seed, KEY_TAG)

all as unsigned 64-bit integers (negative values wrap modulo 2^64, so a
``step = -1`` used for initial sampling is distinct from every real step).
One Philox call gives four independent 64-bit words; ``uniform`` uses the
first, ``uniform2`` the first two, ``uniform4`` all four.

Stream numbers in use (keep them disjoint when adding a consumer):
``tracker.radiation.stochastic`` uses streams EMISSION_STREAM + k for its
k-th emission event inside one step.
"""

import numpy as np
from numba import njit

from .config import LEAF

#: Philox-4x64 multipliers and Weyl key increments (Salmon et al. 2011, sec. 4)
PHILOX_M0 = np.uint64(0xD2E7470EE14C6C93)
PHILOX_M1 = np.uint64(0xCA5A826395121157)
PHILOX_W0 = np.uint64(0x9E3779B97F4A7C15)
PHILOX_W1 = np.uint64(0xBB67AE8584CAA73B)
PHILOX_ROUNDS = 10
#: second key word: a fixed tag so radorbit's streams differ from a bare Philox(key=seed)
KEY_TAG = 0x7261646F72626974  # "radorbit" in ASCII
#: first stream used by stochastic photon emission (event k of a step uses EMISSION_STREAM + k)
EMISSION_STREAM = 0

_MASK32 = np.uint64(0xFFFFFFFF)
_S32 = np.uint64(32)
_S11 = np.uint64(11)
_TAG = np.uint64(KEY_TAG)
#: 2^-53: a 53-bit integer plus one half times this lies strictly inside (0, 1)
_INV_2_53 = 1.0 / 9007199254740992.0


@njit(**LEAF)
def _mulhilo64(a, b):
    """(high, low) 64-bit words of the 128-bit product a*b (uint64)."""
    a_lo = a & _MASK32
    a_hi = a >> _S32
    b_lo = b & _MASK32
    b_hi = b >> _S32
    p0 = a_lo * b_lo
    p1 = a_lo * b_hi
    p2 = a_hi * b_lo
    p3 = a_hi * b_hi
    middle = (p0 >> _S32) + (p1 & _MASK32) + (p2 & _MASK32)
    hi = p3 + (p1 >> _S32) + (p2 >> _S32) + (middle >> _S32)
    return hi, a * b


@njit(**LEAF)
def philox4x64(c0, c1, c2, c3, k0, k1):
    """Philox-4x64-10 block: four uint64 counter words and two key words -> four uint64 words."""
    for _ in range(PHILOX_ROUNDS):
        hi0, lo0 = _mulhilo64(PHILOX_M0, c0)
        hi1, lo1 = _mulhilo64(PHILOX_M1, c2)
        c0, c1, c2, c3 = hi1 ^ c1 ^ k0, lo1, hi0 ^ c3 ^ k1, lo0
        k0 = k0 + PHILOX_W0
        k1 = k1 + PHILOX_W1
    return c0, c1, c2, c3


@njit(**LEAF)
def _to_unit(word):
    """Top 53 bits of a uint64 -> float in the open interval (0, 1)."""
    return ((word >> _S11) + 0.5) * _INV_2_53


@njit(**LEAF)
def _block(seed, particle, step, stream):
    return philox4x64(np.uint64(step), np.uint64(particle), np.uint64(stream), np.uint64(0), np.uint64(seed), _TAG)


@njit(**LEAF)
def uniform(seed, particle, step, stream):
    """Uniform float in (0, 1) for integers (seed, particle index, step, stream); never 0 or 1."""
    w0, w1, w2, w3 = _block(seed, particle, step, stream)
    return _to_unit(w0)


@njit(**LEAF)
def uniform2(seed, particle, step, stream):
    """Two independent uniforms in (0, 1) from one Philox block (the cost of one ``uniform``)."""
    w0, w1, w2, w3 = _block(seed, particle, step, stream)
    return _to_unit(w0), _to_unit(w1)


@njit(**LEAF)
def uniform4(seed, particle, step, stream):
    """Four independent uniforms in (0, 1) from one Philox block."""
    w0, w1, w2, w3 = _block(seed, particle, step, stream)
    return _to_unit(w0), _to_unit(w1), _to_unit(w2), _to_unit(w3)


@njit(cache=True)
def uniform_array(seed, particles, steps, streams):
    """Vectorised ``uniform`` over equal-length int64 arrays (for tests and Python callers)."""
    out = np.empty(particles.shape[0])
    for i in range(particles.shape[0]):
        out[i] = uniform(seed, particles[i], steps[i], streams[i])
    return out


@njit(cache=True)
def raw_blocks(counters, k0, k1):
    """Philox-4x64-10 words for counters (n, 4) uint64 and key words k0, k1 (uint64) -> (n, 4) uint64."""
    out = np.empty((counters.shape[0], 4), dtype=np.uint64)
    for i in range(counters.shape[0]):
        w = philox4x64(counters[i, 0], counters[i, 1], counters[i, 2], counters[i, 3], k0, k1)
        out[i, 0], out[i, 1], out[i, 2], out[i, 3] = w
    return out
