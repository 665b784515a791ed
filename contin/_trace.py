"""The driver: trace one branch of F(u, p) = 0 by pseudo-arclength continuation."""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Mapping, Sequence

import numpy as np

from ._bifurcation import bordered_sign, check_detect, determinant_sign, hopf_sign, locate_branch_point, locate_hopf
from ._branch import Branch, SpecialPoint
from ._corrector import correct
from ._errors import InputError, TraceError
from ._events import Event, crossed
from ._extended import CallbackFailure, Counters, Extended, describe_non_finite
from ._locate import Located, locate_level, locate_zero
from ._names import suggest
from ._options import TraceOptions
from ._status import Status
from ._stepsize import StepController
from ._system import System
from ._tangent import Bordered, SingularMatrix, from_factors, one_blas_thread, tangent

__all__ = ["trace", "start_vector"]


def _length(v: np.ndarray) -> float:
    """Euclidean length; math.sqrt of a dot product is several times cheaper than np.linalg.norm here."""
    return math.sqrt(float(v @ v))


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
            raise InputError(f"start has {values.size} values but the system has {system.size} unknowns")
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
    max_iterations: int = 8,
    bounds: Mapping[str, Sequence[float]] | None = None,
    events: Sequence[Event] = (),
    at: Mapping[str, Sequence[float]] | None = None,
    folds: Sequence[str] = (),
    detect: Sequence[str] | None = None,
    corrector: str = "arclength",
    tangent: Sequence[float] | None = None,
    options: TraceOptions | None = None,
    on_point: Callable[[int, np.ndarray, Sequence[SpecialPoint]], None] | None = None,
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
    sums of dF/du; see :mod:`contin._bifurcation` and :func:`contin.switch_branch`.

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
            corrector: see :class:`TraceOptions` (which also states Newton's convergence test exactly);
            or pass ``options`` instead (not both).
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
        tangent: optional initial direction in coordinates (unknowns then free parameter), e.g. to
            restart from a saved point or a fold; the start is then corrected on the bordered system, so
            dF/du may be singular there. ``direction`` = -1 reverses it.
        on_point: called as ``on_point(index, x, special_points)`` after each accepted point, with the
            special points found so far (read them, do not change them); e.g. for a progress line.
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
                    corrector=corrector)
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
    extended = Extended(system, parameter_values, free_index, counters, options.relative_tolerance)
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
    run = _Run(system, extended, columns, options, bound_list, at_list, fold_list, list(events), on_point)
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

    def __init__(self, system, extended, columns, options, bounds, at, folds, events, on_point) -> None:
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
        self.index = np.arange(0)  # 0 .. n, for the parity of LU row swaps
        self.signs = (0, 0)  # (sign of det [dF/dx; t], sign of the Hopf test) at the last accepted point
        self.notes: list[str] = []

    # -- bookkeeping -----------------------------------------------------------------------------
    def finish(self, status: Status, message: str, cause: BaseException | None = None) -> None:
        if self.status is None:
            self.status, self.message, self.cause = status, message, cause

    def describe(self, x: np.ndarray) -> str:
        return ", ".join(f"{name} = {value:.6g}" for name, value in zip(self.columns, x))

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
            Bordered(jacobian, row)
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
            bordered = Bordered(correction.jacobian, row)
        except SingularMatrix:
            raise InputError(
                f"the Jacobian dF/du is singular at the corrected start point ({self.describe(correction.x)})"
            ) from None
        reference = row if self.initial_tangent is not None else row * self.options.direction
        t = tangent(bordered, reference)
        if self.initial_tangent is None and t[n] == 0.0:
            t = reference.copy()
        self.jacobian = correction.jacobian
        self.index = np.arange(n + 1)
        self.signs = self.test_signs(bordered.factors, float(row @ t), t, correction.jacobian)
        self.event_values = [self.event_value(event, correction.x) for event in self.events]
        index = self.append(correction.x, t, correction.iterations, correction.residual_norm)
        for coordinate, values in self.at:
            for value in values[values == correction.x[coordinate]]:
                located = Located(0.0, correction.x, t, correction.residual_norm, correction.iterations, 0.0, 0.0)
                self.at_points.append(self.special_point("at", f"{self.columns[coordinate]} = {value:g}", index, located))
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
        if not (np.all(np.isfinite(residual)) and np.all(np.isfinite(jacobian))):
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
        last_reason = ""
        while self.status is None:
            if len(self.rows) >= options.max_points:
                self.finish(Status.MAX_POINTS, f"{Status.MAX_POINTS.message} ({options.max_points}) at {self.describe(x)}")
                return
            aim = self._next_requested_value(x, t, h)
            step_now = h if aim is None else aim[0]
            predicted = x + step_now * t
            if curvature is not None:
                # Second-order predictor x + h t + h^2/2 x'': its error is O(h^3), not O(h^2), so the
                # corrector usually needs one Newton iteration fewer for the same step.
                bend = 0.5 * step_now * step_now * curvature
                if _length(bend) <= 0.25 * step_now:
                    predicted = predicted + bend
            if aim is not None:
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
            correction = correct(self.extended, predicted, row, target, tolerance=options.tolerance,
                                 max_iterations=options.max_iterations, jacobian=self.jacobian,
                                 max_distance=max(step_now, 1e-12) * 2.0, exact_jacobian=False)
            accepted = False
            if correction.converged:
                try:
                    factored = (from_factors(correction.factors, row) if correction.factors is not None
                                else Bordered(correction.jacobian, row))
                    t_new = tangent(factored, t)
                    cosine = float(t_new @ t)
                    turn = math.acos(min(1.0, max(-1.0, cosine)))
                    if self.controller.accepts(turn):
                        accepted = True
                    else:
                        last_reason = f"large turn (the tangent turned by {turn:.3g} rad, more than max_turn)"
                except SingularMatrix:
                    last_reason = "singular bordered Jacobian (at the corrected point)"
            else:
                last_reason = correction.reason
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
            signs = self.test_signs(factored.factors, cosine if row is t else float(row @ t_new), t_new,
                                    correction.jacobian)
            at_min_step = step_now <= options.min_step * (1.0 + 1e-12)
            stop = self._special_points((x, t), (x_new, t_new), correction, signs, force=at_min_step)
            if stop is None:
                # A special point in this step could not be located: retry the step shorter.
                self.extended.counters.reject("special point not located")
                h = max(options.min_step, step_now * self.controller.shrink)
                continue
            self.extended.counters.accepted_steps += 1
            self.jacobian = correction.jacobian
            if stop:
                return
            farthest = max(farthest, _length(x_new - x_start))
            if self._closed(x, x_new, t_new, x_start, t_start, h, farthest):
                return
            travelled = _length(x_new - x)
            curvature = (t_new - t) / travelled if travelled > 0.0 and self.rows[-2] is x else None
            x, t = x_new, t_new
            h = self.controller.after_success(h, correction.iterations, turn)

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
    def test_signs(self, factors: tuple, along: float, t: np.ndarray, jacobian: np.ndarray) -> tuple[int, int]:
        """Signs of the branch-point and Hopf test functions at a point (0 for a test that is off);
        ``factors`` are the LU factors of [jacobian; row] and ``along`` is row . t."""
        branch_sign = 0
        if self.branch_points:
            branch_sign = bordered_sign(factors, along, self.index)
            if branch_sign == 0:
                branch_sign = determinant_sign(jacobian, t)
        hopf = hopf_sign(jacobian[:, : self.extended.n]) if self.hopf else 0
        return branch_sign, hopf

    def _special_points(self, a, b, correction, signs=(0, 0), force: bool = False) -> bool | None:
        """Locate what lies between accepted points a and b, append them and b.

        Returns True if the trace stops, False if it goes on, and None — with nothing changed — if a
        special point could not be located (the caller retries a shorter step). With ``force`` (the
        step is already at min_step) such a point is reported at the nearer bracketing point instead,
        with ``located_to`` the length of the step.
        """
        (xa, ta), (xb, tb) = a, b
        found: list[tuple[float, str, object, Located]] = []  # (fraction, kind, payload, located)
        options = self.options
        before = self.signs
        length = _length(xb - xa)

        def unlocated(f_a: float, f_b: float, prefer_inside: bool = False) -> Located | None:
            """None (retry a shorter step), or with force the nearer bracketing point."""
            if not force:
                return None
            use_a = prefer_inside or abs(f_a) < abs(f_b)
            x, t = (xa, ta) if use_a else (xb, tb)
            return Located(0.0 if use_a else 1.0, x.copy(), t.copy(), float(correction.residual_norm),
                           int(correction.iterations), length, f_a if use_a else f_b)
        if before[0] * signs[0] < 0:
            located = locate_branch_point(self.extended, a, b, options)
            if located is not None:
                found.append((located.fraction, "branch_point", None, located))
            else:
                self.notes.append(f"the branch-point test changed sign between {self.describe(xa)} and "
                                  f"{self.describe(xb)} but the point could not be located")
        if before[1] * signs[1] < 0:
            result = locate_hopf(self.extended, a, b, options)
            if result is not None:
                located, facts = result
                if facts["kind"] == "hopf":
                    found.append((located.fraction, "hopf", facts, located))
                else:
                    low, high = facts["eigenvalues"]
                    self.notes.append(f"neutral saddle (real eigenvalues {low:.6g} and {high:.6g}) at "
                                      f"{self.describe(located.x)}: not a Hopf point, not reported")
        for coordinate in self.folds:
            if crossed(ta[coordinate], tb[coordinate]):
                located = locate_zero(self.extended, (xa, ta, ta[coordinate]), (xb, tb, tb[coordinate]),
                                      lambda x, t, c=coordinate: t[c], options)
                located = located or unlocated(ta[coordinate], tb[coordinate])
                if located is None:
                    return None
                found.append((located.fraction, "fold", coordinate, located))
        new_values = []
        for k, event in enumerate(self.events):
            value_a, value_b = self.event_values[k], self.event_value(event, xb)
            new_values.append(value_b)
            if crossed(value_a, value_b, event.direction):
                located = locate_zero(self.extended, (xa, ta, value_a), (xb, tb, value_b),
                                      lambda x, t, e=event: self.event_value(e, x), options)
                located = located or unlocated(value_a, value_b)
                if located is None:
                    return None
                found.append((located.fraction, "event", event, located))
        at_b = []
        for coordinate, values in self.at:
            a_value, b_value = xa[coordinate], xb[coordinate]
            if b_value >= a_value:  # values in (a, b]; values are sorted
                inside = values[np.searchsorted(values, a_value, "right"):np.searchsorted(values, b_value, "right")]
            else:  # values in [b, a)
                inside = values[np.searchsorted(values, b_value, "left"):np.searchsorted(values, a_value, "left")]
            for value in inside:
                if abs(xb[coordinate] - value) <= 1e-12 * (1.0 + abs(value)):
                    at_b.append((coordinate, float(value)))  # the step landed on it
                    continue
                located = locate_level(self.extended, (xa, ta), (xb, tb), coordinate, float(value), options)
                located = located or unlocated(xa[coordinate] - value, xb[coordinate] - value)
                if located is None:
                    return None
                found.append((located.fraction, "at", (coordinate, float(value)), located))
        for coordinate, low, high in self.bounds:
            for level in (low, high):
                if (xa[coordinate] - level) * (xb[coordinate] - level) < 0 or (
                    xb[coordinate] == level and xa[coordinate] != level
                ):
                    located = locate_level(self.extended, (xa, ta), (xb, tb), coordinate, level, options)
                    located = located or unlocated(xa[coordinate] - level, xb[coordinate] - level, True)
                    if located is None:
                        return None
                    found.append((located.fraction, "bound", (coordinate, level), located))
        # Everything between a and b is located: from here on the branch changes.
        self.signs = signs
        self.event_values = new_values
        if len(self.rows) == 1:
            # A start on a special point (e.g. a restart from a fold) is not a new special point.
            near = 1e-9 * (1.0 + float(np.linalg.norm(xa)))
            found = [item for item in found if item[1] == "at" or float(np.linalg.norm(item[3].x - xa)) > near]
        found.sort(key=lambda item: item[0])
        for fraction, kind, payload, located in found:
            if kind == "at":
                coordinate, value = payload
                index = len(self.rows) - 1
                self.at_points.append(self.special_point("at", f"{self.columns[coordinate]} = {value:g}", index, located))
                continue
            if located.x is xa or (fraction == 0.0 and np.array_equal(located.x, xa)):
                index = len(self.rows) - 1  # reported on the point before the step (not located closer)
            else:
                index = self.append(located.x, located.tangent, located.iterations, located.residual_norm)
            if kind == "fold":
                name = self.columns[payload]
                self.special.append(self.special_point("fold", f"fold in {name}", index, located, {"coordinate": name}))
            elif kind == "branch_point":
                self.special.append(self.special_point("branch_point", "branch point", index, located))
            elif kind == "hopf":
                facts = {key: payload[key] for key in ("angular_frequency", "period")}
                self.special.append(self.special_point("hopf", "Hopf point", index, located, facts))
            elif kind == "event":
                event = payload
                self.special.append(self.special_point(event.kind, event.name, index, located, {"terminal": event.terminal}))
                if event.terminal:
                    self.finish(Status.TERMINAL_EVENT, f"{Status.TERMINAL_EVENT.message} {event.name!r} at {self.describe(located.x)}")
                    return True
            else:
                coordinate, level = payload
                name = self.columns[coordinate]
                self.special.append(self.special_point("bound", f"{name} = {level:g}", index, located, {"coordinate": name}))
                self.finish(Status.BOUND_REACHED, f"{Status.BOUND_REACHED.message} {name} = {level:g} at {self.describe(located.x)}")
                return True
        index = self.append(xb, tb, correction.iterations, correction.residual_norm)
        for coordinate, value in at_b:
            located = Located(1.0, xb, tb, correction.residual_norm, correction.iterations, 0.0, 0.0)
            self.at_points.append(self.special_point("at", f"{self.columns[coordinate]} = {value:g}", index, located))
        if self.on_point is not None:
            self._notify(index, xb)
        return False

    def _closed(self, xa, xb, tb, x_start, t_start, h, farthest) -> bool:
        """Whether the step from xa to xb passed the start point again, heading the same way."""
        chord = xb - xa
        length2 = float(chord @ chord)
        if length2 == 0.0 or farthest < 4.0 * h or float(tb @ t_start) < 0.9:
            return False
        along = float((x_start - xa) @ chord) / length2
        if not 0.0 <= along <= 1.0:
            return False
        gap = float(np.linalg.norm(xa + along * chord - x_start))
        if gap > max(1e3 * self.options.tolerance, 0.05 * math.sqrt(length2)):
            return False
        # End the loop exactly on the start point, which is a converged solution already.
        self.rows[-1] = x_start.copy()
        self.tangents[-1] = t_start.copy()
        self.residuals[-1] = self.residuals[0]
        self.steps[-1] = float(np.linalg.norm(x_start - self.rows[-2])) if len(self.rows) > 1 else 0.0
        located = Located(1.0, x_start, t_start, self.residuals[0], self.iterations[0], gap, 0.0)
        self.special.append(self.special_point("closed_loop", "back at the start", len(self.rows) - 1, located))
        self.finish(Status.CLOSED_LOOP, f"{Status.CLOSED_LOOP.message} after {len(self.rows)} points")
        return True

    def branch(self, seconds: float, counters: Counters, free: str, parameter_values: np.ndarray) -> Branch:
        if self.status is None:
            self.finish(Status.INTERRUPTED, Status.INTERRUPTED.message)
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
        }
        if self.notes:
            stats["notes"] = list(self.notes)
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
