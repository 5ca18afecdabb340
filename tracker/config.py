"""Central numerical policy: numba flags and named tolerances.

Every compiled kernel takes its options from ``KERNEL`` so the policy is
decided once. ``error_model="numpy"`` drops numba's per-division
ZeroDivisionError check, which otherwise blocks vectorisation and keeps dead
divisions alive (measured ~8x on particle loops). ``fastmath`` stays off:
NaN/Inf detection of lost particles must keep working.
"""

import os

import numba

#: numba threading layer for ``parallel=True`` kernels (spectra). Chosen explicitly because
#: the lab calls them from several sessions' worker threads at once, and numba's built-in
#: ``workqueue`` layer is not thread-safe (concurrent launches abort the process).
#: ``"threadsafe"`` makes numba load a thread-safe layer (TBB if installed, else GNU
#: OpenMP, which is what Linux machines get) or fail loudly instead of falling back.
#: No part of radorbit forks a process that has run a parallel kernel (the omp layer
#: is not fork-safe; subprocesses are started with fork+exec). A user's own
#: ``NUMBA_THREADING_LAYER`` wins.
THREADING_LAYER = "threadsafe"
if "NUMBA_THREADING_LAYER" not in os.environ:
    numba.config.THREADING_LAYER = THREADING_LAYER
# GNU OpenMP threads spin while idle by default, which starves the other threads of a
# busy machine (the engine's runs, the lab's server); waiting passively costs nothing here.
os.environ.setdefault("OMP_WAIT_POLICY", "PASSIVE")

#: options for every @njit kernel; cache=True is safe because kernels never
#: close over per-scenario Python objects (field tables are plain arrays).
KERNEL = dict(cache=True, nogil=True, error_model="numpy")

#: options for small functions called from the integration loop: numba-IR inlining
#: removes the call and, above all, the atomic reference-count traffic of passing
#: arrays to a non-inlined call (measured: field lookup 44 -> a few ns per step).
LEAF = dict(KERNEL, inline="always")

#: parameter slots per field component in the field table.
FIELD_PARAMS = 24
#: the last slot of a row holds the offset of the row's block in the bulk ``data`` array
DATA_OFFSET_SLOT = FIELD_PARAMS - 1

#: slot of a field row holding the start of the model's block in the bulk ``data``
#: array (as a float); pack() may use slots 0 .. FIELD_PARAMS - 2.
DATA_OFFSET_SLOT = FIELD_PARAMS - 1

#: steps per fastest period when the scenario gives neither dt nor
#: steps_per_period (common practice, no source: Boris phase error ~ theta^2/24).
DEFAULT_STEPS_PER_PERIOD = 100

#: refuse plans longer than this unless run.max_steps says otherwise.
DEFAULT_MAX_STEPS = 100_000_000

#: steps per kernel call; between chunks the engine reports progress and
#: checks for cancellation (~50 ms of work at 2e7 steps/s).
CHUNK_STEPS = 1_000_000

#: bytes kept per saved state: t, x(3), u(3), gamma, power, W, field work, chi, dt.
BYTES_PER_SAVED_STATE = 13 * 8
