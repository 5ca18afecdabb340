"""Order of the radiation-reaction splitting when an electric field turns the momentum.

An electron at the electric antinode of a circularly polarised standing wave (two
counter-propagating waves; B cancels at z = 0) sees a uniform electric field of fixed
magnitude rotating at the laser frequency. With strong damping it settles on the
stationary orbit where the radiation friction balances the field's work (Ya. B.
Zel'dovich, Sov. Phys. Dokl. 20, 270 (1975), from memory; S. V. Bulanov et al.,
Phys. Rev. E 84, 056605 (2011), from memory). The test measures the observed order of
convergence of the final gamma with the step (Richardson: successive differences fall
by 2^p), next to the magnetic coth cooling test in test_radiation_reaction.py.
"""

import math

import pytest
from scipy import constants as sc

from tracker import Scenario, track

WAVELENGTH = 0.8e-6
PERIOD = WAVELENGTH / sc.c
A0 = 200.0   # each of the four linear components; the rotating field has amplitude 2 a0 m c w/e


def standing_wave(dt_periods, periods=12.0, pusher="boris"):
    # E_x ~ cos(w t) and E_y ~ sin(w t) from a pair of counter-propagating linear waves each; the magnetic
    # fields of each pair cancel at z = 0 (B = n x E/c with opposite n)
    waves = []
    for direction in ([0, 0, 1], [0, 0, -1]):
        for axis, phase in (([1, 0, 0], 0.0), ([0, 1, 0], math.pi / 2)):
            waves.append({"type": "plane-wave", "a0": A0, "wavelength": WAVELENGTH, "direction": direction,
                          "polarization_axis": axis, "envelope": "gaussian", "duration": 1e5 * PERIOD,
                          "phase": phase})
    return Scenario.from_dict({
        "run": {"duration": periods * PERIOD, "dt": dt_periods * PERIOD, "pusher": pusher,
                "radiation_reaction": "landau-lifshitz", "save_every": 10**6, "max_steps": 10**7},
        "particle": {"species": "electron", "gamma": 1.0, "direction": [1, 0, 0]},
        "field": waves,
    })


@pytest.mark.parametrize("pusher", ["boris", "higuera-cary"])
def test_damped_gamma_in_a_rotating_electric_field_converges_at_second_order(pusher):
    gammas = []
    for spp in (400, 800, 1600):
        r = track(standing_wave(1.0 / spp, pusher=pusher))
        assert r.complete
        assert abs(r.x[-1, 2]) < 1e-12   # stays on the antinode plane
        gammas.append(r.gamma[-1])
    d1 = gammas[1] - gammas[0]
    d2 = gammas[2] - gammas[1]
    order = math.log2(abs(d1 / d2))
    # radiation-dominated: the stationary gamma is far below the undamped reach ~ 2 a0 (loss balances work)
    assert gammas[-1] < 2 * A0
    assert order == pytest.approx(2.0, abs=0.35), (gammas, order)
    # the converged value changes by less than 1e-5 relative at the finest step
    assert abs(d2) / gammas[-1] < 1e-5
