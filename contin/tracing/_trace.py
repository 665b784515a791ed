"""The driver: trace one branch of F(u, p) = 0 by pseudo-arclength continuation."""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Mapping, Sequence

import numpy as np

from ._bifurcation import bordered_sign, check_detect, determinant_sign, hopf_signature, locate_branch_point, locate_hopf
from ..results._branch import Branch, SpecialPoint
from ._corrector import correct
from ._crossing import Crossing, Passage
from ..base._errors import InputError, TraceError
from ..systems._events import Event, crossed
from ._extended import CallbackFailure, Counters, Extended, describe_non_finite
from ._locate import Located, locate_level, locate_zero
from ._lyapunov import lyapunov_facts
from ..base._names import suggest
from ._options import TraceOptions
from ..results._status import Status
from ._stepsize import StepController
from ..systems._system import System
from ._linear import LinearSolver, all_finite
from ._tangent import SingularMatrix, factorise_bordered, one_blas_thread, tangent

__all__ = ["trace", "start_vector"]

#: Points of more coordinates than this are described by a few of them in messages.
DESCRIBED_COORDINATES = 50

#: Largest sparse system whose Hopf points get a first Lyapunov coefficient (it is computed densely).
LYAPUNOV_SIZE = 1000

# _special_points' answer when the trace goes on from its last row rather than from the step's end.
RESUME = "resume"

# How many times one step is retried shorter for a branch point it seems to pass but cannot refine
# onto (a hop between two branches crossing at a shallow angle needs one or two; a degenerate branch
# point never refines, and is then reported from its bracket with located_to saying how well).
_BRANCH_RETRIES = 3


def _number(value: float) -> str:
    """A requested value or bound as written in a name: short (``%g``) where that is exact, else every
    digit, so that 1000000.5 is not named 1e+06 and two levels never share one name."""
    text = f"{value:g}"
    return text if float(text) == value else repr(float(value))


def _length(v: np.ndarray) -> float:
    """Euclidean length; math.sqrt of a dot product is several times cheaper than np.linalg.norm here."""
    return math.sqrt(float(v @ v))


def _turns_twice(value_a: float, value_b: float, slope_a: float, slope_b: float, length: float) -> bool:
    """Whether a coordinate seems to turn twice between two points where its slopes have one sign.

    The cubic Hermite interpolant of the coordinate along the step (its values and its derivatives
    along the arc at both ends, the arc taken as the chord's length) has a quadratic derivative; two
    zeros of it inside the step mean two turns (two folds, or a fold and its return) that the end
    slopes cannot show. This only decides whether to subdivide; the turns are then located on
    Newton-converged points like any other.
    """
    if slope_a * slope_b <= 0.0 or length == 0.0:
        return False
    d0, d1, delta = slope_a * length, slope_b * length, value_b - value_a
    # p'(s) = d0 + (6 delta - 4 d0 - 2 d1) s + (3 d0 + 3 d1 - 6 delta) s^2 on s in [0, 1]
    a, b = 3.0 * (d0 + d1) - 6.0 * delta, 6.0 * delta - 4.0 * d0 - 2.0 * d1
    if a == 0.0:
        return False
    vertex = -b / (2.0 * a)
    if not 0.0 < vertex < 1.0:
        return False
    extreme = d0 + b * vertex + a * vertex * vertex
    return extreme * d0 < 0.0


def _same_point(a: Located, b: Located, tolerance: float) -> bool:
    """Whether two located points are one point, so that their order along the branch is round-off's to
    decide: they lie within a few times the location ``tolerance`` of each other, or within 1e-9 of
    their size. (A point located only roughly, e.g. from a forced step's bracket, is not widened by
    its ``located_to``: its coordinates still tell which side of a bound it lies.)"""
    reach = 10.0 * tolerance + 1e-9 * (1.0 + float(np.abs(a.x).max(initial=0.0)))
    return float(np.abs(a.x - b.x).max(initial=0.0)) <= reach


def _stop_rank(kind: str, payload) -> int:
    """Where a kind goes among the points located at one point: what only reports first, then what
    stops the trace (a bound, then a terminal event), the start of a passage (which drops the rest of
    the step) last."""
    if kind == "bound":
        return 1
    if kind == "event" and payload.terminal:
        return 2
    return 3 if kind == "passage" else 0


def _in_branch_order(found: list, tolerance: float) -> list:
    """The points located inside a step, ``(fraction, kind, payload, located)``, in their order along
    the branch: by fraction, except that points located at one point (:func:`_same_point`) are
    ordered by kind (:func:`_stop_rank`, then the kind's name), not by the round-off in their
    fractions, so a stop never hides what was located at the stop itself."""
    groups: list[list] = []
    for item in sorted(found, key=lambda item: item[0]):
        if groups and _same_point(groups[-1][0][3], item[3], tolerance):
            groups[-1].append(item)
        else:
            groups.append([item])
    return [item for group in groups
            for item in sorted(group, key=lambda item: (_stop_rank(item[1], item[2]), item[1], item[0]))]


def start_vector(system: System, start) -> np.ndarray:
    """Start values of the unknowns from a mapping, a sequence, or the system's defaults."""
    if start is None:
        if system.start is None:
            raise InputError("start is missing: give start values of the unknowns (the system has no defaults)")
        values = np.array(system.start, dtype=float)
    elif isinstance(start, Mapping):
        unknown = [name for name in start if name not in system.unknowns]
        if unknown:
            raise InputError(
                f"start names {unknown[0]!r}, which is not an unknown{suggest(unknown[0], system.unknowns)}"
            )
        if system.start is None:
            missing = [name for name in system.unknowns if name not in start]
            if missing:
                raise InputError(f"start gives no value for unknown {missing[0]!r} (and the system has no default)")
            values = np.zeros(system.size)
        else:
            values = np.array(system.start, dtype=float)
        for name, value in start.items():
            values[system.unknowns.index(name)] = float(value)
    else:
        values = np.asarray(start, dtype=float).reshape(-1)
        if values.size != system.size:
            raise InputError(f"start has {values.size} value{'' if values.size == 1 else 's'} but the system has "
                             f"{system.size} unknown{'' if system.size == 1 else 's'}")
    bad = [name for name, v in zip(system.unknowns, values) if not math.isfinite(v)]
    if bad:
        raise InputError(f"start value of {bad[0]!r} is not finite ({values[system.unknowns.index(bad[0])]})")
    return values


def _coordinate(name: str, columns: Sequence[str], argument: str) -> int:
    if name not in columns:
        raise InputError(
            f"{argument} names {name!r}, which is not an unknown or the free parameter "
            f"(coordinates: {', '.join(columns)}){suggest(name, columns)}"
        )
    return list(columns).index(name)


def _check_bounds(bounds, system: System, columns, parameters: np.ndarray) -> list[tuple[int, float, float]]:
    checked = []
    for name, pair in sorted((bounds or {}).items()):
        try:
            low, high = (float(v) for v in pair)
        except (TypeError, ValueError):
            raise InputError(f"bounds for {name!r} must be a pair (low, high), got {pair!r}") from None
        if not (low < high):
            raise InputError(f"bounds for {name!r}: lower {low} must be below upper {high}")
        if name not in columns and name in system.parameters:
            value = parameters[system.parameters.index(name)]
            if not low <= value <= high:
                raise InputError(f"parameter {name!r} is fixed at {value}, outside its bounds [{low}, {high}]")
            continue
        checked.append((_coordinate(name, columns, "bounds"), low, high))
    return checked


def _check_at(at, columns) -> list[tuple[int, np.ndarray]]:
    checked = []
    for name, values in sorted((at or {}).items()):
        array = np.atleast_1d(np.asarray(values, dtype=float))
        if not np.all(np.isfinite(array)):
            raise InputError(f"at values for {name!r} must be finite numbers")
        checked.append((_coordinate(name, columns, "at"), np.unique(array)))
    return checked


def trace(
    system: System,
    start=None,
    *,
    free: str,
    parameters: Mapping[str, float] | None = None,
    direction: int = 1,
    step: float = 0.01,
    min_step: float = 1e-8,
    max_step: float = 0.5,
    max_points: int = 2000,
    tolerance: float = 1e-10,
    relative_tolerance: float = 1e-13,
    max_turn: float = 0.5,
    max_correction: float = 0.5,
    max_iterations: int = 8,
    linear_solver: str | LinearSolver = "auto",
    bounds: Mapping[str, Sequence[float]] | None = None,
    events: Sequence[Event] = (),
    at: Mapping[str, Sequence[float]] | None = None,
    folds: Sequence[str] = (),
    detect: Sequence[str] | None = None,
    corrector: str = "arclength",
    crossing: Crossing | None = None,
    tangent: Sequence[float] | None = None,
    options: TraceOptions | None = None,
    on_point: Callable[[int, np.ndarray, Sequence[SpecialPoint]], None] | None = None,
    describe: Callable[[np.ndarray], str] | None = None,
    throw: bool = False,
) -> Branch:
    """Trace the branch of F(u, p) = 0 through ``start`` by pseudo-arclength continuation.

    The unknowns u and the free parameter ``free`` together form the coordinates x; each step
    predicts along the unit tangent, corrects by Newton's method on the bordered system (Keller's
    pseudo-arclength condition, or Rheinboldt's local parametrisation with ``corrector="local"``), and
    re-uses the Jacobian at the corrected point for its tangent. Turning points (folds) of the free
    parameter, and of every coordinate in ``folds``, are detected by a sign change of the tangent's
    component and located by the Illinois method on that component; user events and requested
    coordinate values (``at``) are located the same way, requested values exactly. Simple branch
    points are detected by a sign change of det [dF/dx; tangent] (read off the corrector's LU
    factors) and Hopf points of ODE equilibria by a sign change of the product of eigenvalue-pair
    sums of dF/du; see :mod:`contin.tracing._bifurcation` and :func:`contin.switch_branch`.

    While it runs, BLAS is limited to one thread (with threadpoolctl; the caller's setting is restored
    on return): the bordered matrices are small, so threads only cost time there, and their
    summation order would make points and Newton counts depend on the machine's thread setting.

    References: H. B. Keller, Numerical solution of bifurcation and nonlinear eigenvalue problems, in
    Applications of Bifurcation Theory, Academic Press, 1977; W. C. Rheinboldt, Numerical Analysis of
    Parametrized Nonlinear Equations, Wiley, 1986.

    Args:
        system: the residual system.
        start: start values of the unknowns (mapping name -> value, or array); the system's by default.
        free: name of the parameter that varies along the branch.
        parameters: values overriding the system's parameter values (the free one's is the start).
        direction, step, min_step, max_step, max_points, tolerance, relative_tolerance, max_iterations,
            corrector, max_turn, max_correction: see :class:`TraceOptions` (which also states Newton's
            convergence test exactly), and ``linear_solver`` (dense or sparse LU of the bordered matrix,
            or a solver of your own: docs/linear-solvers.md); or pass ``options`` instead (not both). ``max_turn`` (radians
            between successive tangents) and ``max_correction`` (the corrector's distance from the
            predictor, as a fraction of the step) make a step shorter before it can jump over a tight
            turn or onto a nearby branch.
        bounds: coordinate name -> (low, high); the trace stops on the boundary when it leaves.
        events: zero crossings of user functions to locate; terminal ones stop the trace.
        at: coordinate name -> values; points exactly there are returned in ``Branch.at``.
        folds: further coordinates whose turning points are located (the free parameter's always are,
            while ``fold`` is detected).
        detect: which special points to look for, any of ``"fold"``, ``"branch_point"`` and ``"hopf"``
            (Hopf points only for systems of kind ``"ode"``); by default folds and branch points, and
            Hopf points too for ODE systems. A neutral saddle (real eigenvalues +-a, where the Hopf
            test function also vanishes) is not reported as a Hopf point; a line in
            ``Branch.stats["notes"]`` says where it was.
        crossing: a :class:`Crossing`: where a second solution family meets the branch (e.g. the
            equal-phases set at a critical point), passed along one coordinate on the same branch and
            reported as a special point of the crossing's kind; see :mod:`contin.tracing._crossing`.
        tangent: optional initial direction in coordinates (unknowns then free parameter), e.g. to
            restart from a saved point or a fold; the start is then corrected on the bordered system, so
            dF/du may be singular there. ``direction`` = -1 reverses it.
        on_point: called as ``on_point(index, x, special_points)`` after each accepted point, with the
            special points found so far (read them, do not change them); e.g. for a progress line.
        describe: a point x = (u, p_free) in the caller's own words, for the trace's messages and notes
            (e.g. a temperature and a pressure where the unknowns are logarithms); by default each
            coordinate by its name. If it raises, the default is used.
        throw: raise :class:`TraceError` (with the partial branch) instead of returning an unsuccessful one.

    Returns:
        The :class:`Branch`; an exception inside a user callback, or KeyboardInterrupt, returns what was
        traced so far with status ``interrupted`` and the exception as ``cause``. A residual or
        Jacobian that is not finite at the start ends with status ``non_finite`` (the message names the
        equation and, where it can be told, the operation, e.g. "exp overflows"); a failure of linear
        algebra anywhere in the run with ``linear_algebra_failed`` and the error as ``cause``.

    Raises:
        InputError: bad input (sizes, names, non-finite start, bounds, options, detect, a singular start).
        TraceError: only with ``throw=True``, when the trace does not succeed.
    """
    began = time.perf_counter()
    if not isinstance(system, System):
        raise InputError(f"system must be a contin System, got {type(system).__name__}")
    keywords = dict(step=step, min_step=min_step, max_step=max_step, max_points=max_points, tolerance=tolerance,
                    relative_tolerance=relative_tolerance, max_iterations=max_iterations, direction=direction,
                    corrector=corrector, max_turn=max_turn, max_correction=max_correction,
                    linear_solver=linear_solver)
    if options is None:
        options = TraceOptions(**keywords)
    elif any(keywords[k] != getattr(TraceOptions, k) for k in keywords):
        raise InputError("give either options=TraceOptions(...) or the step/tolerance keywords, not both")
    free_index = system.index_of_parameter(free)
    parameter_values = system.parameter_vector(parameters)
    u0 = start_vector(system, start)
    if not math.isfinite(parameter_values[free_index]):
        raise InputError(f"the free parameter {free!r} has no finite start value")
    columns = tuple(system.unknowns) + (free,)
    bound_list = _check_bounds(bounds, system, columns, parameter_values)
    at_list = _check_at(at, columns)
    kinds = check_detect(detect, system, folds)
    fold_list = [len(columns) - 1] + [
        i for i in (_coordinate(name, columns, "folds") for name in folds) if i != len(columns) - 1
    ] if "fold" in kinds else []
    for event in events:
        if not isinstance(event, Event):
            raise InputError(f"events must be contin.Event objects, got {type(event).__name__}")
    names = [event.name for event in events]
    if len(set(names)) != len(names):
        raise InputError("two events share one name; give each event its own name")

    counters = Counters()
    extended = Extended(system, parameter_values, free_index, counters, options.relative_tolerance,
                        options.linear_solver)
    x0 = np.append(u0, parameter_values[free_index])
    for index, low, high in bound_list:
        if not low <= x0[index] <= high:
            raise InputError(f"the start point has {columns[index]} = {x0[index]}, outside its bounds [{low}, {high}]")
    initial = None
    if tangent is not None:
        initial = np.asarray(tangent, dtype=float).reshape(-1)
        if initial.size != len(columns) or not np.all(np.isfinite(initial)) or not np.any(initial):
            raise InputError(f"tangent must be {len(columns)} finite numbers, not all zero (coordinates: "
                             f"{', '.join(columns)})")
        initial = options.direction * initial / np.linalg.norm(initial)
    run = _Run(system, extended, columns, options, bound_list, at_list, fold_list, list(events), on_point, describe)
    if crossing is not None:
        if not isinstance(crossing, Crossing):
            raise InputError(f"crossing must be a contin.Crossing, got {type(crossing).__name__}")
        candidates = [_coordinate(name, columns, "crossing") for name in crossing.coordinates]
        run.passage = Passage(crossing, candidates)
    run.branch_points = "branch_point" in kinds
    run.hopf = "hopf" in kinds
    run.initial_tangent = initial
    run.stats_setup = time.perf_counter() - began + float(getattr(system, "setup_seconds", 0.0) or 0.0)
    traced = time.perf_counter()
    try:
        # One BLAS thread for the small dense factorisations (and the system's own evaluations) of the
        # trace, restored on return: results and times do not depend on the caller's thread setting.
        with one_blas_thread():
            run.start(x0)
            if run.status is None:
                run.loop()
    except CallbackFailure as failure:
        run.finish(Status.INTERRUPTED, f"{Status.INTERRUPTED.message}: {failure}", failure.__cause__)
    except KeyboardInterrupt as interrupt:
        run.finish(Status.INTERRUPTED, f"{Status.INTERRUPTED.message}: keyboard interrupt", interrupt)
    except np.linalg.LinAlgError as error:  # scipy.linalg.LinAlgError is the same class
        where = f"after the point {run.describe(run.rows[-1])}" if run.rows else "at the start point"
        run.finish(Status.LINEAR_ALGEBRA_FAILED,
                   f"{Status.LINEAR_ALGEBRA_FAILED.message} {where} ({type(error).__name__}: {error}); check the "
                   "system for huge or non-finite derivatives there, or trace with a smaller max_step", error)
    branch = run.branch(time.perf_counter() - traced, counters, free, parameter_values)
    if throw and not branch.success:
        raise TraceError(branch.message, branch) from branch.cause
    return branch


class _Run:
    """The mutable state of one trace; private to :func:`trace`."""

    def __init__(self, system, extended, columns, options, bounds, at, folds, events, on_point,
                 in_words: Callable[[np.ndarray], str] | None = None) -> None:
        self.system = system
        self.extended = extended
        self.columns = columns
        self.options = options
        self.bounds = bounds
        self.at = at
        self.folds = folds
        self.events = events
        self.on_point = on_point
        self.controller = StepController(options.min_step, options.max_step, options.max_turn)
        self.in_words = in_words  # the caller's describe, if any
        self.rows: list[np.ndarray] = []
        self.tangents: list[np.ndarray] = []
        self.steps: list[float] = []
        self.iterations: list[int] = []
        self.residuals: list[float] = []
        self.special: list[SpecialPoint] = []
        self.at_points: list[SpecialPoint] = []
        self.status: Status | None = None
        self.message = ""
        self.cause: BaseException | None = None
        self.stats_setup = 0.0
        self.jacobian: np.ndarray | None = None
        self.event_values: list[float] = []
        self.initial_tangent: np.ndarray | None = None
        self.branch_points = False  # look for simple branch points
        self.hopf = False  # look for Hopf points (ODE systems only)
        # (sign of det [dF/dx; t], sign of the Hopf test, eigenvalues of dF/du with positive real part
        # or -1 when not counted) at the last accepted point
        self.signs = (0, 0, -1, math.nan)
        # The branch-point test's trend (see _hops_past_a_branch_point): where a straight line through
        # |det [dF/dx; t]| at the last two accepted points meets zero, as a distance ahead of the last
        # one, and the same from the two points before (None: not falling, or not known)
        self.zero_ahead: float | None = None
        self.zero_ahead_before: float | None = None
        # retries of the current step for a branch-point sign change that could not be refined, or a
        # trend that says the step passed one (at most _BRANCH_RETRIES, then the step is taken)
        self.branch_retries = 0
        self.event_slopes: list[float] = []
        # Coordinates with a bound or requested values: a turn of one inside a step splits the step.
        self.watched = frozenset([index for index, _, _ in bounds] + [index for index, _ in at])
        self.passage: Passage | None = None  # the passage of a singular crossing, if one is given
        self.notes: list[str] = []

    # -- bookkeeping -----------------------------------------------------------------------------
    def finish(self, status: Status, message: str, cause: BaseException | None = None) -> None:
        if self.status is None:
            self.status, self.message, self.cause = status, message, cause

    def describe(self, x: np.ndarray) -> str:
        """The point in words; a large system (more than DESCRIBED_COORDINATES coordinates) shows its first
        unknowns, the largest in size, and the free parameter, so a message stays one readable line.
        A caller's ``describe`` takes precedence."""
        if self.in_words is not None:
            try:
                return str(self.in_words(np.array(x, dtype=float)))
            except Exception:  # a message must still be written: fall back to the coordinates
                pass
        pairs = list(zip(self.columns, x))
        if len(pairs) > DESCRIBED_COORDINATES:
            largest = int(np.argmax(np.abs(x[:-1])))
            text = [f"{name} = {value:.6g}" for name, value in pairs[:3]] + [f"... of {len(pairs) - 1} unknowns"]
            if largest >= 3:
                text.append(f"the largest {pairs[largest][0]} = {pairs[largest][1]:.6g}")
            return ", ".join(text + [f"{pairs[-1][0]} = {pairs[-1][1]:.6g}"])
        return ", ".join(f"{name} = {value:.6g}" for name, value in pairs)

    def append(self, x: np.ndarray, t: np.ndarray, iterations: int, residual_norm: float) -> int:
        step = _length(x - self.rows[-1]) if self.rows else 0.0
        self.rows.append(x)
        self.tangents.append(t)
        self.steps.append(step)
        self.iterations.append(iterations)
        self.residuals.append(residual_norm)
        return len(self.rows) - 1

    def special_point(self, kind: str, name: str, index: int, located: Located, info: dict | None = None) -> SpecialPoint:
        return SpecialPoint(
            kind=kind,
            name=name,
            index=index,
            values={c: float(v) for c, v in zip(self.columns, located.x)},
            point=located.x.copy(),
            tangent=located.tangent.copy(),
            residual_norm=float(located.residual_norm),
            newton_iterations=int(located.iterations),
            located_to=float(located.located_to),
            info=info or {},
        )

    def event_value(self, event: Event, x: np.ndarray) -> float:
        u, p = self.extended.split(x)
        try:
            return float(event.function(u, p))
        except Exception as error:  # noqa: BLE001
            raise CallbackFailure(f"event {event.name!r} raised {type(error).__name__}: {error}") from error

    def event_slope(self, event: Event, x: np.ndarray, t: np.ndarray) -> float:
        """Derivative of the event function along the branch at x: a central difference along the
        tangent (the branch leaves x along t, so this is d g(x(s))/ds to O(h^2))."""
        h = 6e-6 * (1.0 + float(np.abs(x).max()))
        return (self.event_value(event, x + h * t) - self.event_value(event, x - h * t)) / (2.0 * h)

    # -- the three phases ------------------------------------------------------------------------
    def start(self, x0: np.ndarray) -> None:
        """Correct the start point at the fixed free parameter and orient the first tangent."""
        n = self.extended.n
        if self.initial_tangent is not None:
            row = self.initial_tangent
            where = "the bordered Jacobian [dF/dx; tangent]"
        else:
            row = np.zeros(n + 1)
            row[n] = 1.0
            where = "the Jacobian dF/du"
        checked = self._checked_linearisation(x0)
        if checked is None:
            return
        residual, jacobian = checked
        try:
            factorise_bordered(jacobian, row, self.extended.solver)
        except SingularMatrix:
            raise InputError(
                f"{where} is singular at the start point ("
                f"{self.describe(x0)}): start away from a fold or branch point (or give tangent=), or check "
                "that every unknown enters the equations"
            ) from None
        correction = correct(self.extended, x0, row, float(row @ x0), tolerance=self.options.tolerance,
                             max_iterations=4 * self.options.max_iterations, jacobian=jacobian, residual=residual)
        if not correction.converged:
            self.append(correction.x, np.zeros(n + 1), correction.iterations, correction.residual_norm)
            self.finish(
                Status.START_NOT_CONVERGED,
                f"{Status.START_NOT_CONVERGED.message}: largest residual {correction.residual_norm:.3g} after "
                f"{correction.iterations} iterations ({correction.reason})"
                + ("" if correction.reason.startswith("Newton stalled near rounding") else "; give a better start guess"),
            )
            return
        try:
            bordered = factorise_bordered(correction.jacobian, row, self.extended.solver)
        except SingularMatrix:
            raise InputError(
                f"the Jacobian dF/du is singular at the corrected start point ({self.describe(correction.x)})"
            ) from None
        reference = row if self.initial_tangent is not None else row * self.options.direction
        t = tangent(bordered, reference)  # with the row e_n its last entry is 1 / |z| > 0 before orienting
        self.jacobian = correction.jacobian
        self.signs = self.test_signs(bordered, float(row @ t), t, correction.jacobian)
        self.event_values = [self.event_value(event, correction.x) for event in self.events]
        self.event_slopes = [self.event_slope(event, correction.x, t) for event in self.events]
        index = self.append(correction.x, t, correction.iterations, correction.residual_norm)
        moved = _length(correction.x - x0)
        if moved > 1e-3 * (1.0 + float(np.abs(x0).max())):
            self.notes.append(f"the start was moved by {moved:.3g} to reach the curve, to {self.describe(correction.x)}")
        for coordinate, values in self.at:
            for value in values[values == correction.x[coordinate]]:
                located = Located(0.0, correction.x, t, correction.residual_norm, correction.iterations, 0.0)
                self._at_point(coordinate, value, index, located)
        if self.on_point is not None:
            self._notify(index, correction.x)

    def _checked_linearisation(self, x0: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
        """The first evaluation, checked for the sizes the system promises and for finite values; None
        (with the status ``non_finite`` and a message naming the equation) when a value is not finite."""
        n = self.extended.n
        plural = "" if n == 1 else "s"
        u, p = self.extended.split(x0)
        try:
            with np.errstate(all="ignore"):  # a non-finite value is reported below, in words
                size = np.asarray(self.system.residual(u, p), dtype=float).size
        except Exception as error:  # noqa: BLE001
            raise CallbackFailure(f"the residual raised {type(error).__name__}: {error}") from error
        if size != n:
            raise InputError(f"the residual returned {size} values but the system has {n} unknown{plural}; "
                             "give one equation per unknown")
        with np.errstate(all="ignore"):  # a non-finite value is reported below, in words
            residual, jacobian = self.extended.linearise(x0)  # the system checks the shapes of its Jacobians
        if not (np.all(np.isfinite(residual)) and all_finite(jacobian)):
            detail = describe_non_finite(self.extended, x0, residual, jacobian)
            self.finish(Status.NON_FINITE, f"{Status.NON_FINITE.message}: {detail}")
            return None
        return residual, jacobian

    def _notify(self, index: int, x: np.ndarray) -> None:
        try:
            self.on_point(index, x.copy(), tuple(self.special))
        except KeyboardInterrupt:
            raise
        except Exception as error:  # noqa: BLE001
            raise CallbackFailure(f"on_point raised {type(error).__name__}: {error}") from error

    def loop(self) -> None:
        """Predict, correct, accept or retry, look for special points; until a stop condition."""
        options = self.options
        n = self.extended.n
        x, t = self.rows[-1], self.tangents[-1]
        x_start, t_start = x.copy(), t.copy()
        curvature = None  # estimate of d2x/ds2 from the last two tangents
        h = options.step
        farthest = 0.0
        if self._leaving_through_a_bound(x, t):
            return
        if self.passage is not None and self.passage.distance(x) <= self.passage.crossing.near:
            self.passage.begin_at_start(x, t)  # the start is near the crossing already
        while self.status is None:
            if len(self.rows) >= options.max_points:
                self.finish(Status.MAX_POINTS, f"{Status.MAX_POINTS.message} ({options.max_points}) at {self.describe(x)}")
                return
            passage = self.passage if self.passage is not None and self.passage.active else None
            jump = passage is not None and passage.jumping(x)
            aim = None if passage is not None else self._next_requested_value(x, t, h)
            step_now = h if aim is None else aim[0]
            if passage is not None:
                step_now, row, target = passage.plan(x, t)
            predicted = x + step_now * t
            if passage is not None:
                extrapolated = passage.predict(target)
                if extrapolated is not None:
                    predicted, step_now = extrapolated, max(_length(extrapolated - x), options.min_step)
            if curvature is not None and passage is None:
                # Second-order predictor x + h t + h^2/2 x'': its error is O(h^3), not O(h^2), so the
                # corrector usually needs one Newton iteration fewer for the same step.
                bend = 0.5 * step_now * step_now * curvature
                if _length(bend) <= 0.25 * step_now:
                    predicted = predicted + bend
            if passage is not None:
                pass  # the passage fixes its coordinate (row and target planned above)
            elif aim is not None:
                # Land exactly on a requested value: fix that coordinate in the corrector, so the
                # point costs one ordinary step and needs no separate location.
                row = np.zeros(n + 1)
                row[aim[1]] = 1.0
                target = aim[2]
            elif options.corrector == "local":
                j = int(np.argmax(np.abs(t)))
                row = np.zeros(n + 1)
                row[j] = 1.0
                target = float(predicted[j])
            else:
                row, target = t, float(t @ predicted)
            jacobians_before = self.extended.counters.jacobian_evaluations
            if passage is not None:
                # Near the singular point Newton is ill-conditioned: the exact Jacobian, more
                # iterations, no divergence guard (the fixed coordinate keeps it off the second family).
                # The tangent comes from the Jacobian at the corrected point itself: there the near-null
                # space turns quickly with the position, so one a Newton step away will not do.
                correction = correct(self.extended, predicted, row, target, tolerance=options.tolerance,
                                     max_iterations=4 * options.max_iterations, max_distance=2.0 * _length(predicted - x),
                                     guard_divergence=False, exact_jacobian=True)
            else:
                correction = correct(self.extended, predicted, row, target, tolerance=options.tolerance,
                                     max_iterations=options.max_iterations, jacobian=self.jacobian,
                                     max_distance=max(step_now, 1e-12) * 2.0, exact_jacobian=False)
            jacobians_used = self.extended.counters.jacobian_evaluations - jacobians_before
            accepted = False
            if correction.converged and not jump and _length(correction.x - predicted) > options.max_correction * step_now:
                last_reason = (f"corrector moved too far from the predictor (more than max_correction = "
                               f"{options.max_correction:g} of the step)")
            elif correction.converged:
                try:
                    factored = (correction.factors if correction.factors is not None
                                else factorise_bordered(correction.jacobian, row, self.extended.solver))
                    t_new = tangent(factored, t)
                    cosine = float(t_new @ t)
                    turn = math.acos(min(1.0, cosine))  # cosine >= 0: tangent() orients t_new along t
                    if passage is not None or self.controller.accepts(turn):
                        accepted = True
                    else:
                        last_reason = f"large turn (the tangent turned by {turn:.3g} rad, more than max_turn)"
                except SingularMatrix:
                    last_reason = "singular bordered Jacobian (at the corrected point)"
            else:
                last_reason = correction.reason
            if not accepted and jump and passage.shrink():
                self.extended.counters.reject(f"jump across the {passage.crossing.name} failed")
                continue  # approach closer and jump from there
            if not accepted and passage is not None and not jump:
                self.extended.counters.reject(last_reason.split(" (")[0])
                if passage.failed():
                    continue  # a shorter passage step
                self.finish(Status.STEP_TOO_SMALL, f"{Status.STEP_TOO_SMALL.message}: the passage of the "
                            f"{passage.crossing.name} failed after the point {self.describe(x)}: {last_reason}")
                return
            if not accepted:
                self.extended.counters.reject(last_reason.split(" (")[0])
                shorter = self.controller.after_failure(h)
                if shorter is None:
                    self.finish(
                        Status.STEP_TOO_SMALL,
                        f"{Status.STEP_TOO_SMALL.message} ({options.min_step:g}) after the point "
                        f"{self.describe(x)}: {last_reason}",
                    )
                    return
                h = shorter
                continue
            x_new = correction.x
            signs = self.test_signs(factored, cosine if row is t else float(row @ t_new), t_new,
                                    correction.jacobian)
            at_min_step = step_now <= options.min_step * (1.0 + 1e-12)
            if jump:
                if any(crossed(t[c], t_new[c]) for c in self.folds) and passage.shrink():
                    continue  # a fold straddles the jump: approach closer, so it falls on one side
                stop = self._across((x, t), (x_new, t_new), correction, signs)
            else:
                stop = self._special_points((x, t), (x_new, t_new), correction, signs, force=at_min_step)
            if stop is None:
                # A special point in this step could not be located: retry the step shorter.
                self.extended.counters.reject("special point not located")
                h = max(options.min_step, step_now * self.controller.shrink)
                continue
            self.extended.counters.accepted_steps += 1
            if stop is RESUME:  # the trace goes on from a point inside the step (its tests are set there)
                x, t = self.rows[-1], self.tangents[-1]
                curvature = None  # (the passage's steps do not read it)
                continue
            self.jacobian = correction.jacobian
            if stop:
                return
            if passage is not None:
                passage.advance(x_new)
                passage.succeeded()
            elif self.passage is not None:
                self.passage.rearm(x_new)
            farthest = max(farthest, _length(x_new - x_start))
            if self._closed(x, t, x_new, t_new, x_start, t_start, h, farthest):
                return
            travelled = _length(x_new - x)
            curvature = (t_new - t) / travelled if travelled > 0.0 and self.rows[-2] is x else None
            x, t = x_new, t_new
            # With chord steps an iteration costs a solve, not a Jacobian: the effort is the Jacobians.
            effort = jacobians_used if self.extended.solver.chord else correction.iterations
            h = self.controller.after_success(h, effort, turn)

    def _next_requested_value(self, x: np.ndarray, t: np.ndarray, h: float) -> tuple[float, int, float] | None:
        """(step, coordinate, value) of the nearest requested value the next step would pass, if the
        branch crosses that coordinate steeply enough to aim at it; else None."""
        best = None
        largest = float(abs(t).max())
        for coordinate, values in self.at:
            rate = t[coordinate]
            if abs(rate) < 0.01 * largest:
                continue  # nearly turning in this coordinate: locate afterwards instead
            here = float(x[coordinate])
            there = here + h * rate
            slack = 1e-12 * (1.0 + abs(here))
            if rate > 0:  # values are sorted: the first one beyond here
                k = int(np.searchsorted(values, here + slack, side="right"))
                if k == values.size or values[k] > there:
                    continue
            else:
                k = int(np.searchsorted(values, here - slack, side="left")) - 1
                if k < 0 or values[k] < there:
                    continue
            value = values[k]
            step = (float(value) - here) / rate
            if step >= self.options.min_step and (best is None or step < best[0]):
                best = (step, coordinate, float(value))
        return best

    # -- special points between two accepted points ---------------------------------------------
    def test_signs(self, factors, along: float, t: np.ndarray, jacobian) -> tuple[int, int, int, float]:
        """Signs of the branch-point and Hopf test functions at a point (0 for a test that is off), the
        number of eigenvalues of dF/du with positive real part (-1 when Hopf points are not looked
        for, or not counted: on the sparse path), and log |det [dF/dx; t]| (nan when branch points
        are not looked for); ``factors`` are the linear solver's factors of [jacobian; row] and
        ``along`` is row . t."""
        branch_sign, magnitude = 0, math.nan
        if self.branch_points:
            branch_sign = bordered_sign(factors, along)
            if branch_sign == 0:
                branch_sign = determinant_sign(jacobian, t, self.extended.solver)
            else:
                magnitude = factors.log_abs_determinant() - math.log(abs(along))
        hopf, unstable = hopf_signature(jacobian[:, : self.extended.n]) if self.hopf else (0, -1)
        return branch_sign, hopf, unstable, magnitude

    def _hops_past_a_branch_point(self, length: float, signs: tuple) -> bool:
        """Whether a step of chord ``length`` with no sign change of the branch-point test should be
        retried shorter because the test's trend says it passed a simple zero.

        Two branches that cross at a shallow angle lie close beside each other near the crossing, and
        a long step can land on the other one. Across the crossing that hop leaves the test's sign as
        it was (each branch changes sign there), so the branch point would go unseen. The determinant
        falls linearly towards a simple branch point, so a straight line through its last two values
        meets zero at the crossing; the check asks that two such lines (from the last three accepted
        points) agree on where, which a higher-order zero (a degenerate branch point, where the
        prediction runs ahead of every step) does not. A shorter step stays on the branch, where the
        sign changes and the point is located.
        """
        ahead, before = self.zero_ahead, self.zero_ahead_before
        if ahead is None or before is None or self.signs[0] * signs[0] <= 0:
            return False
        return ahead < length and abs(ahead - before) <= 0.25 * ahead

    def _update_trend(self, chord: float, signs: tuple) -> None:
        """Move the branch-point test's trend on to a newly accepted point ``signs`` at ``chord`` from
        the last one (see :meth:`_hops_past_a_branch_point`)."""
        sign_a, log_a, sign_b, log_b = self.signs[0], self.signs[3], signs[0], signs[3]
        # the previous prediction, as a distance ahead of the new point
        self.zero_ahead_before = None if self.zero_ahead is None else self.zero_ahead - chord
        falling = (math.expm1(min(log_a - log_b, 700.0))
                   if sign_a == sign_b != 0 and math.isfinite(log_a) and math.isfinite(log_b) else 0.0)
        self.zero_ahead = chord / falling if falling > 0.0 else None

    def _special_points(self, a, b, correction, signs, force: bool = False) -> bool | None:
        """Locate what lies between accepted points a and b, append them and b.

        The step is examined inside, not only at its ends: every coordinate with a bound or requested
        values, and every event function, may turn inside the step and so cross a level twice. Where
        its derivative along the branch changes sign between a and b, the turning point is located
        (on Newton-converged points) and the step is split there; each piece is monotone in it, so
        each level it crosses is crossed once and is located on that piece. Everything found is
        ordered along the branch by its projection on the chord (the tangent turns by less than
        ``max_turn`` over a step, so that order is the order along the arc), and a stop (a bound, a
        terminal event) keeps every point before it and at it (:func:`_in_branch_order`) and none after it.

        Returns True if the trace stops, False if it goes on, and None — with nothing changed — if a
        special point could not be located, or the count of unstable eigenvalues changed by more than
        the crossings located (the caller retries a shorter step). With ``force`` (the step is already
        at min_step) such a point is reported at the nearer bracketing point instead, with
        ``located_to`` the length of the step.
        """
        (xa, ta), (xb, tb) = a, b
        found: list[tuple[float, str, object, Located]] = []  # (fraction along the chord, kind, payload, located)
        options = self.options
        before = self.signs
        chord = xb - xa
        length = _length(chord)
        length2 = max(length * length, 1e-300)

        def fraction_of(x: np.ndarray) -> float:
            return min(1.0, max(0.0, float((x - xa) @ chord) / length2))

        splits: list[Located] = []  # turning points of watched coordinates and events: the step's pieces

        def own(x: np.ndarray, t: np.ndarray, located_to: float = 0.0) -> Located:
            """One of the step's own points (its first point, which is the last row, a split point, or
            its end) as a Located with that point's own residual and Newton iterations, never another
            point's."""
            split = next((s for s in splits if s.x is x), None)
            if x is xb:
                residual_norm, iterations = correction.residual_norm, correction.iterations
            elif split is not None:
                residual_norm, iterations = split.residual_norm, split.iterations
            else:
                residual_norm, iterations = self.residuals[-1], self.iterations[-1]
            return Located(fraction_of(x), x, t, float(residual_norm), int(iterations), located_to)

        estimates: list[Located] = []  # the bracketing points unlocated() gave: each gets a note when reported

        def unlocated(ends, f_a: float | None = None, f_b: float | None = None) -> Located | None:
            """None (retry a shorter step), or with force a bracketing point: the one where the test
            function (``f_a``, ``f_b`` at the two ends) is nearer zero, or without them the first (a
            bound or the entry of a passage, which the trace must not pass)."""
            if not force:
                return None
            (x0, t0), (x1, t1) = ends
            use_first = f_a is None or abs(f_a) < abs(f_b)
            x, t = (x0, t0) if use_first else (x1, t1)
            estimates.append(own(x, t, length))
            return estimates[-1]

        def estimated(located: Located) -> bool:
            return any(located is estimate for estimate in estimates)

        near_crossing = self.passage is not None and self.passage.active
        patient = not force and self.branch_retries < _BRANCH_RETRIES
        if patient and not near_crossing and self._hops_past_a_branch_point(length, signs):
            self.branch_retries += 1
            return None  # the branch-point test's zero lies inside the step, its sign did not change
        if before[0] * signs[0] < 0 and not near_crossing:
            # (Beside a singular crossing the bordered determinant belongs to the crossing's
            # singular structure, not to a branch point of this branch.)
            located = locate_branch_point(self.extended, a, b, options, strict=patient)
            if located is not None:
                found.append((fraction_of(located.x), "branch_point", None, located))
            elif patient:
                self.branch_retries += 1
                return None  # no branch point to refine onto: as a rule a hop to a close second branch
            else:
                self.notes.append(f"the branch-point test changed sign between {self.describe(xa)} and "
                                  f"{self.describe(xb)} but the point could not be located")
        hopf_crossings = 0
        if before[1] * signs[1] < 0:
            result = locate_hopf(self.extended, a, b, options)
            if result is not None:
                located, facts = result
                if facts["kind"] == "hopf":
                    found.append((fraction_of(located.x), "hopf", facts, located))
                    hopf_crossings += 1
                elif facts["kind"] == "jump":
                    self.notes.append(f"the sparse Hopf test changed sign between {self.describe(xa)} and "
                                      f"{self.describe(xb)} because the eigenvalue pair nearest the imaginary axis "
                                      "changed, not by a crossing: no Hopf point reported")
                else:
                    low, high = facts["eigenvalues"]
                    self.notes.append(f"neutral saddle (real eigenvalues {low:.6g} and {high:.6g}) at "
                                      f"{self.describe(located.x)}: not a Hopf point, not reported")
        # Turning points: reported folds, and the turns of watched coordinates and event functions
        # that split the step into monotone pieces.
        watched = self.watched
        if not force and any(_turns_twice(xa[c], xb[c], ta[c], tb[c], length) for c in set(self.folds) | watched):
            return None  # a coordinate seems to turn twice inside the step (its end slopes agree): subdivide
        for coordinate in sorted(set(self.folds) | watched):
            if not crossed(ta[coordinate], tb[coordinate]):
                continue
            located = locate_zero(self.extended, (xa, ta, ta[coordinate]), (xb, tb, tb[coordinate]),
                                  lambda x, t, c=coordinate: t[c], options)
            located = located or unlocated((a, b), ta[coordinate], tb[coordinate])
            if located is None:
                return None
            if coordinate in self.folds:
                found.append((fraction_of(located.x), "fold", coordinate, located))
            if coordinate in watched:
                splits.append(located)
        slopes_b = [self.event_slope(event, xb, tb) for event in self.events]
        for k, event in enumerate(self.events):
            slope_a, slope_b = self.event_slopes[k], slopes_b[k]
            if crossed(slope_a, slope_b):
                located = locate_zero(self.extended, (xa, ta, slope_a), (xb, tb, slope_b),
                                      lambda x, t, e=event: self.event_slope(e, x, t), options)
                if located is not None:
                    splits.append(located)
        if self.hopf and signs[2] >= 0 and before[2] >= 0:
            # Each Hopf point moves two eigenvalues across the imaginary axis, each fold of the free
            # parameter or branch point one real eigenvalue through zero: a larger change of the count
            # means crossings inside the step that cancel in the test functions' signs (e.g. two Hopf
            # points). Subdivide until they agree. A fold of the free parameter is a turn of the
            # tangent's last entry, counted whether or not folds are reported. An odd change left over
            # is one more real eigenvalue through zero, a branch point not looked for: it needs no
            # shorter step (a hidden Hopf pair would leave an even excess on top of it).
            change = abs(signs[2] - before[2])
            real = int(crossed(ta[self.extended.n], tb[self.extended.n])) + sum(kind == "branch_point" for _, kind, _, _ in found)
            located_crossings = 2 * hopf_crossings + real + (change - 2 * hopf_crossings - real) % 2
            if change > located_crossings:
                if not force:
                    return None
                self.notes.append(f"the number of eigenvalues with positive real part changed from {before[2]} to "
                                  f"{signs[2]} between {self.describe(xa)} and {self.describe(xb)}, more than the "
                                  f"{located_crossings} crossing(s) located there")
        splits.sort(key=lambda located: fraction_of(located.x))
        ends = [(xa, ta)] + [(s.x, s.tangent) for s in splits] + [(xb, tb)]
        values = [list(self.event_values)] + [[self.event_value(e, s.x) for e in self.events] for s in splits]
        values.append([self.event_value(e, xb) for e in self.events])
        at_b = []
        for piece in range(len(ends) - 1):
            first, last = ends[piece], ends[piece + 1]
            pieces = self._levels_in_piece(first, last, values[piece], values[piece + 1], last is ends[-1],
                                          unlocated, own)
            if pieces is None:
                return None
            landed, located_here = pieces
            at_b += landed
            found += [(fraction_of(item[2].x), item[0], item[1], item[2]) for item in located_here]
        strays = [item for item in found if not self._on_arc(item[3].x, a, b)]
        if strays:
            # A location that converged onto another solution family (e.g. the equal-phases set near a
            # critical point) is not on this step's arc: retry a shorter step, where it cannot.
            if not force:
                return None
            for _, kind, payload, located in strays:
                self.notes.append(f"the {self._named(kind, payload)} located at {self.describe(located.x)} lies off "
                                  "the branch between the points around it (another solution family nearby?)")
        # Everything between a and b is located: from here on the branch changes.
        self._update_trend(length, signs)
        self.branch_retries = 0
        self.signs = signs
        self.event_values = values[-1]
        self.event_slopes = slopes_b
        if len(self.rows) == 1:
            # A start on a special point (e.g. a restart from a fold) is not a new special point; a
            # forced step's estimate on the start (its bracketing point, the start itself) is one.
            near = 1e-9 * (1.0 + float(np.linalg.norm(xa)))
            found = [item for item in found if item[1] in ("at", "bound") or estimated(item[3])
                     or float(np.linalg.norm(item[3].x - xa)) > near]
        found = _in_branch_order(found, options.location_tolerance)
        end = None  # the row of b, once a point reported on b itself (a forced step's bracket) appends it
        stop = None  # the point where the trace stops: what else was located there is still reported
        for fraction, kind, payload, located in found:
            if stop is not None and not _same_point(stop, located, options.location_tolerance):
                break
            if estimated(located):
                self.notes.append(f"the {self._named(kind, payload)} between {self.describe(xa)} and {self.describe(xb)} "
                                  f"could not be located at min_step: reported at the nearer end, located to {length:.3g}")
            if located.x is xa or (fraction == 0.0 and np.array_equal(located.x, xa)):
                index = len(self.rows) - 1  # reported on the point before the step (not located closer)
            elif located.x is xb:
                if end is None:
                    end = self.append(xb, tb, correction.iterations, correction.residual_norm)
                index = end
            else:
                index = self.append(located.x, located.tangent, located.iterations, located.residual_norm)
            if kind == "at":
                self._at_point(*payload, index, located)
                continue
            if kind == "passage":
                # From here on the steps fix the passage coordinate; the rest of this step is dropped,
                # so the test functions start again from the entry point, not from the dropped end.
                self.passage.begin(located.x, payload)
                self._tests_from(located.x, located.tangent)
                if self.on_point is not None:
                    self._notify(index, located.x)
                return RESUME
            if kind == "fold":
                name = self.columns[payload]
                self.special.append(self.special_point("fold", self._named(kind, payload), index, located, {"coordinate": name}))
            elif kind == "branch_point":
                self.special.append(self.special_point("branch_point", "branch point", index, located))
            elif kind == "hopf":
                facts = {key: payload[key] for key in ("angular_frequency", "period")}
                if self.extended.solver.sparse and self.extended.n > LYAPUNOV_SIZE:
                    facts["first_lyapunov_coefficient"] = math.nan  # needs dense eigenvectors and solves
                else:
                    facts.update(lyapunov_facts(self.system, *self.extended.split(located.x)))
                self.special.append(self.special_point("hopf", "Hopf point", index, located, facts))
            elif kind == "event":
                event = payload
                self.special.append(self.special_point(event.kind, event.name, index, located, {"terminal": event.terminal}))
                if event.terminal and stop is None:
                    self.finish(Status.TERMINAL_EVENT, f"{Status.TERMINAL_EVENT.message} {event.name!r} at {self.describe(located.x)}")
                    stop = located
            else:
                coordinate, level = payload
                self._bound_reached(coordinate, level, index, located, stop is None)
                if stop is None:
                    stop = located
        if stop is not None:
            return True
        index = end if end is not None else self.append(xb, tb, correction.iterations, correction.residual_norm)
        for coordinate, value in at_b:
            self._at_point(coordinate, value, index, own(xb, tb))
        if self.on_point is not None:
            self._notify(index, xb)
        return False

    def _tests_from(self, x: np.ndarray, t: np.ndarray) -> None:
        """The test functions' values, signs and trend at x (tangent t), where the trace goes on from a
        point inside the step just taken (the entry of a passage) instead of from its end."""
        _, jacobian = self.extended.linearise(x)
        try:
            factors = factorise_bordered(jacobian, t, self.extended.solver)
            self.signs = self.test_signs(factors, float(t @ t), t, jacobian)
        except SingularMatrix:
            pass  # the entry lies on a singular point itself: the end's signs are the best known
        self.zero_ahead = self.zero_ahead_before = None
        self.event_values = [self.event_value(event, x) for event in self.events]
        self.event_slopes = [self.event_slope(event, x, t) for event in self.events]

    def _across(self, a, b, correction, signs) -> bool:
        """The jump of a passage across the singular point, from a (c = +gap) to b (c = -gap).

        Inserts the singular point as a row between a and b (from the crossing's ``land``, else the
        midpoint of a and b as an estimate), reports it, then b. Whatever else changed sign across
        the jump (a fold when the gap could not be halved further, an event, a bound, a requested
        value) is reported at the singular point with ``located_to`` the jump's length, and a note.
        Returns True if the trace stops there.
        """
        (xa, ta), (xb, tb) = a, b
        passage = self.passage
        crossing = passage.crossing
        chord = xb - xa
        length = _length(chord)
        key_name = self.columns[passage.key]
        landing = None
        if crossing.land is not None:
            try:
                landing = crossing.land(xa.copy(), xb.copy())
            except Exception as error:  # noqa: BLE001 - a failed landing is an estimate, not a crash
                self.notes.append(f"the {crossing.name} could not be solved ({type(error).__name__}: {error}); "
                                  "its position is estimated")
        info = {"coordinate": key_name, "gap": passage.gap}
        if landing is not None:
            x_c = np.asarray(landing.x, dtype=float).reshape(-1)
            if x_c.shape != xa.shape or not np.all(np.isfinite(x_c)) or not self._on_arc(x_c, a, b):
                self.notes.append(f"the {crossing.name} solved at {self.describe(x_c)} does not lie between the "
                                  "points around it; its position is estimated")
                landing = None
        if landing is not None:
            located_to = float(landing.located_to)
            info.update(landing.info)
        else:
            x_c = 0.5 * (xa + xb)
            x_c[passage.key] = 0.0
            located_to = length
            info["estimate"] = (f"midpoint of the two points at {key_name} = +-{passage.gap:g} on either side; "
                                "give the crossing a land function to solve the point itself")
        residual = self.extended.residual(x_c)
        residual_norm = float(abs(residual).max()) if residual.size else 0.0
        unit = chord / length if length > 0.0 else ta
        info["tangent"] = "the chord between the points around it (the Jacobian is singular there)"
        located = Located(0.5, x_c, unit, residual_norm, 0, located_to)
        index = self.append(x_c, unit.copy(), 0, residual_norm)
        self.special.append(self.special_point(crossing.kind, crossing.name, index, located, info))
        if self.on_point is not None:
            self._notify(index, x_c)
        across = Located(0.5, x_c, unit, residual_norm, 0, length)

        def noted(what: str) -> None:
            self.notes.append(f"the {what} lies within {passage.gap:g} in {key_name} of the {crossing.name}: "
                              f"reported there, located to {length:.3g}")

        for coordinate in self.folds:
            if crossed(ta[coordinate], tb[coordinate]):
                name = self.columns[coordinate]
                self.special.append(self.special_point("fold", self._named("fold", coordinate), index, across,
                                                       {"coordinate": name}))
                noted(self._named("fold", coordinate))
        values_b = [self.event_value(event, xb) for event in self.events]
        crossed_here = [("event", event) for k, event in enumerate(self.events)
                        if crossed(self.event_values[k], values_b[k], event.direction)]
        crossed_here += [("bound", (coordinate, level)) for coordinate, low, high in self.bounds for level in (low, high)
                         if (xa[coordinate] - level) * (xb[coordinate] - level) < 0.0]
        at_b = []
        for coordinate, values in self.at:
            low, high = sorted((xa[coordinate], xb[coordinate]))
            for value in values[(values > low) & (values < high)]:
                noted(f"requested value {self._at_point(coordinate, value, index, across)}")
            at_b += [(coordinate, float(value)) for value in values[values == xb[coordinate]]]
        # in the order of points located at one point (_stop_rank): what only reports, the bounds, the
        # terminal events; the first stop gives the status
        stop = False
        for kind, payload in sorted(crossed_here, key=lambda item: _stop_rank(*item)):
            if kind == "bound":
                coordinate, level = payload
                self._bound_reached(coordinate, level, index, across, not stop)
                noted(self._named(kind, payload))
                stop = True
                continue
            event = payload
            self.special.append(self.special_point(event.kind, event.name, index, across, {"terminal": event.terminal}))
            noted(self._named(kind, event))
            if event.terminal and not stop:
                self.finish(Status.TERMINAL_EVENT, f"{Status.TERMINAL_EVENT.message} {event.name!r} at "
                                                   f"{self.describe(x_c)}")
            stop = stop or event.terminal
        self.zero_ahead = self.zero_ahead_before = None  # across a singular crossing the trend is lost
        self.branch_retries = 0
        self.signs = signs
        self.event_values = values_b
        self.event_slopes = [self.event_slope(event, xb, tb) for event in self.events]
        if stop:
            return True
        index = self.append(xb, tb, correction.iterations, correction.residual_norm)
        for coordinate, value in at_b:
            self._at_point(coordinate, value, index, Located(1.0, xb, tb, correction.residual_norm, correction.iterations, 0.0))
        if self.on_point is not None:
            self._notify(index, xb)
        return False

    def _levels_in_piece(self, first, last, values_first, values_last, is_end, unlocated, own):
        """Requested values, events and bounds crossed on one monotone piece of a step.

        Returns (requested values the piece's end landed on exactly, [(kind, payload, located)]), or
        None if one could not be located (and the step is not forced). ``unlocated`` and ``own`` are
        those of :meth:`_special_points`: the bracketing point of a forced step, and a point of the
        step with its own residual.
        """
        (x0, t0), (x1, t1) = first, last
        options = self.options
        found = []
        landed = []
        for k, event in enumerate(self.events):
            value_a, value_b = values_first[k], values_last[k]
            if crossed(value_a, value_b, event.direction):
                located = locate_zero(self.extended, (x0, t0, value_a), (x1, t1, value_b),
                                      lambda x, t, e=event: self.event_value(e, x), options)
                located = located or unlocated((first, last), value_a, value_b)
                if located is None:
                    return None
                found.append(("event", event, located))
        for coordinate, values in self.at:
            a_value, b_value = x0[coordinate], x1[coordinate]
            if b_value >= a_value:  # values in (a, b]; values are sorted
                inside = values[np.searchsorted(values, a_value, "right"):np.searchsorted(values, b_value, "right")]
            else:  # values in [b, a)
                inside = values[np.searchsorted(values, b_value, "left"):np.searchsorted(values, a_value, "left")]
            for value in inside:
                if is_end and abs(x1[coordinate] - value) <= 1e-12 * (1.0 + abs(value)):
                    landed.append((coordinate, float(value)))  # the step landed on it
                    continue
                located = locate_level(self.extended, (x0, t0), (x1, t1), coordinate, float(value), options)
                located = located or unlocated((first, last), x0[coordinate] - value, x1[coordinate] - value)
                if located is None:
                    return None
                found.append(("at", (coordinate, float(value)), located))
        passage = self.passage
        if passage is not None and not passage.active and not passage.done:
            # The passage of the singular crossing begins where the last candidate coordinate enters
            # [-near, near]: located exactly, like a bound, so no step can jump it.
            entries = []
            for key, level in passage.entries(x0, x1):
                located = locate_level(self.extended, (x0, t0), (x1, t1), key, level, options)
                located = located or unlocated((first, last))
                if located is None:
                    return None
                entries.append((float((located.x - x0) @ (x1 - x0)), key, located))
            if entries:
                _, key, located = max(entries, key=lambda item: item[0])
                found.append(("passage", key, located))
        for coordinate, low, high in self.bounds:
            for level, outside in ((low, -1.0), (high, 1.0)):
                start_side = (x0[coordinate] - level) * outside  # > 0: outside, 0: on the bound
                end_side = (x1[coordinate] - level) * outside
                if start_side > 0.0 or not (end_side > 0.0 or (end_side == 0.0 and start_side < 0.0)):
                    continue
                if start_side == 0.0:
                    # On the bound already and leaving: the crossing is the piece's first point itself.
                    located = own(x0, t0)
                else:
                    located = locate_level(self.extended, (x0, t0), (x1, t1), coordinate, level, options)
                    located = located or unlocated((first, last))
                    if located is None:
                        return None
                found.append(("bound", (coordinate, level), located))
        return landed, found

    def _on_arc(self, x: np.ndarray, a, b) -> bool:
        """Whether a point located inside the step from a to b lies on that step's arc.

        The arc leaves a along ta and reaches b along tb; if its tangent stays within an angle phi of
        the chord (phi: the larger of the end tangents' angles to the chord, which the turn limit keeps
        small), it stays within L sin(phi) / 2 of the chord of length L. Twice that, plus 1 % of L and
        the reach of the Newton tolerance (and 1e-9 L for rounding), is allowed across the chord, and
        5 % of L beyond either end along it.
        """
        (xa, ta), (xb, tb) = a, b
        chord = xb - xa
        length = _length(chord)
        if length == 0.0:
            return True
        unit = chord / length
        along = float((x - xa) @ unit)
        phi = max(math.acos(min(1.0, abs(float(ta @ unit)))), math.acos(min(1.0, abs(float(tb @ unit)))))
        reach = 1e3 * self.options.tolerance * (1.0 + float(np.abs(x).max())) + 1e-9 * length
        if not -reach - 0.05 * length <= along <= 1.05 * length + reach:
            return False
        gap = _length(x - xa - along * unit)
        return gap <= length * math.sin(min(phi, 0.5 * math.pi)) + 0.01 * length + reach

    def _named(self, kind: str, payload) -> str:
        """A located point in words, as a note names it (e.g. "fold in T", "terminal event 'dew'")."""
        if kind == "fold":
            return f"fold in {self.columns[payload]}"
        if kind == "event":
            return f"{'terminal event' if payload.terminal else 'event'} {payload.name!r}"
        if kind in ("at", "bound"):
            coordinate, value = payload
            return f"{'requested value' if kind == 'at' else 'bound'} {self._level(coordinate, value)}"
        if kind == "passage":
            return f"entry of the passage of the {self.passage.crossing.name}"
        return {"branch_point": "branch point", "hopf": "Hopf point"}[kind]

    def _level(self, coordinate: int, value: float) -> str:
        """A value of a coordinate in words, as requested values and bounds are named ("T = 350")."""
        return f"{self.columns[coordinate]} = {_number(value)}"

    def _at_point(self, coordinate: int, value: float, index: int, located: Located) -> str:
        """Report the requested value ``value`` of ``coordinate`` on row ``index``; returns its name."""
        name = self._level(coordinate, value)
        self.at_points.append(self.special_point("at", name, index, located))
        return name

    def _bound_reached(self, coordinate: int, level: float, index: int, located: Located, stops: bool = True) -> None:
        name = self._level(coordinate, level)
        self.special.append(self.special_point("bound", name, index, located, {"coordinate": self.columns[coordinate]}))
        if stops:
            self.finish(Status.BOUND_REACHED, f"{Status.BOUND_REACHED.message} {name} at {self.describe(located.x)}")

    def _leaving_through_a_bound(self, x: np.ndarray, t: np.ndarray) -> bool:
        """A start exactly on a bound, heading out of the bounds: the trace ends there at once."""
        for coordinate, low, high in self.bounds:
            for level, outside in ((low, -1.0), (high, 1.0)):
                if x[coordinate] == level and t[coordinate] * outside > 0.0:
                    located = Located(0.0, x, t, self.residuals[-1], self.iterations[-1], 0.0)
                    self._bound_reached(coordinate, level, len(self.rows) - 1, located)
                    return True
        return False

    def _closed(self, xa, ta, xb, tb, x_start, t_start, h, farthest) -> bool:
        """Whether the step from xa to xb passed the start point again, heading the same way.

        The arc of a step lies within its sagitta of the chord: for a step of length L whose tangent
        turns by an angle theta, at most about L theta / 8 (a circular arc). The start counts as passed
        when its projection falls on the chord, it lies within twice that distance (plus the Newton
        tolerance's reach) of the chord, and the branch heads the same way there. The test scales with
        the step's own geometry, not with the problem's units, so a tight first turn is seen on the
        first return and a wiggling curve that comes near its start without passing it is not taken
        for a loop.
        """
        chord = xb - xa
        length2 = float(chord @ chord)
        if length2 == 0.0 or farthest < 2.0 * math.sqrt(length2) or float(tb @ t_start) < 0.5 \
                or float(ta @ t_start) < 0.5:
            return False
        along = float((x_start - xa) @ chord) / length2
        if not 0.0 <= along <= 1.0:
            return False
        gap = float(np.linalg.norm(xa + along * chord - x_start))
        length = math.sqrt(length2)
        turn = math.acos(min(1.0, float(ta @ tb)))  # >= 0: tb is oriented along ta
        reach = 1e3 * self.options.tolerance * (1.0 + float(np.abs(x_start).max()))
        if gap > 0.25 * length * turn + 1e-6 * length + reach:
            return False
        # End the loop exactly on the start point, which is a converged solution already.
        self.rows[-1] = x_start.copy()
        self.tangents[-1] = t_start.copy()
        self.residuals[-1] = self.residuals[0]
        self.iterations[-1] = self.iterations[0]
        self.steps[-1] = float(np.linalg.norm(x_start - self.rows[-2])) if len(self.rows) > 1 else 0.0
        located = Located(1.0, x_start, t_start, self.residuals[0], self.iterations[0], gap)
        self.special.append(self.special_point("closed_loop", "back at the start", len(self.rows) - 1, located))
        self.finish(Status.CLOSED_LOOP, f"{Status.CLOSED_LOOP.message} after {len(self.rows)} points")
        return True

    def branch(self, seconds: float, counters: Counters, free: str, parameter_values: np.ndarray) -> Branch:
        self.finish(Status.INTERRUPTED, Status.INTERRUPTED.message)  # (only if nothing ended it: finish keeps the first)
        width = len(self.columns)
        empty = np.empty((0, width))
        stats = {
            "setup_seconds": self.stats_setup,
            "trace_seconds": seconds,
            "newton_iterations": counters.newton_iterations,
            "jacobian_evaluations": counters.jacobian_evaluations,
            "residual_evaluations": counters.residual_evaluations,
            "accepted_steps": counters.accepted_steps,
            "rejected_steps": counters.rejected_steps,
            "rejections": dict(sorted(counters.rejections.items())),
            "points": len(self.rows),
            "linear_solver": self.extended.solver.name,
        }
        if self.notes:
            # a note repeated at once is one note (a step retried shorter may make the same note again)
            stats["notes"] = [note for k, note in enumerate(self.notes) if k == 0 or note != self.notes[k - 1]]
        for key, method in (("structure", "structure_summary"), ("symbolic", "symbolic_summary")):
            describe = getattr(self.system, method, None)
            if callable(describe):
                summary = describe()
                if summary is not None:
                    stats[key] = summary
        return Branch(
            columns=self.columns,
            points=np.array(self.rows) if self.rows else empty,
            tangents=np.array(self.tangents) if self.tangents else empty,
            steps=np.array(self.steps),
            newton_iterations=np.array(self.iterations, dtype=int),
            residual_norms=np.array(self.residuals),
            special_points=tuple(self.special),
            at=tuple(self.at_points),
            status=self.status,
            message=self.message,
            stats=stats,
            free=free,
            parameters={name: float(v) for name, v in zip(self.system.parameters, parameter_values)},
            cause=self.cause,
        )
