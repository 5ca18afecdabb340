"""Radiation diagnostics of tracked orbits: power, angular distribution and spectra.

Public API (all SI; see each function's docstring for units and shapes)::

    from tracker.radiation import angular_distribution, spectrum, synchrotron_spectrum
    dP = angular_distribution(result, index, theta, phi)        # W/sr, (n_theta, n_phi)
    S = spectrum(result, directions, omega, method="nufft")      # J s/sr, (n_dir, n_omega)
    dW = synchrotron_spectrum(result, omega)                     # J s, (n_omega,)
    dN = photon_spectrum(result, omega)                          # s (photons per rad/s)

Recorded photons of the ``quantum-stochastic`` model (tracker.radiation.photons)::

    h = photon_energy_histogram(result, edges)                   # dN/deps (1/J) +- error
    h = photon_angular_histogram(result)                         # dN/dOmega (1/sr) +- error
    dN, dE = classical_photon_spectrum(result, eps)              # same axes, synchrotron function
"""

from .angular import angular_distribution, direction_grid, orbit_kinematics, radiation_pattern
from .spectrum import (default_direction, default_omega, photon_energy_ev, polarization_basis,
                       radiation_amplitudes, resolved_band, spectrum)
from .photons import angular_distribution as photon_angular_histogram
from .photons import classical_spectrum as classical_photon_spectrum
from .photons import emitted_energy
from .photons import energy_spectrum as photon_energy_histogram
from .spectra import SpectrumSet, spectra
from .synchrotron import (critical_frequency, default_synchrotron_omega, local_synchrotron, photon_spectrum,
                          spectral_shape, synchrotron_spectrum, universal_function)

__all__ = [
    "angular_distribution", "direction_grid", "orbit_kinematics", "radiation_pattern",
    "spectrum", "radiation_amplitudes", "resolved_band", "polarization_basis", "default_direction",
    "default_omega", "photon_energy_ev",
    "synchrotron_spectrum", "photon_spectrum", "critical_frequency", "local_synchrotron", "default_synchrotron_omega",
    "universal_function", "spectral_shape", "spectra", "SpectrumSet",
    "photon_energy_histogram", "photon_angular_histogram", "classical_photon_spectrum", "emitted_energy",
]
