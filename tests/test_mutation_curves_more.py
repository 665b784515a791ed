"""Stability and mixture-critical behaviours that the sampled mutation run (seed 1) slipped past.

Found by mutation testing (benchmarks/mutation.py --modules stability mixture_critical --sample 20
--seed 1); each test names the break it catches.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import minimize_scalar

from contin import InputError
from contin_thermo.curves._envelope import trace_envelope
from contin_thermo.curves._mixture_critical import (
    _temperature_of_zero_eigenvalue, critical_conditions, critical_point, critical_points, polish_critical)
from contin_thermo.curves._stability import _newton, _pure_trials, ln_phi_batch, tangent_plane_test
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture

# An invented 50/50 blend (demo composition) under Peng-Robinson.
BLEND = Mixture((lookup("methane"), lookup("propane")), family("pr"))
Z = np.array([0.5, 0.5])


def _feed_d(mixture, T, P, z):
    return np.log(z) + ln_phi_batch(mixture, T, P, z[None, :])[0]


# -- stability ---------------------------------------------------------------------------------------

def test_a_known_phase_with_one_volume_root_handed_back_as_a_trial_is_not_new():
    # Along an envelope the phase found at one point is handed to the next as a start trial, on no
    # forced root. Just past the critical point the cubic has one root for it: that root is both the
    # liquid and the vapour one, so the trial is the known phase whichever root it is counted on.
    # (Breaks: the one-root guard of _roots_used dropped.)
    from test_mutation_thermo import incipient_phase_past_the_critical_point

    envelope = trace_envelope(BLEND, Z, check_stability=False)
    T, P, trial = incipient_phase_past_the_critical_point(envelope, 4, 1e-3, 1e-6)
    again = tangent_plane_test(BLEND, T, P, Z, known=(trial,), start=trial[None, :])
    assert again.stable and again.tm == 0.0


def _liquid_stationary_point(T, P, upper):
    """The liquid-root stationary point of the tangent-plane distance D(x1) = sum x_i (ln x_i +
    ln phi_i(x) - d_i) of BLEND's feed, by a bounded scalar minimisation (independent of the trials)."""
    d = _feed_d(BLEND, T, P, Z)

    def distance(x1):
        x = np.array([[x1, 1.0 - x1]])
        return float(np.sum(x * (np.log(x) + ln_phi_batch(BLEND, T, P, x, None, np.array([1])) - d)))

    return minimize_scalar(distance, bounds=(1e-3, upper), method="bounded", options={"xatol": 1e-10}).x


def test_trials_running_onto_one_stationary_point_hand_it_on_once():
    # 300 K, 0.42 MPa: the blend is a stable vapour. Wilson's liquid-like trial and the nearly pure
    # propane trial (both on the liquid root) run onto the same liquid-like stationary point, far
    # above the plane: it is handed on once, not twice. (Breaks: _distinct not de-duplicating.)
    T, P = 300.0, 4.2e5
    result = tangent_plane_test(BLEND, T, P, Z)
    assert result.stable and result.tm == 0.0
    assert result.stationary.shape == (1, 2)
    # (the liquid root exists up to x1 of about 0.3 there)
    assert abs(result.stationary[0, 0] - _liquid_stationary_point(T, P, 0.2)) < 1e-5


def test_trials_that_cannot_reach_the_plane_are_dropped_early():
    # 320 K, 0.2 MPa: a stable vapour. Two trials fall onto the feed within three sweeps; the two on
    # the liquid root settle geometrically (tm falls about tenfold per sweep) onto a stationary point
    # with tm about 0.91, and the extrapolated limit of tm, far above zero, drops them at the fourth
    # sweep instead of the fifteenth. The answer is the same either way; the work is not.
    # (Breaks: the sign of the fall of tm in that extrapolation.)
    T, P = 320.0, 2e5
    result = tangent_plane_test(BLEND, T, P, Z)
    assert result.stable and result.tm == 0.0
    trials = 2 + len(_pure_trials(2))
    assert result.iterations <= 4 * trials


def test_newton_counts_the_steps_it_takes():
    # The iteration count of a result adds Newton's steps: from a start that is not converged after
    # two steps, with a limit of two, it took two. (Breaks: each step counted twice.)
    T, P = 250.0, 3e6  # inside the blend's two-phase region (tests/test_stability.py)
    d = _feed_d(BLEND, T, P, Z)
    for limit in (1, 2):
        *_, count, _ = _newton(BLEND, T, P, d, np.log(np.array([0.3, 0.7])), iterations=limit)
        assert count == limit


# -- mixture critical points -------------------------------------------------------------------------

SRK_BLEND = Mixture((lookup("methane"), lookup("n-butane")), family("srk"))
Z_SRK = np.array([0.7, 0.3])


@pytest.fixture(scope="module")
def srk_point():
    return critical_point(SRK_BLEND, Z_SRK)


def test_the_zero_eigenvalue_is_found_in_the_first_interval_of_the_temperature_grid(srk_point):
    # At the critical volume the highest temperature with a zero smallest eigenvalue is the critical
    # temperature. Searched from just above it (1 % above: inside the grid's first interval, a step
    # of 20**(1/59) = 5.2 %) it is the same temperature. (Breaks: the grid skipping its first interval,
    # or bracketing across two intervals.)
    T = _temperature_of_zero_eigenvalue(SRK_BLEND, Z_SRK, srk_point.v, 1.01 * srk_point.T)
    assert T == pytest.approx(srk_point.T, rel=1e-10)
    assert critical_conditions(SRK_BLEND, Z_SRK, 1.001 * T, srk_point.v)[0] > 0


def test_newton_polish_converges_quadratically_from_nearby(srk_point):
    # From 4e-4 off in ln T and ln v Newton lands on the same point to round-off within its six steps,
    # and says so with a last step below 1e-12. (Breaks: a Jacobian off by a factor, which only
    # converges linearly.)
    point, last = polish_critical(SRK_BLEND, Z_SRK, srk_point.T * math.exp(4e-4), srk_point.v * math.exp(-4e-4))
    assert last < 1e-12
    assert point.T == pytest.approx(srk_point.T, rel=1e-12) and point.v == pytest.approx(srk_point.v, rel=1e-12)


def test_newton_polish_from_far_away_says_it_did_not_converge(srk_point):
    # 5 % off in T, 10 % in v the first step is larger than the largest allowed: the step is reported
    # infinite, the sign that the point is not known. (Breaks: that step reported as None.)
    _, last = polish_critical(SRK_BLEND, Z_SRK, 1.05 * srk_point.T, 0.9 * srk_point.v)
    assert last == math.inf


# Methane and water under PR with no interaction parameter: a binary whose critical line from water's
# critical point runs to very high pressures (type III of van Konynenburg and Scott, from memory).
WATER = Mixture((lookup("methane"), lookup("water")), family("pr"))


def test_a_composition_with_two_critical_points_gives_both_and_the_one_asked_for():
    # 99 % methane: one critical point near methane's own, and a colder one at negative pressure (a
    # solution of the model's criterion with no physical meaning); sorted by T, the hotter by default.
    z = np.array([0.99, 0.01])
    found = critical_points(WATER, z)
    assert len(found) == 2 and found[0].T < found[1].T
    assert found[0].P < 0 < found[1].P
    for point in found:
        eigenvalue, cubic = critical_conditions(WATER, z, point.T, point.v)
        assert abs(eigenvalue) < 1e-9 and abs(cubic) < 1e-9
    assert critical_point(WATER, z) == found[1]
    assert critical_point(WATER, z, near=(found[0].T, found[0].P)) == found[0]


def test_a_jump_of_the_cubic_form_is_not_a_critical_point():
    # 30 % methane: the cubic form C changes sign twice along the zero-eigenvalue line, once through
    # zero (the critical point near 593 K) and once by a jump near V/b = 1.11, where b . dn passes
    # through zero and the sign convention flips dn (C is odd in dn). The jump was reported as a
    # second "critical point" at 622 K and 1.8 GPa with C = 0.35.
    z = np.array([0.3, 0.7])
    (point,) = critical_points(WATER, z)
    eigenvalue, cubic = critical_conditions(WATER, z, point.T, point.v)
    assert abs(eigenvalue) < 1e-9 and abs(cubic) < 1e-9
    assert 590.0 < point.T < 600.0


def test_a_composition_with_no_critical_point_is_refused_in_one_line():
    # Methane-rich: the line from water's critical point does not reach it at V/b above 1.05 and the
    # short line from methane's critical point ends near pure methane: no critical point is found.
    assert critical_points(WATER, [0.95, 0.05]) == []
    with pytest.raises(InputError) as error:
        critical_point(WATER, [0.95, 0.05])
    assert str(error.value) == ("no mixture critical point was found for this composition "
                                "(Heidemann-Khalil criterion)")


@pytest.mark.parametrize("z", [[0.5], [0.5, -0.1], [0.0, 0.0]])
def test_a_composition_that_does_not_fit_the_mixture_is_refused_in_one_line(z):
    with pytest.raises(InputError, match=r"^the composition must hold 2 non-negative mole fractions$"):
        critical_points(WATER, z)


class _IdealBox:
    """A stand-in for a mixture: two components of one co-volume and the ideal-gas pressure, for
    checking where the critical-point search looks (its conditions are replaced in the test)."""

    size = 2
    b = np.array([1e-4, 1e-4])
    Tc = np.array([300.0, 400.0])

    def pressure(self, T, v, z):
        return 8.314462618 * T / v


@pytest.mark.parametrize("kappa", [1.06, 4.0, 19.5])
def test_the_search_covers_every_interval_of_its_volume_grid(monkeypatch, kappa):
    # The search's stated range is 1.05 < V/b < 20. Conditions with one root, at T = 350 K and
    # V/b = kappa, stand for a fluid's: the root is found wherever it lies in that range, the first and
    # the last interval of the grid included, and polished to round-off.
    from contin_thermo.curves import _mixture_critical as module

    def conditions(mixture, z, T, v):
        return T - 350.0, v / float(mixture.b @ z) - kappa

    monkeypatch.setattr(module, "critical_conditions", conditions)
    (point,) = module.critical_points(_IdealBox(), [0.5, 0.5])
    assert point.T == pytest.approx(350.0, rel=1e-12)
    assert point.v == pytest.approx(kappa * 1e-4, rel=1e-12)
    assert point.P == pytest.approx(8.314462618 * 350.0 / (kappa * 1e-4), rel=1e-12)


def test_the_one_nearest_a_given_point_is_nearest_in_the_sum_of_relative_differences(monkeypatch):
    # Two candidates A = (200 K, 5 MPa) and B = (300 K, 1 MPa); "nearest" to (T, P) is the smaller of
    # |T_c/T - 1| + |P_c/P - 1| (worked by hand for each query).
    from contin_thermo.curves import _mixture_critical as module

    a = module.CriticalPoint(200.0, 5e6, 1e-4, 0.0, 0.0)
    b = module.CriticalPoint(300.0, 1e6, 2e-4, 0.0, 0.0)
    monkeypatch.setattr(module, "critical_points", lambda mixture, z: [a, b])
    queries = {(200.0, 1e6): b,   # A: 0 + 4 = 4;        B: 0.5 + 0 = 0.5
               (200.0, 3e6): a,   # A: 0 + 0.667;        B: 0.5 + 0.667
               (300.0, 3e6): b}   # A: 0.333 + 0.667 = 1; B: 0 + 0.667
    for near, expected in queries.items():
        assert module.critical_point(BLEND, Z, near=near) is expected, near


def test_a_feed_is_normalised_and_a_critical_point_is_frozen():
    import dataclasses

    half = critical_point(BLEND, [0.5, 0.5])
    assert critical_point(BLEND, [2.0, 2.0]) == half
    with pytest.raises(dataclasses.FrozenInstanceError):
        half.T = 1.0


def test_a_binary_critical_locus_runs_once_from_one_pure_end_to_the_other_on_critical_points():
    import dataclasses

    from contin_thermo.curves._mixture_critical import binary_critical_locus

    mixture = Mixture((lookup("methane"), lookup("n-butane")), family("pr"))
    locus = binary_critical_locus(mixture)
    assert locus.status == "bound_reached"
    # from x1 = 1e-7 to 1 - 1e-7, each composition once, the start (x1 = 0.5) once
    assert locus.x1[0] == pytest.approx(1e-7, rel=1e-9) and locus.x1[-1] == pytest.approx(1 - 1e-7, rel=1e-12)
    assert np.all(np.diff(locus.x1) > 0) and np.sum(locus.x1 == 0.5) == 1
    # no row dropped: neighbours are one step apart, and a step is at most 0.05 in arclength
    assert np.max(np.diff(locus.x1)) <= 0.05 + 1e-12
    assert locus.message.count(", lnv = ") == 2
    # both halves take the same first step (0.02 in arclength) from the start at x1 = 0.5
    middle = int(np.flatnonzero(locus.x1 == 0.5)[0])
    first_down, first_up = 0.5 - locus.x1[middle - 1], locus.x1[middle + 1] - 0.5
    assert 2.0 / 3.0 < first_up / first_down < 1.5
    for x1, T, v, P in zip(locus.x1, locus.T, locus.v, locus.P, strict=True):
        z = np.array([x1, 1 - x1])
        eigenvalue, cubic = critical_conditions(mixture, z, T, v)
        assert abs(eigenvalue) < 1e-9 and abs(cubic) < 1e-8
        assert P == pytest.approx(mixture.pressure(T, v, z), rel=1e-14)
    # ends on the model's pure critical points (x = 1e-7 away from them)
    methane, butane = lookup("methane"), lookup("n-butane")
    assert locus.T[0] == pytest.approx(butane.Tc, rel=1e-6) and locus.T[-1] == pytest.approx(methane.Tc, rel=1e-5)
    with pytest.raises(dataclasses.FrozenInstanceError):
        locus.status = "x"


def test_a_binary_critical_locus_stopped_short_says_incomplete():
    # Before, a half stopped by max_points was counted a success and the locus called complete (pure
    # methane's end stalled about 1e-6 short of it, until the x1 derivative kept inside (0, 1)).
    from contin_thermo.curves._mixture_critical import binary_critical_locus

    mixture = Mixture((lookup("methane"), lookup("n-butane")), family("pr"))
    locus = binary_critical_locus(mixture, max_points=25)
    assert locus.status == "incomplete"
    assert "x1 towards 0: completed: the branch reached a bound x1 = 1e-07" in locus.message
    assert "x1 towards 1: completed: the maximum number of points was reached (25)" in locus.message
    with pytest.raises(InputError, match="^a binary critical locus needs two components, not 3$"):
        binary_critical_locus(Mixture((lookup("methane"), lookup("ethane"), lookup("propane")), family("pr")))


@pytest.mark.parametrize("T, stable", [(250.0, "liquid"), (300.0, "vapour")])
def test_a_trial_keeps_the_root_that_is_stable_at_its_start_and_says_which(T, stable):
    # A propane-rich trial of BLEND at 1 MPa: two volume roots at both temperatures; the liquid one is
    # the more stable at 250 K, the vapour one at 300 K. The trial's start may be unnormalised (W, not w).
    P, w = 1e6, np.array([0.05, 0.95])
    liquid, vapour = BLEND.volume_roots(T, P, w)
    assert liquid < vapour
    assert BLEND.volume(T, P, w, "stable") == (liquid if stable == "liquid" else vapour)
    d = _feed_d(BLEND, T, P, Z)
    for scale in (1.0, 10.0):
        tm, trial, _, _, root = _newton(BLEND, T, P, d, np.log(scale * w))
        assert root == (1 if stable == "liquid" else 2)
        assert trial.sum() == pytest.approx(1.0, abs=1e-15)


def test_a_component_absent_from_the_feed_leaves_the_critical_point_of_the_others():
    ternary = Mixture((lookup("methane"), lookup("propane"), lookup("n-butane")), family("pr"))
    with np.errstate(divide="ignore", invalid="ignore"):  # 1 / n of the absent component
        point = critical_point(ternary, [0.5, 0.5, 0.0])
    binary = critical_point(BLEND, Z)
    assert point.T == pytest.approx(binary.T, rel=1e-9) and point.P == pytest.approx(binary.P, rel=1e-9)
