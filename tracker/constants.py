"""Physical constants in SI (CODATA 2022 via scipy.constants) and derived ones."""

import math

from scipy import constants as _c

c = _c.c                      #: speed of light, m/s
e = _c.e                      #: elementary charge, C
epsilon_0 = _c.epsilon_0      #: vacuum permittivity, F/m
mu_0 = _c.mu_0                #: vacuum permeability, H/m
hbar = _c.hbar                #: reduced Planck constant, J s
alpha = _c.fine_structure     #: fine-structure constant
m_e = _c.m_e                  #: electron mass, kg
m_p = _c.m_p                  #: proton mass, kg
m_mu = _c.physical_constants["muon mass"][0]   #: muon mass, kg
m_u = _c.physical_constants["atomic mass constant"][0]  #: atomic mass constant, kg
r_e = _c.physical_constants["classical electron radius"][0]  #: m

#: Schwinger critical field m_e^2 c^3/(e hbar), V/m
E_schwinger = m_e**2 * c**3 / (e * hbar)


def tau0(charge, mass):
    """Radiation time scale q^2/(6 pi eps0 m c^3) in s (Landau & Lifshitz vol. 2, sec. 76).

    Parameters
    ----------
    charge : float, C
    mass : float, kg
    """
    return charge**2 / (6.0 * math.pi * epsilon_0 * mass * c**3)
