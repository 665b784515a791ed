"""Mixture phase envelopes: one continuation run from a low-pressure dew point to the bubble point.

The feed z is one phase, the incipient phase w = K z the other (vapour fraction 0 of the incipient
phase; Michelsen, Calculation of phase envelopes and critical points for multicomponent mixtures,
Fluid Phase Equilibria 4 (1980) 1). Unknowns are ln K_i, ln T and the logarithms of the two phases'
volumes; the free parameter is ln P. The equations are

    ln K_i + [F_i(w, V_w) - ln V_w] - [F_i(z, V_z) - ln V_z] = 0     (equal fugacities, T-V form)
    P(T, V_z, z) / P - 1 = 0,   P(T, V_w, w) / P - 1 = 0,   sum_i w_i - 1 = 0

with F_i = dF/dn_i of the residual Helmholtz energy. Carrying the volumes as unknowns removes all
root selection, so the branch passes smoothly from the dew side (feed vapour, incipient liquid)
through the critical point to the bubble side (feed liquid). The engine traces the dew side with
Rheinboldt's local parametrisation until the ln K of an outer component falls to _NEAR_CRITICAL in
size (a bound, landed on exactly). Near the critical point the equations are intrinsically
ill-conditioned, so the passage is a controlled step: Newton solves at fixed ln K_key on levels
between 0.1 and 0.02 in size on both sides (never on K = 1); the branch is analytic in ln K_key, so
a least-squares polynomial through those points gives the critical point at ln K_key = 0, and the
folds of T and P inside the step. The engine then carries on from the far side to the bubble point.
Should one long engine step jump the whole region, the crossing (the phase volumes change order
only at the critical point) is found afterwards and the controlled step there only pins it down.

A constant vapour fraction beta generalises the same system (x = z / (1 + beta (K - 1)),
y = K x); beta = 0 is the envelope and 0 < beta < 1 gives the quality lines inside it.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from collections.abc import Sequence

import numpy as np
from scipy.optimize import brentq

import contin
from contin import InputError

from ._caution import CAUTION
from ._mixture import Mixture

__all__ = ["EnvelopeSystem", "Envelope", "QualityLine", "trace_envelope", "dew_point", "ENVELOPE_UNITS"]

#: Units of the envelope columns (files and JSON are in SI units).
ENVELOPE_UNITS = {"T": "K", "P": "Pa", "side": "", "v_feed": "m3/mol", "v_incipient": "m3/mol", "stable": ""}

# Tolerance on the residual (relative pressure, ln fugacity): far below any use of the numbers.
_TOLERANCE = 1e-10
# First and longest step of each traced piece (in the log coordinates). Longer steps take four or
# more Newton iterations each (measured: 1.0/1.5 gave 3.1 Jacobian evaluations per point at N = 10,
# 0.5/0.8 gives 2.7 at about the same wall time).
_STEP = 0.5
_MAX_STEP = 0.8
# |ln K_key| at which the trace hands over to the controlled step across the critical point, and the
# levels of ln K_key of that step (see _bridge).
_NEAR_CRITICAL = 0.1
_BRIDGE = (0.02, 0.04, 0.06, 0.08, 0.1)
# Newton tolerance of the bridge solves, and the closest two bridge levels may come when halving.
_BRIDGE_TOLERANCE = 1e-12
_BRIDGE_SMALLEST = 1e-4
# A point whose ln K are all below this in size sits on the trivial solution K = 1.
_TRIVIAL = 1e-7


class EnvelopeSystem(contin.CallableSystem):
    """Two-phase equilibrium at fixed vapour fraction as a contin system with an analytic Jacobian.

    Unknowns ``lnK_<name>`` (K = incipient over feed for ``beta = 0``; vapour over liquid for a
    quality line), ``lnT``, ``lnV_feed``, ``lnV_incipient`` (for ``beta > 0``: liquid and vapour); free
    parameter ``lnP``.

    Args:
        mixture: the :class:`~contin_thermo._mixture.Mixture`.
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

    Wilson's K-values give the temperature where the Rachford-Rice condition holds at vapour
    fraction ``beta`` (for the dew point: sum z_i / K_i = 1); Newton on the full system then refines
    it. For the envelope (``beta = 1``) the unknowns describe the incipient liquid over the vapour
    feed, so ln K = -ln K_Wilson.

    Raises:
        InputError: no temperature between 20 K and 5000 K satisfies the Wilson condition, or Newton
            does not converge (name the pressure, suggest another ``--from-pressure``).
    """
    z = np.asarray(z, dtype=float)

    def condition(lnT: float) -> float:
        K = mixture.wilson(math.exp(lnT), pressure)
        if beta >= 1.0:
            return math.log(float(np.sum(z / K)))
        return float(np.sum(z * (K - 1.0) / (1.0 + beta * (K - 1.0))))

    grid = np.linspace(math.log(20.0), math.log(5000.0), 200)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        K = mixture.wilson(np.exp(grid)[:, None], pressure)  # the whole grid at once, (200, N)
        if beta >= 1.0:
            values = np.log(np.sum(z / K, axis=1))
        else:
            values = np.sum(z * (K - 1.0) / (1.0 + beta * (K - 1.0)), axis=1)
    signs = np.sign(values)
    changes = np.flatnonzero((signs[:-1] != signs[1:]) & np.isfinite(values[:-1]) & np.isfinite(values[1:]))
    lnT = brentq(condition, grid[changes[0]], grid[changes[0] + 1], xtol=1e-12) if changes.size else None
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
    n = mixture.size
    # K = 1 with equal volumes is the trivial solution; K = 1 with distinct volumes is a feed whose
    # components the model cannot tell apart (it boils like one fluid).
    if not ok or (float(np.max(np.abs(x[:n]))) < 1e-4 and abs(x[n + 1] - x[n + 2]) < 1e-3):
        raise InputError(
            f"--from-pressure {pressure:g} Pa: no two-phase point found from Wilson's K-values "
            f"(residual {norm:.2g}); try another pressure"
        )
    return x


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
        """The JSON layout of DESIGN.md (``contin.json_document``), with the caution and the model."""
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
            units: ``"si"`` (K, Pa) or ``"engineering"`` (degC, bar) for temperatures and pressures.
        """
        from ._report import write_csv
        from ._units import convert_rows, output_units

        system = output_units(units)
        names = dict(ENVELOPE_UNITS)
        names.update({c: "" for c in self.columns if c.startswith("K_")})
        rows, names = convert_rows(self.columns, self.rows, names, system)
        feed = ", ".join(f"{n}={v:.6g}" for n, v in zip(self.mixture.names, self.z))
        notes = [f"model: {self.mixture.family.label}; feed: {feed}"]
        for sp in self.special_points:
            notes.append(f"{sp['kind']}: T = {sp['values']['T']!r} K, P = {sp['values']['P']!r} Pa")
        return write_csv(path, self.columns, rows, names, title="phase envelope", notes=notes)

    def plot(self, axes=None):
        """Draw the envelope in the P-T plane with its special points; returns the matplotlib axes."""
        from ._plot_envelope import draw_envelope

        return draw_envelope(self, axes)

    def to_dataframe(self):
        """The rows as a pandas DataFrame in SI units (needs pandas, which contin does not install)."""
        from ._report import table_frame

        return table_frame(self.columns, self.rows)

    def __repr__(self) -> str:
        found = ", ".join(f"{sp['kind']} T = {sp['values']['T']:.5g} K, P = {sp['values']['P']:.5g} Pa"
                          for sp in self.special_points) or "no special points"
        return (f"<Envelope of {len(self.mixture.names)} components ({self.mixture.family.label}): "
                f"{len(self.rows)} points; {found}; status {self.status}>")

    def summary(self, units: str = "si") -> list[str]:
        """Human summary lines: special points, extent, metastable stretches, then the caution."""
        from ._report import summary_lines
        from ._units import output_units

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


def _side_change(system: EnvelopeSystem, points: np.ndarray) -> int | None:
    """Index of the last point before the feed's molar volume crosses the incipient phase's, or None.

    The two molar volumes are equal only at the critical point, so a sign change between two
    accepted points means the step between them passed it.
    """
    n = system.n
    incipient = points[:, n + 2] - np.log(np.exp(points[:, :n]) @ system.z)
    sign = np.sign(points[:, n + 1] - incipient)
    changes = np.flatnonzero(sign[1:] != sign[:-1])
    return int(changes[0]) if changes.size else None


def _tangent(system: EnvelopeSystem, x: np.ndarray) -> np.ndarray:
    """Unit tangent of the branch at x: the null vector of [dF/du, dF/dlnP]."""
    r, J, dp = system.evaluate(x[:-1], x[-1])
    return np.linalg.svd(np.column_stack([J, dp]))[2][-1]


def _bridge_folds(system: EnvelopeSystem, points: np.ndarray, key: int) -> list[tuple[int, int, np.ndarray]]:
    """Turning points of ln T and ln P between consecutive bridge points, on ln K_key.

    Along the bridge the branch is parametrised by c = ln K_key; a fold of coordinate j is a zero of
    dx_j/dc. The least-squares polynomial through the bridge points (as for the critical point) gives
    the candidates; each is refined by the secant method on the exact slope t_j / t_key from the
    tangent of a Newton-converged point, until c changes by less than 1e-10 (the values at a fold
    are stationary, so T and P there are then known to round-off).

    Returns:
        list of (coordinate, index of the bridge point before it, the located point).
    """
    n = system.n
    c = points[:, key]
    order = np.argsort(c)
    low, high = float(c[order[0]]), float(c[order[-1]])
    degree = min(7, len(points) - 1)
    found = []

    def solve(level, guess):
        x, _, ok = _newton(system, guess, key, level, iterations=40, tolerance=_BRIDGE_TOLERANCE, largest_step=0.1)
        t = _tangent(system, x)
        return x, t[j] / t[key]

    for j in (n, n + 3):
        polynomial = np.polynomial.Polynomial.fit(c, points[:, j], degree)
        slope = polynomial.deriv()
        roots = [float(r.real) for r in slope.roots() if abs(r.imag) < 1e-9 and low < r.real < high]
        for root in sorted(roots):
            guess = np.array([np.polynomial.Polynomial.fit(c, points[:, i], degree)(root) for i in range(points.shape[1])])
            a, xa = root, None
            xa, sa = solve(a, guess)
            b = a + 1e-6 * (high - low)
            xb, sb = solve(b, xa)
            for _ in range(8):
                if sb == sa:
                    break
                step = -sb * (b - a) / (sb - sa)
                a, xa, sa = b, xb, sb
                b = b + step
                xb, sb = solve(b, xa)
                # The value at a fold is stationary: an error d in c moves it by O(d^2) only.
                if abs(step) < 1e-10:
                    break
            # index of the bridge point just before the fold, in the order the bridge was walked
            same_side = np.flatnonzero(np.sign(c - b) == np.sign(c[0] - b))
            found.append((j, int(same_side[-1]) if same_side.size else 0, xb))
    return found


def _bridge(system: EnvelopeSystem, xa: np.ndarray, ta: np.ndarray, key: int):
    """Step across the critical point at fixed values of ln K_key, and pin the critical point down.

    Near the critical point the two-phase equations are intrinsically ill-conditioned (the smallest
    singular value of the Jacobian falls like (ln K)^2, as the position along the spinodal is fixed
    only by the cubic-order balance of the Heidemann-Khalil criterion). So the passage is a controlled
    step: points at ln K_key = s c for c in _BRIDGE (each a Newton solve with ln K_key fixed, which
    excludes the trivial solution K = 1, converged to round-off), first on the near side and then on the
    far side; a solve that fails is retried half as far (never closer than half the smallest level to
    ln K_key = 0). The levels stay at |ln K_key| >= 0.02, where every solve is well conditioned; the
    branch is analytic in ln K_key through the critical point, so the least-squares polynomial of
    degree 7 through the bridge points, evaluated at ln K_key = 0, gives the critical point, and the
    difference from degree 5 estimates its error. On lean gases the levels of the earlier design,
    down to 0.005, stalled Newton at residuals near 1e-10.

    Returns:
        (bridge points (M, n + 1), critical x, error estimate) or None if a Newton solve failed.
    """
    sign = 1.0 if xa[key] > 0 else -1.0
    pending = [-sign * c for c in _BRIDGE[::-1]] + [sign * c for c in _BRIDGE[:-1]]  # popped from the end
    points = [np.array(xa, dtype=float)]
    slope = ta / ta[key]
    while pending:
        level = pending[-1]
        if len(points) >= 3:
            nodes = np.array([p[key] for p in points[-4:]])
            stack = np.array(points[-4:])
            degree = min(len(nodes) - 1, 3)
            guess = np.array([np.polyval(np.polyfit(nodes, stack[:, j], degree), level) for j in range(stack.shape[1])])
        else:
            guess = points[-1] + (level - points[-1][key]) * slope
        x, norm, ok = _newton(system, guess, key, level, iterations=40, tolerance=_BRIDGE_TOLERANCE,
                              largest_step=0.1)
        if ok:
            points.append(x)
            pending.pop()
            continue
        # A failed (or trivial) solve: step half as far, unless the levels are already close.
        here = points[-1][key]
        if abs(level - here) < _BRIDGE_SMALLEST or len(points) + len(pending) > 60:
            return None
        middle = 0.5 * (here + level)
        if abs(middle) < 0.5 * _BRIDGE[0]:  # never aim at the critical point itself
            middle = math.copysign(0.5 * _BRIDGE[0], here)
            if abs(middle - here) < _BRIDGE_SMALLEST:
                return None
        pending.append(middle)
    points = np.array(points)
    nodes = points[:, key]
    x_c = np.array([np.polyval(np.polyfit(nodes, points[:, j], 7), 0.0) for j in range(points.shape[1])])
    x_low = np.array([np.polyval(np.polyfit(nodes, points[:, j], 5), 0.0) for j in range(points.shape[1])])
    n = system.n
    error = float(np.max(np.abs(x_c[[n, -1]] - x_low[[n, -1]])))
    x_c[:n] = 0.0
    return points[1:], x_c, error


def _fold_value(sp) -> tuple[float, float]:
    return math.exp(sp.values["lnT"]), math.exp(sp.values["lnP"])


def _run(system, x, direction, lnP0, max_points, extra_bounds=None, folds=("lnT",), on_point=None):
    bounds = {"lnP": (lnP0, math.log(1e10)), "lnT": (math.log(10.0), math.log(5000.0))}
    bounds.update(extra_bounds or {})
    return contin.trace(
        system, x[:-1], free="lnP", parameters={"lnP": float(x[-1])}, direction=direction, step=_STEP,
        max_step=_MAX_STEP, min_step=1e-9, max_points=max_points, tolerance=_TOLERANCE,
        bounds=bounds, folds=folds, corrector="local", on_point=on_point,
    )


def trace_envelope(
    mixture: Mixture,
    z: Sequence[float],
    *,
    from_pressure: float = 1e5,
    quality: Sequence[float] = (),
    check_stability: bool = True,
    max_points: int = 2000,
    on_point=None,
) -> Envelope:
    """Trace the phase envelope of feed ``z`` from the dew point at ``from_pressure`` to the bubble point.

    The engine traces the dew side (Rheinboldt's local parametrisation) until the ln K of an outer
    component falls to 0.1 in size; a controlled step at fixed ln K_key values crosses the critical
    point (and pins it down); the engine then carries on, in the same direction along the same
    branch, to the bubble point at ``from_pressure``. Cricondentherm and cricondenbar are the located
    folds of ln T and ln P with the largest T and P. A feed the model cannot tell from one fluid
    (identical constants, kij = 0) gives that fluid's saturation curve up to its critical point.

    Args:
        mixture: the mixture (components, cubic family, kij).
        z: feed mole fractions (N,), positive, summing to 1 within 1e-6.
        from_pressure: pressure (Pa) of the low-pressure dew point where the trace starts and of the
            bubble point where it ends.
        quality: vapour fractions (strictly between 0 and 1) of lines of constant quality to add.
        check_stability: run Michelsen's tangent-plane test at every point (``stable`` column).
        max_points: most points on each traced piece.
        on_point: passed to :func:`contin.trace` for each traced piece (e.g. a :class:`contin.Progress`).

    Returns:
        An :class:`Envelope`.

    Raises:
        InputError: bad composition, pressure or quality values; no dew point at ``from_pressure``.

    Reference: Michelsen, Fluid Phase Equilibria 4 (1980) 1 (formulation); Wilson (1969) K-values.
    """
    began = time.perf_counter()
    z = _check_feed(mixture, z)
    if isinstance(from_pressure, bool) or not (isinstance(from_pressure, (int, float)) and math.isfinite(from_pressure) and from_pressure > 0):
        raise InputError(f"--from-pressure {from_pressure!r} must be a positive pressure in Pa")
    betas = _check_quality(quality)
    n = mixture.size
    system = EnvelopeSystem(mixture, z, 0.0)
    x0 = dew_point(mixture, z, float(from_pressure))
    lnP0 = math.log(from_pressure)
    # Hand over to the controlled step when the ln K of an outer component (largest in size at the
    # start) falls to _NEAR_CRITICAL in size: a bound on that coordinate is landed on exactly by one
    # correction at fixed ln K, and no long step can jump over it.
    start_key = _key_component(x0, n)
    setup = time.perf_counter() - began
    if float(np.max(np.abs(x0[:n]))) < 1e-8:
        return _one_fluid(mixture, z, system, x0, lnP0, max_points, began, setup, check_stability)
    hand_over = f"lnK_{mixture.names[start_key]}"
    limit = (-1e3, -_NEAR_CRITICAL) if x0[start_key] < 0 else (_NEAR_CRITICAL, 1e3)
    first = _run(system, x0, 1, lnP0, max_points, {hand_over: limit}, on_point=on_point)
    near_critical = (first.status == contin.Status.BOUND_REACHED and bool(first.special_points)
                     and first.special_points[-1].info.get("coordinate") == hand_over)
    pieces = [first]
    rows_x = [first.points]
    norms = [np.asarray(first.residual_norms)]
    specials_raw = [(sp, 0) for sp in first.special_points if sp.kind == "fold"]
    notes = []
    critical = None
    bridge_folds = []
    status, message, success = first.status.label, first.message, first.status.success
    stats = {k: v for k, v in first.stats.items() if isinstance(v, (int, float))}
    key = _key_component(first.points[-1], n)
    cut = None if near_critical else _side_change(system, first.points)
    if near_critical:
        bridge = _bridge(system, first.points[-1], first.tangents[-1], key)
        if bridge is None:
            status, success = "critical_not_passed", False
            message = "stopped: the controlled step across the critical point did not converge"
        else:
            bridge_points, x_c, error = bridge
            offset = len(first.points)
            chain = np.vstack([first.points[-1:], bridge_points])
            for j, k, x in _bridge_folds(system, chain, key):
                bridge_folds.append((j, offset + k - 1, x))
            before = int(np.sum(np.sign(bridge_points[:, key]) == np.sign(first.points[-1][key])))
            critical = (offset + before - 1, x_c, error)
            rows_x.append(bridge_points)
            norms.append(np.array([float(np.max(np.abs(system.evaluate(p[:-1], p[-1], False)[0])))
                                   for p in bridge_points]))
            x_b = bridge_points[-1]
            t_b = _tangent(system, x_b)
            if np.sign(t_b[key]) != np.sign(x_b[key]):
                t_b = -t_b
            offset = sum(len(r) for r in rows_x)
            second = _run(system, x_b, 1 if t_b[-1] >= 0 else -1, lnP0, max_points, on_point=on_point)
            pieces.append(second)
            # The second piece starts on the last bridge point: drop the duplicate.
            rows_x.append(second.points[1:])
            norms.append(np.asarray(second.residual_norms)[1:])
            specials_raw += [(sp, offset - 1) for sp in second.special_points if sp.kind == "fold"]
            status, message, success = second.status.label, second.message, second.status.success
            for k, v in second.stats.items():
                if isinstance(v, (int, float)):
                    stats[k] = stats.get(k, 0) + v
    elif cut is not None:
        # One long step of the engine jumped over the whole near-critical region (the phase volumes
        # changed order between rows cut and cut + 1). The branch is complete; the controlled step
        # from row cut only pins the critical point down, and its points inside that step are added.
        key = _key_component(first.points[cut], n)
        bridge = _bridge(system, first.points[cut], first.tangents[cut], key)
        if bridge is None:
            status, success = "critical_not_located", False
            message = "stopped: the critical point was passed but the controlled step there did not converge"
        else:
            bridge_points, x_c, error = bridge
            c0, c1 = first.points[cut][key], first.points[cut + 1][key]
            inside = (bridge_points[:, key] - c0) * (bridge_points[:, key] - c1) < 0
            inner = bridge_points[inside]
            inner = inner[np.argsort((inner[:, key] - c0) * np.sign(c1 - c0))]
            rows_x = [first.points[: cut + 1], inner, first.points[cut + 1:]]
            first_norms = norms[0]
            norms = [first_norms[: cut + 1],
                     np.array([float(np.max(np.abs(system.evaluate(p[:-1], p[-1], False)[0]))) for p in inner]),
                     first_norms[cut + 1:]]
            specials_raw = [(sp, len(inner) if sp.index > cut else 0) for sp, _ in specials_raw]
            before = int(np.sum(np.sign(inner[:, key]) == np.sign(c0)))
            critical = (cut + before, x_c, error)
    traced = time.perf_counter()
    points = np.vstack(rows_x)
    residual_norms = np.concatenate(norms)
    lnK, T, P = points[:, :n], np.exp(points[:, n]), np.exp(points[:, -1])
    v_feed = np.exp(points[:, n + 1])
    y = np.exp(lnK) * z
    v_incipient = np.exp(points[:, n + 2]) / y.sum(axis=1)
    side = np.where(v_feed > v_incipient, "dew", "bubble")

    specials = []
    if critical is not None:
        index, x_c, error = critical
        specials.append(_special("critical", index, math.exp(x_c[n]), math.exp(x_c[-1]), error,
                                 {"v": float(math.exp(x_c[n + 1])), "key_component": mixture.names[key],
                                  "note": "index is the last row before the critical point"}))
    elif success:
        notes.append("no critical point was passed on this branch")
    folds_T = [(sp, o) for sp, o in specials_raw if sp.info.get("coordinate") == "lnT"]
    folds_P = [(sp, o) for sp, o in specials_raw if sp.info.get("coordinate") == "lnP"]
    for j, index, x in bridge_folds:
        name = "lnT" if j == n else "lnP"
        t = _tangent(system, x)
        located = contin.SpecialPoint("fold", f"fold in {name}", index - 0, {"lnT": float(x[n]), "lnP": float(x[-1])},
                                      x, t, 0.0, 0, 1e-14, {"coordinate": name})
        (folds_T if j == n else folds_P).append((located, 0))
    if folds_T:
        sp, o = max(folds_T, key=lambda item: item[0].values["lnT"])
        slope = sp.tangent[n] / sp.tangent[-1] * math.exp(sp.values["lnT"] - sp.values["lnP"])
        specials.append(_special("cricondentherm", sp.index + o, *_fold_value(sp), float(sp.located_to),
                                 {"dT_dP": float(slope)}))
    if folds_P:
        sp, o = max(folds_P, key=lambda item: item[0].values["lnP"])
        slope = sp.tangent[-1] / sp.tangent[n] * math.exp(sp.values["lnP"] - sp.values["lnT"])
        specials.append(_special("cricondenbar", sp.index + o, *_fold_value(sp), float(sp.located_to),
                                 {"dP_dT": float(slope)}))
    specials.sort(key=lambda s: s["index"])

    # Guard: no point may sit on the trivial solution K = 1 (the critical point itself is not a row).
    trivial = [i for i in range(len(points)) if np.max(np.abs(lnK[i])) < _TRIVIAL]
    if trivial:
        status, success = "trivial_solution", False
        message = (f"stopped: {len(trivial)} point(s) collapsed onto the trivial solution K = 1 "
                   f"(first at T = {T[trivial[0]]:.3f} K)")

    stable = [None] * len(points)
    stability_seconds = 0.0
    if check_stability:
        from ._stability import check_points

        began_stability = time.perf_counter()
        try:
            stable = check_points(mixture, z, T, P, y)
        except KeyboardInterrupt:
            # Ctrl-C during the check: keep the traced points, unchecked, and say so.
            status, success = contin.Status.INTERRUPTED.label, False
            message = "interrupted: the stability check was stopped; the traced points are kept, unchecked"
        stability_seconds = time.perf_counter() - began_stability

    rows = [[float(T[i]), float(P[i]), str(side[i]), float(v_feed[i]), float(v_incipient[i]), stable[i],
             *[float(v) for v in np.exp(lnK[i])]] for i in range(len(points))]
    columns = ("T", "P", "side", "v_feed", "v_incipient", "stable", *[f"K_{name}" for name in mixture.names])
    end = None
    if critical is not None:
        end = (math.exp(critical[1][n]), math.exp(critical[1][-1]))
    interrupted = status == contin.Status.INTERRUPTED.label
    lines = () if interrupted else tuple(_quality_line(mixture, z, beta, float(from_pressure), max_points, end)
                                         for beta in betas)

    if success and critical is not None and status == contin.Status.BOUND_REACHED.label:
        passed = [kind for kind in ("cricondentherm", "cricondenbar", "critical")
                  if any(sp["kind"] == kind for sp in specials)]
        order = sorted(passed, key=lambda kind: next(sp["index"] for sp in specials if sp["kind"] == kind))
        words = [("critical point" if kind == "critical" else kind) for kind in order]
        message = (f"completed: from the dew point at {from_pressure:g} Pa through the {', the '.join(words)} "
                   f"to the bubble point at {from_pressure:g} Pa")
    stats["setup_seconds"] = setup + float(first.stats.get("setup_seconds", 0.0))
    stats["trace_seconds"] = traced - began - setup
    stats["stability_seconds"] = stability_seconds
    stats["points"] = len(points)
    stats["jacobian_evaluations"] = system.evaluations
    stats["jacobian_evaluations_per_point"] = system.evaluations / max(1, len(points) - 1)
    return Envelope(mixture, z, columns, rows, specials, status, message, success, stats,
                    residual_norms, lines, tuple(pieces), tuple(notes))


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
                    np.asarray(branch.residual_norms), (), (branch,), tuple(notes))


def _special(kind: str, index: int, T: float, P: float, located: float, info: dict) -> dict:
    return {"kind": kind, "name": kind, "index": int(index), "values": {"T": float(T), "P": float(P)},
            "located_to": float(located), "info": info}


def _quality_line(mixture: Mixture, z: np.ndarray, beta: float, pressure: float, max_points: int,
                  critical: tuple[float, float] | None) -> QualityLine:
    """The line of vapour fraction ``beta`` from ``pressure`` up to the critical point (T, P) ``critical``.

    Every line of constant vapour fraction ends at the critical point, where the phases merge. As
    there, the equations grow ill-conditioned, so the trace stops on a bound of the key ln K at
    _BRIDGE[0] in size (landed on exactly, phases still distinct) and the envelope's critical point,
    located by the controlled step, is the last point of the line.
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
    limit = (-1e3, -_BRIDGE[0]) if x0[key] < 0 else (_BRIDGE[0], 1e3)
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
