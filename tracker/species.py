"""Particle species: signed charge (C) and rest mass (kg)."""

from dataclasses import dataclass

from . import constants as k

#: named species -> (charge in units of e, mass in kg). The muon is the
#: negative muon, as in cosmic-ray and storage-ring practice.
NAMED = {
    "electron": (-1.0, k.m_e),
    "positron": (+1.0, k.m_e),
    "proton": (+1.0, k.m_p),
    "antiproton": (-1.0, k.m_p),
    "muon": (-1.0, k.m_mu),
}


@dataclass(frozen=True)
class Species:
    """A charged particle kind. ``charge`` in C (signed), ``mass`` in kg."""

    name: str
    charge: float
    mass: float

    @property
    def rest_energy(self):
        """m c^2 in J."""
        return self.mass * k.c**2


def ion(charge_state, mass_number):
    """Ion of charge ``charge_state`` e and mass ``mass_number`` u less the missing electrons (kg)."""
    mass = mass_number * k.m_u - charge_state * k.m_e
    return Species("ion", charge_state * k.e, mass)


def named(name):
    """Species from its name (a key of ``NAMED``)."""
    z, mass = NAMED[name]
    return Species(name, z * k.e, mass)
