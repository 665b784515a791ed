"""Envelope, stability and binary-diagram behaviours that one-line breaks of the source slipped past.

Found by mutation testing (benchmarks/mutation.py); each test names the break it catches.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest

import contin_thermo
from contin import InputError
from contin_thermo.curves._binary import pxy
from contin_thermo.models._components import lookup
from contin_thermo.curves._envelope import _assemble, trace_envelope
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.curves._stability import tangent_plane_test

def propane_twins() -> Mixture:
    """Propane under two names (kij = 0): one fluid to the model."""
    propane = lookup("propane")
    return Mixture((dataclasses.replace(propane, name="propane-a"), dataclasses.replace(propane, name="propane-b")),
                   family("pr"))


# An invented 50/50 blend (demo composition) under Peng-Robinson.
BLEND = Mixture((lookup("methane"), lookup("propane")), family("pr"))
Z = np.array([0.5, 0.5])


@pytest.fixture(scope="module")
def envelope():
    return trace_envelope(BLEND, Z, check_stability=False)


def test_special_points_are_rows_in_branch_order(envelope):
    specials = envelope.special_points
    assert [sp["kind"] for sp in specials] == ["cricondentherm", "critical", "cricondenbar"]
    indices = [sp["index"] for sp in specials]
    assert indices == sorted(indices) and len(set(indices)) == len(indices)
    for sp in specials:
        row = envelope.rows[sp["index"]]
        assert (row[0], row[1]) == (sp["values"]["T"], sp["values"]["P"]), sp["kind"]
    T, P = envelope.column("T").astype(float), envelope.column("P").astype(float)
    assert specials[0]["values"]["T"] == T.max() and specials[2]["values"]["P"] == P.max()


def test_slopes_at_the_cricondentherm_and_cricondenbar_vanish(envelope):
    # Both are folds (of T and of P along the envelope): the reported slopes dT/dP and dP/dT are zero
    # to the location tolerance, far below the slope of the neighbouring chords (finite differences).
    rows = envelope.rows
    for kind, key, scale in (("cricondentherm", "dT_dP", lambda T, P: T / P), ("cricondenbar", "dP_dT", lambda T, P: P / T)):
        sp = envelope.special(kind)
        i = sp["index"]
        T, P = sp["values"]["T"], sp["values"]["P"]
        assert abs(sp["info"][key]) <= 1e-6 * scale(T, P), kind
        chord = [(rows[j + 1][1] - rows[j][1]) / (rows[j + 1][0] - rows[j][0]) for j in (i - 2, i + 1)]
        if kind == "cricondenbar":  # dP/dT changes sign across the fold
            assert chord[0] * chord[1] < 0
        else:
            assert (1 / chord[0]) * (1 / chord[1]) < 0


def _with_fake_fold(branch, index):
    """The branch with one more fold of ln T at row ``index`` (a second, lower-temperature T fold)."""
    real = next(sp for sp in branch.special_points if sp.kind == "fold" and sp.info.get("coordinate") == "lnT")
    point = branch.points[index]
    fake = dataclasses.replace(real, index=index, point=point.copy(), tangent=branch.tangents[index].copy(),
                               values=dict(zip(branch.columns, (float(v) for v in point), strict=True)))
    specials = sorted([*branch.special_points, fake], key=lambda sp: sp.index)
    return dataclasses.replace(branch, special_points=tuple(specials))


def test_the_cricondentherm_is_the_highest_temperature_fold(envelope):
    branch = envelope.branch
    real = envelope.special("cricondentherm")
    # A second T fold at a colder row (row 3, on the dew side): the cricondentherm stays the hottest.
    assert envelope.rows[3][0] < real["values"]["T"]
    _, _, specials, (status, _, success), _ = _assemble(BLEND, Z, _with_fake_fold(branch, 3), 1e5)
    (cricondentherm,) = [sp for sp in specials if sp["kind"] == "cricondentherm"]
    assert cricondentherm["index"] == real["index"]
    assert cricondentherm["values"]["T"] == real["values"]["T"]
    assert success and status == "bound_reached"


def test_a_row_on_the_trivial_solution_makes_the_envelope_inconsistent(envelope):
    branch = envelope.branch
    n = BLEND.size
    points = branch.points.copy()
    points[5, :n] = 0.0  # ln K = 0 at a dew-side row that is not the critical point
    _, _, _, (status, message, success), _ = _assemble(BLEND, Z, dataclasses.replace(branch, points=points), 1e5)
    assert (status, success) == ("inconsistent", False)
    assert "1 point(s) collapsed onto the trivial solution K = 1" in message and "\n" not in message


def test_volume_columns_are_the_roots_of_the_cubic_on_each_side(envelope):
    # An independent check of v_feed and v_incipient: the cubic's own roots at each row's (T, P). On
    # the dew side the feed is the vapour (largest root) and the incipient phase a liquid (smallest
    # root of its composition K z / sum K z); on the bubble side the other way round.
    z = Z
    sides = set()
    critical = envelope.special("critical")["index"]
    for i, row in enumerate(envelope.rows):
        if i == critical:
            continue
        T, P, side, v_feed, v_incipient = row[:5]
        K = np.array(row[6:], dtype=float)
        feed_roots = BLEND.volume_roots(T, P, z)
        incipient_roots = BLEND.volume_roots(T, P, K * z / np.sum(K * z))
        feed, incipient = (1, 0) if side == "dew" else (0, 1)
        assert v_feed == pytest.approx(feed_roots[feed], rel=1e-8), (i, side)
        assert v_incipient == pytest.approx(incipient_roots[incipient], rel=1e-8), (i, side)
        sides.add(side)
    assert sides == {"dew", "bubble"}


def test_the_model_and_the_units_of_every_column_are_written(envelope, tmp_path):
    assert envelope.to_dict()["model"] == "Peng-Robinson, one-fluid mixing with kij"
    lines = {}
    for units, expected in (("si", "T [K], P [Pa]"), ("degC-bar", "T [degC], P [bar]")):
        path = envelope.to_csv(tmp_path / f"{units}.csv", units=units)
        (line,) = [l for l in Path(path).read_text().splitlines() if l.startswith("# units: ")]
        lines[units] = line
        assert line == (f"# units: {expected}, side [-], v_feed [m3/mol], v_incipient [m3/mol], stable [-], "
                        "K_methane [-], K_propane [-]")
    assert lines["si"] != lines["degC-bar"]
    # each special point is written in the header with its exact T and P (in SI units)
    text = Path(envelope.to_csv(tmp_path / "notes.csv")).read_text()
    for sp in envelope.special_points:
        assert f"# {sp['kind']}: T = {sp['values']['T']!r} K, P = {sp['values']['P']!r} Pa\n" in text


def test_a_start_pressure_above_the_envelope_is_refused_in_one_line():
    # 20 MPa lies above this blend's cricondenbar (8.8 MPa under PR): no dew point there.
    from contin import InputError
    from contin_thermo.curves._envelope import dew_point

    with pytest.raises(InputError, match=r"^--from-pressure 2e\+07 Pa: no two-phase point found from Wilson's "
                                         r"K-values \(residual \S+\); try another pressure$"):
        dew_point(BLEND, Z, 2e7)


# -- stability ---------------------------------------------------------------------------------------
# A dew point of BLEND under PR (row 9 of its envelope): T = 305.8388 K, P = 2.797119 MPa.
DEW_T, DEW_P = 305.83883617687695, 2797119.337205556


def test_borderline_instability_just_inside_the_dew_curve():
    # 1e-4 above the dew pressure the feed is inside the two-phase region, barely: tm is negative but
    # tiny (between -1e-4 and -1e-7). Just below the dew pressure the feed is stable.
    inside = tangent_plane_test(BLEND, DEW_T, DEW_P * (1 + 1e-4), Z)
    assert not inside.stable
    assert -1e-4 < inside.tm < -1e-6
    outside = tangent_plane_test(BLEND, DEW_T, DEW_P * (1 - 1e-4), Z)
    assert outside.stable and outside.tm == 0.0


def test_a_known_phase_is_not_taken_for_a_new_one():
    # Just inside the dew curve the only phase below the tangent plane is the incipient liquid; once
    # it is named as known, nothing else is found: stable. Ignoring it would say unstable.
    inside = tangent_plane_test(BLEND, DEW_T, DEW_P * (1 + 1e-4), Z)
    assert not inside.stable and inside.trial[1] > 0.8  # a propane-rich liquid
    again = tangent_plane_test(BLEND, DEW_T, DEW_P * (1 + 1e-4), Z, known=(inside.trial,))
    assert again.stable and again.tm == 0.0
    # whatever other phases are named with it, before or after it
    decoy = np.array([0.3, 0.7])
    for known in ((inside.trial, decoy), (decoy, inside.trial)):
        again = tangent_plane_test(BLEND, DEW_T, DEW_P * (1 + 1e-4), Z, known=known)
        assert again.stable and again.tm == 0.0


def incipient_phase_past_the_critical_point(envelope, rows_past, below, tm_below):
    """(T, P, the phase found there) a little inside BLEND's envelope, ``rows_past`` rows past its
    critical point on the bubble side and ``below`` (relative) under the bubble pressure: the feed is
    unstable there (tm below -``tm_below``), and the phase found has one volume root."""
    row = envelope.rows[envelope.special("critical")["index"] + rows_past]
    assert row[2] == "bubble"
    T, P = row[0], row[1] * (1 - below)
    inside = tangent_plane_test(BLEND, T, P, Z)
    assert not inside.stable and inside.tm < -tm_below
    liquid, vapour = BLEND.volume_roots(T, P, inside.trial)
    assert liquid == vapour
    return T, P, inside.trial


def test_a_known_phase_with_one_volume_root_is_recognised_on_either_root(envelope):
    # Just past the critical point, 1e-4 below the bubble pressure, the only phase below the plane is
    # the incipient one, so near the critical point that the cubic has one root for it: a trial forced
    # onto the "vapour" or the "liquid" root lands on the same phase. Named as known, it is not new.
    T, P, trial = incipient_phase_past_the_critical_point(envelope, 3, 1e-4, 1e-7)
    again = tangent_plane_test(BLEND, T, P, Z, known=(trial,))
    assert again.stable and again.tm == 0.0


# An invented, strongly non-ideal kij (0.2, demo value) between propane and n-pentane: their liquids
# split at low temperature (as in tests/test_stability.py).
SPLIT = Mixture((lookup("propane"), lookup("n-pentane")), family("pr"), np.array([[0.0, 0.2], [0.2, 0.0]]))


def _incipient(row, z):
    K = np.array(row[6:], dtype=float)
    return K * z / np.sum(K * z)


@pytest.fixture(scope="module")
def split_rows():
    return trace_envelope(SPLIT, [0.5, 0.5], check_stability=False).rows


def test_pure_component_trials_find_the_second_liquid(split_rows):
    # At 250 K on the bubble curve the feed would rather split into two liquids; the nearly pure
    # propane trial lies below the tangent plane at once, while the Wilson trials alone only reach a
    # shallower point (tm -0.007 against -0.105 here).
    z = np.array([0.5, 0.5])
    row = min((r for r in split_rows if r[0] < 255.0), key=lambda r: abs(r[0] - 250.0))
    known = (_incipient(row, z),)
    with_pure = tangent_plane_test(SPLIT, row[0], row[1], z, known=known)
    without = tangent_plane_test(SPLIT, row[0], row[1], z, known=known, pure_trials=False)
    assert not with_pure.stable and not without.stable
    assert with_pure.trial[0] > 0.99  # the propane-pure trial
    assert with_pure.tm < without.tm - 0.05


def test_more_trial_phases_never_hide_an_instability(split_rows):
    # At 277.6 K on the bubble curve of the split blend the incipient vapour (about 95 % propane) is
    # the known phase; a propane-rich second *liquid* of nearly the same composition lies well below
    # the tangent plane (tm about -0.021). Matched on composition alone it was dropped as the known
    # phase and the feed called stable, although the Wilson trials alone find it unstable.
    z = np.array([0.5, 0.5])
    row = min(split_rows, key=lambda r: abs(r[0] - 277.6))
    known = (_incipient(row, z),)
    without = tangent_plane_test(SPLIT, row[0], row[1], z, known=known, pure_trials=False)
    assert not without.stable
    result = tangent_plane_test(SPLIT, row[0], row[1], z, known=known)
    assert not result.stable and result.tm <= without.tm
    assert np.max(np.abs(result.trial - known[0])) < 1e-2 and result.tm < -0.02
    # the phase found is a liquid: its volume is the cubic's smallest root, far from the vapour's
    liquid, vapour = SPLIT.volume_roots(row[0], row[1], result.trial)
    assert vapour > 10 * liquid
    assert SPLIT.volume(row[0], row[1], result.trial, "stable") == liquid


def test_the_stationary_points_handed_on_are_distinct(split_rows):
    # Along an envelope the stationary points of one point start the next one's trials: the two lowest
    # distinct ones (differing by more than 1e-4 in some mole fraction), never one twice.
    z = np.array([0.5, 0.5])
    row = min(split_rows, key=lambda r: abs(r[0] - 277.6))
    result = tangent_plane_test(SPLIT, row[0], row[1], z)
    stationary = result.stationary
    assert stationary.shape == (2, 2)
    assert np.max(np.abs(stationary[0] - stationary[1])) > 1e-4
    assert np.allclose(stationary.sum(axis=1), 1.0, rtol=0, atol=1e-12)
    assert np.max(np.abs(stationary[0] - result.trial)) < 1e-12  # the lowest first: the phase found
    # just inside the dew curve of BLEND several trials run onto the one incipient liquid: it is handed
    # on once
    inside = tangent_plane_test(BLEND, DEW_T, DEW_P * (1 + 1e-4), Z)
    rows = inside.stationary
    assert len(rows) >= 1 and np.max(np.abs(rows[0] - inside.trial)) < 1e-12
    assert all(np.max(np.abs(a - b)) > 1e-4 for i, a in enumerate(rows) for b in rows[i + 1:])


# -- binary diagrams ---------------------------------------------------------------------------------

def test_azeotrope_has_equal_phase_compositions():
    # A large positive kij (invented value, 0.25) gives a maximum-pressure azeotrope: x1 = y1 there.
    mixture = Mixture((lookup("ethane"), lookup("carbon dioxide")), family("pr"), np.array([[0, 0.25], [0.25, 0]]))
    diagram = pxy(mixture, 250.0)
    (azeotrope,) = [sp for sp in diagram.special_points if sp["kind"] == "azeotrope"]
    row = diagram.rows[azeotrope["index"]]
    assert azeotrope["name"] == "azeotrope"
    assert row[0] == azeotrope["values"]["x1"] and row[2] == azeotrope["values"]["P"]
    # the volume columns are the cubic's roots for each phase at the row's T and P
    for x1, y1, P, v_liquid, v_vapour in diagram.rows[1:-1:7]:
        assert v_liquid == pytest.approx(mixture.volume_roots(250.0, P, np.array([x1, 1 - x1]))[0], rel=1e-8)
        assert v_vapour == pytest.approx(mixture.volume_roots(250.0, P, np.array([y1, 1 - y1]))[1], rel=1e-8)
    assert abs(row[0] - row[1]) <= 1e-8 * row[0]
    assert 0.0 < row[0] < 1.0 and row[3] < row[4]  # distinct liquid and vapour volumes
    # and the pressure is a maximum there: above both neighbouring rows
    assert row[2] >= diagram.rows[azeotrope["index"] - 1][2] and row[2] >= diagram.rows[azeotrope["index"] + 1][2]


def test_closing_at_a_critical_point_is_a_completed_status():
    # 250 K lies above methane's Tc (190.56 K, Poling et al. 5th ed.; memory): the region closes.
    diagram = pxy(BLEND, 250.0)
    assert (diagram.status, diagram.success) == ("terminal_event", True)
    assert diagram.message.startswith("completed: the two-phase region closes at the critical point x1 = ")
    assert "\n" not in diagram.message
    assert [sp["kind"] for sp in diagram.special_points] == ["critical"]


# -- what an envelope reports besides its rows ------------------------------------------------------
def test_the_columns_the_summary_and_the_work_per_point_are_as_documented(envelope):
    assert envelope.columns == ("T", "P", "side", "v_feed", "v_incipient", "stable", "K_methane", "K_propane")
    stats = envelope.stats
    assert stats["points"] == len(envelope.rows)
    assert stats["jacobian_evaluations_per_point"] == stats["jacobian_evaluations"] / (len(envelope.rows) - 1)
    found = ", ".join(f"{sp['kind']} T = {sp['values']['T']:.5g} K, P = {sp['values']['P']:.5g} Pa"
                      for sp in envelope.special_points)
    assert repr(envelope) == (f"<Envelope of 2 components (Peng-Robinson): {len(envelope.rows)} points; {found}; "
                              "status bound_reached>")


def test_a_stability_check_stopped_by_ctrl_c_keeps_the_rows_unchecked(monkeypatch):
    from contin_thermo.curves import _stability

    def stopped(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(_stability, "check_points", stopped)
    interrupted = trace_envelope(BLEND, Z, check_stability=True)
    assert (interrupted.status, interrupted.success) == ("interrupted", False)
    assert interrupted.message == "interrupted: the stability check was stopped; the traced points are kept, unchecked"
    assert set(interrupted.column("stable")) == {None} and len(interrupted.rows) > 20
    assert interrupted.quality_lines == ()


def test_a_liquid_dense_stretch_that_returns_to_the_bubble_point_is_noted():
    # 89 % methane + 11 % n-heptane, Peng-Robinson, kij = 0 (an invented feed): past the critical point
    # the incipient phase is a dense liquid for a while, then the branch reaches the bubble point. The
    # run completes, and a note names the first and last rows of that stretch.
    mixture = Mixture((lookup("methane"), lookup("n-heptane")), family("pr"))
    envelope = trace_envelope(mixture, [0.89, 0.11], check_stability=False)
    assert envelope.success and envelope.status == "bound_reached"
    sides = list(envelope.column("side"))
    dense = [i for i, side in enumerate(sides) if side == "liquid-liquid"]
    assert dense and sides[-1] == "bubble" and dense == list(range(dense[0], dense[-1] + 1))
    T, P = envelope.column("T"), envelope.column("P")
    first, last = dense[0], dense[-1]
    assert (f"from T = {T[first]:.6g} K, P = {P[first]:.6g} Pa to T = {T[last]:.6g} K, P = {P[last]:.6g} Pa the "
            "incipient phase is liquid-dense (rows labelled liquid-liquid)") in envelope.notes


def test_one_fluid_in_two_names_ends_at_its_critical_point_with_its_volume():
    # Two copies of propane (kij = 0) are one fluid to the model: the saturation curve, traced until the
    # phase volumes nearly meet (a terminal event of kind near_critical), then the fluid's own critical
    # point. At Tc, Pc the cubic has a triple root, so 3 Z_c = 1 - Omega_b (exact for the model).
    from contin_thermo.models._helmholtz import GAS_CONSTANT

    propane = lookup("propane")
    import time

    twins = propane_twins()
    began = time.perf_counter()
    envelope = trace_envelope(twins, [0.3, 0.7], check_stability=False)
    wall = time.perf_counter() - began
    assert (envelope.status, envelope.success) == ("terminal_event", True)
    assert envelope.message == "completed: the saturation curve ends at the critical point"
    # the times are parts of the call's own (a consistency check, not a speed test)
    assert 0.0 <= envelope.stats["trace_seconds"] and envelope.stats["trace_seconds"] + envelope.stats["setup_seconds"] <= wall
    assert envelope.notes == ("the components cannot be told apart by the model: dew and bubble curves coincide "
                              "with the saturation curve of one fluid",)
    (critical,) = envelope.special_points
    assert critical["kind"] == "critical" and critical["index"] == len(envelope.rows) - 1
    z_c = (1.0 - family("pr").omega_b) / 3.0
    assert critical["info"]["v"] == pytest.approx(z_c * GAS_CONSTANT * propane.Tc / propane.Pc, rel=1e-8)
    assert critical["info"]["note"] == "the critical point of the one fluid (Heidemann-Khalil)"
    (near,) = envelope.branch.special("near_critical")
    assert near.index == len(envelope.rows) - 1 and near.info["terminal"] is True
    assert near.name == "near critical point"
    stats = envelope.stats
    assert stats["points"] == len(envelope.rows)
    assert stats["jacobian_evaluations_per_point"] == stats["jacobian_evaluations"] / (len(envelope.rows) - 1)
    assert set(envelope.column("side")) == {"dew"}
    assert envelope.columns == ("T", "P", "side", "v_feed", "v_incipient", "stable", "K_propane-a", "K_propane-b")


def test_a_warm_start_lands_on_the_same_dew_point_for_less_work_and_a_trivial_guess_is_not_taken(envelope):
    from contin_thermo.curves._envelope import start_coordinates

    guess = start_coordinates(envelope.to_dict())
    warm = trace_envelope(BLEND, Z, check_stability=False, start=guess, max_points=3)
    assert warm.rows[0][:2] == pytest.approx(envelope.rows[0][:2], rel=1e-10)
    assert 1 <= warm.stats["start_newton_iterations"] < envelope.stats["start_newton_iterations"]
    # a guess on the trivial solution (K = 1, one volume): Newton stays there, so Wilson's K-values
    # start it instead, after the guess's own work
    n = len(Z)
    trivial = [0.0] * n + [guess[n], guess[n + 1], guess[n + 1], guess[-1]]
    cold = trace_envelope(BLEND, Z, check_stability=False, start=trivial, max_points=3)
    assert cold.rows[0][:2] == pytest.approx(envelope.rows[0][:2], rel=1e-10)
    assert cold.stats["start_newton_iterations"] > envelope.stats["start_newton_iterations"]


def test_the_envelope_system_answers_every_call_of_the_system_interface_alike(envelope):
    # residual, its Jacobian function and parameter_jacobian (what sensitivities and other callers use) against the
    # one linearise the engine calls, and both Jacobians against central differences of the residual.
    from contin_thermo.curves._envelope import EnvelopeSystem

    system = EnvelopeSystem(BLEND, Z, 0.0)
    n = BLEND.size
    assert list(system.unknowns) == ["lnK_methane", "lnK_propane", "lnT", "lnV_feed", "lnV_incipient"]
    assert list(system.equations) == ["fugacity_methane", "fugacity_propane", "pressure_feed", "pressure_incipient", "sum"]
    row = envelope.branch.points[len(envelope.rows) // 3]
    u, p = row[:-1], np.array([row[-1]])
    r, J, dp = system.linearise(u, p, 0)
    assert system.residual(u, p) == pytest.approx(r, abs=1e-13)  # the residual alone: another path, same values
    assert np.array_equal(system.jacobian_function(u, p), J)
    assert np.array_equal(system.parameter_jacobian(u, p)[:, 0], dp)
    h = 1e-6
    for k in range(u.size):
        step = np.zeros_like(u)
        step[k] = h
        difference = (system.residual(u + step, p) - system.residual(u - step, p)) / (2 * h)
        assert J[:, k] == pytest.approx(difference, rel=1e-5, abs=1e-7), k
    difference = (system.residual(u, p + h) - system.residual(u, p - h)) / (2 * h)
    assert dp == pytest.approx(difference, rel=1e-5, abs=1e-7)
    assert np.abs(r).max() <= 1e-9 and n == 2


def test_the_envelope_system_counts_each_jacobian_once_and_keeps_one_temperature_memo():
    from contin_thermo.curves._envelope import EnvelopeSystem

    system = EnvelopeSystem(BLEND, Z, 0.0)
    u, p = np.array([1.0, -1.0, math.log(250.0), -5.0, -8.0]), np.array([math.log(2e6)])
    system.residual(u, p)
    assert system.evaluations == 0  # a residual alone is not a Jacobian evaluation
    system.jacobian_function(u, p)
    system.linearise(u, p, 0)
    assert system.evaluations == 2
    first = system._attraction(250.0)
    assert system._attraction(250.0) is first and system._attraction(260.0) is not first


def test_a_run_stopped_by_its_point_limit_claims_no_bubble_point_and_no_missing_critical_point():
    partial = trace_envelope(BLEND, Z, check_stability=False, max_points=12)
    assert (partial.status, partial.success) == ("max_points", True)
    assert partial.message.startswith("completed: the maximum number of points was reached (12) at T = ")
    assert "bubble point" not in partial.message
    assert partial.notes[-1] == "no critical point was passed on this branch"
    stopped = contin_thermo.trace_envelope(contin_thermo.mixture(["methane", "n-decane"], "pr"), [0.9, 0.1],
                                           check_stability=False)
    assert stopped.status == "liquid_liquid" and stopped.special("critical") is not None
    assert "no critical point was passed on this branch" not in stopped.notes


def test_the_timings_add_up_to_no_more_than_the_call(envelope):
    import time

    began = time.perf_counter()
    timed = trace_envelope(BLEND, Z, check_stability=True)
    wall = time.perf_counter() - began
    stats = timed.stats
    assert stats["setup_seconds"] >= stats.get("engine_setup_seconds", 0.0) >= 0.0
    assert stats["setup_seconds"] >= float(timed.branch.stats.get("setup_seconds", 0.0))
    assert min(stats["trace_seconds"], stats["stability_seconds"]) > 0.0
    assert stats["setup_seconds"] + stats["trace_seconds"] + stats["stability_seconds"] <= wall


def test_the_critical_points_facts_name_the_key_component_not_the_engines_coordinate(envelope):
    info = envelope.special("critical")["info"]
    assert info["key_component"] in ("methane", "propane")
    assert not {"coordinate", "gap", "tangent"} & set(info)


def test_metastable_stretches_are_the_runs_of_rows_flagged_not_stable(envelope):
    rows = [list(row) for row in envelope.rows[:7]]
    for row, flag in zip(rows, [True, False, False, True, False, None, False], strict=True):
        row[5] = flag
    flagged = dataclasses.replace(envelope, rows=rows)
    assert flagged.metastable_stretches() == [(1, 2), (4, 4), (6, 6)]


def test_a_second_critical_point_turns_the_sides_back_to_dew(envelope):
    # Passing a critical point swaps the phases' roles; passing another swaps them back. Two rows of
    # the passage (|ln K| <= 0.1, so never liquid-liquid) taken as critical points: the row between
    # them is bubble, the rows after the second dew again.
    from contin_thermo.curves._envelope import _phase_sides

    points = envelope.branch.points
    n = BLEND.size
    c = envelope.special("critical")["index"]
    lnK, T = points[:, :n], np.exp(points[:, n])
    assert np.abs(lnK[c - 3:c + 4]).max() <= 0.1
    sides = _phase_sides(BLEND, Z, lnK, np.exp(points[:, n + 1]), np.exp(points[:, n + 2]), T, [c - 2, c])
    assert list(sides[c - 3:c + 2]) == ["dew", "dew", "bubble", "bubble", "dew"]


def test_a_highest_temperature_that_is_not_a_located_fold_is_a_failed_check_even_on_the_second_row(envelope):
    # The branch without its folds of T, and row 1 made the hottest: an interior maximum nobody
    # located. (Only the first and last rows may be the highest without a fold: the branch's ends.)
    branch = envelope.branch
    n = BLEND.size
    points = branch.points.copy()
    points[1, n] = points[:, n].max() + 0.01
    folds_gone = tuple(sp for sp in branch.special_points if not (sp.kind == "fold" and sp.info.get("coordinate") == "lnT"))
    _, _, _, (status, message, success), _ = _assemble(
        BLEND, Z, dataclasses.replace(branch, points=points, special_points=folds_gone), 1e5)
    T1 = math.exp(points[1, n])
    assert (status, success) == ("inconsistent", False)
    assert message == ("stopped: the traced envelope fails its own checks: the highest temperature traced "
                       f"({T1:.8g} K, row 1) is not a located cricondentherm")


def test_a_warm_start_on_a_saturation_point_with_k_1_is_taken_and_a_failed_one_is_not():
    # One fluid in two names (propane twice) at 4 MPa, near its critical pressure: the start has
    # K = 1 with the two volumes apart (ln of their ratio below 1, yet well above 1e-3), a true
    # saturation point, so a warm start from it is kept; a guess from which Newton fails is dropped for
    # Wilson's K-values, and the start is converged either way.
    from contin_thermo.curves._envelope import EnvelopeSystem, _start_point

    twins = propane_twins()
    z = np.array([0.3, 0.7])
    cold, cold_work = _start_point(twins, z, 4e6, 1.0)
    assert np.abs(cold[:2]).max() < 1e-4 and 1e-3 < abs(cold[3] - cold[4]) < 1.0
    warm, warm_work = _start_point(twins, z, 4e6, 1.0, guess=cold)
    assert np.array_equal(warm, cold) or warm == pytest.approx(cold, abs=1e-12)
    assert warm_work < cold_work
    hopeless = cold.copy()
    hopeless[2] += 3.0  # twenty times the temperature: Newton does not converge from there
    again, _ = _start_point(twins, z, 4e6, 1.0, guess=hopeless)
    system = EnvelopeSystem(twins, z, 0.0)
    assert np.abs(system.residual(again[:-1], again[-1:])).max() <= 1e-9
    assert again == pytest.approx(cold, abs=1e-9)


# -- the tangent-plane test's bookkeeping of roots and known phases ---------------------------------
@pytest.mark.parametrize(("P", "x1", "lower"), [(2.8e6, 0.2, 1), (1.0e6, 0.2, 2), (2.4e6, 0.3, 2)])
def test_the_root_of_lower_gibbs_energy_is_the_one_with_the_smaller_sum_of_x_ln_phi(P, x1, lower):
    # Against the mixture's own scalar fugacities on each root (another path through the model): the
    # molar Gibbs energy of a phase of fixed T, P, x differs between roots by RT sum x ln phi.
    from contin_thermo.curves._stability import _roots_used, ln_phi_batch

    w = np.array([x1, 1.0 - x1])
    T = DEW_T
    liquid_v, vapour_v = BLEND.volume_roots(T, P, w)
    assert liquid_v < vapour_v  # two roots here
    gibbs = [float(w @ BLEND.ln_phi(T, P, w, phase)) for phase in ("liquid", "vapour")]
    assert (1 if gibbs[0] < gibbs[1] else 2) == lower
    A = BLEND.attraction_roots(T)[0]
    for which, expected in ((0, lower), (1, 1), (2, 2)):
        assert _roots_used(BLEND, T, P, w[None, :], A, np.array([which])).tolist() == [expected]
    batch = ln_phi_batch(BLEND, T, P, np.vstack([w, w]), A, np.array([1, 2]))
    assert batch[0] == pytest.approx(BLEND.ln_phi(T, P, w, "liquid"), abs=1e-12)
    assert batch[1] == pytest.approx(BLEND.ln_phi(T, P, w, "vapour"), abs=1e-12)
    # the feed at its dew point has one root (it is both): 0, whichever root is asked for
    one = np.array([[0.5, 0.5]])
    assert BLEND.volume_roots(T, DEW_P, one[0])[0] == BLEND.volume_roots(T, DEW_P, one[0])[1]
    assert _roots_used(BLEND, T, DEW_P, one, A, np.array([1])).tolist() == [0]
    assert _roots_used(BLEND, T, DEW_P, one, A, np.array([2])).tolist() == [0]


def test_a_known_phase_with_two_roots_is_matched_on_its_own_root_and_within_1e_3_only():
    # At 2.8 MPa and the blend's dew temperature, x = (0.2, 0.8) has a liquid and a vapour root: known
    # as the liquid, a trial of that composition on the liquid root is it, on the vapour root it is
    # another phase; a composition 2e-3 away is another phase on either root, 5e-4 away it is it.
    from contin_thermo.curves._stability import _on_known

    T, P = DEW_T, 2.8e6
    k = np.array([0.2, 0.8])
    A = BLEND.attraction_roots(T)[0]
    phases = [(k, 1)]
    rows = np.array([k, k, k + [5e-4, -5e-4], k + [2e-3, -2e-3], k + [2e-3, -2e-3]])
    which = np.array([1, 2, 1, 1, 2])
    assert _on_known(BLEND, T, P, rows, which, phases, A).tolist() == [True, False, True, False, False]
    # known with one root (0), it is matched on whatever root the trial takes
    assert _on_known(BLEND, T, P, rows[:2], which[:2], [(k, 0)], A).tolist() == [True, True]


def test_the_batched_fugacities_are_the_mixtures_own_on_each_root_over_a_wide_range():
    # ln_phi_batch (roots of the cubic from its companion matrix, polished by Newton) against
    # Mixture.ln_phi (the mixture's own volume roots), methane + n-decane under Peng-Robinson from 1 kPa
    # to 50 MPa and 200 K to 300 K: one model, two paths, to round-off.
    from contin_thermo.curves._stability import ln_phi_batch

    mixture = Mixture((lookup("methane"), lookup("n-decane")), family("pr"))
    for T in (200.0, 250.0, 300.0):
        A = mixture.attraction_roots(T)[0]
        for P in (1e3, 1e5, 1e7, 5e7):
            w = np.array([[0.01, 0.99], [0.1, 0.9], [0.5, 0.5]])
            for root, phase in ((1, "liquid"), (2, "vapour")):
                batch = ln_phi_batch(mixture, T, P, w, A, np.full(3, root))
                for k in range(3):
                    assert batch[k] == pytest.approx(mixture.ln_phi(T, P, w[k], phase), abs=1e-11), (T, P, k, phase)


def test_newtons_method_for_a_stationary_point_converges_at_second_order_with_its_exact_hessian():
    # The blend at 250 K and 3 MPa is deep inside its envelope. From 5 % off a methane-rich stationary
    # point of tm, Newton in alpha = 2 sqrt(W) (Michelsen 1982) converges in a handful of iterations
    # (second order: the error squares each time), to a point where ln W_i + ln phi_i(w) - d_i = 0.
    from contin_thermo.curves._stability import _newton, ln_phi_batch

    T, P = 250.0, 3e6
    A = BLEND.attraction_roots(T)[0]
    d = np.log(Z) + ln_phi_batch(BLEND, T, P, Z[None, :], A)[0]
    tm, w, ln_W, count, root = _newton(BLEND, T, P, d, np.log([0.95130284, 0.04869716]) + np.log(1.76) + [0.05, -0.05])
    assert root == 1 and count <= 6
    phase = "liquid" if root == 1 else "vapour"
    assert np.abs(ln_W + BLEND.ln_phi(T, P, w, phase) - d).max() <= 1e-9
    assert w == pytest.approx([0.95130284, 0.04869716], abs=1e-7)
    # at a stationary point tm = 1 - sum W (Michelsen 1982)
    assert tm == pytest.approx(1.0 - float(np.exp(ln_W).sum()), abs=1e-9) and tm < -0.5


@pytest.mark.parametrize("n", [2, 3, 5])
def test_each_pure_trial_is_a_composition_with_a_thousandth_shared_by_the_others(n):
    from contin_thermo.curves._stability import _pure_trials

    trials = _pure_trials(n)
    assert trials.shape == (n, n)
    assert trials.sum(axis=1) == pytest.approx(np.ones(n), abs=1e-15)
    for i in range(n):
        assert trials[i, i] == 1.0 - 1e-3
        assert np.delete(trials[i], i) == pytest.approx(np.full(n - 1, 1e-3 / (n - 1)), rel=1e-15)


def test_the_work_counted_includes_newtons_iterations_where_the_sign_needed_settling():
    # 1 % below the blend's dew pressure the lowest trials end near tm = 0 unconverged, so Newton
    # settles their sign: the work counted is the trial sweeps plus Newton's iterations.
    from contin_thermo.curves import _stability

    calls = []
    real = _stability._newton

    def counted(*args, **kwargs):
        result = real(*args, **kwargs)
        calls.append(result[3])
        return result

    def free(*args, **kwargs):  # the same answers, counted as no work
        tm, w, ln_W, _, root = real(*args, **kwargs)
        return tm, w, ln_W, 0, root

    try:
        _stability._newton = counted
        again = tangent_plane_test(BLEND, DEW_T, DEW_P * 0.99, Z)
        _stability._newton = free
        sweeps_only = tangent_plane_test(BLEND, DEW_T, DEW_P * 0.99, Z)
    finally:
        _stability._newton = real
    assert again.stable and again.tm == 0.0 and sweeps_only.stable
    assert calls and all(count >= 1 for count in calls)
    assert again.iterations == sweeps_only.iterations + sum(calls)
    assert sweeps_only.iterations >= 4  # at least one sweep of every trial (two Wilson, two pure)
    assert tangent_plane_test(BLEND, DEW_T, DEW_P * 0.99, Z).iterations == again.iterations


def test_a_diagrams_summary_and_repr_say_what_it_is_line_by_line():
    diagram = pxy(BLEND, 250.0)
    (critical,) = [sp for sp in diagram.special_points if sp["kind"] == "critical"]
    x1, P = critical["values"]["x1"], critical["values"]["P"]
    lines = diagram.summary()
    assert lines[:5] == ["pxy diagram", "  model    : Peng-Robinson", f"  status   : {diagram.message}",
                         f"  points   : {len(diagram.rows)}", f"  critical : x1 = {x1:.6g}, P = {P:.6g} Pa"]
    assert lines[5].startswith("Caution: cubic equations of state are approximate")
    assert repr(diagram) == (f"<pxy diagram of methane + propane at T = 250 K (Peng-Robinson): {len(diagram.rows)} "
                             "points; critical; status terminal_event>")
    azeotropic = pxy(Mixture((lookup("ethane"), lookup("carbon dioxide")), family("pr"), np.array([[0, 0.25], [0.25, 0]])),
                     250.0)
    assert [sp["kind"] for sp in azeotropic.special_points] == ["azeotrope"]
    assert repr(azeotropic).endswith(f"points; azeotrope; status {azeotropic.status}>")
    two = dataclasses.replace(azeotropic, special_points=[*azeotropic.special_points, *diagram.special_points])
    assert repr(two).endswith(f"points; azeotrope, critical; status {azeotropic.status}>")


@pytest.mark.parametrize(("kind", "fixed", "other"), [("pxy", 250.0, "lnP"), ("txy", 2e6, "lnT")])
def test_the_binary_system_names_its_unknowns_and_starts_on_the_pure_second_components_saturation(kind, fixed, other):
    # The start is converged (its residual vanishes at x1 = 0) and is a real saturation point: the two
    # volumes apart, K_2 = 1 and K_1 = y1 / x1 from the light component's infinite dilution, not 1.
    from contin_thermo.curves._binary import _BinarySystem, _start

    system = _BinarySystem(BLEND, kind, fixed)
    assert list(system.unknowns) == ["lnK_1", "lnK_2", other, "lnV_liquid", "lnV_vapour"]
    u0 = _start(BLEND, kind, fixed)
    assert np.abs(system.residual(u0, np.array([0.0]))).max() <= 1e-9
    assert u0[1] == pytest.approx(0.0, abs=1e-12) and u0[0] > 0.5 and u0[4] - u0[3] > 1e-3


def test_bad_binary_inputs_are_refused_with_the_whole_message():
    from contin_thermo.curves._binary import txy

    three = Mixture((lookup("methane"), lookup("ethane"), lookup("propane")), family("pr"))
    with pytest.raises(InputError) as caught:
        pxy(three, 200.0)
    assert str(caught.value) == "--mixture must name exactly two components for pxy, not 3"
    propane, butane = lookup("propane"), lookup("n-butane")
    pair = Mixture((propane, butane), family("pr"))
    with pytest.raises(InputError) as caught:
        pxy(pair, butane.Tc)  # exactly at the critical temperature: refused too
    assert str(caught.value).startswith(f"--temperature {butane.Tc:g} K is at or above the critical temperature of n-butane")
    with pytest.raises(InputError) as caught:
        txy(pair, 1e-7)
    assert str(caught.value) == ("--pressure 1e-07 Pa is below 1e-06 Pa, where no saturation point of n-butane can be "
                                 "computed; give a higher pressure")


@pytest.mark.parametrize(("kind", "value", "message"), [
    ("pxy", -5.0, "--temperature -5.0 must be a positive number"),
    ("pxy", math.nan, "--temperature nan must be a positive number"),
    ("txy", 0.0, "--pressure 0.0 must be a positive number"),
    ("txy", True, "--pressure True must be a positive number"),
])
def test_a_fixed_value_that_is_not_a_positive_number_is_refused_in_words(kind, value, message):
    from contin_thermo.curves._binary import txy

    with pytest.raises(InputError) as caught:
        (pxy if kind == "pxy" else txy)(BLEND, value)
    assert str(caught.value) == message


def test_the_critical_end_of_a_txy_diagram_is_a_row_on_the_model_at_the_fixed_pressure():
    # methane + carbon dioxide at 6 MPa (as in tests/test_binary.py): the critical row's volume gives
    # back the fixed pressure through the equation of state, and x1 = y1 there.
    from contin_thermo.curves._binary import txy

    mixture = Mixture((lookup("methane"), lookup("carbon dioxide")), family("pr"))
    diagram = txy(mixture, 6e6)
    (critical,) = [sp for sp in diagram.special_points if sp["kind"] == "critical"]
    assert critical["name"] == "critical point" and critical["index"] == len(diagram.rows) - 1
    x1, y1, T, v_liquid, v_vapour = diagram.rows[-1]
    assert x1 == y1 == critical["values"]["x1"] and v_liquid == v_vapour and T == critical["values"]["T"]
    assert mixture.pressure(T, v_liquid, np.array([x1, 1.0 - x1])) == pytest.approx(6e6, rel=1e-9)
    assert critical["info"]["note"] == "Heidemann-Khalil critical point of the binary at the fixed pressure"
    assert diagram.message == f"completed: the two-phase region closes at the critical point x1 = {x1:.6g}, T = {T:.6g} K"


def test_a_closing_whose_critical_point_is_not_found_says_so(monkeypatch):
    from contin_thermo.curves import _binary

    monkeypatch.setattr(_binary, "_critical_end", lambda *args: None)
    diagram = pxy(BLEND, 250.0)
    assert (diagram.status, diagram.success) == ("critical_not_located", False)
    assert diagram.message == "stopped: the two-phase region closes here, but its critical point was not located"
    assert [sp["kind"] for sp in diagram.special_points] == []


def test_the_envelope_columns_units_are_those_written():
    from contin_thermo.curves._envelope import ENVELOPE_UNITS

    assert ENVELOPE_UNITS == {"T": "K", "P": "Pa", "side": "", "v_feed": "m3/mol", "v_incipient": "m3/mol",
                              "stable": "", "P_std": "Pa"}


def test_a_feed_of_the_wrong_size_is_refused_in_words():
    with pytest.raises(InputError) as caught:
        trace_envelope(BLEND, [0.2, 0.3, 0.5])
    assert str(caught.value) == "the feed has 3 mole fractions for 2 components"


def test_the_one_fluid_rows_hold_the_vapour_as_the_feed_and_the_liquid_as_the_incipient_phase():
    # On the saturation curve of one fluid (propane twice) the dew-side feed is the vapour: the larger
    # volume root, and the incipient phase the liquid, the smaller, each a root of the cubic.
    twins = propane_twins()
    envelope = trace_envelope(twins, [0.3, 0.7], check_stability=False)
    for T, P, _, v_feed, v_incipient, *_ in envelope.rows[:-1]:
        liquid, vapour = twins.volume_roots(T, P, np.array([0.3, 0.7]))
        assert v_feed == pytest.approx(vapour, rel=1e-8) and v_incipient == pytest.approx(liquid, rel=1e-8)
        assert v_feed > v_incipient


def test_a_warm_start_of_a_three_component_feed_keeps_the_start_pressure():
    # (ln K x3, ln T, ln V x2, ln P): the warm start's Newton fixes ln P, the last of the n + 4
    # coordinates, index n + 3, whatever n is.
    from contin_thermo.curves._envelope import start_coordinates

    mixture = Mixture((lookup("methane"), lookup("ethane"), lookup("n-butane")), family("pr"))
    z = np.array([0.7, 0.2, 0.1])
    cold = trace_envelope(mixture, z, check_stability=False, max_points=3)
    guess = np.array(start_coordinates(cold.to_dict()))
    guess[:3] *= 1.001  # a neighbouring model's start
    warm = trace_envelope(mixture, z, check_stability=False, max_points=3, start=list(guess))
    assert warm.rows[0][1] == pytest.approx(1e5, rel=1e-14) and warm.rows[0][0] == pytest.approx(cold.rows[0][0], rel=1e-10)
    # taken, not dropped for Wilson's K-values (which would add the cold start's work to the warm one's)
    assert warm.stats["start_newton_iterations"] <= cold.stats["start_newton_iterations"]


def test_the_summary_names_each_metastable_stretch_by_its_first_and_last_rows(envelope):
    rows = [list(row) for row in envelope.rows]
    for row in rows:
        row[5] = True
    for i in (3, 4, 5):
        rows[i][5] = False
    flagged = dataclasses.replace(envelope, rows=rows)
    lines = flagged.summary()
    assert lines[0] == "phase envelope"
    a, b = rows[3], rows[5]
    (line,) = [line for line in lines if line.strip().startswith("metastable")]
    assert line.endswith(f"dew side from T = {a[0]:.6f} K, P = {a[1]:.6g} Pa to T = {b[0]:.6f} K, "
                         f"P = {b[1]:.6g} Pa (another phase split is more stable)"), line


def test_a_row_beyond_the_cricondenbar_fails_the_check_in_words(envelope):
    branch = envelope.branch
    points = branch.points.copy()
    top = envelope.special("cricondenbar")
    i = top["index"] - 4
    points[i, -1] = points[top["index"], -1] + 0.01
    _, _, _, (status, message, success), _ = _assemble(BLEND, Z, dataclasses.replace(branch, points=points), 1e5)
    P = math.exp(points[i, -1])
    assert (status, success) == ("inconsistent", False)
    assert message == ("stopped: the traced envelope fails its own checks: "
                       f"row {i} lies beyond the cricondenbar ({P:.8g} against {top['values']['P']:.8g} Pa)")


def test_a_feed_that_does_not_sum_to_one_within_a_millionth_is_refused():
    with pytest.raises(InputError) as caught:
        trace_envelope(BLEND, [0.5, 0.5 + 1.5e-6])
    assert str(caught.value) == "the mole fractions sum to 1.0000015, not 1; fix them or pass --normalise"
    assert trace_envelope(BLEND, [0.5, 0.5 + 0.5e-6], check_stability=False, max_points=3).rows


@pytest.mark.parametrize(("kind", "fixed", "what"), [("pxy", 250.0, "temperature"), ("txy", 2e6, "pressure")])
def test_a_pure_component_saturation_that_newton_cannot_find_is_refused_in_words(monkeypatch, kind, fixed, what):
    from contin_thermo.curves import _binary

    monkeypatch.setattr(_binary, "_newton", lambda system, x, fixed_index, value: (x, 1.0, False))
    with pytest.raises(InputError) as caught:
        _binary._start(BLEND, kind, fixed)
    assert str(caught.value) == (f"no saturation point of propane found at the given {what}; "
                                 "is it below the critical point?")


class _Floored:
    """A stand-in for the envelope system: one unknown u and the parameter ln P, F = u - 1 except that
    the residual never falls below ``floor`` in size (a noise floor, as rounding leaves near a
    critical point), so Newton stops making progress there."""

    def __init__(self, floor):
        self.floor = floor

    def evaluate(self, u, ln_p, with_jacobian=True):
        first = u[0] - 1.0
        r = np.array([math.copysign(max(abs(first), self.floor), first if first else 1.0)])
        return (r, np.array([[1.0]]), np.array([0.0])) if with_jacobian else (r,)


def test_envelope_newton_that_stalls_below_a_hundred_tolerances_counts_as_converged():
    # Breaks caught: the stalled case returning "not converged"; the final test loosened or tightened.
    from contin_thermo.curves._envelope import _newton

    for floor, converged in ((5e-11, True), (5e-9, True), (5e-7, False)):
        x, norm, ok = _newton(_Floored(floor), np.array([3.0, 0.5]), 1, 0.0, tolerance=1e-10)
        assert (ok, norm) == (converged, pytest.approx(floor, rel=1e-12)), floor
        assert x[1] == 0.0 and abs(x[0] - 1.0) <= floor + 1e-15
    # A residual exactly at the tolerance meets it: two damped steps (3 -> 2 -> 1) end on u = 1, where
    # the residual is the floor itself, as the iterations run out.
    x, norm, ok = _newton(_Floored(1e-10), np.array([3.0, 0.5]), 1, 0.0, tolerance=1e-10, iterations=2)
    assert (x[0], norm, ok) == (1.0, 1e-10, True)


def test_the_incipient_phase_is_told_as_fractions_even_at_a_point_off_the_envelope():
    # The messages' description of a point (for instance the start guess when its Jacobian is
    # singular) normalises K z, which sums to one only on the envelope itself.
    from contin_thermo.curves._envelope import _in_users_terms

    describe = _in_users_terms(BLEND, Z)
    x = np.array([math.log(3.0), math.log(1.0), math.log(250.0), 0.0, math.log(2e6)])
    assert describe(x) == "T = 250 K, P = 2e+06 Pa, where the incipient phase is methane 0.75, propane 0.25"


def test_an_envelope_that_runs_on_to_a_temperature_bound_says_so_in_kelvin(envelope):
    # The traced blend's last row relabelled as reached on a temperature bound (ln T) instead of the
    # start pressure: an open envelope, named by its T, with the P there.
    branch = envelope.branch
    last = branch.special_points[-1]
    assert (last.kind, last.info) == ("bound", {"coordinate": "lnP"})
    on_T = dataclasses.replace(last, name=f"lnT = {last.values['lnT']!r}", info={"coordinate": "lnT"})
    _, _, _, (status, message, success), _ = _assemble(
        BLEND, Z, dataclasses.replace(branch, special_points=(*branch.special_points[:-1], on_T)), 1e5)
    T, P = math.exp(last.values["lnT"]), math.exp(last.values["lnP"])
    assert (status, success) == ("open_envelope", False)
    assert message == (f"stopped: the branch runs on to its bound T = {T:.6g} K (at P = {P:.6g} Pa) as a bubble curve: "
                       "the model gives no closed envelope for this feed (a liquid-liquid or gas-gas split that goes "
                       "on to high pressure is the usual cause)")


def test_the_critical_landing_falls_back_to_the_full_search_when_its_polish_fails():
    # From a bracket whose midpoint is far off (250 K, 1.3e-4 m3/mol) the Heidemann-Khalil polish does
    # not converge; the full search's critical point (the blend has one) is landed on instead, as the
    # state K = 1 with both volumes at v_c, to the polish's last step.
    from contin_thermo.curves._envelope import _critical_landing
    from contin_thermo.curves._mixture_critical import critical_points, polish_critical

    assert not math.isfinite(polish_critical(BLEND, Z, 250.0, 1.3e-4)[1])
    (expected,) = critical_points(BLEND, Z)
    side = np.array([0.01, -0.01, math.log(250.0), math.log(1.3e-4), math.log(1.3e-4), math.log(5e6)])
    landing = _critical_landing(BLEND, Z)(side, side * np.array([-1, -1, 1, 1, 1, 1]))
    T, v_feed, v_incipient, P = np.exp(landing.x[2:])
    assert landing.x[:2].tolist() == [0.0, 0.0] and v_feed == v_incipient
    assert T == pytest.approx(expected.T, rel=1e-9) and v_feed == pytest.approx(expected.v, rel=1e-9)
    assert P == pytest.approx(expected.P, rel=1e-9)
    assert 0.0 <= landing.located_to < 1e-8 and landing.info["method"].startswith("Heidemann-Khalil")


def test_the_work_per_point_divides_by_the_steps_even_for_a_two_row_envelope():
    # Two rows are one step: the Jacobian evaluations per point are the whole count (the start's
    # included), not half of it. An envelope with no uncertainty band has an empty one.
    short = trace_envelope(BLEND, Z, check_stability=False, max_points=2)
    assert (len(short.rows), short.status) == (2, "max_points")
    assert short.stats["jacobian_evaluations_per_point"] == short.stats["jacobian_evaluations"] / 1
    assert short.band == ()
    longer = trace_envelope(BLEND, Z, check_stability=False, max_points=3)
    assert longer.stats["jacobian_evaluations_per_point"] == longer.stats["jacobian_evaluations"] / 2



def test_the_summary_names_each_corner_and_its_state(envelope):
    lines = envelope.summary()
    for kind in ("cricondentherm", "critical", "cricondenbar"):
        sp = envelope.special(kind)
        (line,) = [line for line in lines if line.split(":")[0].strip() == kind]
        assert line.endswith(f"T = {sp['values']['T']:.6f} K, P = {sp['values']['P']:.6g} Pa")


def test_a_hottest_row_just_before_the_last_that_is_not_a_fold_is_a_failed_check(envelope):
    # Only the first and the last rows (the branch's ends) may be the hottest without a located fold.
    branch = envelope.branch
    n = BLEND.size
    points = branch.points.copy()
    k = len(points) - 2
    points[k, n] = points[:, n].max() + 0.01
    folds_gone = tuple(sp for sp in branch.special_points if not (sp.kind == "fold" and sp.info.get("coordinate") == "lnT"))
    _, _, _, (status, message, success), _ = _assemble(
        BLEND, Z, dataclasses.replace(branch, points=points, special_points=folds_gone), 1e5)
    assert (status, success) == ("inconsistent", False)
    assert message.endswith(f"({math.exp(points[k, n]):.8g} K, row {k}) is not a located cricondentherm")


def test_a_point_outside_the_model_gives_nan_of_the_systems_own_sizes():
    # A feed volume below the co-volume: residual, Jacobian and parameter derivative are NaN, shaped as
    # at any other point (n + 3 unknowns and equations), so the engine can say which is not finite.
    from contin_thermo.curves._envelope import EnvelopeSystem

    system = EnvelopeSystem(BLEND, Z)
    u = np.array([0.5, -0.5, math.log(250.0), math.log(1e-9), math.log(1e-3)])
    r, J, dp = system.evaluate(u, math.log(1e6))
    assert (r.shape, J.shape, dp.shape) == ((5,), (5, 5), (5,))
    assert np.isnan(r).all() and np.isnan(J).all() and np.isnan(dp).all()
