"""How an envelope's corners and rows move with the model's constants: the implicit-function theorem.

For a constant q (kij of a pair, a component's Tc, Pc or omega, a feed fraction; see
``models._parameters``) the envelope system F(x; q) = 0, x = (ln K, ln T, ln V_feed, ln V_incipient,
ln P), has the exact derivative F_q (``EnvelopeSystem.constant_derivative``). Then

- a row, at fixed T: F_x' dx'/dq = -F_q with x' = x without ln T, so d ln P/dq is one linear solve;
- the cricondenbar and the cricondentherm are folds of ln P and ln T on the envelope: with M = F_x
  without the column of the folding coordinate, M is singular there, M v = 0, w^T M = 0, and the fold
  is the solution of [F; g] = 0 with g = w^T M v (the smallest singular value, up to sign, whose
  derivative is w^T M_z v at a simple singular value). The implicit-function theorem on that system
  (Keller, in Applications of Bifurcation Theory, Academic Press 1977, 359, for the extended systems of
  folds) gives dx/dq. The one second-order term, w^T M_z v = d/de [w^T (F_x, F_q)(x + e v)] at e = 0,
  is the derivative along v of the exact first derivatives, taken by a central difference in e (the
  only difference quotient here: first derivatives are exact, the fold's curvature along its own null
  vector is differenced, with an error of order e^2);
- the critical point solves the two Heidemann-Khalil conditions (AIChE J. 26 (1980) 769) in
  (ln T, ln v) at fixed feed; their derivatives in (ln T, ln v) and q are central differences of the
  conditions (as ``polish_critical`` does for its Newton steps), and dP/dq follows from the exact
  pressure derivatives.

By the envelope theorem the cricondenbar's dP/dq equals the row's dP/dq at fixed T there, which the
tests check, with every sensitivity against central differences of re-traced envelopes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from collections.abc import Mapping, Sequence

import numpy as np

from contin import InputError

from ..models._parameters import ModelParameter, feed_derivative, perturbed
from ._envelope import Envelope, EnvelopeSystem

__all__ = ["EnvelopeSensitivities", "envelope_sensitivities", "fold_sensitivities", "row_sensitivities",
           "critical_sensitivities"]

# Step e of the central difference along a fold's unit null vector (coordinates are logarithms).
_ALONG = 1e-5
# Relative step of the differences of the Heidemann-Khalil conditions in ln T, ln v and in q.
_CRITICAL_STEP = 1e-6


def _derivatives(system: EnvelopeSystem, x: np.ndarray, parameters: Sequence[ModelParameter]):
    """(F_x (n+3, n+4), F_q (n+3, Q)) at x = (u, ln P)."""
    _, J, dp = system.evaluate(x[:-1], x[-1])
    F_q = np.column_stack([system.constant_derivative(x[:-1], x[-1], p) for p in parameters])
    return np.column_stack([J, dp]), F_q


def row_sensitivities(system: EnvelopeSystem, points: np.ndarray, parameters: Sequence[ModelParameter],
                      skip: Sequence[int] = ()) -> np.ndarray:
    """dP/dq (Pa per unit of q) at fixed T at each point (rows of ``points``); NaN at the rows ``skip``."""
    n = system.n
    out = np.full((len(points), len(parameters)), np.nan)
    for i, x in enumerate(points):
        if i in skip:
            continue
        F_x, F_q = _derivatives(system, x, parameters)
        with np.errstate(all="ignore"):
            try:
                dx = np.linalg.solve(np.delete(F_x, n, axis=1), -F_q)
            except np.linalg.LinAlgError:
                continue
        out[i] = math.exp(x[-1]) * dx[-1]
    return out


def fold_sensitivities(system: EnvelopeSystem, x: np.ndarray, coordinate: int,
                       parameters: Sequence[ModelParameter]) -> np.ndarray:
    """dx/dq, array (n+4, Q), of the fold of coordinate ``coordinate`` (n: ln T; n+3: ln P) at x."""
    F_x, F_q = _derivatives(system, x, parameters)
    M = np.delete(F_x, coordinate, axis=1)
    U, _, Vt = np.linalg.svd(M)
    w = U[:, -1]
    v = np.insert(Vt[-1], coordinate, 0.0)
    ahead = _derivatives(system, x + _ALONG * v, parameters)
    behind = _derivatives(system, x - _ALONG * v, parameters)
    g_x = w @ (ahead[0] - behind[0]) / (2.0 * _ALONG)
    g_q = w @ (ahead[1] - behind[1]) / (2.0 * _ALONG)
    return np.linalg.solve(np.vstack([F_x, g_x]), -np.vstack([F_q, g_q]))


def _step(mixture, z, parameter: ModelParameter) -> float:
    value = _value(mixture, z, parameter)
    scale = abs(value) if parameter.kind in ("Tc", "Pc") else max(abs(value), 1.0)
    return _CRITICAL_STEP * scale * (0.01 if parameter.kind == "z" else 1.0)


def _value(mixture, z, parameter):
    from ..models._parameters import parameter_value

    return parameter_value(mixture, z, parameter)


def critical_sensitivities(mixture, z: np.ndarray, T: float, v: float,
                           parameters: Sequence[ModelParameter]) -> tuple[np.ndarray, np.ndarray]:
    """(dT/dq, dP/dq), arrays (Q,), of the critical point at (T, v) (see the module docstring)."""
    from ._mixture_critical import critical_conditions

    def conditions(model, feed, lnT, lnv):
        return np.array(critical_conditions(model, feed, math.exp(lnT), math.exp(lnv)))

    lnT, lnv = math.log(T), math.log(v)
    h = _CRITICAL_STEP
    G = np.column_stack([(conditions(mixture, z, lnT + h * e[0], lnv + h * e[1])
                          - conditions(mixture, z, lnT - h * e[0], lnv - h * e[1])) / (2 * h) for e in np.eye(2)])
    state = mixture.state(T, v, z)
    A, slope = mixture.attraction_roots(T)
    dT, dP = np.empty(len(parameters)), np.empty(len(parameters))
    for k, parameter in enumerate(parameters):
        value, step = _value(mixture, z, parameter), _step(mixture, z, parameter)
        ahead, behind = perturbed(mixture, z, parameter, value + step), perturbed(mixture, z, parameter, value - step)
        g_q = (conditions(*ahead, lnT, lnv) - conditions(*behind, lnT, lnv)) / (2 * step)
        dlnT, dlnv = np.linalg.solve(G, -g_q)
        if parameter.kind == "z":
            P_q = float(state.P_n @ feed_derivative(z, parameter))
        else:
            from ..models._parameters import constant_derivatives

            dA, db = constant_derivatives(mixture, parameter, T)
            P_q = mixture.constant_state(T, v, z, A, dA, db)[1]
        dT[k] = T * dlnT
        dP[k] = state.P_T * T * dlnT + state.P_V * v * dlnv + P_q
    return dT, dP


@dataclass(frozen=True)
class EnvelopeSensitivities:
    """Sensitivities of a traced envelope to model constants.

    Attributes:
        parameters: the constants, in order (their ``label`` as given).
        rows: dP/dq at fixed T at every row, array (rows, Q), Pa per unit of q.
        corners: kind (``critical``, ``cricondenbar``, ``cricondentherm``) -> (dT/dq (Q,), dP/dq (Q,)),
            for the corners the envelope found.
    """

    parameters: tuple[ModelParameter, ...]
    rows: np.ndarray
    corners: Mapping[str, tuple[np.ndarray, np.ndarray]]

    def labels(self) -> list[str]:
        """The parameters' labels as given."""
        return [p.label for p in self.parameters]

    def corner(self, kind: str) -> dict[str, dict[str, float]]:
        """label -> {"T": dT/dq, "P": dP/dq} at the corner ``kind``."""
        dT, dP = self.corners[kind]
        return {p.label: {"T": float(t), "P": float(q)} for p, t, q in zip(self.parameters, dT, dP)}


def envelope_sensitivities(envelope: Envelope, parameters: Sequence[ModelParameter]) -> EnvelopeSensitivities:
    """dT/dq and dP/dq at each corner of ``envelope`` and dP/dq at fixed T at every row.

    Args:
        envelope: a traced :class:`Envelope` (from :func:`trace_envelope`).
        parameters: constants from :func:`contin_thermo.models._parameters.parse_parameters`.

    Raises:
        InputError: an envelope without its traced branch (the one-fluid case), or no parameters.
    """
    if not parameters:
        raise InputError("no constants given for the sensitivities; name some, e.g. 'Tc:methane'")
    mixture, z = envelope.mixture, envelope.z
    branch = envelope.branch
    if branch is None or isinstance(branch, tuple):
        raise InputError("sensitivities need a two-phase envelope; this feed behaves as one fluid")
    system = EnvelopeSystem(mixture, z, 0.0)
    n = mixture.size
    points = branch.points
    critical = envelope.special("critical")
    skip = () if critical is None else (critical["index"],)
    rows = row_sensitivities(system, points, parameters, skip)
    corners = {}
    for kind, coordinate in (("cricondenbar", n + 3), ("cricondentherm", n)):
        sp = envelope.special(kind)
        if sp is not None:
            x = points[sp["index"]]
            dx = fold_sensitivities(system, x, coordinate, parameters)
            corners[kind] = (math.exp(x[n]) * dx[n], math.exp(x[-1]) * dx[-1])
    if critical is not None:
        k = critical["index"]
        Tc, Pc = critical["values"]["T"], critical["values"]["P"]
        dT, dP = critical_sensitivities(mixture, z, Tc, critical["info"]["v"], parameters)
        corners["critical"] = (dT, dP)
        if 0 < k < len(points) - 1:
            # At fixed T through the critical point: dPc/dq - s dTc/dq, with s the envelope's slope
            # there from the chord of the two rows that bracket it (at ln K_key = +-gap).
            T_side, P_side = np.exp(points[[k - 1, k + 1], n]), np.exp(points[[k - 1, k + 1], -1])
            s = (P_side[1] - P_side[0]) / (T_side[1] - T_side[0])
            rows[k] = dP - s * dT
    return EnvelopeSensitivities(tuple(parameters), rows, corners)


def annotate(envelope: Envelope, sensitivities: EnvelopeSensitivities, standard: dict | None = None,
             row_standard: np.ndarray | None = None) -> Envelope:
    """A copy of ``envelope`` whose corners carry ``info.sensitivities`` (and ``info.standard_uncertainty``
    from ``standard``: kind -> {"T", "P"}), with a ``P_std`` column when ``row_standard`` is given."""
    specials = []
    for sp in envelope.special_points:
        sp = dict(sp, info=dict(sp["info"]))
        if sp["kind"] in sensitivities.corners:
            sp["info"]["sensitivities"] = sensitivities.corner(sp["kind"])
            if standard is not None:
                sp["info"]["standard_uncertainty"] = standard[sp["kind"]]
        specials.append(sp)
    columns, rows = envelope.columns, envelope.rows
    if row_standard is not None:
        columns = (*columns, "P_std")
        rows = [[*row, float(s)] for row, s in zip(rows, row_standard)]
    return replace(envelope, special_points=specials, columns=columns, rows=rows)
