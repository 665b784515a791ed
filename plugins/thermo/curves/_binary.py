"""Binary Pxy (at a given temperature) and Txy (at a given pressure) diagrams by continuation in x1.

The bubble-point equations of the envelope system (``_envelope.EnvelopeSystem``: liquid feed
x = (x1, 1 - x1), incipient vapour y = K x, volumes as unknowns) are traced with the liquid mole
fraction x1 as the free parameter, from the pure second component (x1 = 0) towards the pure first
one, or until the two-phase region closes at a critical point. An azeotrope (x = y with distinct
phases) is a zero of ln K_1 and is reported as an ``azeotrope`` special point.

Where the region closes, the equations grow ill-conditioned as the phases merge (as on a phase
envelope), so the trace stops while the phases are still distinct (a terminal event at
ln(v_vapour / v_liquid) = _NEAR_CLOSING) and the end is the binary critical point at the fixed T or P,
solved from the Heidemann-Khalil criterion (AIChE J. 26 (1980) 769) from there; it is the last row
(x1 = y1, equal volumes) and a ``critical`` special point.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

import contin
from contin import InputError

from ..models._caution import CAUTION
from ._envelope import EnvelopeSystem, _newton
from ..models._mixture import Mixture

__all__ = ["BinaryDiagram", "pxy", "txy"]

# The two-phase region counts as closed (critical point approached) below this |ln(v_vapour/v_liquid)|.
_CLOSING = 0.01
# The trace hands over to the critical-point solve at this ln(v_vapour / v_liquid).
_NEAR_CLOSING = 0.1
# Newton tolerance and step lengths (in x1) of the trace along the composition.
_TOLERANCE, _STEP, _MAX_STEP = 1e-10, 0.02, 0.05


@dataclass(frozen=True)
class BinaryDiagram:
    """A traced Pxy or Txy diagram.

    Attributes:
        kind: ``"pxy"`` or ``"txy"``; mixture: the binary; fixed: the fixed T (K) or P (Pa).
        columns: ``x1, y1, P`` (or ``T``), ``v_liquid, v_vapour``; rows: values in column order.
        special_points: dicts with ``kind`` (``azeotrope``, ``critical``), ``index``, ``values``.
        status, message, success, stats: how the trace ended.
    """

    kind: str
    mixture: Mixture
    fixed: float
    columns: tuple
    rows: list
    special_points: list
    status: str
    message: str
    success: bool
    stats: dict

    def to_dict(self) -> dict:
        """The JSON layout of docs/contracts.md with the caution and model."""
        return contin.json_document(self.status, self.message, self.columns, self.rows, self.special_points, [],
                                    self.stats, caution=CAUTION, model=self.mixture.family.label,
                                    components=list(self.mixture.names))

    def to_csv(self, path, units: str = "si"):
        """Write the rows as CSV with the caution and units header (``units``: ``si``, ``degC-bar`` or ``degF-psia``)."""
        from ..reports._report import translation_notes, write_csv
        from ..models._units import convert_rows, output_units

        names = {"x1": "", "y1": "", "v_liquid": "m3/mol", "v_vapour": "m3/mol"}  # T and P: the unit system's
        rows, names = convert_rows(self.columns, self.rows, names, output_units(units))
        fixed = f"T = {self.fixed} K" if self.kind == "pxy" else f"P = {self.fixed} Pa"
        return write_csv(path, self.columns, rows, names, title=f"{self.kind} diagram at {fixed}",
                         notes=[f"model: {self.mixture.family.label}; components: {', '.join(self.mixture.names)}",
                                *translation_notes(self.stats)])

    def summary(self, units: str = "si") -> list[str]:
        """Human summary lines with the caution (temperatures and pressures in ``units``)."""
        from ..reports._report import summary_lines
        from ..models._units import convert_rows, output_units

        shown = output_units(units)
        items = [("model", self.mixture.family.label), ("status", self.message), ("points", str(len(self.rows)))]
        for sp in self.special_points:
            keys = list(sp["values"])
            (values,), names = convert_rows(keys, [list(sp["values"].values())], {}, shown)
            items.append((sp["kind"], ", ".join(
                f"{k} = {v:.6g}" + (f" {names[k]}" if names[k] else "") for k, v in zip(keys, values))))
        return summary_lines(f"{self.kind} diagram", items)

    def plot(self, axes=None):
        """Draw the diagram (bubble and dew curves, special points); returns the matplotlib axes."""
        from ..reports._plot_envelope import draw_binary

        return draw_binary(self, axes)

    def to_dataframe(self):
        """The rows as a pandas DataFrame in SI units (needs pandas, which contin does not install)."""
        from ..reports._report import table_frame

        return table_frame(self.columns, self.rows)

    def __repr__(self) -> str:
        fixed = f"T = {self.fixed:.6g} K" if self.kind == "pxy" else f"P = {self.fixed:.6g} Pa"
        kinds = ", ".join(sp["kind"] for sp in self.special_points) or "no special points"
        return (f"<{self.kind} diagram of {' + '.join(self.mixture.names)} at {fixed} "
                f"({self.mixture.family.label}): {len(self.rows)} points; {kinds}; status {self.status}>")


class _BinarySystem(contin.CallableSystem):
    """Bubble points of x = (x1, 1 - x1) at fixed T (unknown ln P) or fixed P (unknown ln T)."""

    def __init__(self, mixture: Mixture, kind: str, fixed: float) -> None:
        self.mixture, self.diagram, self.fixed = mixture, kind, float(fixed)
        other = "lnP" if kind == "pxy" else "lnT"
        super().__init__(self._residual, ["lnK_1", "lnK_2", other, "lnV_liquid", "lnV_vapour"], {"x1": 0.0},
                         jacobian=self._jacobian)

    def _envelope(self, u, p):
        x1 = float(p[0])  # a predictor step may pass an end slightly; the bound on x1 then locates it
        system = EnvelopeSystem(self.mixture, np.array([x1, 1.0 - x1]))
        if self.diagram == "pxy":
            v = np.array([u[0], u[1], math.log(self.fixed), u[3], u[4]])
            return system, v, float(u[2])
        return system, np.array([u[0], u[1], u[2], u[3], u[4]]), math.log(self.fixed)

    def _residual(self, u, p):
        system, v, lnP = self._envelope(u, p)
        return system.evaluate(v, lnP, with_jacobian=False)[0]

    def _jacobian(self, u, p):
        system, v, lnP = self._envelope(u, p)
        r, J, dp = system.evaluate(v, lnP)
        if self.diagram == "pxy":
            J = J.copy()
            J[:, 2] = dp
        return J


#: Lowest saturation pressure a diagram starts from, Pa: far below any triple point of the component
#: table (common practice), and well inside double precision for the volume roots.
_LOWEST_PRESSURE = 1e-6


def _start(mixture: Mixture, kind: str, fixed: float) -> np.ndarray:
    """Saturation of the pure second component at the fixed T or P, refined by Newton (x1 = 0)."""
    Tc, Pc, omega = mixture.Tc[1], mixture.Pc[1], mixture.omega[1]
    if kind == "pxy":
        T = fixed
        if T >= Tc:
            raise InputError(f"--temperature {T:g} K is at or above the critical temperature of "
                             f"{mixture.names[1]} ({Tc:g} K); give the component that is subcritical second")
        P = Pc * math.exp(max(5.373 * (1 + omega) * (1 - Tc / T), -700.0))
        if P < _LOWEST_PRESSURE:
            raise InputError(f"--temperature {T:g} K is too far below the critical temperature of {mixture.names[1]} "
                             f"({Tc:g} K): its vapour pressure there is below {_LOWEST_PRESSURE:g} Pa (Wilson's "
                             "estimate); give a higher temperature")
    else:
        P = fixed
        if P >= Pc:
            raise InputError(f"--pressure {P:g} Pa is at or above the critical pressure of "
                             f"{mixture.names[1]} ({Pc:g} Pa); give the component that is subcritical second")
        if P < _LOWEST_PRESSURE:
            raise InputError(f"--pressure {P:g} Pa is below {_LOWEST_PRESSURE:g} Pa, where no saturation point of "
                             f"{mixture.names[1]} can be computed; give a higher pressure")
        T = Tc / (1 - math.log(P / Pc) / (5.373 * (1 + omega)))
    x = np.array([0.0, 1.0])
    K = mixture.wilson(T, P)  # K_1 starts Newton; K_2 = 1 at x1 = 0 (ln K_2 = 0 below)
    v_liquid = mixture.volume(T, P, np.array([1e-12, 1.0]), "liquid")
    v_vapour = mixture.volume(T, P, np.array([1e-12, 1.0]), "vapour")
    system = EnvelopeSystem(mixture, x)
    start = np.array([math.log(K[0]), 0.0, math.log(T), math.log(v_liquid), math.log(v_vapour), math.log(P)])
    fixed_index = 2 if kind == "pxy" else 5
    solution, norm, ok = _newton(system, start, fixed_index, start[fixed_index])
    if not ok or abs(solution[3] - solution[4]) < 1e-3:
        raise InputError(f"no saturation point of {mixture.names[1]} found at the given "
                         f"{'temperature' if kind == 'pxy' else 'pressure'}; is it below the critical point?")
    if kind == "pxy":
        return np.array([solution[0], solution[1], solution[5], solution[3], solution[4]])
    return np.array([solution[0], solution[1], solution[2], solution[3], solution[4]])


def _diagram(mixture: Mixture, kind: str, fixed: float, on_point=None) -> BinaryDiagram:
    if mixture.size != 2:
        raise InputError(f"--mixture must name exactly two components for {kind}, not {mixture.size}")
    if isinstance(fixed, bool) or not (isinstance(fixed, (int, float)) and math.isfinite(fixed) and fixed > 0):
        raise InputError(f"{'--temperature' if kind == 'pxy' else '--pressure'} {fixed!r} must be a positive number")
    u0 = _start(mixture, kind, float(fixed))
    system = _BinarySystem(mixture, kind, fixed)
    events = [contin.Event("azeotrope", lambda u, p: float(u[0]), kind="azeotrope"),
              contin.Event("closing", lambda u, p: float(u[4] - u[3]) - _NEAR_CLOSING, direction=-1, terminal=True,
                           kind="closing")]
    branch = contin.trace(system, u0, free="x1", parameters={"x1": 0.0}, direction=1, step=_STEP, max_step=_MAX_STEP,
                          min_step=1e-10, tolerance=_TOLERANCE, events=events, max_points=600, corrector="local",
                          bounds={"x1": (0.0, 1.0)}, on_point=on_point)
    pts = branch.points
    keep = np.ones(len(pts), dtype=bool)
    keep[1:] = np.abs(np.diff(pts[:, -1])) > 1e-13  # a bound landed on a point already there
    pts = pts[keep]
    # A long step may still jump over the closing: cut at the first change of the volumes' order.
    gap = pts[:, 4] - pts[:, 3]
    crossed = np.flatnonzero(np.sign(gap[1:]) != np.sign(gap[:-1]))
    end = int(crossed[0]) + 1 if crossed.size else len(pts)
    pts = pts[:end]
    closing = crossed.size > 0 or (branch.status == contin.Status.TERMINAL_EVENT
                                   and branch.special_points[-1].kind == "closing")
    x1 = pts[:, -1]
    y1 = np.exp(pts[:, 0]) * x1
    other = np.exp(pts[:, 2])
    rows = [[float(a), float(b), float(c), float(math.exp(d)), float(math.exp(e))]
            for a, b, c, d, e in zip(x1, y1, other, pts[:, 3], pts[:, 4])]
    name = "P" if kind == "pxy" else "T"
    specials = []
    for sp in branch.special_points:
        if sp.kind != "azeotrope" or sp.index >= len(pts) or abs(sp.point[4] - sp.point[3]) < 2 * _CLOSING:
            continue  # K = 1 at the closing critical point is not an azeotrope
        if not 1e-9 < sp.point[-1] < 1.0 - 1e-9:
            continue  # nor is K_1 = 1 at the pure first component
        values = {"x1": float(sp.point[-1]), name: float(math.exp(sp.point[2]))}
        specials.append({"kind": sp.kind, "name": sp.name, "index": sp.index, "values": values,
                         "located_to": sp.located_to, "info": {}})
    status, message, success = branch.status.label, branch.message, branch.success
    if branch.status == contin.Status.BOUND_REACHED and pts.size and pts[-1][-1] >= 1.0 - 1e-12:
        first, second = mixture.names
        message = f"completed: from pure {second} (x1 = 0) to pure {first} (x1 = 1)"
    if closing:
        last = pts[-1]
        guess = (float(last[-1]), math.exp(float(last[2])), 0.5 * float(last[3] + last[4]))
        critical = _critical_end(mixture, kind, float(fixed), guess)
        if critical is None:
            status, success = "critical_not_located", False
            message = "stopped: the two-phase region closes here, but its critical point was not located"
        else:
            xc, other_c, vc, residual = critical
            rows.append([xc, xc, other_c, vc, vc])
            specials.append({"kind": "critical", "name": "critical point", "index": len(rows) - 1,
                             "values": {"x1": xc, name: other_c}, "located_to": residual,
                             "info": {"note": "Heidemann-Khalil critical point of the binary at the fixed "
                                              + ("temperature" if kind == "pxy" else "pressure")}})
            status, success = "terminal_event", True
            message = (f"completed: the two-phase region closes at the critical point x1 = {xc:.6g}, "
                       f"{name} = {other_c:.6g} {'Pa' if kind == 'pxy' else 'K'}")
    columns = ("x1", "y1", name, "v_liquid", "v_vapour")
    return BinaryDiagram(kind, mixture, float(fixed), columns, rows, specials, status, message, success,
                         dict(branch.stats))


def _critical_end(mixture: Mixture, kind: str, fixed: float, guess: tuple[float, float, float]):
    """The binary critical point at fixed T (pxy) or P (txy) near ``guess`` = (x1, P or T, ln v).

    Newton's method with central differences on the Heidemann-Khalil conditions (smallest eigenvalue
    and cubic form, ``_mixture_critical.critical_conditions``), in (x1, ln v) at fixed T, or in
    (x1, ln T, ln v) with P(T, v, x) = P added at fixed P.

    Returns:
        (x1, P or T, molar volume, largest scaled residual) or None if Newton fails.
    """
    from ._mixture_critical import critical_conditions

    x1, other, ln_v = guess
    if kind == "pxy":
        T = fixed
        x = np.array([x1, ln_v])
    else:
        x = np.array([x1, math.log(other), ln_v])

    def g(x):
        z = np.array([x[0], 1.0 - x[0]])
        T_here = fixed if kind == "pxy" else math.exp(x[1])
        v = math.exp(x[-1])
        eigenvalue, cubic = critical_conditions(mixture, z, T_here, v)
        values = [eigenvalue, cubic]
        if kind == "txy":
            values.append(mixture.pressure(T_here, v, z) / fixed - 1.0)
        return np.array(values)

    r = g(x)
    for _ in range(30):
        h = 1e-7
        J = np.column_stack([(g(x + h * e) - g(x - h * e)) / (2 * h) for e in np.eye(x.size)])
        try:
            dx = np.linalg.solve(J, -r)
        except np.linalg.LinAlgError:
            return None
        if not np.all(np.isfinite(dx)):
            return None
        largest = float(np.max(np.abs(dx)))
        if largest > 0.05:
            dx *= 0.05 / largest
        x = x + dx
        if not 0.0 < x[0] < 1.0:
            return None
        r = g(x)
        if largest < 1e-12:
            break
    if not np.all(np.isfinite(r)) or np.max(np.abs(r)) > 1e-8:
        return None
    z = np.array([x[0], 1.0 - x[0]])
    v = math.exp(x[-1])
    T = fixed if kind == "pxy" else math.exp(x[1])
    other = mixture.pressure(T, v, z) if kind == "pxy" else T
    return float(x[0]), float(other), float(v), float(np.max(np.abs(r)))


def pxy(mixture: Mixture, temperature: float, *, on_point=None) -> BinaryDiagram:
    """Pxy diagram of a binary at ``temperature`` (K): bubble pressure and vapour composition against x1.

    Raises:
        InputError: not a binary; temperature not positive or above the second component's Tc.
    """
    return _diagram(mixture, "pxy", temperature, on_point)


def txy(mixture: Mixture, pressure: float, *, on_point=None) -> BinaryDiagram:
    """Txy diagram of a binary at ``pressure`` (Pa): bubble temperature and vapour composition against x1.

    Raises:
        InputError: not a binary; pressure not positive or above the second component's Pc.
    """
    return _diagram(mixture, "txy", pressure, on_point)
