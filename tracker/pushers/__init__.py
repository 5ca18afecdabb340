"""Particle pushers: the registry and the recipe for adding one.

How to add a pusher
-------------------
1. Write one module here with ``CODE = <next integer>`` and one
   ``@njit(**KERNEL)`` function ``push(ux, uy, uz, ex, ey, ez, tx, ty, tz)``
   returning the new ``u = gamma v/c`` after a full step, where
   ``e = q dt E/(2 m c)`` and ``t = q dt B/(2 m)`` (dimensionless). Cite the
   paper in the module docstring, with its equation numbers.
2. Register it in ``PUSHERS`` below and add a branch to
   ``tracker.pushers.dispatch.push``.
3. Tests: |u| conservation in a pure magnetic field and second-order
   convergence against a reference solution (see tests/test_pushers.py).
"""

from . import boris

#: scenario name -> kernel code
PUSHERS = {"boris": boris.CODE}

#: scenario name -> reference shown in the lab and the docs
REFERENCES = {"boris": "Boris (1970); Birdsall & Langdon (1991) ch. 15"}
