"""Loci of an envelope's corners: how the critical point, the cricondenbar and the cricondentherm move
with one model constant (a kij, a Tc, Pc or omega, a feed fraction) or along a blend of two feeds.

Each corner has its own defining system, traced by the engine with the constant q free
(Keller's pseudo-arclength continuation, contin.trace):

- the cricondenbar and the cricondentherm are folds of ln P and ln T on the envelope. With x = (u, ln P)
  the envelope's coordinates and M = F_x without the column of the folding coordinate, the fold is
  F(x; q) = 0 together with g(x; q) = 0, where g is the last entry of the solution of the bordered
  system [[M, b], [c^T, 0]] (v, g) = (0, 1): a minimally augmented system (Govaerts, Numerical Methods
  for Bifurcations of Dynamical Equilibria, SIAM 2000, ch. 4), with b and c the left and right null
  vectors of M at the start. Its derivatives are exact through F_x and F_q (``EnvelopeSystem``), and
  g_z = -w^T M_z v (w from the transposed bordered system) is the derivative along v of the exact
  first derivatives, by a central difference (as in ``_corner_sensitivity``);
- the critical point solves the Heidemann-Khalil conditions (AIChE J. 26 (1980) 769) in (ln T, ln v),
  traced as the binary critical locus is (``_mixture_critical``), with q in place of x1.

Each locus starts from the corners of the envelope traced at the first value of q.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

import contin
from contin import InputError

from ..models._caution import CAUTION
from ..models._parameters import ModelParameter, parameter_value, perturbed
from ._envelope import Envelope, EnvelopeSystem, trace_envelope

__all__ = ["CornerLoci", "Locus", "corner_loci", "envelope_corners", "FoldSystem", "CriticalSystem"]

_CORNERS = ("critical", "cricondenbar", "cricondentherm")
_WORDS = {"critical": "critical point", "cricondenbar": "cricondenbar", "cricondentherm": "cricondentherm"}
# Step along the fold's null vector of the central difference in g_z (coordinates are logarithms).
_ALONG = 1e-5
_TOLERANCE = 1e-10
# |ln K| of the key component at which a fold locus stops short of the critical point (K = 1), where
# the envelope's equations are singular (they stay well conditioned down to about 0.005; see _envelope).
_MEETS_CRITICAL = 0.02


class _Models:
    """The model and feed at a value of q, the last one kept (the engine asks several times per point)."""

    def __init__(self, mixture, z, parameter: ModelParameter) -> None:
        self.mixture, self.z, self.parameter = mixture, np.asarray(z, dtype=float), parameter
        self._last = None

    def at(self, q: float):
        if self._last is None or self._last[0] != q:
            model, feed = perturbed(self.mixture, self.z, self.parameter, q)
            self._last = (q, model, feed, EnvelopeSystem(model, feed, 0.0))
        return self._last[1:]


class FoldSystem(contin.CallableSystem):
    """The fold of ln P (cricondenbar) or ln T (cricondentherm) of the envelope with q free.

    Unknowns: the envelope's ``lnK_*``, ``lnT``, ``lnV_feed``, ``lnV_incipient`` and ``lnP``; parameter
    ``q``. Equations: the envelope's, then the bordered test function g (see the module docstring).

    Args:
        mixture, z: the model and feed at which q has its present value.
        parameter: the constant q.
        coordinate: index of the folding coordinate in x (n: ln T; n + 3: ln P).
        x: a fold point at the start value of q (it gives the bordering vectors).
        q: that start value.
    """

    def __init__(self, mixture, z, parameter: ModelParameter, coordinate: int, x: np.ndarray, q: float) -> None:
        self.models = _Models(mixture, z, parameter)
        self.coordinate = coordinate
        n = mixture.size
        names = [f"lnK_{name}" for name in mixture.names] + ["lnT", "lnV_feed", "lnV_incipient", "lnP"]
        super().__init__(self._residual, names, {"q": float(q)}, equations=[f"envelope_{k}" for k in range(n + 3)]
                         + ["fold"])
        M = self._matrix(np.asarray(x, dtype=float), float(q))[0]
        U, _, Vt = np.linalg.svd(M)
        self.left, self.right = U[:, -1], Vt[-1]
        # The component whose ln K is largest in size at the start keeps its sign until K = 1 (the
        # critical point), where the envelope's equations are singular: the locus stops before that.
        self.key = int(np.argmax(np.abs(x[:n])))
        self.sign = 1.0 if x[self.key] > 0 else -1.0

    def distance_from_critical(self, u, p) -> float:
        """|ln K| of the key component less _MEETS_CRITICAL: it falls through zero as the fold nears K = 1."""
        return self.sign * float(u[self.key]) - _MEETS_CRITICAL

    def _full(self, x: np.ndarray, q: float):
        """(F, F_x, F_q) of the envelope system at (x, q)."""
        system = self.models.at(q)[2]
        r, J, dp = system.evaluate(x[:-1], x[-1])
        return r, np.column_stack([J, dp]), system.constant_derivative(x[:-1], x[-1], self.models.parameter)

    def _matrix(self, x, q):
        r, F_x, F_q = self._full(x, q)
        return np.delete(F_x, self.coordinate, axis=1), r, F_x, F_q

    def _bordered(self, M):
        size = M.shape[0]
        K = np.zeros((size + 1, size + 1))
        K[:size, :size], K[:size, size], K[size, :size] = M, self.left, self.right
        e = np.zeros(size + 1)
        e[-1] = 1.0
        return np.linalg.solve(K, e), np.linalg.solve(K.T, e)

    def _residual(self, x, p):
        M, r, _, _ = self._matrix(np.asarray(x, dtype=float), float(p[0]))
        return np.append(r, self._bordered(M)[0][-1])

    def linearise(self, u, p, free):
        x, q = np.asarray(u, dtype=float), float(p[0])
        M, r, F_x, F_q = self._matrix(x, q)
        (solution, transposed) = self._bordered(M)
        v = np.insert(solution[:-1], self.coordinate, 0.0)
        w = transposed[:-1]
        step = _ALONG / max(np.linalg.norm(v), 1e-300)
        ahead, behind = self._full(x + step * v, q), self._full(x - step * v, q)
        g_x = -w @ (ahead[1] - behind[1]) / (2 * step)
        g_q = -w @ (ahead[2] - behind[2]) / (2 * step)
        return np.append(r, solution[-1]), np.vstack([F_x, g_x]), np.append(F_q, g_q)

    def parameter_jacobian(self, u, p):
        return self.linearise(u, p, "q")[2][:, None]


class CriticalSystem(contin.CallableSystem):
    """The Heidemann-Khalil conditions in (ln T, ln v) with q free (derivatives by central differences)."""

    def __init__(self, mixture, z, parameter: ModelParameter, q: float) -> None:
        from ._mixture_critical import critical_conditions

        models = _Models(mixture, z, parameter)

        def residual(u, p):
            model, feed, _ = models.at(float(p[0]))
            return np.array(critical_conditions(model, feed, math.exp(u[0]), math.exp(u[1])))

        self.models = models
        super().__init__(residual, ["lnT", "lnv"], {"q": float(q)}, equations=["eigenvalue", "cubic_form"])

    def pressure(self, u, p) -> float:
        """The critical pressure (Pa) at (ln T, ln v) and q."""
        model, feed, _ = self.models.at(float(p[0]))
        return float(model.pressure(math.exp(u[0]), math.exp(u[1]), feed))


class Locus(NamedTuple):
    """One corner's traced curve: columns and rows (the constant, T, P[, v]), how it ended, and its stats
    (with ``at``: the rows at requested values of the constant)."""

    columns: tuple
    rows: list
    status: str
    message: str
    success: bool
    stats: dict


@dataclass(frozen=True)
class CornerLoci:
    """The loci of an envelope's corners in one constant.

    Attributes:
        parameter: the constant; name: its column name (``kij``, ``Tc``, ... or ``blend``).
        span: (first, last) value of the constant.
        loci: corner -> its :class:`Locus`.
        envelopes: the envelopes traced at the first, middle and last value (only the first without
            the picture).
    """

    parameter: ModelParameter
    name: str
    span: tuple[float, float]
    loci: dict
    envelopes: tuple

    @property
    def success(self) -> bool:
        """True when every corner's locus was traced over the range or to where the corner ends."""
        return all(locus.success for locus in self.loci.values())

    def curve(self, corner: str) -> np.ndarray:
        """(q, T, P) rows of a corner's locus, array (points, 3)."""
        return np.array([row[:3] for row in self.loci[corner].rows], dtype=float).reshape(-1, 3)

    def to_dict(self) -> dict:
        """``{"corners": {corner: <branch object>}}`` with the caution and the model."""
        corners = {}
        for corner, (columns, rows, status, message, _, stats) in self.loci.items():
            corners[corner] = contin.json_document(status, message, columns, rows, [], [], stats)
        mixture = self.envelopes[0].mixture
        return {"corners": corners, "varied": self.parameter.label, "span": list(self.span), "caution": CAUTION,
                "model": f"{mixture.family.label}, one-fluid mixing with kij", "components": list(mixture.names)}

    def to_csv(self, path, units: str = "si"):
        """One CSV: a ``corner`` column, then the constant, T and P."""
        from ..reports._report import write_csv
        from ..models._units import convert_rows, output_units

        columns = ("corner", self.name, "T", "P")
        rows = [[corner, *row[:3]] for corner, locus in self.loci.items() for row in locus.rows]
        rows, names = convert_rows(columns, rows, {"corner": "", self.name: _unit(self.parameter)}, output_units(units))
        return write_csv(path, columns, rows, names, title=f"loci of the envelope's corners in {self.parameter.label}",
                         notes=[f"model: {self.envelopes[0].mixture.family.label}"])

    def summary(self, units: str = "si") -> list[str]:
        from ..reports._report import summary_lines
        from ..models._units import output_units

        shown = output_units(units)
        items = [("model", self.envelopes[0].mixture.family.label), ("varied", f"{self.parameter.label} from "
                                                                            f"{self.span[0]:g} to {self.span[1]:g}")]
        for corner, (_, rows, _, message, _, _) in self.loci.items():
            if rows:
                first, last = rows[0], rows[-1]
                items.append((corner, f"{len(rows)} points; T {shown.temperature_from_si(first[1]):.6g} -> "
                                      f"{shown.temperature_from_si(last[1]):.6g} {shown.temperature}, P "
                                      f"{shown.pressure_from_si(first[2]):.6g} -> {shown.pressure_from_si(last[2]):.6g} "
                                      f"{shown.pressure}; {message}"))
            else:
                items.append((corner, message))
        return summary_lines("loci of the envelope's corners", items)


def _unit(parameter: ModelParameter) -> str:
    return {"Tc": "K", "Pc": "Pa"}.get(parameter.kind, "")


class _TurnedBack(Exception):
    """Raised from the trace's point callback at the first fold in q: the corner ends there."""


def _stop_at_turn(index, x, special_points) -> None:
    if any(sp.kind == "fold" and sp.info.get("coordinate") == "q" for sp in special_points):
        raise _TurnedBack


def _trace_locus(system, start, span, at, max_points):
    """The engine's trace of one corner's defining system from ``span[0]`` towards ``span[1]``; it stops
    at the bound, at the first fold in q (see :func:`_rows`), or where a critical pressure reaches zero."""
    width = abs(span[1] - span[0])
    if isinstance(system, CriticalSystem):
        events = [contin.Event("zero critical pressure", system.pressure, direction=-1, terminal=True,
                               kind="zero_pressure")]
    else:
        events = [contin.Event("near the critical point", system.distance_from_critical, direction=-1, terminal=True,
                               kind="meets_critical")]
    return contin.trace(system, start, free="q", parameters={"q": span[0]}, direction=1 if span[1] > span[0] else -1,
                        step=0.1 * width, max_step=0.25 * width, min_step=1e-9 * width, tolerance=_TOLERANCE,
                        max_points=max_points, bounds={"q": (min(span), max(span))}, at={"q": list(at)},
                        detect=("fold",), events=events, on_point=_stop_at_turn)


def corner_loci(mixture, z, parameter: ModelParameter, span: tuple[float, float], *, from_pressure: float = 1e5,
                at: Sequence[float] = (), max_points: int = 200, pictured: bool = True) -> CornerLoci:
    """Trace the critical point, cricondenbar and cricondentherm of the envelope as q runs over ``span``.

    Args:
        mixture, z: the model and feed (for a blend: the first feed).
        parameter: the varied constant (``parse_parameter`` or ``blend_parameter``).
        span: (first, last) values of q.
        from_pressure: the envelope's low pressure, for the envelopes traced at the first, middle
            and last value.
        at: values of q where each locus also reports an exact point (``Branch.at``).
        pictured: also trace the envelopes at the middle and last value (for the picture); the one
            at the first value is always traced (the loci start from its corners).

    Returns:
        A :class:`CornerLoci`; a corner the first envelope lacks gets an empty locus with a message.

    Raises:
        InputError: an empty span, a value the model cannot take, or a first envelope that cannot be traced.
    """
    first, last = (float(v) for v in span)
    if not (math.isfinite(first) and math.isfinite(last)) or first == last:
        raise InputError(f"the range of {parameter.label} must be two different finite values, e.g. 0:0.1")
    n = mixture.size
    values = (first, 0.5 * (first + last), last) if pictured else (first,)
    envelopes = tuple(trace_envelope(*perturbed(mixture, z, parameter, q), from_pressure=from_pressure,
                                     check_stability=False) for q in values)
    start = envelopes[0]
    column = parameter.kind  # kij, Tc, Pc, omega, z or blend (kept in its own unit by --units)
    loci = {}
    for corner in _CORNERS:
        sp = start.special(corner)
        if sp is None:
            loci[corner] = Locus((column, "T", "P"), [], "not_found", f"the envelope at {parameter.label} = {first:g} has "
                            f"no {_WORDS[corner]}", False, {})
            continue
        began = time.perf_counter()
        if corner == "critical":
            system = CriticalSystem(start.mixture, start.z, parameter, first)
            x0 = [math.log(sp["values"]["T"]), math.log(sp["info"]["v"])]
        else:
            x = start.branch.points[sp["index"]]
            system = FoldSystem(start.mixture, start.z, parameter, n + 3 if corner == "cricondenbar" else n, x, first)
            x0 = x
        branch = _trace_locus(system, x0, (first, last), at, max_points)
        loci[corner] = _rows(corner, system, branch, column, time.perf_counter() - began)
    return CornerLoci(parameter, column, (first, last), loci, envelopes)


def _row(corner: str, system, x: np.ndarray) -> list[float]:
    """(q, T, P[, v]) of one point of a locus."""
    q = float(x[-1])
    if corner == "critical":
        model, feed, _ = system.models.at(q)
        T, v = math.exp(x[0]), math.exp(x[1])
        return [q, T, float(model.pressure(T, v, feed)), v]
    n = len(x) - 5
    return [q, math.exp(x[n]), math.exp(x[n + 3])]


def _rows(corner, system, branch, column, seconds):
    """The :class:`Locus` of a traced corner, in T and P; the points at the requested values of q are in
    ``stats["at"]``.

    A locus that turns back in q (a fold of q on it) is cut there: beyond that value the corner no
    longer exists on the envelope (for the critical point: it merges with another critical point; for
    a cricondenbar or cricondentherm: the extremum flattens out), and the curve coming back is not a
    corner of the envelope at any q already passed.
    """
    turn = next((sp for sp in branch.special("fold") if sp.info.get("coordinate") == "q"), None)
    end = len(branch.points) if turn is None else turn.index + 1
    rows = [_row(corner, system, x) for x in branch.points[:end]]
    columns = (column, "T", "P", "v") if corner == "critical" else (column, "T", "P")
    stats = {k: v for k, v in branch.stats.items() if isinstance(v, (int, float))}
    stats.update(points=len(rows), trace_seconds=seconds,
                 at=[_row(corner, system, sp.point) for sp in branch.at if sp.index < end])
    if turn is None and branch.status == contin.Status.TERMINAL_EVENT and corner == "critical":
        message = (f"stopped at {column} = {branch.points[-1, -1]:.8g}, where the model's critical pressure "
                   "reaches zero: the envelope's critical point leaves the physical range")
        return Locus(columns, rows, "zero_pressure", message, True, stats)
    if turn is None and branch.status == contin.Status.TERMINAL_EVENT:
        message = (f"stopped at {column} = {branch.points[-1, -1]:.6g}, where the {corner} comes within "
                   f"|ln K| = {_MEETS_CRITICAL:g} of the critical point (K = 1): the envelope's equations are singular "
                   "there, and the locus is not continued across it")
        return Locus(columns, rows, "meets_critical", message, False, stats)
    if turn is None:
        message = branch.message.replace(" q = ", f" {column} = ")
        if branch.status == contin.Status.BOUND_REACHED:
            message = f"completed: {column} from {branch.points[0, -1]:g} to {branch.points[-1, -1]:g}"
        return Locus(columns, rows, branch.status.label, message, branch.success, stats)
    q = turn.values["q"]
    message = (f"completed up to {column} = {q:.8g}, where the locus turns back: beyond it the envelope has no "
               f"{_WORDS[corner]} on this branch")
    return Locus(columns, rows, "turned_back", message, True, stats)


def envelope_corners(envelope: Envelope) -> dict:
    """corner -> (T, P) of an envelope's corners, for checks."""
    return {kind: (sp["values"]["T"], sp["values"]["P"]) for kind in _CORNERS
            if (sp := envelope.special(kind)) is not None}
