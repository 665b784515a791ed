"""Michelsen's tangent-plane-distance stability test."""

import numpy as np
import pytest

from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.curves._stability import tangent_plane_test

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


# -- a genuinely metastable stretch ----------------------------------------------------------------
# An invented, strongly non-ideal interaction parameter (k = 0.2, demo value) between propane and
# n-pentane makes their liquids partly immiscible at low temperature, so along the low-temperature
# bubble curve the saturated liquid feed would rather split into two liquids: the vapour-liquid
# bubble point there is metastable.
from contin_thermo.curves._envelope import trace_envelope  # noqa: E402
from contin_thermo.curves._stability import ln_phi_batch  # noqa: E402

SPLIT = Mixture((lookup("propane"), lookup("n-pentane")), family("pr"), np.array([[0.0, 0.2], [0.2, 0.0]]))
GRID = np.linspace(1e-5, 1 - 1e-5, 2001)


def grid_minimum(mixture, z, T, P):
    """Smallest tm over a dense grid of binary trial phases (one mole fraction describes each).

    For a binary this search is exhaustive up to the grid spacing, so it is an independent answer to
    Michelsen's criterion (stable if and only if tm >= 0 for every trial phase; Fluid Phase
    Equilibria 9 (1982) 1).
    """
    W = np.column_stack([GRID, 1 - GRID])
    d = np.log(z) + mixture.ln_phi(T, P, z, "stable")
    return float(np.min(np.sum(W * (np.log(W) + ln_phi_batch(mixture, T, P, W) - d), axis=1)))


@pytest.fixture(scope="module")
def split_envelope():
    return trace_envelope(SPLIT, [0.5, 0.5])


def test_metastable_stretch_found_and_reported(split_envelope):
    envelope = split_envelope
    stretches = envelope.metastable_stretches()
    assert len(stretches) == 1
    first, last = stretches[0]
    assert envelope.rows[first][2] == "bubble" and last == len(envelope.rows) - 1  # down to the 1 bar bubble point
    assert any(line.startswith("metastable") or "metastable" in line for line in envelope.summary())


def test_every_flag_agrees_with_an_exhaustive_grid_of_trial_phases(split_envelope):
    z = np.array([0.5, 0.5])
    # On the envelope the incipient phase itself touches the tangent plane (tm = 0), so a stable row
    # has a grid minimum at round-off, an unstable one a clearly negative one.
    unstable = []
    for row in split_envelope.rows:
        minimum = grid_minimum(SPLIT, z, row[0], row[1])
        if row[5] is False:
            assert minimum < -1e-6, (row[0], row[1], minimum)
            unstable.append(row[0])
        else:
            assert minimum > -1e-6, (row[0], row[1], minimum)
    # A genuine metastable stretch, measured in temperature (the row count depends on the step length):
    # it spans about 224 K to 288 K on this envelope.
    assert len(unstable) >= 5
    assert max(unstable) - min(unstable) > 40.0


def test_batched_fugacities_match_the_single_phase_ones():
    # Same model, two code paths: one batched root solve for many compositions against Mixture.ln_phi.
    rng = np.random.default_rng(7)
    W = rng.dirichlet(np.ones(2), size=12)
    batched = ln_phi_batch(MIXTURE, 230.0, 2e6, W)
    for w, row in zip(W, batched, strict=True):
        assert np.allclose(row, MIXTURE.ln_phi(230.0, 2e6, w, "stable"), rtol=0, atol=1e-10)
