"""Particle pushers: the registry and the recipe for adding one.

How to add a pusher
-------------------
1. Write one module here with ``CODE = <next integer>`` and one
   ``@njit(**LEAF)`` function ``push(ux, uy, uz, ex, ey, ez, tx, ty, tz)``
   returning the new ``u = gamma v/c`` after a full step, where
   ``e = q dt E/(2 m c)`` and ``t = q dt B/(2 m)`` (dimensionless). Cite the
   paper in the module docstring, with its equation numbers.
2. Register it in ``PUSHERS``, ``REFERENCES`` and ``NOTES`` below and add a
   branch to ``tracker.pushers.dispatch.push``; ``run.pusher`` and the lab
   read these dicts.
3. Tests: |u| conservation in a pure magnetic field and second-order
   convergence against a reference solution (see tests/test_pushers.py).
"""

from . import boris, higuera_cary, vay

#: scenario name -> kernel code
PUSHERS = {"boris": boris.CODE, "vay": vay.CODE, "higuera-cary": higuera_cary.CODE}

#: scenario name -> reference shown in the lab and the docs
REFERENCES = {
    "boris": "Boris (1970); Birdsall & Langdon (1991) ch. 15",
    "vay": "J.-L. Vay, Phys. Plasmas 15, 056701 (2008)",
    "higuera-cary": "A. V. Higuera and J. R. Cary, Phys. Plasmas 24, 052104 (2017)",
}

#: scenario name -> one line on when to choose it (lab tooltips, `radorbit check`)
NOTES = {
    "boris": "fastest; volume-preserving; deflects a fast particle in force-free crossed fields",
    "vay": "exact in force-free crossed fields (E + v x B = 0); not volume-preserving",
    "higuera-cary": "exact in force-free crossed fields and volume-preserving; ultra-relativistic orbits in lasers",
}
