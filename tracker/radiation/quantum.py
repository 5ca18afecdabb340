"""Quantum correction of the emitted power: the Gaunt factor g(chi) = P_quantum / P_classical.

References
----------
.. [1] V. N. Baier, V. M. Katkov and V. M. Strakhovenko, "Electromagnetic
   Processes at High Energies in Oriented Single Crystals" (World Scientific,
   1998): the fit below (source of the fit from memory — verify).
.. [2] C. P. Ridgers et al., J. Plasma Phys. 83, 715830502 (2017) and
   C. Niel et al., Phys. Rev. E 97, 043209 (2018): use of g(chi) to scale the
   classical radiation-reaction force ("corrected-classical" model).

g(chi) ~ [1 + 4.8 (1 + chi) ln(1 + 1.7 chi) + 2.44 chi^2]^(-2/3); it is within
1.4 % of the exact quantum-synchrotron ratio for 1e-4 < chi < 1e3.
"""

import math

from numba import njit

from ..config import LEAF


@njit(**LEAF)
def gaunt_factor(chi):
    """Ratio of quantum to classical emitted power for quantum parameter ``chi`` (dimensionless)."""
    return (1.0 + 4.8 * (1.0 + chi) * math.log1p(1.7 * chi) + 2.44 * chi * chi) ** (-2.0 / 3.0)
