"""Two-parameter continuation: curves of folds and of Hopf points, and their codimension-two points.

A fold or Hopf point found on a one-parameter branch moves when a second parameter moves; the
points where F = 0 has a fold (or a Hopf pair) form a curve in (u, p, q). :func:`follow` traces that
curve with :func:`contin.trace` itself, on a defining system built as a contin :class:`~contin.System`
(so every step check of the driver applies), and returns it with the columns of the original
system: the unknowns, then both parameters (and ``omega`` on Hopf curves).

Fold curves: the minimally augmented system (Govaerts, Numerical Methods for Bifurcations of
Dynamical Equilibria, SIAM 2000, ch. 3; Kuznetsov, Elements of Applied Bifurcation Theory, 3rd ed.,
Springer 2004, section 10.2)

    F(u, p, q) = 0,   g(u, p, q) = 0,   where  [F_u  b] [v]   [0]
                                                [c^T 0] [g] = [1],

n + 1 equations in the n + 2 coordinates (u, p, q). The bordering vectors b and c are the left and
right null vectors of F_u at the start, fixed along the curve (the bordered matrix stays regular
while F_u keeps a simple zero eigenvalue near them). With the adjoint solution w of
[F_u^T c; b^T 0] [w; h] = [0; 1], the gradient of g is g_z = -w^T F_uz[v], whose entries are a
directional derivative of the system's Jacobian along v: exact for symbolic systems
(``SymbolicSystem.jacobian_along``, the Jacobian of F_u v compiled once), else a central difference
of two Jacobian evaluations (see :mod:`contin.tracing._lyapunov`).

Hopf curves: the standard extended system with the squared frequency kappa = omega^2 (Roose &
Hlavacek, SIAM J. Appl. Math. 45, 1985; Kuznetsov 2004, section 10.2)

    F = 0,   (F_u^2 + kappa I) v = 0,   <c, v> = 1,   <c, F_u v> = 0,

2n + 2 equations in (u, v, kappa, p, q), with c fixed at the start. It does not divide by omega, so
the curve reaches omega = 0; there the fold curve (with kappa = 0 and v its null vector, which also
solves these equations) crosses it, so the Bogdanov-Takens point is a branch point of this system,
located by the driver's branch-point refinement and reported as ``bogdanov_takens``; the trace stops
just past it (kappa < 0: the curve goes on as one of neutral saddles).

Codimension-two points are located as terminal or non-terminal events of the driver on converged
points: ``cusp`` on a fold curve where the quadratic coefficient <w, F_uu[v, v]> changes sign,
``bogdanov_takens`` where <w, v> changes sign on a fold curve of an ODE (the zero eigenvalue becomes
double) or kappa does on a Hopf curve, ``generalised_hopf`` where the first Lyapunov coefficient
changes sign on a Hopf curve (Kuznetsov 2004, ch. 8 and section 10.2).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from ..results._branch import Branch, SpecialPoint
from ..base._errors import InputError
from ..systems._events import Event
from ..tracing._lyapunov import JacobianCalculus, first_lyapunov_coefficient, hopf_eigenpair
from ..base._names import suggest
from ..systems._system import System

__all__ = ["follow"]

_SET_HERE = ("start", "free", "parameters", "tangent", "events", "detect")


def _bordered(matrix: np.ndarray, b: np.ndarray, c: np.ndarray) -> np.ndarray:
    n = matrix.shape[0]
    bordered = np.zeros((n + 1, n + 1))
    bordered[:n, :n] = matrix
    bordered[:n, n] = b
    bordered[n, :n] = c
    return bordered


class _Defining(System):
    """Shared part of the defining systems: inner unknowns are (u, extra..., p), the free one q."""

    kind = "algebraic"

    def __init__(self, system: System, values: np.ndarray, first: int, second: int, extra: Sequence[str]) -> None:
        self.base = system
        self.n = system.size
        self.first, self.second = first, second
        self.full_values = np.array(values, dtype=float)
        self.unknowns = tuple(f"{name}" for name in system.unknowns) + tuple(extra) + (system.parameters[first],)
        self.parameters = tuple(name for k, name in enumerate(system.parameters) if k != first)
        self.parameter_values = np.array([v for k, v in enumerate(values) if k != first], dtype=float)
        self.equations = tuple(f"eq{i}" for i in range(len(self.unknowns)))
        self.start = None
        self.calculus = JacobianCalculus(system, self.full_values, (first, second))

    def split(self, y: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(u, all parameter values of the base system) from inner coordinates and parameters."""
        full = np.insert(np.asarray(p, dtype=float), self.first, y[-1])
        return np.asarray(y[: self.n], dtype=float), full

    def parameter_jacobian(self, u, p):  # only for sensitivities: differences are enough
        return System.parameter_jacobian(self, u, p)


class _FoldSystem(_Defining):
    def __init__(self, system, values, first, second, b, c) -> None:
        super().__init__(system, values, first, second, ())
        self.b, self.c = b, c
        self.last = None  # (u, parameters, null_vectors result, F_uz[v] or None) of the last point

    def null_vectors(self, u, full):
        """(F, [F_u | F_p | F_q], v, w, g) at a point."""
        if self.last is not None and np.array_equal(self.last[0], u) and np.array_equal(self.last[1], full):
            return self.last[2]
        f, jacobian = self.calculus.full(u, full)
        n = self.n
        matrix = _bordered(jacobian[:, :n], self.b, self.c)
        rhs = np.zeros(n + 1)
        rhs[n] = 1.0
        right = np.linalg.solve(matrix, rhs)
        left = np.linalg.solve(matrix.T, rhs)
        found = f, jacobian, right[:n], left[:n], float(right[n])
        self.last = (u.copy(), full.copy(), found, None)
        return found

    def along_null_vector(self, u, full, v):
        """F_uz[v] (n x (n + 2)), kept for the point last linearised (the converged point of a step,
        where the events are evaluated next)."""
        last = self.last
        if last is not None and last[3] is not None and np.array_equal(last[0], u) and np.array_equal(last[1], full):
            return last[3]
        along = self.calculus.along(u, v, full)
        if last is not None and np.array_equal(last[0], u) and np.array_equal(last[1], full):
            self.last = (last[0], last[1], last[2], along)
        return along

    def residual(self, y, p):
        u, full = self.split(y, p)
        f, _, _, _, g = self.null_vectors(u, full)
        return np.append(f, g)

    def linearise(self, y, p, free):
        u, full = self.split(y, p)
        f, jacobian, v, w, g = self.null_vectors(u, full)
        gradient = -(w @ self.along_null_vector(u, full, v))  # d g / d(u, p, q)
        n = self.n
        whole = np.vstack([jacobian, gradient])
        return np.append(f, g), whole[:, : n + 1], self._free_column(whole, y, p, free)

    def _free_column(self, whole, y, p, free):
        if self.parameters[free] != self.base.parameters[self.second]:
            return System._difference_parameter_column(self, y, p, free, None)
        return whole[:, self.n + 1]

    def quadratic_coefficient(self, y, p) -> float:
        """<w, F_uu[v, v]> with the bordered normalisation: zero at a cusp."""
        u, full = self.split(y, p)
        _, _, v, w, _ = self.null_vectors(u, full)
        return float(w @ (self.along_null_vector(u, full, v)[:, : self.n] @ v))

    def bogdanov_takens_test(self, y, p) -> float:
        """<w, v>: zero where the zero eigenvalue of F_u becomes double (a Jordan block)."""
        u, full = self.split(y, p)
        _, _, v, w, _ = self.null_vectors(u, full)
        return float(w @ v) / (float(np.linalg.norm(w)) * float(np.linalg.norm(v)))


class _HopfSystem(_Defining):
    def __init__(self, system, values, first, second, c) -> None:
        n = system.size
        super().__init__(system, values, first, second, tuple(f"v[{i}]" for i in range(n)) + ("kappa",))
        self.c = c

    def parts(self, y):
        n = self.n
        return y[n: 2 * n], float(y[2 * n])

    def residual(self, y, p):
        u, full = self.split(y, p)
        v, kappa = self.parts(y)
        f, jacobian = self.calculus.full(u, full)
        a = jacobian[:, : self.n]
        av = a @ v
        return np.concatenate([f, a @ av + kappa * v, [self.c @ v - 1.0, self.c @ av]])

    def linearise(self, y, p, free):
        n = self.n
        u, full = self.split(y, p)
        v, kappa = self.parts(y)
        f, jacobian = self.calculus.full(u, full)
        a = jacobian[:, :n]
        av = a @ v
        along_v = self.calculus.along(u, v, full)     # F_uz[v], n x (n + 2)
        along_av = self.calculus.along(u, av, full)   # F_uz[A v]
        size = 2 * n + 2
        whole = np.zeros((size, size + 1))  # columns: u, v, kappa, p, q
        z = list(range(n)) + [size - 1, size]  # where u, p, q sit
        whole[:n, z] = jacobian
        whole[n: 2 * n, z] = along_av + a @ along_v
        whole[n: 2 * n, n: 2 * n] = a @ a + kappa * np.eye(n)
        whole[n: 2 * n, 2 * n] = v
        whole[2 * n, n: 2 * n] = self.c
        whole[2 * n + 1, z] = self.c @ along_v
        whole[2 * n + 1, n: 2 * n] = self.c @ a
        residual = np.concatenate([f, a @ av + kappa * v, [self.c @ v - 1.0, self.c @ av]])
        if self.parameters[free] != self.base.parameters[self.second]:
            column = System._difference_parameter_column(self, y, p, free, None)
        else:
            column = whole[:, size]
        return residual, whole[:, :size], column

    def lyapunov(self, y, p) -> float:
        """The first Lyapunov coefficient where kappa > 0, NaN elsewhere."""
        if not self.parts(y)[1] > 0.0:
            return math.nan
        u, full = self.split(y, p)
        try:
            return first_lyapunov_coefficient(self.base, u, full)
        except InputError:
            return math.nan


def _without_turns_at_cusps(special: list[SpecialPoint]) -> list[SpecialPoint]:
    """The curve's special points without its folds that are a cusp seen twice.

    At a cusp the fold curve's tangent is the null vector of F_u, so both parameters are stationary
    there and (generically) one of them turns: the driver finds a fold of the curve at the very
    point of the cusp. One point, one row: the fold is dropped and the cusp's ``info`` says which
    parameter turns there. (Left as two rows, their order along the branch would be decided by
    rounding.)
    """
    cusps = [sp for sp in special if sp.kind == "cusp"]
    kept = []
    for sp in special:
        at = None
        if sp.kind == "fold":
            for cusp in cusps:
                reach = 10.0 * max(sp.located_to, cusp.located_to, 1e-9) * (1.0 + float(np.abs(cusp.point).max()))
                if float(np.abs(sp.point - cusp.point).max()) <= reach:
                    at = cusp
                    break
        if at is None:
            kept.append(sp)
        else:
            at.info.setdefault("turns", sp.info.get("coordinate", sp.name))
    return kept


def _point_of(branch: Branch, special_point, system: System) -> SpecialPoint:
    kinds = ("fold", "hopf")
    if isinstance(special_point, str):
        if special_point not in kinds:
            raise InputError(f"special_point={special_point!r} is not a kind follow can trace; use 'fold' or "
                             f"'hopf' (or one of branch.special_points){suggest(special_point, kinds)}")
        if special_point == "hopf" and system.kind != "ode":
            raise InputError("special_point='hopf' needs an ODE system (du/dt = F(u, p), kind='ode') and this "
                             f"system is {system.kind!r}; follow a 'fold' or build the system with kind='ode'")
        found = [sp for sp in branch.special_points if sp.kind == special_point
                 and (special_point == "hopf" or sp.info.get("coordinate") == branch.free)]
        if not found:
            listed = ", ".join(sorted({sp.kind for sp in branch.special_points})) or "none"
            raise InputError(f"special_point={special_point!r}: the branch has no such point (its special points: "
                             f"{listed}); trace a branch that passes one, or pass one of branch.special_points")
        return found[0]
    if not isinstance(special_point, SpecialPoint):
        raise InputError(f"special_point must be a SpecialPoint of the branch or 'fold' / 'hopf', got "
                         f"{type(special_point).__name__}")
    if not any(sp is special_point or (sp.kind == special_point.kind and np.array_equal(sp.point, special_point.point))
               for sp in branch.special_points):
        raise InputError(f"special_point ({special_point.kind} {special_point.name!r}) is not a special point of "
                         "this branch; pass one of branch.special_points")
    if special_point.kind not in kinds or (special_point.kind == "fold"
                                           and special_point.info.get("coordinate") != branch.free):
        what = (f"a fold in {special_point.info.get('coordinate')!r}, not in the free parameter {branch.free!r}"
                if special_point.kind == "fold" else f"a {special_point.kind!r} point")
        raise InputError(f"special_point is {what}; follow traces folds in the free parameter and Hopf points: "
                         "pass one of branch.special('fold') or branch.special('hopf')")
    if special_point.kind == "hopf" and system.kind != "ode":
        raise InputError(f"special_point is a Hopf point but the system is {system.kind!r}; Hopf curves need "
                         "an ODE system (kind='ode')")
    return special_point


def _check_free(free, system: System, branch: Branch) -> tuple[str, str]:
    if isinstance(free, str) or not isinstance(free, Sequence) or len(free) != 2:
        raise InputError(f"free={free!r} must name two parameters, e.g. free=({branch.free!r}, 'q'): the branch's "
                         "free parameter and the one to vary with it")
    names = tuple(free)
    for name in names:
        if not isinstance(name, str):
            raise InputError(f"free holds {name!r}, which is not a parameter name")
        system.index_of_parameter(name, argument="free")
    if names[0] == names[1]:
        raise InputError(f"free names {names[0]!r} twice; give two different parameters, e.g. "
                         f"free=({branch.free!r}, 'q')")
    if branch.free not in names:
        raise InputError(f"free={names!r} leaves out the branch's free parameter {branch.free!r}; it must be "
                         "one of the two")
    return names


def follow(branch: Branch, special_point, system: System, free: Sequence[str] = ("p", "q"),
           **trace_keywords) -> Branch:
    """Trace the curve of a fold or a Hopf point of ``branch`` in two parameters.

    The curve is traced by :func:`contin.trace` on a defining system (see the module text: the
    minimally augmented system of Govaerts 2000 for folds, the extended system with kappa = omega^2
    of Roose & Hlavacek 1985 for Hopf points; second derivatives exact for symbolic systems, else
    central differences of the system's Jacobian). The trace's free parameter is the new one (the one of ``free`` that
    is not ``branch.free``): ``direction=1`` moves it up first.

    Args:
        branch: a traced :class:`~contin.Branch` of ``system``.
        special_point: a fold in the free parameter or a Hopf point from ``branch.special_points``, or
            ``"fold"`` / ``"hopf"`` for the first such point on the branch.
        system: the system that was traced.
        free: the two parameters: the branch's free parameter and the one to vary with it; the
            returned columns list them in this order.
        trace_keywords: passed to :func:`contin.trace` (``step``, ``max_points``, ``bounds`` on the
            unknowns or either parameter, ``direction``, ...); ``start``, ``free``, ``parameters``,
            ``tangent``, ``events`` and ``detect`` are set here.

    Returns:
        A :class:`~contin.Branch` with columns the unknowns, then the two parameters in the order of
        ``free``, then (Hopf curves) ``omega``, the angular frequency; its special points include
        ``cusp`` and ``bogdanov_takens`` (fold curves; the latter for ODEs) and ``bogdanov_takens``
        (terminal) and ``generalised_hopf`` (Hopf curves), besides the driver's own (folds of the
        curve in the new parameter, branch points, bounds). ``stats["curve"]`` is ``"fold"`` or
        ``"hopf"``; ``stats["system_jacobian_evaluations"]`` counts Jacobians of ``system``.

    Raises:
        InputError: the point is not a fold or Hopf point of the branch, ``hopf`` on an algebraic
            system, ``free`` repeats a name, leaves out ``branch.free`` or names a parameter the
            system does not have, a keyword set here or not taken by :func:`contin.trace`.
    """
    from ..tracing._switching import trace_keyword_names
    from ..tracing._trace import trace

    if not isinstance(branch, Branch):
        raise InputError(f"branch must be a contin Branch (from contin.trace), got {type(branch).__name__}")
    if not isinstance(system, System):
        raise InputError(f"system must be a contin System, got {type(system).__name__}")
    if tuple(system.unknowns) + (branch.free,) != tuple(branch.columns):
        raise InputError(f"system does not match the branch: the branch has columns {', '.join(branch.columns)}; "
                         "pass the system that was traced")
    names = _check_free(free, system, branch)
    point = _point_of(branch, special_point, system)
    allowed = trace_keyword_names()
    for name in sorted(trace_keywords):
        if name in _SET_HERE:
            raise InputError(f"follow sets {name!r} itself (from the special point); leave it out")
        if name not in allowed:
            raise InputError(f"follow got the keyword {name!r}, which contin.trace does not take"
                             f"{suggest(name, allowed)}")

    n = system.size
    first = system.parameters.index(branch.free)
    new = names[1] if names[0] == branch.free else names[0]
    second = system.parameters.index(new)
    values = system.parameter_vector(branch.parameters)
    values[first] = float(point.point[n])
    u0 = np.asarray(point.point[:n], dtype=float)
    calculus = JacobianCalculus(system, values, (first, second))
    _, jacobian = calculus.full(u0)
    a = jacobian[:, :n]
    if point.kind == "fold":
        left, _, right = np.linalg.svd(a)
        b, c = left[:, -1].copy(), right[-1].copy()
        inner = _FoldSystem(system, values, first, second, b, c)
        y0 = np.append(u0, values[first])
        events = [Event("cusp", inner.quadratic_coefficient, kind="cusp")]
        if system.kind == "ode":
            events.append(Event("Bogdanov-Takens point", inner.bogdanov_takens_test, kind="bogdanov_takens"))
    else:
        _, omega, q, _ = hopf_eigenpair(a)
        # The real invariant plane of the pair: A q_r = -w q_i, A q_i = w q_r; v in it with
        # <c, v> = 1 and <c, A v> = 0, c along the larger of q_r and q_i.
        q_r, q_i = q.real, q.imag
        c = q_r if np.linalg.norm(q_r) >= np.linalg.norm(q_i) else q_i
        c = c / np.linalg.norm(c)
        coefficients = np.linalg.solve(np.array([[c @ q_r, c @ q_i], [-(c @ q_i), c @ q_r]]), [1.0, 0.0])
        v0 = coefficients[0] * q_r + coefficients[1] * q_i
        inner = _HopfSystem(system, values, first, second, c)
        y0 = np.concatenate([u0, v0, [omega * omega], [values[first]]])
        events = [Event("Bogdanov-Takens point", lambda y, p: float(y[2 * n]), terminal=True, kind="bogdanov_takens"),
                  Event("generalised Hopf point", inner.lyapunov, kind="generalised_hopf")]
    inner_parameters = {name: float(v) for k, (name, v) in enumerate(zip(system.parameters, values)) if k != first}
    traced = trace(inner, y0, free=new, parameters=inner_parameters, events=events, detect=("fold", "branch_point"),
                   **trace_keywords)
    return _project(traced, inner, system, names, point.kind, values, first)


def _project(traced: Branch, inner: _Defining, system: System, names: tuple[str, str], kind: str,
             values: np.ndarray, first: int) -> Branch:
    """The curve in the columns of the original system: unknowns, both parameters (, omega)."""
    n = system.size
    width = len(traced.columns)
    where = {system.parameters[first]: width - 2, traced.free: width - 1}
    keep = list(range(n)) + [where[names[0]], where[names[1]]]
    columns = tuple(system.unknowns) + names + (("omega",) if kind == "hopf" else ())

    def rows(x: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        single = x.ndim == 1
        x, t = np.atleast_2d(x), np.atleast_2d(t)
        point, direction = x[:, keep], t[:, keep]
        if kind == "hopf":
            kappa, slope = x[:, 2 * n], t[:, 2 * n]
            omega = np.sqrt(np.maximum(kappa, 0.0))
            safe = np.where(omega > 0.0, omega, 1.0)
            rate = np.where(omega > 0.0, slope / (2.0 * safe), 0.0)
            point = np.column_stack([point, omega])
            direction = np.column_stack([direction, rate])
        lengths = np.linalg.norm(direction, axis=1, keepdims=True)
        direction = np.divide(direction, lengths, out=np.zeros_like(direction), where=lengths > 0.0)
        return (point[0], direction[0]) if single else (point, direction)

    def moved(sp: SpecialPoint, kind: str | None = None, name: str | None = None, info: dict | None = None):
        point, direction = rows(sp.point, sp.tangent)
        return SpecialPoint(kind or sp.kind, name or sp.name, sp.index, {c: float(v) for c, v in zip(columns, point)},
                            point, direction, sp.residual_norm, sp.newton_iterations, sp.located_to,
                            dict(sp.info if info is None else info))

    special = _without_turns_at_cusps(list(traced.special_points)) if kind == "fold" else list(traced.special_points)
    if kind == "hopf" and len(traced.points):
        # The fold curve with kappa = 0 also solves the Hopf system and meets the Hopf curve at the
        # Bogdanov-Takens point, so the defining system has a branch point there: located by the
        # driver's branch-point refinement, it places the point better than the kappa event just
        # past it, which is then dropped.
        scale = max(1.0, float(np.abs(traced.points[:, 2 * n]).max()))
        meeting = [sp for sp in special if sp.kind == "branch_point" and abs(sp.point[2 * n]) <= 1e-8 * scale]
        if meeting:
            first_meeting = meeting[0]
            info = {"terminal": True, "note": "a branch point of the Hopf defining system, where the fold curve "
                                              "(kappa = 0) crosses the Hopf curve"}
            special = [sp for sp in special if not (sp.kind == "bogdanov_takens" and sp.index >= first_meeting.index)]
            special = [(moved(sp, "bogdanov_takens", "Bogdanov-Takens point", info) if sp is first_meeting
                        else moved(sp)) for sp in special]
        else:
            special = [moved(sp) for sp in special]
    else:
        special = [moved(sp) for sp in special]

    points, tangents = rows(traced.points, traced.tangents) if len(traced.points) else (
        np.empty((0, len(columns))), np.empty((0, len(columns))))
    message = traced.message
    inner_rows = [sp.point for sp in traced.special_points[-1:]] + list(traced.points[-1:])
    for x in inner_rows:  # the driver describes its stopping point in the defining system's coordinates
        said = ", ".join(f"{name} = {value:.6g}" for name, value in zip(traced.columns, x))
        if said in message:
            outer = rows(x, np.zeros_like(x))[0]
            message = message.replace(said, ", ".join(f"{name} = {value:.6g}" for name, value in zip(columns, outer)))
            break
    stats = dict(traced.stats)
    stats["curve"] = kind
    stats["system_jacobian_evaluations"] = inner.calculus.evaluations
    parameters = {name: float(v) for name, v in zip(system.parameters, values)}
    if len(traced.points):
        parameters[traced.free] = float(traced.points[0, -1])
    return Branch(columns=columns, points=points, tangents=tangents, steps=traced.steps,
                  newton_iterations=traced.newton_iterations, residual_norms=traced.residual_norms,
                  special_points=tuple(special),
                  at=tuple(moved(sp) for sp in traced.at), status=traced.status, message=message,
                  stats=stats, free=traced.free, parameters=parameters, cause=traced.cause)
