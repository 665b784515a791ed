"""Michelsen's tangent-plane-distance stability test."""

import numpy as np

from contin_thermo._components import lookup
from contin_thermo._eos import family
from contin_thermo._mixture import Mixture
from contin_thermo._stability import tangent_plane_test

MIXTURE = Mixture((lookup("methane"), lookup("propane")), family("pr"))
Z = np.array([0.5, 0.5])


def test_superheated_gas_is_stable():
    # Far above the cricondentherm at low pressure: one vapour phase (common practice).
    assert tangent_plane_test(MIXTURE, 350.0, 1e5, Z).stable


def test_inside_the_two_phase_region_is_unstable():
    # 250 K, 3 MPa lies between the bubble and dew pressures of this blend under PR (common practice:
    # a feed inside the envelope splits), so tm < 0 for some trial phase.
    result = tangent_plane_test(MIXTURE, 250.0, 3e6, Z)
    assert not result.stable and result.tm < -1e-4


def test_known_phase_is_not_counted():
    result = tangent_plane_test(MIXTURE, 250.0, 3e6, Z)
    again = tangent_plane_test(MIXTURE, 250.0, 3e6, Z, known=(result.trial,), pure_trials=False)
    assert again.tm >= result.tm
