"""Quantum correction of the emitted power: the Gaunt factor g(chi) = P_quantum / P_classical.

References
----------
.. [1] V. N. Baier, V. M. Katkov and V. M. Strakhovenko, "Electromagnetic
   Processes at High Energies in Oriented Single Crystals" (World Scientific,
   1998): the fit below (source of the fit from memory — verify).
.. [2] C. P. Ridgers et al., J. Plasma Phys. 83, 715830502 (2017) and
   C. Niel et al., Phys. Rev. E 97, 043209 (2018): use of g(chi) to scale the
   classical radiation-reaction force ("corrected-classical" model).
.. [3] V. B. Berestetskii, E. M. Lifshitz and L. P. Pitaevskii, "Quantum
   Electrodynamics", sec. 90 (section from memory): the quantum synchrotron
   spectrum that defines the exact g(chi).

.. math:: g(\\chi) \\approx [1 + 4.8 (1 + \\chi) \\ln(1 + 1.7 \\chi) + 2.44 \\chi^2]^{-2/3}

Measured against the exact ratio (the quantum-synchrotron spectrum integrated
with scipy, tests/test_quantum.py): within -1.38 % ... +1.21 % for
1e-4 < chi < 1e3, the largest deviation near chi = 4. g -> 1 as chi -> 0 (the
classical limit; the fit's slope there is -5.44 against the exact
-55 sqrt(3)/16 = -5.95, a 5e-4 difference at chi = 1e-3).

How the engine uses it (model ``landau-lifshitz-quantum``): at every step the
whole Landau-Lifshitz kick and the reported Lienard power are multiplied by the
same g(chi) of the synchronous state, so ``radiated_energy`` is the energy the
corrected force removes and the energy balance closes as for the classical
model. Emission stays continuous: the spread from stochastic photon emission
is not modelled (see tracker.validity, kind "quantum").
"""

import math

from numba import njit

from ..config import LEAF


@njit(**LEAF)
def gaunt_factor(chi):
    """Ratio of quantum to classical emitted power, g(chi) (fit of [1]).

    Parameters
    ----------
    chi : float
        Quantum parameter chi = gamma sqrt(|E + v x B|^2 - (E.v)^2/c^2)/E_S, dimensionless, >= 0.

    Returns
    -------
    float
        g in (0, 1], dimensionless.
    """
    return (1.0 + 4.8 * (1.0 + chi) * math.log1p(1.7 * chi) + 2.44 * chi * chi) ** (-2.0 / 3.0)
