"""Parameter scans: the pieces behind ``tracker.sweep`` (the public entry point is ``tracker/sweep.py``).

| module | one concept |
|---|---|
| ``spec.py`` | what to vary: value lists, range text (``"5:50:10"``), the ``[sweep]`` table of a scenario |
| ``keys.py`` | key paths (``field[0].a0``, ``particle.kinetic_energy``, ``run.pusher``): check, read, set |
| ``point.py`` | one point: a scenario (TOML text) in, one summary row (plain data) out, damped and undamped |
| ``execute.py`` | where points run: threads on this machine, or a ``dask.distributed`` cluster; retry once |
| ``store.py`` | the scan's HDF5 file, rewritten atomically as points arrive; resume by point identity |
| ``cli.py`` | ``radorbit sweep`` |
"""
