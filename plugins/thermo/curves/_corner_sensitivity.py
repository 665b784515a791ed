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

from ..models._eos import GAS_CONSTANT
from ..models._parameters import ModelParameter, constant_derivatives, feed_derivative, parameter_value, perturbed
from ._envelope import Envelope, EnvelopeSystem, trace_envelope

__all__ = ["EnvelopeSensitivities", "annotate", "annotate_saturation", "envelope_sensitivities", "fold_sensitivities",
           "monte_carlo", "parse_fluid_constants", "row_sensitivities", "critical_sensitivities",
           "saturation_sensitivities"]

# Step e of the central difference along a fold's unit null vector (coordinates are logarithms).
_ALONG = 1e-5
# Relative step of the differences of the Heidemann-Khalil conditions in ln T, ln v and in q.
_CRITICAL_STEP = 1e-6


def _derivatives(system: EnvelopeSystem, x: np.ndarray, parameters: Sequence[ModelParameter]):
    """(F_x (n+3, n+4), F_q (n+3, Q)) at x = (u, ln P)."""
    _, J, dp = system.evaluate(x[:-1], x[-1])
    F_q = system.constant_jacobian(x[:-1], x[-1], parameters)
    return np.column_stack([J, dp]), F_q


def row_sensitivities(system: EnvelopeSystem, points: np.ndarray, tangents: np.ndarray,
                      parameters: Sequence[ModelParameter], skip: Sequence[int] = ()) -> tuple[np.ndarray, np.ndarray]:
    """How each row moves: (dP/dq at fixed T, array (rows, Q); (dT/dq, dP/dq) across the curve, (rows, 2, Q)).

    The move across the curve solves [F_x; t^T] dx/dq = [-F_q; 0] with t the branch's unit tangent (no
    component along the curve, well posed at folds too); at fixed T, d ln P/dq = dx_lnP - (t_lnP / t_lnT)
    dx_lnT, which grows without bound at the cricondentherm, where the curve is vertical. NaN at ``skip``.
    """
    n = system.n
    at_T = np.full((len(points), len(parameters)), np.nan)
    across = np.full((len(points), 2, len(parameters)), np.nan)
    for i, (x, t) in enumerate(zip(points, tangents)):
        if i in skip:
            continue
        F_x, F_q = _derivatives(system, x, parameters)
        with np.errstate(all="ignore"):
            try:
                dx = np.linalg.solve(np.vstack([F_x, t]), np.vstack([-F_q, np.zeros(len(parameters))]))
            except np.linalg.LinAlgError:
                continue
            T, P = math.exp(x[n]), math.exp(x[-1])
            across[i] = [T * dx[n], P * dx[-1]]
            at_T[i] = P * (dx[-1] - t[-1] / t[n] * dx[n])
    return at_T, across


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
    value = parameter_value(mixture, z, parameter)
    scale = abs(value) if parameter.kind in ("Tc", "Pc") else max(abs(value), 1.0)
    return _CRITICAL_STEP * scale * (0.01 if parameter.kind == "z" else 1.0)


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
    A, _ = mixture.attraction_roots(T)
    dT, dP = np.empty(len(parameters)), np.empty(len(parameters))
    for k, parameter in enumerate(parameters):
        value, step = parameter_value(mixture, z, parameter), _step(mixture, z, parameter)
        ahead, behind = perturbed(mixture, z, parameter, value + step), perturbed(mixture, z, parameter, value - step)
        g_q = (conditions(*ahead, lnT, lnv) - conditions(*behind, lnT, lnv)) / (2 * step)
        dlnT, dlnv = np.linalg.solve(G, -g_q)
        if parameter.moves_feed:
            P_q = float(state.P_n @ feed_derivative(z, parameter))
        else:
            dA, db = constant_derivatives(mixture, parameter, T)
            P_q = mixture.constant_state(mixture.constant_response(T, v, z, A), z, dA, db)[1]
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
        across: (dT/dq, dP/dq) of every row moved across the curve, array (rows, 2, Q).
        along: the direction of the curve at every row in (T, P), array (rows, 2).
    """

    parameters: tuple[ModelParameter, ...]
    rows: np.ndarray
    corners: Mapping[str, tuple[np.ndarray, np.ndarray]]
    across: np.ndarray
    along: np.ndarray

    def labels(self) -> list[str]:
        """The parameters' labels as given."""
        return [p.label for p in self.parameters]

    def corner(self, kind: str, only: Sequence[str] | None = None) -> dict[str, dict[str, float]]:
        """label -> {"T": dT/dq, "P": dP/dq} at the corner ``kind`` (for the labels ``only``, if given)."""
        dT, dP = self.corners[kind]
        return {p.label: {"T": float(t), "P": float(q)} for p, t, q in zip(self.parameters, dT, dP)
                if only is None or p.label in only}

    def propagate(self, uncertainties: Sequence[tuple[ModelParameter, float]], correlation: np.ndarray | None = None):
        """Linear propagation of standard uncertainties (GUM, JCGM 100:2008, sections 5.1 and 5.2).

        u(y)^2 = sum_jk (dy/dq_j u(q_j)) r_jk (dy/dq_k u(q_k)) for each corner's T and P and each row's
        P at fixed T, with r the correlation matrix (the identity when the constants are independent).

        Args:
            uncertainties: (parameter, standard uncertainty) pairs; every parameter must be one of
                :attr:`parameters` (matched by kind and component).
            correlation: their correlation matrix, or None.

        Returns:
            (kind -> {"T": u(T), "P": u(P)}, u(P) at every row as an array).
        """
        where = {(p.kind, p.indices): k for k, p in enumerate(self.parameters)}
        columns = [where[(p.kind, p.indices)] for p, _ in uncertainties]
        sigma = np.array([s for _, s in uncertainties])
        r = np.eye(len(sigma)) if correlation is None else np.asarray(correlation, dtype=float)

        def spread(values: np.ndarray) -> np.ndarray:
            scaled = np.atleast_2d(values)[:, columns] * sigma
            return np.sqrt(np.maximum(np.einsum("rj,jk,rk->r", scaled, r, scaled), 0.0))

        corners = {kind: {"T": float(spread(dT)[0]), "P": float(spread(dP)[0])} for kind, (dT, dP) in self.corners.items()}
        return corners, spread(self.rows)

    def band(self, uncertainties: Sequence[tuple[ModelParameter, float]], T: np.ndarray, P: np.ndarray,
             correlation: np.ndarray | None = None):
        """The curve (T, P) moved +-1 standard uncertainty across itself: (T_upper, P_upper, T_lower, P_lower).

        Across means along the normal in axes scaled by the ranges of T and P (as a plot shows them);
        the linear propagation of :meth:`propagate` applies to the normal component of each row's move.
        """
        where = {(p.kind, p.indices): k for k, p in enumerate(self.parameters)}
        columns = [where[(p.kind, p.indices)] for p, _ in uncertainties]
        sigma = np.array([s for _, s in uncertainties])
        scale = np.array([np.ptp(T) or 1.0, np.ptp(P) or 1.0])
        tangent = self.along / scale
        tangent /= np.linalg.norm(tangent, axis=1, keepdims=True)
        normal = np.column_stack([-tangent[:, 1], tangent[:, 0]])
        moves = self.across[:, :, columns] / scale[None, :, None]
        across = np.einsum("rk,rkq->rq", normal, moves) * sigma
        r = np.eye(len(sigma)) if correlation is None else np.asarray(correlation, dtype=float)
        spread = np.sqrt(np.maximum(np.einsum("rj,jk,rk->r", across, r, across), 0.0))
        shift = spread[:, None] * normal * scale
        return T + shift[:, 0], P + shift[:, 1], T - shift[:, 0], P - shift[:, 1]


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
    rows, across = row_sensitivities(system, points, branch.tangents, parameters, skip)
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
            across[k] = [dT, dP]
    T, P = np.exp(points[:, n]), np.exp(points[:, -1])
    along = np.column_stack([T * branch.tangents[:, n], P * branch.tangents[:, -1]])
    if critical is not None and 0 < critical["index"] < len(points) - 1:
        k = critical["index"]
        along[k] = [T[k + 1] - T[k - 1], P[k + 1] - P[k - 1]]  # the chord: the crossing has no tangent
    return EnvelopeSensitivities(tuple(parameters), rows, corners, across, along)


def monte_carlo(envelope: Envelope, uncertainties: Sequence[tuple[ModelParameter, float]], samples: int,
                seed: int, correlation: np.ndarray | None = None) -> dict:
    """Corners' standard deviations over ``samples`` envelopes with normally distributed constants.

    Each sample draws the constants q_k + u(q_k) e_k, with e normal of mean 0 and covariance
    ``correlation`` (independent when None; numpy's default generator seeded with ``seed``), and
    re-traces the envelope (without the stability check). Samples whose model is not valid, or whose
    envelope does not complete or lacks a corner, are counted as failed.

    Returns:
        kind -> {"T": std, "P": std, "samples": the number used, "failed": the number that failed}.
    """
    random = np.random.default_rng(seed)
    root = np.eye(len(uncertainties))  # draws = root @ N(0, I) have covariance root root^T = correlation
    if correlation is not None:
        values, vectors = np.linalg.eigh(correlation)
        root = vectors * np.sqrt(np.maximum(values, 0.0))
    found = {kind: [] for kind in ("critical", "cricondenbar", "cricondentherm") if envelope.special(kind)}
    failed = 0
    from_pressure = float(envelope.rows[0][1])
    for _ in range(samples):
        mixture, z = envelope.mixture, envelope.z
        draws = root @ random.standard_normal(len(uncertainties))
        try:
            for (parameter, sigma), draw in zip(uncertainties, draws):
                mixture, z = perturbed(mixture, z, parameter, parameter_value(mixture, z, parameter) + sigma * draw)
            sample = trace_envelope(mixture, z, from_pressure=from_pressure, check_stability=False)
        except InputError:
            failed += 1
            continue
        if not sample.success or any(sample.special(kind) is None for kind in found):
            failed += 1
            continue
        for kind, values in found.items():
            values.append((sample.special(kind)["values"]["T"], sample.special(kind)["values"]["P"]))
    out = {}
    for kind, values in found.items():
        values = np.array(values).reshape(-1, 2)
        spread = np.std(values, axis=0, ddof=1) if len(values) > 1 else np.full(2, np.nan)
        out[kind] = {"T": float(spread[0]), "P": float(spread[1]), "samples": len(values), "failed": failed}
    return out


def annotate(envelope: Envelope, sensitivities: EnvelopeSensitivities, shown: Sequence[str] | None = None,
             standard: dict | None = None, row_standard: np.ndarray | None = None,
             sampled: dict | None = None, band: tuple = ()) -> Envelope:
    """A copy of ``envelope`` whose corners carry ``info.sensitivities`` (the labels ``shown``, if any),
    ``info.standard_uncertainty`` from ``standard`` (kind -> {"T", "P"}) and
    ``info.monte_carlo_uncertainty`` from ``sampled``, with a ``P_std`` column when ``row_standard`` is given
    and the ``band`` of :meth:`EnvelopeSensitivities.band` to draw."""
    specials = []
    for sp in envelope.special_points:
        sp = dict(sp, info=dict(sp["info"]))
        kind = sp["kind"]
        if kind in sensitivities.corners:
            if shown is None or shown:
                sp["info"]["sensitivities"] = sensitivities.corner(kind, shown)
            for key, values in (("standard_uncertainty", standard), ("monte_carlo_uncertainty", sampled)):
                if values is not None and kind in values:
                    sp["info"][key] = values[kind]
        specials.append(sp)
    columns, rows = envelope.columns, envelope.rows
    if row_standard is not None:
        columns = (*columns, "P_std")
        rows = [[*row, float(s)] for row, s in zip(rows, row_standard)]
    return replace(envelope, special_points=specials, columns=columns, rows=rows, band=tuple(band))


#: The constants of one fluid that ``saturation_sensitivities`` knows.
FLUID_CONSTANTS = ("Tc", "Pc", "omega")


def saturation_sensitivities(curve, constants: Sequence[str]) -> tuple[np.ndarray, dict]:
    """dP/dq at fixed T at every row of a pure saturation curve, and the critical point's dT/dq, dP/dq.

    At a row (T, P, v_l, v_v) the two phases have equal molar Gibbs energies; at fixed T, changing q
    moves P by (v_v - v_l) dP/dq = -(dA_v/dq - dA_l/dq) at fixed T and v (a Clapeyron-type relation:
    dg/dP = v, and dg/dq at fixed T, P is dA/dq at fixed T, v at the stable volume). With A_res/RT =
    F(1, T, v, b, a) of ``_helmholtz``, dA/dq = RT (F_D da/dq + F_B db/dq), exact through
    a = Omega_a R^2 Tc^2 / Pc alpha(T/Tc, omega) and b = Omega_b R Tc / Pc. At the critical row the
    phases merge and the relation is 0/0: there P_sat(Tc) = Pc whatever omega (alpha(1) = 1), so
    dP/domega = 0, dP/dPc = 1, and dP/dTc = -(dP/dT)_sat, whose value at the critical point is the
    slope of the critical isochore, (dP/dT)_v at (Tc, v_c) (common practice for analytic equations of
    state). The critical point of a cubic is (Tc, Pc) by construction: dTc/dTc = dPc/dPc = 1, the rest 0.

    Args:
        curve: a saturation :class:`~contin_thermo.curves._pure.CurveResult`.
        constants: any of ``Tc``, ``Pc``, ``omega``.

    Returns:
        (array (rows, Q) of dP/dq in Pa per unit of q; constant -> {"T": dT/dq, "P": dP/dq} at the
        critical point).
    """
    critical = next((sp["index"] for sp in curve.special_points if sp["kind"] == "critical"), None)
    out = _at_fixed_temperature(curve, curve.points, constants, critical)
    point = {k: {"T": 1.0 if k == "Tc" else 0.0, "P": 1.0 if k == "Pc" else 0.0} for k in constants}
    return out, point


def _at_fixed_temperature(curve, rows: np.ndarray, constants: Sequence[str], critical: int | None) -> np.ndarray:
    """dP/dq at fixed T for saturation rows (columns of ``curve``); row ``critical`` is the critical point."""
    from ..models._helmholtz import derivatives
    from ..models._parameters import root_alpha_derivatives

    component, family = curve.component, curve.family
    Tc, Pc, omega = (np.array([getattr(component, k)]) for k in FLUID_CONSTANTS)
    a_c, b = (float(v[0]) for v in family.a_b(Tc, Pc))
    helmholtz = derivatives(family.delta1, family.delta2, order=2)
    T, v_l, v_v = (rows[:, curve.columns.index(name)] for name in ("T", "v_liquid", "v_vapour"))
    out = np.empty((len(T), len(constants)))
    for i, t in enumerate(T):
        s, ds_dTc, ds_domega = (float(v[0]) for v in root_alpha_derivatives(family, float(t), Tc, omega))
        a = a_c * s * s
        changes = {"Tc": (2.0 * a / Tc[0] + 2.0 * a_c * s * ds_dTc, b / Tc[0]),
                   "Pc": (-a / Pc[0], -b / Pc[0]), "omega": (2.0 * a_c * s * ds_domega, 0.0)}
        if i == critical:
            slope = _isochore_slope(family, float(t), float(v_l[i]), a_c, b, Tc, omega)
            at_critical = {"Tc": -slope, "Pc": 1.0, "omega": 0.0}
            out[i] = [at_critical[k] for k in constants]
            continue
        terms = [helmholtz.evaluate_scalar(1.0, float(t), float(v), b, a) for v in (v_l[i], v_v[i])]
        for k, constant in enumerate(constants):
            da, db = changes[constant]
            dA = [GAS_CONSTANT * t * (d["F_D"] * da + d["F_B"] * db) for d in terms]
            out[i, k] = -(dA[1] - dA[0]) / (v_v[i] - v_l[i])
    return out


def _isochore_slope(family, T: float, v: float, a_c: float, b: float, Tc, omega) -> float:
    """(dP/dT)_v = R / (v - b) - a'(T) / ((v + delta1 b)(v + delta2 b)) of the cubic."""
    _, dalpha, _ = family.alpha(T, Tc, omega)
    return GAS_CONSTANT / (v - b) - a_c * float(np.asarray(dalpha).reshape(-1)[0]) / (
        (v + family.delta1 * b) * (v + family.delta2 * b))


def annotate_saturation(curve, constants: Sequence[str]):
    """A copy of the saturation ``curve`` with columns ``dP_d<constant>`` and the critical point's
    ``info.sensitivities``; constants as given (``Tc``, ``Pc``, ``omega``)."""
    rows, point = saturation_sensitivities(curve, constants)
    at = _at_fixed_temperature(curve, curve.at, constants, None) if len(curve.at) else np.empty((0, len(constants)))
    units = {"Tc": "Pa/K", "Pc": "Pa/Pa", "omega": "Pa"}
    names = tuple(f"dP_d{k}" for k in constants)
    specials = tuple(dict(sp, info={**sp.get("info", {}), "sensitivities": point}) if sp["kind"] == "critical"
                     else sp for sp in curve.special_points)
    return replace(curve, columns=(*curve.columns, *names), units={**curve.units, **{n: units[k] for n, k in
                                                                                        zip(names, constants)}},
                   points=np.column_stack([curve.points, rows]), special_points=specials,
                   at=np.hstack([curve.at.reshape(len(curve.at), -1), at]) if len(curve.at) else
                   np.empty((0, len(curve.columns) + len(names))))


def parse_fluid_constants(text: str, argument: str = "--sensitivities") -> tuple[str, ...]:
    """``"Tc,Pc,omega"`` -> the constants (each once).

    Raises:
        InputError: an empty list, a constant one fluid does not have (with a suggestion), a repeat.
    """
    from contin.base import suggest

    constants = [part.strip() for part in str(text or "").split(",") if part.strip()]
    if not constants:
        raise InputError(f"{argument} is empty; give the fluid's constants, e.g. 'Tc,Pc,omega'")
    for constant in constants:
        if constant not in FLUID_CONSTANTS:
            raise InputError(f"{argument}: a fluid has no constant {constant!r}; use Tc, Pc or omega"
                             f"{suggest(constant, FLUID_CONSTANTS)}")
        if constants.count(constant) > 1:
            raise InputError(f"{argument} names {constant!r} twice; give each constant once")
    return tuple(constants)
