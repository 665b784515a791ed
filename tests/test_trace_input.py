"""Every refusal of ``trace`` before it takes a step, with its whole message.

The messages are the contract: a user reads them to mend the call, so each names the argument, the
offending value and, where a name is close to a real one, the name meant. One test per check, on a
plane of two unknowns (u = p, v = 2p, exact) with a second, fixed parameter q.
"""

from __future__ import annotations

import numpy as np
import pytest

import contin


def plane(start=None, *, jacobian=None):
    return contin.CallableSystem(
        lambda u, p: [u[0] - p[0], u[1] - 2.0 * p[0]], ["u", "v"], {"p": 0.0, "q": 1.0},
        jacobian=jacobian or (lambda u, p: [[1.0, 0.0], [0.0, 1.0]]),
        parameter_jacobian=lambda u, p: [[-1.0, 0.0], [-2.0, 0.0]], start=start)


COORDINATES = "(coordinates: u, v, p)"

REFUSALS = {
    "no start anywhere": (
        dict(start=None),
        "start is missing: give start values of the unknowns (the system has no defaults)"),
    "a start naming no unknown": (
        dict(start={"w": 0.0}),
        "start names 'w', which is not an unknown; did you mean 'u'?"),
    "a start naming no unknown, nothing close": (
        dict(start={"speed": 0.0}),
        "start names 'speed', which is not an unknown"),
    "a start mapping short of an unknown": (
        dict(start={"u": 0.0}),
        "start gives no value for unknown 'v' (and the system has no default)"),
    "a start of the wrong size": (
        dict(start=[0.0]),
        "start has 1 value but the system has 2 unknowns"),
    "a start of three values": (
        dict(start=[0.0, 0.0, 0.0]),
        "start has 3 values but the system has 2 unknowns"),
    "a start that is not a number": (
        dict(start=[0.0, float("nan")]),
        "start value of 'v' is not finite (nan)"),
    "bounds of one number": (
        dict(bounds={"p": (1.0,)}),
        "bounds for 'p' must be a pair (low, high), got (1.0,)"),
    "bounds of words": (
        dict(bounds={"p": ("low", "high")}),
        "bounds for 'p' must be a pair (low, high), got ('low', 'high')"),
    "bounds of nothing": (
        dict(bounds={"p": None}),
        "bounds for 'p' must be a pair (low, high), got None"),
    "bounds of equal ends": (
        dict(bounds={"p": (1.0, 1.0)}),
        "bounds for 'p': lower 1.0 must be below upper 1.0"),
    "bounds upside down": (
        dict(bounds={"p": (2.0, -1.0)}),
        "bounds for 'p': lower 2.0 must be below upper -1.0"),
    "bounds on no coordinate": (
        dict(bounds={"speed": (0.0, 1.0)}),
        f"bounds names 'speed', which is not an unknown or the free parameter {COORDINATES}"),
    "bounds a fixed parameter is outside": (
        dict(bounds={"q": (2.0, 3.0)}),
        "parameter 'q' is fixed at 1.0, outside its bounds [2.0, 3.0]"),
    "a start outside its bounds": (
        dict(bounds={"v": (1.0, 2.0)}),
        "the start point has v = 0.0, outside its bounds [1.0, 2.0]"),
    "a requested value that is not a number": (
        dict(at={"u": [0.5, float("nan")]}),
        "at values for 'u' must be finite numbers"),
    "a requested value of no coordinate": (
        dict(at={"uu": [0.5]}),
        f"at names 'uu', which is not an unknown or the free parameter {COORDINATES}; did you mean 'u'?"),
    "options twice": (
        dict(options=contin.TraceOptions(), step=0.2),
        "give either options=TraceOptions(...) or the step/tolerance keywords, not both"),
    "a free parameter that is not a number": (
        dict(parameters={"p": float("nan")}),
        "the free parameter 'p' has no finite start value"),
    "an event that is a function": (
        dict(events=[abs]),
        "events must be contin.Event objects, got builtin_function_or_method"),
    "two events of one name": (
        dict(events=[contin.Event("e", lambda u, p: u[0]), contin.Event("e", lambda u, p: u[1])]),
        "two events share one name; give each event its own name"),
    "a tangent of the wrong size": (
        dict(tangent=[1.0, 0.0]),
        f"tangent must be 3 finite numbers, not all zero {COORDINATES}"),
    "a zero tangent": (
        dict(tangent=[0.0, 0.0, 0.0]),
        f"tangent must be 3 finite numbers, not all zero {COORDINATES}"),
    "a tangent that is not a number": (
        dict(tangent=[0.0, float("inf"), 1.0]),
        f"tangent must be 3 finite numbers, not all zero {COORDINATES}"),
    "a crossing that is a name": (
        dict(crossing="u"),
        "crossing must be a contin.Crossing, got str"),
    "a crossing of no coordinate": (
        dict(crossing=contin.Crossing(["speed"])),
        f"crossing names 'speed', which is not an unknown or the free parameter {COORDINATES}"),
    "a fold of no coordinate": (
        dict(folds=["speed"]),
        f"folds names 'speed', which is not an unknown or the free parameter {COORDINATES}"),
    "a tangent along the Jacobian's rows": (
        # dF/dx = [[1, 0, -1], [0, 1, -2]]; (1, 2, -5) = row 1 + 2 row 2 makes [dF/dx; t] singular.
        dict(tangent=[1.0, 2.0, -5.0]),
        "the bordered Jacobian [dF/dx; tangent] is singular at the start point (u = 0, v = 0, p = 0): "
        "start away from a fold or branch point (or give tangent=), or check that every unknown enters "
        "the equations"),
}


@pytest.mark.parametrize("case", sorted(REFUSALS))
def test_each_bad_argument_is_refused_with_its_whole_message(case):
    keywords, message = REFUSALS[case]
    keywords = {"start": [0.0, 0.0], **keywords}
    with pytest.raises(contin.InputError) as refused:
        contin.trace(plane(), free="p", **keywords)
    assert str(refused.value) == message


def test_a_system_that_is_not_a_system_is_refused():
    with pytest.raises(contin.InputError) as refused:
        contin.trace(object(), [0.0, 0.0], free="p")
    assert str(refused.value) == "system must be a contin System, got object"


def test_a_start_mapping_fills_the_rest_from_the_systems_defaults():
    # The system starts at (u, v) = (0, 0): a start of v = 0 alone keeps u = 0 and is on the branch;
    # a non-finite value given by name is refused by name.
    branch = contin.trace(plane([0.0, 0.0]), {"v": 0.0}, free="p", step=0.1, bounds={"p": (-0.25, 0.25)})
    assert branch.status is contin.Status.BOUND_REACHED
    assert branch.points[0].tolist() == [0.0, 0.0, 0.0]
    with pytest.raises(contin.InputError) as refused:
        contin.trace(plane([0.0, 0.0]), {"v": float("inf")}, free="p")
    assert str(refused.value) == "start value of 'v' is not finite (inf)"


def test_a_jacobian_singular_at_the_start_is_refused_naming_the_point():
    # dF/du = [[1, 0], [0, 0]] is singular wherever it is evaluated.
    system = plane(jacobian=lambda u, p: [[1.0, 0.0], [0.0, 0.0]])
    with pytest.raises(contin.InputError) as refused:
        contin.trace(system, [0.5, 0.0], free="p")
    assert str(refused.value) == (
        "the Jacobian dF/du is singular at the start point (u = 0.5, v = 0, p = 0): start away from a fold "
        "or branch point (or give tangent=), or check that every unknown enters the equations")


def test_a_jacobian_singular_only_at_the_corrected_start_is_refused_naming_that_point():
    # The Jacobian given drops v where u is exactly on the branch (u = p = 0). From u = 1e-9 the
    # first Newton step lands there exactly (the residual is linear) and is short enough to converge,
    # so the check before correcting passes and the one after it refuses the corrected point, not the
    # guess. (From farther away the next Newton iteration meets the singular matrix itself, and the
    # start is reported as not converged.)
    def jacobian(u, p):
        return [[1.0, 0.0], [0.0, 0.0 if u[0] == 0.0 else 1.0]]

    with pytest.raises(contin.InputError) as refused:
        contin.trace(plane(jacobian=jacobian), [1e-9, 0.0], free="p")
    assert str(refused.value) == "the Jacobian dF/du is singular at the corrected start point (u = 0, v = 0, p = 0)"


def test_refusals_come_before_any_evaluation():
    # Bad arguments are refused before the system is evaluated: a residual that counts its calls is
    # never called.
    calls = []

    def residual(u, p):
        calls.append(1)
        return [u[0] - p[0], u[1] - 2.0 * p[0]]

    system = contin.CallableSystem(residual, ["u", "v"], {"p": 0.0})
    for keywords in ({"bounds": {"p": (1.0, 0.0)}}, {"at": {"u": [np.inf]}}, {"tangent": [0.0, 0.0, 0.0]}):
        with pytest.raises(contin.InputError):
            contin.trace(system, [0.0, 0.0], free="p", **keywords)
    assert calls == []


@pytest.mark.parametrize("size, expected", [
    (1, "the residual returned 3 values but the system has 1 unknown; give one equation per unknown"),
    (2, "the residual returned 3 values but the system has 2 unknowns; give one equation per unknown"),
])
def test_a_residual_of_the_wrong_size_is_refused_with_its_whole_message(size, expected):
    system = contin.CallableSystem(lambda u, p: [0.0, 0.0, 0.0], [f"u{i}" for i in range(size)], {"p": 0.0},
                                   jacobian=lambda u, p: np.eye(size),
                                   parameter_jacobian=lambda u, p: np.zeros((size, 1)))
    with pytest.raises(contin.InputError) as refused:
        contin.trace(system, [0.0] * size, free="p")
    assert str(refused.value) == expected
