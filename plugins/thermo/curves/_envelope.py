"""Mixture phase envelopes: one continuation run from a low-pressure dew point to the bubble point.

The feed z is one phase, the incipient phase w = K z the other (vapour fraction 0 of the incipient
phase; Michelsen, Calculation of phase envelopes and critical points for multicomponent mixtures,
Fluid Phase Equilibria 4 (1980) 1). Unknowns are ln K_i, ln T and the logarithms of the two phases'
volumes; the free parameter is ln P. The equations are

    ln K_i + [F_i(w, V_w) - ln V_w] - [F_i(z, V_z) - ln V_z] = 0     (equal fugacities, T-V form)
    P(T, V_z, z) / P - 1 = 0,   P(T, V_w, w) / P - 1 = 0,   sum_i w_i - 1 = 0

with F_i = dF/dn_i of the residual Helmholtz energy. Carrying the volumes as unknowns removes all
root selection, so the branch passes smoothly from the dew side (feed vapour, incipient liquid)
through the critical point to the bubble side (feed liquid). The whole envelope is one engine
trace (Rheinboldt's local parametrisation). At the critical point the branch meets the trivial
solution K = 1 (equal phases), where the equations are intrinsically ill-conditioned; the engine
passes it as a singular crossing (:class:`contin.Crossing`): from |ln K_key| = 0.1 of an outer
component on, its steps fix ln K_key (so Newton cannot land on K = 1), jump from +0.02 to -0.02, and
insert the critical point between as solved by the Heidemann-Khalil criterion. Folds of T and P on
the passage are located by the engine like any other, on Newton-converged points.

A constant vapour fraction beta generalises the same system (x = z / (1 + beta (K - 1)),
y = K x); beta = 0 is the envelope and 0 < beta < 1 gives the quality lines inside it.
"""

from __future__ import annotations

import math
import time
from operator import itemgetter
from dataclasses import dataclass
from collections.abc import Sequence

import numpy as np
from scipy.optimize import brentq

import contin
from contin import InputError

from ..models._caution import CAUTION
from ..models._mixture import Mixture

__all__ = ["EnvelopeSystem", "Envelope", "QualityLine", "trace_envelope", "dew_point", "start_coordinates",
           "ENVELOPE_UNITS"]

#: Units of the envelope columns (files and JSON are in SI units).
ENVELOPE_UNITS = {"T": "K", "P": "Pa", "side": "", "v_feed": "m3/mol", "v_incipient": "m3/mol", "stable": "",
                  "P_std": "Pa"}

# Tolerance on the residual (relative pressure, ln fugacity): far below any use of the numbers.
_TOLERANCE = 1e-10
# First and longest step of each traced piece (in the log coordinates). Longer steps take four or
# more Newton iterations each (measured: 1.0/1.5 gave 3.1 Jacobian evaluations per point at N = 10,
# 0.5/0.8 gives 2.7 at about the same wall time).
_STEP = 0.5
_MAX_STEP = 0.8
# |ln K_key| at which the engine's passage of the critical point begins (and ends on the far side),
# the closest |ln K_key| of a passage point before the jump across K = 1, and how far that gap may be
# halved when a fold straddles the jump (see contin.Crossing). Newton solves at fixed ln K_key stay
# well conditioned down to about 0.005 in size (the smallest singular value falls like (ln K)^2).
_NEAR_CRITICAL = 0.1
_GAP = 0.02
_SMALLEST_GAP = 0.005
# A point whose ln K are all below this in size sits on the trivial solution K = 1.
_TRIVIAL = 1e-7


class EnvelopeSystem(contin.CallableSystem):
    """Two-phase equilibrium at fixed vapour fraction as a contin system with an analytic Jacobian.

    Unknowns ``lnK_<name>`` (K = incipient over feed for ``beta = 0``; vapour over liquid for a
    quality line), ``lnT``, ``lnV_feed``, ``lnV_incipient`` (for ``beta > 0``: liquid and vapour); free
    parameter ``lnP``.

    Args:
        mixture: the :class:`~contin_thermo.models._mixture.Mixture`.
        z: feed mole fractions, array (N,), positive, summing to 1.
        beta: vapour fraction of the lines (0 for the envelope).
    """

    def __init__(self, mixture: Mixture, z: np.ndarray, beta: float = 0.0) -> None:
        self.mixture = mixture
        self.z = np.array(z, dtype=float)
        self.beta = float(beta)
        n = mixture.size
        unknowns = [f"lnK_{name}" for name in mixture.names] + ["lnT", "lnV_feed", "lnV_incipient"]
        equations = [f"fugacity_{name}" for name in mixture.names] + ["pressure_feed", "pressure_incipient", "sum"]
        super().__init__(self._residual_only, unknowns, {"lnP": math.log(1e5)},
                         jacobian=self._jacobian_only, equations=equations)
        self.n = n
        self.evaluations = 0
        self._memo = None

    def compositions(self, lnK: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(x, y) for these ln K: x = z / (1 + beta (K - 1)), y = K x."""
        K = np.exp(lnK)
        x = self.z / (1.0 + self.beta * (K - 1.0)) if self.beta else self.z
        return x, K * x

    def _attraction(self, T: float):
        # One-entry memo: the engine asks for the residual and then the Jacobian at the same point.
        if self._memo is None or self._memo[0] != T:
            self._memo = (T, self.mixture.attraction_roots(T))
        return self._memo[1]

    def evaluate(self, u: np.ndarray, lnP: float, with_jacobian: bool = True):
        """(F, dF/du, dF/dlnP); NaN residuals where the volumes fall below the co-volumes."""
        n = self.n
        mixture = self.mixture
        lnK = u[:n]
        try:
            T, Vx, Vy = math.exp(u[n]), math.exp(u[n + 1]), math.exp(u[n + 2])
            P = math.exp(lnP)
            K = np.exp(lnK)
            x, y = (self.z / (1.0 + self.beta * (K - 1.0)) if self.beta else self.z), None
            y = K * x
            A, slope = self._attraction(T)
            if not with_jacobian:
                Fx, Px = mixture.fugacity_pressure(T, Vx, x, A)
                Fy, Py = mixture.fugacity_pressure(T, Vy, y, A)
            else:
                Fx, Px, PVx, PTx, Pnx, FnVx, FnTx, Fnnx = mixture.linear_state(T, Vx, x, A, slope, bool(self.beta))
                Fy, Py, PVy, PTy, Pny, FnVy, FnTy, Fnny = mixture.linear_state(T, Vy, y, A, slope)
        except (ValueError, OverflowError, FloatingPointError):
            nan = np.full(n + 3, np.nan)
            return nan, np.full((n + 3, n + 3), np.nan), nan
        r = np.empty(n + 3)
        r[:n] = lnK - u[n + 2] + Fy + u[n + 1] - Fx
        r[n] = Px / P - 1.0
        r[n + 1] = Py / P - 1.0
        r[n + 2] = y.sum() - x.sum()
        if not with_jacobian:
            return r, None, None
        self.evaluations += 1
        J = np.zeros((n + 3, n + 3))
        if self.beta:
            denominator = 1.0 + self.beta * (K - 1.0)
            cx = -self.beta * K * x / denominator
            cy = y - self.beta * K * y / denominator
            J[:n, :n] = Fnny * cy[None, :] - Fnnx * cx[None, :]
            J[n, :n] = Pnx * cx / P
        else:
            cy = y
            J[:n, :n] = Fnny * y[None, :]
        J[:n, :n] += np.eye(n)
        J[:n, n] = T * (FnTy - FnTx)
        J[:n, n + 1] = 1.0 - Vx * FnVx
        J[:n, n + 2] = -1.0 + Vy * FnVy
        J[n, n] = T * PTx / P
        J[n, n + 1] = Vx * PVx / P
        J[n + 1, :n] = Pny * cy / P
        J[n + 1, n] = T * PTy / P
        J[n + 1, n + 2] = Vy * PVy / P
        J[n + 2, :n] = cy - cx if self.beta else cy
        dp = np.zeros(n + 3)
        dp[n] = -Px / P
        dp[n + 1] = -Py / P
        return r, J, dp

    def constant_derivative(self, u: np.ndarray, lnP: float, parameter) -> np.ndarray:
        """dF/dq at (u, ln P) for one model constant q; see :meth:`constant_jacobian`."""
        return self.constant_jacobian(u, lnP, (parameter,))[:, 0]

    def constant_jacobian(self, u: np.ndarray, lnP: float, parameters) -> np.ndarray:
        """dF/dq at (u, ln P) for model constants (:class:`~contin_thermo.models._parameters.ModelParameter`),
        array (n + 3, Q).

        Exact: a kij, Tc, Pc or omega changes a_ij(T) and b_i (``constant_derivatives``), which enter
        F_n and P through ``Mixture.constant_response``; a feed fraction or a blend changes the phases'
        amounts (``feed_derivative``), which enter through the composition Hessians F_nn and dP/dn.
        """
        from ..models._parameters import constant_derivatives, feed_derivative, root_alpha_derivatives

        n, mixture = self.n, self.mixture
        T, Vx, Vy, P = math.exp(u[n]), math.exp(u[n + 1]), math.exp(u[n + 2]), math.exp(lnP)
        K = np.exp(u[:n])
        denominator = 1.0 + self.beta * (K - 1.0)
        x = self.z / denominator
        y = K * x
        A, slope = self._attraction(T)
        d = np.zeros((n + 3, len(parameters)))
        responses = feed_states = roots = None
        for k, parameter in enumerate(parameters):
            if parameter.moves_feed:
                if feed_states is None:  # (dP/dn, F_nn) of each phase
                    feed_states = [itemgetter(4, 7)(mixture.linear_state(T, V, w, A, slope)) for V, w in ((Vx, x), (Vy, y))]
                (Pnx, Fnnx), (Pny, Fnny) = feed_states
                dx = feed_derivative(self.z, parameter) / denominator
                dy = K * dx
                d[:n, k] = Fnny @ dy - Fnnx @ dx
                d[n:, k] = Pnx @ dx / P, Pny @ dy / P, dy.sum() - dx.sum()
                continue
            if responses is None:
                responses = [mixture.constant_response(T, V, w, A) for V, w in ((Vx, x), (Vy, y))]
                roots = root_alpha_derivatives(mixture.family, T, mixture.Tc, mixture.omega)
            dA, db = constant_derivatives(mixture, parameter, T, roots)
            dFx, dPx = mixture.constant_state(responses[0], x, dA, db)
            dFy, dPy = mixture.constant_state(responses[1], y, dA, db)
            d[:n, k] = dFy - dFx
            d[n, k], d[n + 1, k] = dPx / P, dPy / P
        return d

    # contin's System interface ------------------------------------------------------------------
    def _residual_only(self, u, p):
        return self.evaluate(np.asarray(u, dtype=float), float(p[0]), with_jacobian=False)[0]

    def _jacobian_only(self, u, p):
        return self.evaluate(np.asarray(u, dtype=float), float(p[0]))[1]

    def linearise(self, u, p, free):
        r, J, dp = self.evaluate(np.asarray(u, dtype=float), float(p[0]))
        return r, J, dp

    def parameter_jacobian(self, u, p):
        return self.evaluate(np.asarray(u, dtype=float), float(p[0]))[2][:, None]


# -- Newton on the extended coordinates x = (u, ln P) with one coordinate fixed ------------------
def _newton(system: EnvelopeSystem, x: np.ndarray, fixed: int, value: float, *, iterations: int = 60,
            tolerance: float = _TOLERANCE, largest_step: float = 1.0) -> tuple[np.ndarray, float, bool]:
    """Solve F(x) = 0 with x[fixed] = value by damped Newton; returns (x, residual norm, converged).

    Steps are scaled down to at most ``largest_step`` in any coordinate (all are logarithms) and
    halved while the residual is not finite or grows more than tenfold. A solve counts as converged
    when the residual meets ``tolerance``, or when Newton has stagnated at round-off (the residual no
    longer halves, and is below 100 ``tolerance``), which is as far as an ill-conditioned point near
    the critical point can be taken.
    """
    x = np.array(x, dtype=float)
    x[fixed] = value
    norm = math.inf
    r, J, dp = system.evaluate(x[:-1], x[-1])
    norm = float(np.max(np.abs(r)))
    for _ in range(iterations):
        if not math.isfinite(norm):
            return x, norm, False
        full = np.column_stack([J, dp])
        matrix = np.delete(full, fixed, axis=1)
        try:
            step = np.linalg.solve(matrix, -r)
        except np.linalg.LinAlgError:
            return x, norm, False
        dx = np.insert(step, fixed, 0.0)
        if not np.all(np.isfinite(dx)):
            return x, norm, False
        # Damping: the unknowns are logarithms, so a long step in any of them is not to be trusted.
        largest = float(np.max(np.abs(dx)))
        if largest > largest_step:
            dx *= largest_step / largest
        x_new = x + dx
        r_new = system.evaluate(x_new[:-1], x_new[-1], with_jacobian=False)[0]
        norm_new = float(np.max(np.abs(r_new)))
        shrink = 0
        while not (math.isfinite(norm_new) and norm_new <= 10.0 * norm + tolerance) and shrink < 30:
            dx *= 0.5
            x_new = x + dx
            r_new = system.evaluate(x_new[:-1], x_new[-1], with_jacobian=False)[0]
            norm_new = float(np.max(np.abs(r_new)))
            shrink += 1
        stalled = norm_new >= 0.5 * norm
        x, norm = x_new, norm_new
        if norm <= tolerance and largest <= 1e-8:
            return x, norm, True
        if stalled and norm <= 100.0 * tolerance:
            return x, norm, True
        r, J, dp = system.evaluate(x[:-1], x[-1])
    return x, norm, norm <= tolerance


def dew_point(mixture: Mixture, z: np.ndarray, pressure: float, beta: float = 1.0) -> np.ndarray:
    """Start coordinates (u, ln P) of the envelope (beta = 1: dew point) or a quality line at ``pressure``.

    See :func:`_start_point` (which also counts the Newton iterations).
    """
    return _start_point(mixture, z, pressure, beta)[0]


def _start_point(mixture: Mixture, z: np.ndarray, pressure: float, beta: float,
                 guess: Sequence[float] | None = None) -> tuple[np.ndarray, int]:
    """Start coordinates (u, ln P) at ``pressure`` and the Newton iterations spent on them.

    With ``guess`` (the envelope's start coordinates for a nearby model, e.g. a neighbouring sweep
    run's), Newton starts from it; only if it does not converge to a non-trivial point do Wilson's
    K-values below give the start.

    Wilson's K-values give the temperature where the Rachford-Rice condition holds at vapour
    fraction ``beta`` (for the dew point: sum z_i / K_i = 1); Newton on the full system then refines
    it. For the envelope (``beta = 1``) the unknowns describe the incipient liquid over the vapour
    feed, so ln K = -ln K_Wilson.

    Raises:
        InputError: no temperature between 20 K and 5000 K satisfies the Wilson condition, or Newton
            does not converge (name the pressure, suggest another ``--from-pressure``).
    """
    z = np.asarray(z, dtype=float)
    n = mixture.size
    if guess is not None and beta >= 1.0 and len(guess) == n + 4 and np.all(np.isfinite(guess)):
        system = EnvelopeSystem(mixture, z, 0.0)
        x, _, ok = _newton(system, np.array(guess, dtype=float), n + 3, math.log(pressure))
        if ok and not (float(np.max(np.abs(x[:n]))) < 1e-4 and abs(x[n + 1] - x[n + 2]) < 1e-3):
            return x, system.evaluations
        spent = system.evaluations
    else:
        spent = 0

    def rachford_rice(K: np.ndarray) -> np.ndarray:
        # sum z (K - 1) / (1 + beta (K - 1)) over the last axis; for the dew point (beta = 1), 1 - sum z / K
        return np.sum(z * (K - 1.0) / (1.0 + beta * (K - 1.0)), axis=-1)

    grid = np.linspace(math.log(20.0), math.log(5000.0), 200)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        values = rachford_rice(mixture.wilson(np.exp(grid)[:, None], pressure))  # the whole grid at once
    signs = np.sign(values)
    changes = np.flatnonzero((signs[:-1] != signs[1:]) & np.isfinite(values[:-1]) & np.isfinite(values[1:]))
    lnT = (brentq(lambda lnT: float(rachford_rice(mixture.wilson(math.exp(lnT), pressure))),
                  grid[changes[0]], grid[changes[0] + 1], xtol=1e-12) if changes.size else None)
    if lnT is None:
        raise InputError(f"--from-pressure {pressure:g} Pa: Wilson's K-values give no dew point; try a lower pressure")
    T = math.exp(lnT)
    K = mixture.wilson(T, pressure)
    if beta >= 1.0:
        system = EnvelopeSystem(mixture, z, 0.0)
        lnK = -np.log(K)
        feed, incipient = z, z / K
        v_feed = mixture.volume(T, pressure, feed, "vapour")
        v_incipient = mixture.volume(T, pressure, incipient, "liquid") * float(incipient.sum())
    else:
        system = EnvelopeSystem(mixture, z, beta)
        lnK = np.log(K)
        x = z / (1.0 + beta * (K - 1.0))
        y = K * x
        v_feed = mixture.volume(T, pressure, x, "liquid") * float(x.sum())
        v_incipient = mixture.volume(T, pressure, y, "vapour") * float(y.sum())
    x0 = np.concatenate([lnK, [lnT, math.log(v_feed), math.log(v_incipient), math.log(pressure)]])
    x, norm, ok = _newton(system, x0, x0.size - 1, math.log(pressure))
    if not ok and beta >= 1.0:
        # Wilson's K-values were too far off for Newton: refine them by successive substitution first.
        refined = _dew_by_substitution(mixture, z, pressure, T, K)
        if refined is not None:
            x, norm, ok = _newton(system, refined, refined.size - 1, math.log(pressure))
    # K = 1 with equal volumes is the trivial solution; K = 1 with distinct volumes is a feed whose
    # components the model cannot tell apart (it boils like one fluid).
    if not ok or (float(np.max(np.abs(x[:n]))) < 1e-4 and abs(x[n + 1] - x[n + 2]) < 1e-3):
        raise InputError(
            f"--from-pressure {pressure:g} Pa: no two-phase point found from Wilson's K-values "
            f"(residual {norm:.2g}); try another pressure"
        )
    return x, spent + system.evaluations


def _dew_by_substitution(mixture: Mixture, z: np.ndarray, pressure: float, T: float, K: np.ndarray,
                         iterations: int = 200) -> np.ndarray | None:
    """The dew point at ``pressure`` by successive substitution, as start coordinates of the envelope.

    K = phi_liquid(x) / phi_vapour(z) with x the normalised z / K, and the temperature from the secant
    method on ln sum z / K = 0 in ln T after each update (Michelsen & Mollerup, Thermodynamic Models,
    2nd ed., 2007, ch. 12: the classic saturation-point iteration, slow but hard to throw off).
    Returns None when it does not converge to a non-trivial point.
    """
    lnT = math.log(T)
    previous = None
    for _ in range(iterations):
        T = math.exp(lnT)
        try:
            incipient = z / K / float(np.sum(z / K))
            ln_phi_vapour = mixture.ln_phi(T, pressure, z, "vapour")
            ln_phi_liquid = mixture.ln_phi(T, pressure, incipient, "liquid")
        except (ValueError, ArithmeticError, InputError):
            return None
        K = np.exp(ln_phi_liquid - ln_phi_vapour)
        error = math.log(float(np.sum(z / K)))
        if not math.isfinite(error):
            return None
        if abs(error) < 1e-11 and previous is not None:
            break
        # The secant on the error in ln T; the first step assumes d error / d ln T ~ -5 (a typical
        # slope of ln sum z / K for hydrocarbons, common practice), bounded to 0.1 in ln T.
        slope = -5.0 if previous is None or previous[0] == lnT else (error - previous[1]) / (lnT - previous[0])
        if slope == 0.0 or not math.isfinite(slope):
            return None
        previous = (lnT, error)
        lnT -= max(-0.1, min(0.1, error / slope))
    else:
        return None
    if float(np.max(np.abs(np.log(K)))) < 1e-4:
        return None
    incipient = z / K / float(np.sum(z / K))
    v_feed = mixture.volume(T, pressure, z, "vapour")
    v_incipient = mixture.volume(T, pressure, incipient, "liquid") * float(np.sum(z / K))
    return np.concatenate([-np.log(K), [math.log(T), math.log(v_feed), math.log(v_incipient), math.log(pressure)]])


# -- results ---------------------------------------------------------------------------------
@dataclass(frozen=True)
class QualityLine:
    """A line of constant vapour fraction inside the envelope, from low pressure to the critical point.

    Attributes:
        beta: vapour fraction; T, P: arrays (K, Pa); status, message: how the trace ended.
    """

    beta: float
    T: np.ndarray
    P: np.ndarray
    status: str
    message: str


@dataclass(frozen=True)
class Envelope:
    """A traced phase envelope with its special points.

    Attributes:
        mixture: the mixture; z: feed composition.
        columns: ``T, P, side, v_feed, v_incipient, stable, K_<component>...``.
        rows: list of rows in column order (``side`` is ``"dew"`` or ``"bubble"``; ``stable`` a bool or
            None when not checked).
        special_points: list of dicts with ``kind`` (``critical``, ``cricondenbar``,
            ``cricondentherm``), ``index``, ``values`` (``T``, ``P``), ``located_to`` and more.
        status, message, success: how the run ended.
        stats: timings and counts (the fixed keys of the JSON layout and more).
        residual_norms: largest residual at each row.
        quality_lines: lines of constant vapour fraction, if asked for.
        branch: the engine's :class:`contin.Branch`.
        band: the curve moved +-1 standard uncertainty across itself, (T_upper, P_upper, T_lower,
            P_lower), when uncertainties were propagated (see ``_corner_sensitivity``); else empty.
    """

    mixture: Mixture
    z: np.ndarray
    columns: tuple[str, ...]
    rows: list
    special_points: list
    status: str
    message: str
    success: bool
    stats: dict
    residual_norms: np.ndarray
    quality_lines: tuple = ()
    branch: object = None
    notes: tuple = ()
    band: tuple = ()

    def column(self, name: str) -> np.ndarray:
        """One column as an array (``side`` as strings)."""
        k = self.columns.index(name)
        values = [row[k] for row in self.rows]
        return np.array(values, dtype=object if name in ("side", "stable") else float)

    def special(self, kind: str) -> dict | None:
        """The special point of ``kind``, or None."""
        return next((sp for sp in self.special_points if sp["kind"] == kind), None)

    def metastable_stretches(self) -> list[tuple[int, int]]:
        """Index ranges (first, last) of consecutive rows flagged not stable."""
        k = self.columns.index("stable")
        stretches, begin = [], None
        for i, row in enumerate(self.rows):
            if row[k] is False and begin is None:
                begin = i
            if row[k] is not False and begin is not None:
                stretches.append((begin, i - 1))
                begin = None
        if begin is not None:
            stretches.append((begin, len(self.rows) - 1))
        return stretches

    def to_dict(self) -> dict:
        """The JSON layout of docs/contracts.md (``contin.json_document``), with the caution and the model."""
        extra = {
            "caution": CAUTION,
            "model": f"{self.mixture.family.label}, one-fluid mixing with kij",
            "components": list(self.mixture.names),
            "feed": [float(v) for v in self.z],
        }
        if self.quality_lines:
            extra["quality_lines"] = [
                {"vapour_fraction": q.beta, "T": q.T.tolist(), "P": q.P.tolist(), "status": q.status}
                for q in self.quality_lines
            ]
        return contin.json_document(self.status, self.message, self.columns, self.rows, self.special_points,
                                    [], self.stats, **extra)

    def to_csv(self, path, units: str = "si") -> object:
        """Write the rows as CSV with the caution, units and model in the header; returns the path.

        Args:
            path: the file.
            units: ``"si"`` (K, Pa), ``"degC-bar"`` or ``"degF-psia"`` for temperatures and pressures.
        """
        from ..reports._report import translation_notes, write_csv
        from ..models._units import convert_rows, output_units

        system = output_units(units)
        names = dict(ENVELOPE_UNITS)
        names.update({c: "" for c in self.columns if c.startswith("K_")})
        rows, names = convert_rows(self.columns, self.rows, names, system)
        feed = ", ".join(f"{n}={v:.6g}" for n, v in zip(self.mixture.names, self.z))
        notes = [f"model: {self.mixture.family.label}; feed: {feed}", *translation_notes(self.stats)]
        for sp in self.special_points:
            notes.append(f"{sp['kind']}: T = {sp['values']['T']!r} K, P = {sp['values']['P']!r} Pa")
        return write_csv(path, self.columns, rows, names, title="phase envelope", notes=notes)

    def plot(self, axes=None):
        """Draw the envelope in the P-T plane with its special points; returns the matplotlib axes."""
        from ..reports._plot_envelope import draw_envelope

        return draw_envelope(self, axes)

    def to_dataframe(self):
        """The rows as a pandas DataFrame in SI units (needs pandas, which contin does not install)."""
        from ..reports._report import table_frame

        return table_frame(self.columns, self.rows)

    def __repr__(self) -> str:
        found = ", ".join(f"{sp['kind']} T = {sp['values']['T']:.5g} K, P = {sp['values']['P']:.5g} Pa"
                          for sp in self.special_points) or "no special points"
        return (f"<Envelope of {len(self.mixture.names)} components ({self.mixture.family.label}): "
                f"{len(self.rows)} points; {found}; status {self.status}>")

    def summary(self, units: str = "si") -> list[str]:
        """Human summary lines: special points, extent, metastable stretches, then the caution."""
        from ..reports._report import summary_lines
        from ..models._units import output_units

        shown = output_units(units)

        def t(kelvin: float) -> str:
            return f"{shown.temperature_from_si(kelvin):.6f} {shown.temperature}"

        def p(pascal: float) -> str:
            return f"{shown.pressure_from_si(pascal):.6g} {shown.pressure}"

        items = [("model", self.mixture.family.label), ("status", self.message), ("points", str(len(self.rows)))]
        for kind in ("cricondentherm", "critical", "cricondenbar"):
            sp = self.special(kind)
            text = "not found" if sp is None else f"T = {t(sp['values']['T'])}, P = {p(sp['values']['P'])}"
            items.append((kind, text))
        stretches = self.metastable_stretches()
        k = self.columns.index("stable")
        if any(row[k] is None for row in self.rows):
            items.append(("stability", "not checked"))
        elif not stretches:
            items.append(("stability", "every traced point passed the tangent-plane test"))
        for first, last in stretches:
            a, b = self.rows[first], self.rows[last]
            items.append(("metastable", f"{a[2]} side from T = {t(a[0])}, P = {p(a[1])} to "
                                        f"T = {t(b[0])}, P = {p(b[1])} (another phase split is more stable)"))
        for note in self.notes:
            items.append(("note", note))
        return summary_lines("phase envelope", items)


def _key_component(x: np.ndarray, n: int) -> int:
    # The component whose ln K is largest in size: an outer (lightest or heaviest) component, whose
    # K crosses 1 only at the critical point. Intermediate ones may cross elsewhere.
    return int(np.argmax(np.abs(x[:n])))


def _critical_landing(mixture: Mixture, z: np.ndarray):
    """The engine's ``land`` for the envelope's crossing: the critical point by Heidemann-Khalil.

    From the two branch points that bracket the critical point (ln K_key = +-gap) the midpoint's T and
    feed volume start a Newton solve of the Heidemann-Khalil conditions (AIChE J. 26 (1980) 769); where
    that does not converge, the full search of :func:`critical_points` is used and the point nearest
    the bracket taken. The row is the critical state itself: K = 1, both phases at the critical volume.
    """
    from ._mixture_critical import critical_points, polish_critical

    n = mixture.size

    def land(before: np.ndarray, after: np.ndarray) -> contin.Landing | None:
        middle = 0.5 * (before + after)
        T, v = math.exp(middle[n]), math.exp(middle[n + 1])
        point, last_step = polish_critical(mixture, z, T, v)
        if not math.isfinite(last_step):
            found = critical_points(mixture, z)
            if not found:
                return None
            point = min(found, key=lambda c: abs(math.log(c.T / T)) + abs(math.log(c.v / v)))
            point, last_step = polish_critical(mixture, z, point.T, point.v)
            if not math.isfinite(last_step):
                return None
        x = np.zeros(n + 4)
        x[n], x[n + 1], x[n + 2], x[n + 3] = math.log(point.T), math.log(point.v), math.log(point.v), math.log(point.P)
        info = {"v": point.v, "method": "Heidemann-Khalil criterion (AIChE J. 26 (1980) 769)",
                "smallest_eigenvalue": point.eigenvalue, "cubic_form": point.cubic}
        return contin.Landing(x, located_to=last_step, info=info)

    return land


def _trace_branch(mixture: Mixture, z: np.ndarray, system: EnvelopeSystem, x0: np.ndarray, lnP0: float,
                  max_points: int, on_point) -> contin.Branch:
    """The whole envelope as one engine trace: dew point, cricondentherm, critical point, bubble point.

    Rheinboldt's local parametrisation follows the branch; folds of ln T and ln P are located by the
    engine; the critical point is the engine's crossing of the trivial set K = 1 along the ln K of the
    outer component largest at the dew point, landed on by Heidemann-Khalil. The bound on ln P at the
    start pressure ends it at the bubble point.
    """
    crossing = contin.Crossing(
        coordinates=[f"lnK_{name}" for name in mixture.names], near=_NEAR_CRITICAL, gap=_GAP,
        smallest_gap=_SMALLEST_GAP, kind="critical", name="critical point", land=_critical_landing(mixture, z),
    )
    bounds = {"lnP": (lnP0, math.log(1e10)), "lnT": (math.log(10.0), math.log(5000.0))}
    return contin.trace(
        system, x0[:-1], free="lnP", parameters={"lnP": float(x0[-1])}, direction=1, step=_STEP,
        max_step=_MAX_STEP, min_step=1e-9, max_points=max_points, tolerance=_TOLERANCE,
        bounds=bounds, folds=("lnT",), corrector="local", crossing=crossing, on_point=on_point,
        describe=_in_users_terms(mixture, z),
    )


def _phase_sides(mixture: Mixture, z: np.ndarray, lnK: np.ndarray, v_feed: np.ndarray, v_incipient: np.ndarray,
                 T: np.ndarray, critical_rows: Sequence[int]) -> np.ndarray:
    """``dew``, ``bubble`` or ``liquid-liquid`` for each row, from the nature of the two phases.

    The branch starts at a dew point (the feed a vapour, the incipient phase a liquid), and the two
    phases exchange their natures only where the branch passes a critical point (a row in
    ``critical_rows``): the sides follow from continuity, dew up to the first critical point, bubble
    after it. (Molar volumes alone do not tell: a heavy liquid can have the larger molar volume.)
    Past a critical point, the phase that should be the vapour (the incipient phase on the bubble
    side) is taken for a liquid, and the row is ``liquid-liquid``, where it is both clearly
    liquid-dense, v < 0.5 Zc b / Omega_b with b its own co-volume (half the critical molar volume of a
    one-component fluid of the cubic: the density of a liquid well below its critical temperature),
    and colder than its pseudo-critical temperature by Kay's rule, sum_i y_i Tc_i (Kay, Ind. Eng.
    Chem. 28 (1936) 1014). Rows of the critical point's passage (every |ln K| <= 0.1) stay
    vapour-liquid. (Telling phases apart by density and pseudo-critical temperature is common
    practice; the margins keep dense gases and near-critical rows vapour-liquid.)
    """
    count = len(v_feed)
    passed = np.zeros(count, dtype=int)
    for index in critical_rows:
        passed[index + 1:] += 1
    bubble = passed % 2 == 1
    sides = np.where(bubble, "bubble", "dew").astype(object)
    family = mixture.family
    limit = 0.5 * family.z_c / family.omega_b
    w = np.exp(lnK) * z
    w = w / w.sum(axis=1, keepdims=True)
    composition = np.where(bubble[:, None], w, z[None, :])
    vapour_volume = np.where(bubble, v_incipient, v_feed)
    near_critical = np.max(np.abs(lnK), axis=1) <= _NEAR_CRITICAL  # the passage's rows (ln K fixed there)
    liquid = ((passed > 0) & ~near_critical & (vapour_volume < limit * (composition @ mixture.b))
              & (T < composition @ mixture.Tc))
    sides[liquid] = "liquid-liquid"
    return sides.astype(str)


def trace_envelope(
    mixture: Mixture,
    z: Sequence[float],
    *,
    from_pressure: float = 1e5,
    quality: Sequence[float] = (),
    check_stability: bool = True,
    max_points: int = 2000,
    on_point=None,
    start: Sequence[float] | None = None,
) -> Envelope:
    """Trace the phase envelope of feed ``z`` from the dew point at ``from_pressure`` to the bubble point.

    One engine trace (Rheinboldt's local parametrisation) runs from the dew point through the
    cricondentherm, the critical point and the cricondenbar to the bubble point at ``from_pressure``;
    the critical point is passed by the engine's crossing of the trivial set K = 1 (see
    :class:`contin.Crossing`) and solved there by Heidemann-Khalil. Cricondentherm and cricondenbar are
    the located folds of ln T and ln P with the largest T and P, and are checked to be the highest
    temperature and pressure traced. A feed the model cannot tell from one fluid (identical constants,
    kij = 0) gives that fluid's saturation curve up to its critical point.

    Args:
        mixture: the mixture (components, cubic family, kij).
        z: feed mole fractions (N,), positive, summing to 1 within 1e-6.
        from_pressure: pressure (Pa) of the low-pressure dew point where the trace starts and of the
            bubble point where it ends.
        quality: vapour fractions (strictly between 0 and 1) of lines of constant quality to add.
        check_stability: run Michelsen's tangent-plane test at every point (``stable`` column).
        max_points: most points on the branch.
        on_point: passed to :func:`contin.trace` (e.g. a :class:`contin.Progress`).
        start: a guess of the start coordinates (ln K, ln T, ln V_feed, ln V_incipient, ln P), e.g.
            :func:`start_coordinates` of a neighbouring envelope; Wilson's K-values if None or if
            Newton does not converge from it. ``stats["start_newton_iterations"]`` counts the cost.

    Returns:
        An :class:`Envelope`.

    Raises:
        InputError: bad composition, pressure or quality values; no dew point at ``from_pressure``.

    Reference: Michelsen, Fluid Phase Equilibria 4 (1980) 1 (formulation); Wilson (1969) K-values;
    Heidemann & Khalil, AIChE J. 26 (1980) 769 (the critical point).
    """
    began = time.perf_counter()
    z = _check_feed(mixture, z)
    if isinstance(from_pressure, bool) or not (isinstance(from_pressure, (int, float)) and math.isfinite(from_pressure) and from_pressure > 0):
        raise InputError(f"--from-pressure {from_pressure!r} must be a positive pressure in Pa")
    betas = _check_quality(quality)
    n = mixture.size
    system = EnvelopeSystem(mixture, z, 0.0)
    x0, start_iterations = _start_point(mixture, z, float(from_pressure), 1.0, guess=start)
    lnP0 = math.log(from_pressure)
    setup = time.perf_counter() - began
    if float(np.max(np.abs(x0[:n]))) < 1e-8:
        return _one_fluid(mixture, z, system, x0, lnP0, max_points, began, setup, check_stability)
    branch = _trace_branch(mixture, z, system, x0, lnP0, max_points, on_point)
    traced = time.perf_counter()
    rows, columns, specials, outcome, notes = _assemble(mixture, z, branch, float(from_pressure))
    status, message, success = outcome
    stable, stability_seconds = [None] * len(rows), 0.0
    if check_stability:
        stable, stability_seconds, interrupted = _stability(mixture, z, rows)
        if interrupted:
            status, success = contin.Status.INTERRUPTED.label, False
            message = "interrupted: the stability check was stopped; the traced points are kept, unchecked"
    for row, flag in zip(rows, stable, strict=True):
        row[5] = flag
    critical = next((sp for sp in specials if sp["kind"] == "critical"), None)
    end = None if critical is None else (critical["values"]["T"], critical["values"]["P"])
    lines = () if status == contin.Status.INTERRUPTED.label else tuple(
        _quality_line(mixture, z, beta, float(from_pressure), max_points, end) for beta in betas)
    stats = {k: v for k, v in branch.stats.items() if isinstance(v, (int, float))}
    stats.update(setup_seconds=setup + float(branch.stats.get("setup_seconds", 0.0)),
                 trace_seconds=traced - began - setup, stability_seconds=stability_seconds, points=len(rows),
                 start_newton_iterations=start_iterations,
                 jacobian_evaluations=system.evaluations,
                 jacobian_evaluations_per_point=system.evaluations / max(1, len(rows) - 1))
    return Envelope(mixture, z, columns, rows, specials, status, message, success, stats,
                    np.asarray(branch.residual_norms), lines, branch, tuple(notes))


def _stability(mixture: Mixture, z: np.ndarray, rows: list) -> tuple[list, float, bool]:
    """Michelsen's tangent-plane test at every row: (flags, seconds, interrupted)."""
    from ._stability import check_points

    began = time.perf_counter()
    T = np.array([row[0] for row in rows])
    P = np.array([row[1] for row in rows])
    y = np.array([row[6:] for row in rows]) * z
    try:
        return check_points(mixture, z, T, P, y), time.perf_counter() - began, False
    except KeyboardInterrupt:
        # Ctrl-C during the check: keep the traced points, unchecked, and say so.
        return [None] * len(rows), time.perf_counter() - began, True


def _assemble(mixture: Mixture, z: np.ndarray, branch: contin.Branch, from_pressure: float):
    """Rows, columns, special points (each a row), (status, message, success) and notes of a traced branch.

    The claims of the result are checked before it may say "completed": the cricondentherm is the
    highest temperature traced and the cricondenbar the highest pressure, no row but the critical
    point lies on the trivial set K = 1, and a branch that turns into a liquid-liquid split does not
    claim a bubble point.
    """
    n = mixture.size
    points = branch.points
    lnK, T, P = points[:, :n], np.exp(points[:, n]), np.exp(points[:, -1])
    v_feed = np.exp(points[:, n + 1])
    v_incipient = np.exp(points[:, n + 2]) / (np.exp(lnK) @ z)
    critical = branch.special("critical")
    side = _phase_sides(mixture, z, lnK, v_feed, v_incipient, T, [sp.index for sp in critical])
    rows = [[float(T[i]), float(P[i]), str(side[i]), float(v_feed[i]), float(v_incipient[i]), None,
             *[float(v) for v in np.exp(lnK[i])]] for i in range(len(points))]
    columns = ("T", "P", "side", "v_feed", "v_incipient", "stable", *[f"K_{name}" for name in mixture.names])
    notes = list(branch.stats.get("notes", ()))
    specials = []
    for sp in critical:
        info = {key: value for key, value in sp.info.items() if key not in ("coordinate", "gap", "tangent")}
        info["key_component"] = sp.info["coordinate"].removeprefix("lnK_")
        specials.append(_special("critical", sp.index, T[sp.index], P[sp.index], sp.located_to, info,
                                 sp.residual_norm))
    folds = branch.special("fold")
    folds_T = [sp for sp in folds if sp.info.get("coordinate") == "lnT"]
    folds_P = [sp for sp in folds if sp.info.get("coordinate") == "lnP"]
    if folds_T:
        sp = max(folds_T, key=lambda s: s.values["lnT"])
        slope = sp.tangent[n] / sp.tangent[-1] * math.exp(sp.values["lnT"] - sp.values["lnP"]) if sp.tangent[-1] else math.inf
        specials.append(_special("cricondentherm", sp.index, T[sp.index], P[sp.index], sp.located_to,
                                 {"dT_dP": float(slope)}, sp.residual_norm))
    if folds_P:
        sp = max(folds_P, key=lambda s: s.values["lnP"])
        slope = sp.tangent[-1] / sp.tangent[n] * math.exp(sp.values["lnP"] - sp.values["lnT"]) if sp.tangent[n] else math.inf
        specials.append(_special("cricondenbar", sp.index, T[sp.index], P[sp.index], sp.located_to,
                                 {"dP_dT": float(slope)}, sp.residual_norm))
    specials.sort(key=lambda s: (s["index"], s["kind"]))
    status, message, success = branch.status.label, branch.message, branch.status.success
    problems = []
    critical_rows = {sp.index for sp in critical}
    trivial = [i for i in range(len(points)) if i not in critical_rows and np.max(np.abs(lnK[i])) < _TRIVIAL]
    if trivial:
        problems.append(f"{len(trivial)} point(s) collapsed onto the trivial solution K = 1 (first at "
                        f"T = {T[trivial[0]]:.3f} K)")
    for kind, values, unit in (("cricondentherm", T, "K"), ("cricondenbar", P, "Pa")):
        sp = next((s for s in specials if s["kind"] == kind), None)
        highest = int(np.argmax(values))
        interior = 0 < highest < len(values) - 1
        if sp is None and interior:
            problems.append(f"the highest {'temperature' if unit == 'K' else 'pressure'} traced "
                            f"({values[highest]:.8g} {unit}, row {highest}) is not a located {kind}")
        elif sp is not None and values[highest] > values[sp["index"]] * (1.0 + 1e-9):
            problems.append(f"row {highest} lies beyond the {kind} ({values[highest]:.8g} against "
                            f"{values[sp['index']]:.8g} {unit})")
    liquid = np.flatnonzero(side == "liquid-liquid")
    bound = branch.special("bound")
    open_end = bool(bound) and bound[-1].info.get("coordinate") != "lnP" or (
        bool(bound) and bound[-1].values["lnP"] > math.log(from_pressure) + 1.0)
    if problems and not open_end and not success:
        notes.extend(problems)  # the trace stopped early: its own status says why
    elif problems and not open_end:
        status, success = "inconsistent", False
        message = "stopped: the traced envelope fails its own checks: " + "; ".join(problems)
    elif open_end and success:
        last = bound[-1].index
        status, success = "open_envelope", False
        # the bound in the user's terms (the engine's own name is of ln T or ln P)
        where = (f"P = {P[last]:.6g} Pa (at T = {T[last]:.6g} K)" if bound[-1].info.get("coordinate") == "lnP"
                 else f"T = {T[last]:.6g} K (at P = {P[last]:.6g} Pa)")
        message = (f"stopped: the branch runs on to its bound {where} as a {side[last]} curve: the model gives no "
                   "closed envelope for this feed (a liquid-liquid or gas-gas split that goes on to high pressure "
                   "is the usual cause)")
    elif liquid.size and success and side[-1] != "liquid-liquid":
        notes.append(f"from T = {T[liquid[0]]:.6g} K, P = {P[liquid[0]]:.6g} Pa to T = {T[liquid[-1]]:.6g} K, "
                     f"P = {P[liquid[-1]]:.6g} Pa the incipient phase is liquid-dense (rows labelled liquid-liquid)")
    elif liquid.size and success:
        first = int(liquid[np.flatnonzero(np.diff(np.append(-2, liquid)) > 1)[-1]])  # where the last such stretch begins
        status, success = "liquid_liquid", False
        message = (f"stopped short of the bubble point: from T = {T[first]:.6g} K, P = {P[first]:.6g} Pa on "
                   f"(row {first}) both phases are liquid-like, a liquid-liquid split; a three-phase region "
                   "is likely there")
    if success and status == contin.Status.BOUND_REACHED.label:
        order = [sp["kind"] for sp in specials if sp["kind"] in ("cricondentherm", "cricondenbar", "critical")]
        words = [("critical point" if kind == "critical" else kind) for kind in order]
        end = "bubble point" if side[-1] == "bubble" else "second dew point"
        through = f" through the {', the '.join(words)}" if words else ""
        message = f"completed: from the dew point at {from_pressure:g} Pa{through} to the {end} at {from_pressure:g} Pa"
    if success and not critical:
        notes.append("no critical point was passed on this branch")
    return rows, columns, specials, (status, message, success), notes


def _in_users_terms(mixture: Mixture, z: np.ndarray):
    """A point of the envelope system (ln K, ln T, ln V, ln P) told as T, P and the incipient phase's
    composition: the engine's ``describe`` for the envelope's messages and notes."""
    n = mixture.size

    def describe(x: np.ndarray) -> str:
        w = np.exp(x[:n]) * z
        w = w / w.sum()
        composition = ", ".join(f"{name} {fraction:.4g}" for name, fraction in zip(mixture.names, w))
        return f"T = {math.exp(x[n]):.6g} K, P = {math.exp(x[-1]):.6g} Pa, where the incipient phase is {composition}"

    return describe


def _one_fluid(mixture, z, system, x0, lnP0, max_points, began, setup, check_stability) -> Envelope:
    """The envelope of a feed whose components the model cannot tell apart (K = 1 at every point).

    With identical critical constants, acentric factors and zero kij the mixture is one fluid: its
    dew and bubble curves coincide with that fluid's saturation curve, which is traced (in the same
    variables, ln K staying 0) until the phase volumes are within _NEAR_CRITICAL of each other in
    ln v; the critical point (Heidemann-Khalil, here the fluid's own) ends it.
    """
    from ._mixture_critical import critical_point

    n = mixture.size
    closing = contin.Event("near critical point",
                           lambda u, p: float(u[n + 1] - u[n + 2]) - _NEAR_CRITICAL, direction=-1,
                           terminal=True, kind="near_critical")
    branch = contin.trace(
        system, x0[:-1], free="lnP", parameters={"lnP": float(x0[-1])}, direction=1, step=_STEP,
        max_step=_MAX_STEP, min_step=1e-9, max_points=max_points, tolerance=_TOLERANCE,
        bounds={"lnP": (lnP0, math.log(1e10))}, events=[closing], corrector="local",
    )
    traced = time.perf_counter()
    points = branch.points
    T, P = np.exp(points[:, n]), np.exp(points[:, -1])
    specials, notes = [], ["the components cannot be told apart by the model: dew and bubble curves coincide "
                           "with the saturation curve of one fluid"]
    success, status, message = branch.success, branch.status.label, branch.message
    if branch.status == contin.Status.TERMINAL_EVENT:
        critical = critical_point(mixture, z, near=(float(T[-1]), float(P[-1])))
        specials.append(_special("critical", len(points) - 1, critical.T, critical.P, 0.0,
                                 {"v": critical.v, "note": "the critical point of the one fluid (Heidemann-Khalil)"}))
        status, message = "terminal_event", "completed: the saturation curve ends at the critical point"
    stable = [None] * len(points)
    if check_stability:
        from ._stability import check_points

        stable = check_points(mixture, z, T, P, np.exp(points[:, :n]) * z)
    rows = [[float(T[i]), float(P[i]), "dew", float(math.exp(points[i, n + 1])), float(math.exp(points[i, n + 2])),
             stable[i], *[float(v) for v in np.exp(points[i, :n])]] for i in range(len(points))]
    columns = ("T", "P", "side", "v_feed", "v_incipient", "stable", *[f"K_{name}" for name in mixture.names])
    stats = {k: v for k, v in branch.stats.items() if isinstance(v, (int, float))}
    stats.update(setup_seconds=setup, trace_seconds=traced - began - setup, points=len(points),
                 jacobian_evaluations=system.evaluations,
                 jacobian_evaluations_per_point=system.evaluations / max(1, len(points) - 1))
    return Envelope(mixture, z, columns, rows, specials, status, message, success, stats,
                    np.asarray(branch.residual_norms), (), branch, tuple(notes))


def _special(kind: str, index: int, T: float, P: float, located: float, info: dict,
             residual_norm: float | None = None) -> dict:
    special = {"kind": kind, "name": kind, "index": int(index), "values": {"T": float(T), "P": float(P)},
               "located_to": float(located), "info": info}
    if residual_norm is not None:
        special["residual_norm"] = float(residual_norm)
    return special


def _quality_line(mixture: Mixture, z: np.ndarray, beta: float, pressure: float, max_points: int,
                  critical: tuple[float, float] | None) -> QualityLine:
    """The line of vapour fraction ``beta`` from ``pressure`` up to the critical point (T, P) ``critical``.

    Every line of constant vapour fraction ends at the critical point, where the phases merge. As
    there, the equations grow ill-conditioned, so the trace stops on a bound of the key ln K at
    _GAP in size (landed on exactly, phases still distinct) and the envelope's critical point,
    solved where the envelope crossed K = 1, is the last point of the line.
    """
    n = mixture.size
    system = EnvelopeSystem(mixture, z, beta)
    try:
        x0 = dew_point(mixture, z, pressure, beta)
    except InputError as error:
        return QualityLine(beta, np.array([]), np.array([]), "start_not_converged", str(error))
    key = _key_component(x0, n)
    lnP0 = math.log(pressure)
    name = f"lnK_{mixture.names[key]}"
    limit = (-1e3, -_GAP) if x0[key] < 0 else (_GAP, 1e3)
    branch = contin.trace(
        system, x0[:-1], free="lnP", parameters={"lnP": lnP0}, direction=1, step=0.05, max_step=_MAX_STEP,
        min_step=1e-9, max_points=max_points, tolerance=_TOLERANCE,
        bounds={"lnP": (lnP0, math.log(1e10)), name: limit}, corrector="local",
    )
    pts = branch.points
    T, P = np.exp(pts[:, n]), np.exp(pts[:, -1])
    near = (branch.status == contin.Status.BOUND_REACHED and bool(branch.special_points)
            and branch.special_points[-1].info.get("coordinate") == name)
    if near and critical is not None:
        T, P = np.append(T, critical[0]), np.append(P, critical[1])
        return QualityLine(beta, T, P, "terminal_event",
                           f"completed: the line ends at the critical point T = {critical[0]:.6g} K, "
                           f"P = {critical[1]:.6g} Pa, where every line of constant vapour fraction meets")
    if near:
        return QualityLine(beta, T, P, "critical_not_located",
                           "stopped near the critical point, which the envelope did not locate")
    return QualityLine(beta, T, P, branch.status.label, branch.message)


def start_coordinates(document: dict) -> list[float] | None:
    """The start coordinates (ln K, ln T, ln V_feed, ln V_incipient, ln P) of an envelope's JSON document
    (its first row, the dew point at the start pressure), or None when it has no rows; a start guess
    for the envelope of a nearby model (``trace_envelope(start=...)``)."""
    rows, columns = document.get("points") or [], list(document.get("columns") or [])
    if not rows or "T" not in columns:
        return None
    row = dict(zip(columns, rows[0]))
    K = np.array([row[c] for c in columns if c.startswith("K_")], dtype=float)
    z = np.array(document.get("feed") or [], dtype=float)
    if K.size == 0 or K.size != z.size:
        return None
    return [*np.log(K), math.log(row["T"]), math.log(row["v_feed"]), math.log(row["v_incipient"] * float(K @ z)),
            math.log(row["P"])]


def _check_feed(mixture: Mixture, z) -> np.ndarray:
    z = np.asarray(z, dtype=float).reshape(-1)
    if z.size != mixture.size:
        raise InputError(f"the feed has {z.size} mole fractions for {mixture.size} components")
    if not np.all(np.isfinite(z)) or np.any(z <= 0):
        raise InputError("every mole fraction of the feed must be positive; drop absent components")
    if abs(z.sum() - 1.0) > 1e-6:
        raise InputError(f"the mole fractions sum to {z.sum():.8g}, not 1; fix them or pass --normalise")
    return z / z.sum()


def _check_quality(quality) -> tuple[float, ...]:
    values = []
    for q in quality:
        q = float(q)
        if not 0.0 < q < 1.0:
            raise InputError(f"--quality {q:g} must lie strictly between 0 and 1 (a vapour fraction)")
        values.append(q)
    return tuple(sorted(set(values)))
