"""Pure-fluid curves of a cubic equation of state: saturation to the critical point, spinodals, critical point.

Reduced variables: x = v/b, theta = T/Tc and the reduced pressure p = P b/(R Tc), so that

    p(x, theta) = theta/(x - 1) - k alpha(theta) g(x),   k = Omega_a/Omega_b,
    g(x) = 1/((x + delta1)(x + delta2)) = [1/(x + delta2) - 1/(x + delta1)]/(delta1 - delta2)

(for delta1 = delta2 = delta, g = 1/(x + delta)^2). The pressure is a short sum of partial-fraction
terms c_j(theta) (x + o_j)^-n_j.

**Removing the trivial solution.** The two phases enter only through symmetric combinations. With
a = ln(x - 1) of each phase, the unknowns are the mean mu = (a_l + a_v)/2 and the squared half-width
sigma = ((a_v - a_l)/2)^2. Coexistence is written as two divided differences of the pressure over the
interval (x_l, x_v) of half-width d and centre m:

    E1 = [p(x_v) - p(x_l)]/(2d) = 0                            (equal pressures)
    E2 = [mean of p over (x_l, x_v) - (p(x_l) + p(x_v))/2]/d^2 = 0   (with E1: Maxwell's equal area)

For a term 1/(x + o), with w = m + o and t = d^2, these are -1/(w^2 - t) and
-(1/w^3) Phi(t/w^2), Phi(rho) = [1/(1 - rho) - atanh(sqrt rho)/sqrt rho]/rho = sum_k>=1 2k/(2k+1) rho^(k-1),
exact closed forms that are smooth functions of t = d^2. At d = 0 they become p_x = 0 and p_xx = 0:
the critical point. The equal-phase solution is therefore not a solution anywhere else, and because
the equations depend on sigma (not on the half-width itself) the branch passes through the critical
point with temperature increasing, as a regular point: an event sigma = 0 lands on it exactly. A third
unknown, the logarithm of the reduced pressure, makes pressure a coordinate so that output at
requested pressures is exact.

The enthalpy of vaporisation follows from Clapeyron's equation with dP_sat/dT the mean of
(dP/dT)_v over (v_l, v_v), exact for a cubic (again a sum of logarithmic partial-fraction terms).

References:
    Maxwell, J. C. (1875), Nature 11, 357 (equal-area rule).
    Clapeyron, E. (1834), J. Ec. Polytech. 14, 153.
    Keller, H. B. (1977), in Applications of Bifurcation Theory, Academic Press (pseudo-arclength
    continuation, through :func:`contin.trace`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from collections.abc import Sequence

import numpy as np

import contin
from contin import InputError

from ..models._caution import CAUTION
from ..models._components import Component, lookup
from ..models._eos import GAS_CONSTANT, CubicFamily, family
from ..reports._report import atomic_write_text, csv_text, translation_notes

__all__ = [
    "CubicFluid",
    "CurveResult",
    "saturation_curve",
    "spinodal_curve",
    "critical_point",
    "SaturationSystem",
    "SpinodalSystem",
    "SATURATION_COLUMNS",
    "SPINODAL_COLUMNS",
    "CRITICAL_COLUMNS",
]

SATURATION_COLUMNS = ("T", "P", "v_liquid", "v_vapour", "rho_liquid", "rho_vapour", "h_vaporisation")
SATURATION_UNITS = {"T": "K", "P": "Pa", "v_liquid": "m3/mol", "v_vapour": "m3/mol", "rho_liquid": "mol/m3",
                    "rho_vapour": "mol/m3", "h_vaporisation": "J/mol"}
SPINODAL_COLUMNS = ("T", "v_liquid_spinodal", "P_liquid_spinodal", "v_vapour_spinodal", "P_vapour_spinodal")
SPINODAL_UNITS = {"T": "K", "v_liquid_spinodal": "m3/mol", "P_liquid_spinodal": "Pa",
                  "v_vapour_spinodal": "m3/mol", "P_vapour_spinodal": "Pa"}
CRITICAL_COLUMNS = ("T", "P", "v", "rho", "Z")
CRITICAL_UNITS = {"T": "K", "P": "Pa", "v": "m3/mol", "rho": "mol/m3", "Z": ""}

#: Default lowest temperature of a traced curve, as a fraction of the critical temperature.
DEFAULT_FROM_REDUCED_TEMPERATURE = 0.4
_SERIES_LIMIT = 0.04  # |t/w^2| below which Phi comes from its series (cancellation in the closed form)
_PSI_SERIES = tuple(1.0 / (2.0 * k + 1.0) for k in range(1, 17))  # Psi = sum _PSI_SERIES[k-1] rho^(k-1)
_PSI_DERIVATIVE_SERIES = tuple((k - 1) / (2.0 * k + 1.0) for k in range(2, 17))


# ---------------------------------------------------------------------------------------------
# The fluid in reduced form
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class CubicFluid:
    """A component with a cubic family, in the reduced form used by the curve systems.

    Attributes:
        component: the fluid's constants.
        family: the cubic equation of state.
        b: co-volume, m^3/mol.
        k: Omega_a / Omega_b.
        m: slope of the Soave-type alpha function (0 for the other forms).
        terms: partial-fraction terms of the pressure, ``(offset, order, is_repulsive, beta)``:
            p = sum_j c_j (x + offset_j)^-order_j with c_j = theta (repulsive) or beta_j k alpha(theta).
    """

    component: Component
    family: CubicFamily
    b: float = field(init=False)
    k: float = field(init=False)
    m: float = field(init=False)
    terms: tuple[tuple[float, int, bool, float], ...] = field(init=False)

    def __post_init__(self) -> None:
        f = self.family
        object.__setattr__(self, "b", f.omega_b * GAS_CONSTANT * self.component.Tc / self.component.Pc)
        object.__setattr__(self, "k", f.omega_a / f.omega_b)
        object.__setattr__(self, "m", float(f.m(self.component.omega)))
        if f.delta1 == f.delta2:
            attractive = ((f.delta1, 2, False, -1.0),)
        else:
            span = f.delta1 - f.delta2
            attractive = ((f.delta2, 1, False, -1.0 / span), (f.delta1, 1, False, 1.0 / span))
        object.__setattr__(self, "terms", ((-1.0, 1, True, 0.0),) + attractive)

    @property
    def pressure_unit(self) -> float:
        """R Tc / b, Pa: the reduced pressure times this is the pressure."""
        return GAS_CONSTANT * self.component.Tc / self.b

    def alpha(self, theta: float) -> tuple[float, float]:
        """alpha and d alpha/d theta at reduced temperature ``theta`` (the family's alpha, in scalars:
        this sits in the hot path, where numpy's per-call overhead would dominate)."""
        form = self.family.alpha_form
        if form == "constant":
            return 1.0, 0.0
        root = math.sqrt(theta)
        if form == "inverse_root":
            return 1.0 / root, -0.5 / (root * theta)
        g = 1.0 + self.m * (1.0 - root)
        return g * g, -self.m * g / root

    def coefficients(self, theta: float) -> tuple[list[float], list[float]]:
        """Term coefficients c_j(theta) and their theta-derivatives."""
        alpha, dalpha = self.alpha(theta)
        c, dc = [], []
        for _, _, repulsive, beta in self.terms:
            if repulsive:
                c.append(theta)
                dc.append(1.0)
            else:
                c.append(beta * self.k * alpha)
                dc.append(beta * self.k * dalpha)
        return c, dc

    def reduced_pressure(self, x, theta: float):
        """p(x, theta) = P b/(R Tc), for scalar or array x."""
        c, _ = self.coefficients(theta)
        x = np.asarray(x, dtype=float)
        return sum(cj * (x + o) ** -n for cj, (o, n, _, _) in zip(c, self.terms))

    def reduced_pressure_derivatives(self, x: float, theta: float) -> tuple[float, float, float]:
        """(p_x, p_xx, p_xxx) at (x, theta)."""
        c, _ = self.coefficients(theta)
        d1 = d2 = d3 = 0.0
        for cj, (o, n, _, _) in zip(c, self.terms):
            y = x + o
            d1 += -n * cj * y ** (-n - 1)
            d2 += n * (n + 1) * cj * y ** (-n - 2)
            d3 += -n * (n + 1) * (n + 2) * cj * y ** (-n - 3)
        return d1, d2, d3

    def ln_fugacity_coefficient(self, x: float, theta: float, p: float | None = None) -> float:
        """ln phi of the pure fluid at reduced volume ``x`` and reduced temperature ``theta``.

        ``p`` is the reduced pressure if known (a liquid's pressure computed from its volume loses
        digits at low temperature, where it is a small difference of large terms).
        """
        alpha, _ = self.alpha(theta)
        f = self.family
        if p is None:
            p = float(self.reduced_pressure(x, theta))
        z = p * x / theta
        if f.delta1 == f.delta2:
            attraction = self.k * alpha / theta / (x + f.delta1)
        else:
            attraction = self.k * alpha / theta * math.log((x + f.delta1) / (x + f.delta2)) / (f.delta1 - f.delta2)
        return z - 1.0 - math.log(p * (x - 1.0) / theta) - attraction

    def volume_roots(self, p: float, theta: float) -> np.ndarray:
        """Real roots x > 1 of p(x, theta) = p, sorted (one or three)."""
        f = self.family
        alpha, _ = self.alpha(theta)
        # p (x - 1)(x + d1)(x + d2) - theta (x + d1)(x + d2) + k alpha (x - 1) = 0
        quadratic = np.array([1.0, f.delta1 + f.delta2, f.delta1 * f.delta2])
        cubic = p * np.polymul([1.0, -1.0], quadratic) - np.concatenate(([0.0], theta * quadratic))
        cubic = cubic + np.array([0.0, 0.0, self.k * alpha, -self.k * alpha])
        roots = np.roots(cubic)
        real = np.sort(roots[np.abs(roots.imag) <= 1e-9 * np.maximum(1.0, np.abs(roots))].real)
        real = real[real > 1.0]
        polished = []
        for x in real:
            for _ in range(3):
                d1, _, _ = self.reduced_pressure_derivatives(x, theta)
                if d1 == 0.0:
                    break
                x = x - (float(self.reduced_pressure(x, theta)) - p) / d1
            polished.append(x)
        return np.array(sorted(polished))

    def spinodal_volumes(self, theta: float) -> tuple[float, float]:
        """Liquid and vapour spinodal reduced volumes (p_x = 0) below the critical temperature."""
        f = self.family
        alpha, _ = self.alpha(theta)
        quadratic = np.array([1.0, f.delta1 + f.delta2, f.delta1 * f.delta2])
        # theta D(x)^2 - k alpha D'(x) (x - 1)^2 = 0
        quartic = theta * np.polymul(quadratic, quadratic) - self.k * alpha * np.concatenate(
            ([0.0], np.polymul([2.0, f.delta1 + f.delta2], [1.0, -2.0, 1.0]))
        )
        roots = np.roots(quartic)
        real = np.sort(roots[np.abs(roots.imag) <= 1e-7 * np.abs(roots)].real)
        real = real[real > 1.0]
        if real.size < 2:
            raise InputError(f"no spinodal at T/Tc = {theta:.6g}: the temperature is at or above the critical one")
        return float(real[0]), float(real[-1])

    def saturation_at(self, theta: float) -> tuple[float, float, float]:
        """(x_liquid, x_vapour, p) of coexistence at reduced temperature ``theta`` below 1.

        Newton's method on ln P for equal fugacities (d(ln phi_l - ln phi_v)/d ln P = Z_l - Z_v),
        safeguarded by bisection inside the pressures between the two spinodals. Used for start points.
        """
        x_spin_l, x_spin_v = self.spinodal_volumes(theta)
        high = math.log(float(self.reduced_pressure(x_spin_v, theta)))
        p_spin_l = float(self.reduced_pressure(x_spin_l, theta))
        low = math.log(p_spin_l) if p_spin_l > 0.0 else high - 700.0
        omega = max(self.component.omega, -0.3)
        guess = math.log(self.family.omega_b) + 5.373 * (1.0 + omega) * (1.0 - 1.0 / theta)
        y = min(max(guess, low + 1e-9 * abs(low)), high - 1e-9 * abs(high))
        for _ in range(200):
            roots = self.volume_roots(math.exp(y), theta)
            if roots.size < 2:  # numerical edge of the three-root range: step inside
                y = 0.5 * (low + high)
                roots = self.volume_roots(math.exp(y), theta)
                if roots.size < 2:
                    break
            x_l, x_v = float(roots[0]), float(roots[-1])
            g = self.ln_fugacity_coefficient(x_l, theta, math.exp(y)) - self.ln_fugacity_coefficient(x_v, theta, math.exp(y))
            if g > 0.0:
                low = y
            else:
                high = y
            p = math.exp(y)
            slope = p * (x_l - x_v) / theta
            step = -g / slope if slope != 0.0 else 0.0
            candidate = y + step
            if not low < candidate < high:
                candidate = 0.5 * (low + high)
            if abs(candidate - y) < 1e-14 * max(1.0, abs(y)):
                return x_l, x_v, math.exp(candidate)
            y = candidate
        raise InputError(f"no saturation pressure found at T/Tc = {theta:.6g}")  # pragma: no cover


def _fluid_from(fluid, eos) -> CubicFluid:
    if isinstance(fluid, CubicFluid):
        return fluid
    component = fluid if isinstance(fluid, Component) else lookup(str(fluid))
    return CubicFluid(component, family(eos))


# ---------------------------------------------------------------------------------------------
# Symmetric functions of the two phases
# ---------------------------------------------------------------------------------------------
def _width_functions(sigma: float) -> tuple[float, float]:
    """cosh(sqrt sigma) and sinh(sqrt sigma)/sqrt sigma, continued analytically to sigma < 0."""
    if abs(sigma) < 1e-3:
        shc = 1.0 + sigma * (1.0 / 6.0 + sigma * (1.0 / 120.0 + sigma * (1.0 / 5040.0 + sigma / 362880.0)))
        ch = 1.0 + sigma * (0.5 + sigma * (1.0 / 24.0 + sigma * (1.0 / 720.0 + sigma / 40320.0)))
        return ch, shc
    if sigma > 0.0:
        s = math.sqrt(sigma)
        return math.cosh(s), math.sinh(s) / s
    s = math.sqrt(-sigma)
    return math.cos(s), math.sin(s) / s


class _Phases:
    """x_l, x_v from (mu, sigma), with w_j = m + o_j, t = d^2 and their derivatives, per term."""

    __slots__ = ("e", "ch", "shc", "t", "t_mu", "t_sigma", "w_mu", "w_sigma", "sigma", "delta")

    def __init__(self, mu: float, sigma: float) -> None:
        e = math.exp(mu)
        ch, shc = _width_functions(sigma)
        self.e, self.ch, self.shc, self.sigma = e, ch, shc, sigma
        self.t = e * e * sigma * shc * shc
        self.t_mu = 2.0 * self.t
        self.t_sigma = e * e * ch * shc
        self.w_mu = e * ch
        self.w_sigma = 0.5 * e * shc
        self.delta = math.sqrt(sigma) if sigma > 0.0 else 0.0

    def term(self, offset: float) -> tuple[float, float]:
        """(w, q) for a term with this offset; q = (x_l + o)(x_v + o) = w^2 - t without cancellation."""
        w = 1.0 + offset + self.e * self.ch
        if self.sigma > 0.0:
            q = (1.0 + offset + self.e * math.exp(-self.delta)) * (1.0 + offset + self.e * math.exp(self.delta))
        else:
            q = w * w - self.t
        return w, q

    def log_ratio(self, offset: float) -> float:
        """ln((x_v + o)/(x_l + o)) for sigma >= 0."""
        if offset == -1.0:
            return 2.0 * self.delta
        low = 1.0 + offset + self.e * math.exp(-self.delta)
        high = 1.0 + offset + self.e * math.exp(self.delta)
        return math.log(high / low)


def _psi(phases: _Phases, offset: float, w: float, q: float) -> tuple[float, float]:
    """Psi(rho) = (atanh(sqrt rho)/sqrt rho - 1)/rho and Psi'(rho) at rho = t/w^2.

    Psi = sum_k>=1 rho^(k-1)/(2k+1); its series is used near rho = 0, the closed form elsewhere
    (with Psi' = (Phi/2 - Psi)/rho, Phi = (1/(1 - rho) - A)/rho, A = atanh(sqrt rho)/sqrt rho).
    """
    rho = phases.t / (w * w)
    if abs(rho) < _SERIES_LIMIT:
        value = 0.0
        for c in reversed(_PSI_SERIES):
            value = value * rho + c
        slope = 0.0
        for c in reversed(_PSI_DERIVATIVE_SERIES):
            slope = slope * rho + c
        return value, slope
    if phases.sigma > 0.0:
        d = phases.e * math.sinh(phases.delta)
        mean = 0.5 * phases.log_ratio(offset) * w / d  # atanh(r)/r
    else:
        s = math.sqrt(-rho)
        mean = math.atan(s) / s
    value = (mean - 1.0) / rho
    phi = (w * w / q - mean) / rho
    return value, (0.5 * phi - value) / rho


def _saturation_terms(phases: _Phases, offset: float, order: int) -> tuple[float, ...]:
    """One partial-fraction term (x + o)^-order (order 1 or 2) of the three coexistence functions.

    Returns (D1, D1_mu, D1_sigma, H, H_mu, H_sigma, K, K_mu, K_sigma) with

    - D1 = [f(x_v) - f(x_l)]/(2d), the divided difference (equal pressures);
    - H = D2 - D1/W, D2 = [mean of f - (f(x_l) + f(x_v))/2]/d^2 (equal area), W = m - 1. Subtracting
      D1/W removes the steep liquid pressure that D1 and D2 share at low temperature (which would make
      the two equations nearly parallel), without cancellation: H = Psi(rho)/w^3 + (1 + o)/(q w W);
    - K = (f(x_l) + f(x_v))/2 + W D1, equal to the mean pressure where D1 = 0 but free of the
      cancellation in the liquid pressure: (1 + o)/q for order 1.
    """
    w, q = phases.term(offset)
    t = phases.t
    if phases.sigma > 0.0 and t >= _SERIES_LIMIT * w * w:
        return _wide_saturation_terms(phases, offset, order)
    W = phases.e * phases.ch
    s = 1.0 + offset
    w_mu, w_s, t_mu, t_s = phases.w_mu, phases.w_sigma, phases.t_mu, phases.t_sigma
    iq = 1.0 / q
    iq2 = iq * iq
    if order == 1:
        d1, d1w, d1t = -iq, 2.0 * w * iq2, -iq2
        psi, dpsi = _psi(phases, offset, w, q)
        w3 = w * w * w
        h = psi / w3
        hw = -2.0 * t * dpsi / (w3 * w3) - 3.0 * psi / (w3 * w)
        ht = dpsi / (w3 * w * w)
        if s != 0.0:
            h += s * iq / (w * W)
            hw += -s * (q + 2.0 * w * w) * iq2 / (w * w * W) - s * iq / (w * W * W)
            ht += s * iq2 / (w * W)
        k, kw, kt, k_mu = s * iq, -2.0 * w * s * iq2, s * iq2, 0.0
    else:
        iq3 = iq2 * iq
        d1, d1w, d1t = -2.0 * w * iq2, -2.0 * iq2 + 8.0 * w * w * iq3, -4.0 * w * iq3
        h = 2.0 * s * iq2 / W
        hw = -8.0 * s * w * iq3 / W - 2.0 * s * iq2 / (W * W)
        ht = 4.0 * s * iq3 / W
        big = phases.e * phases.e  # W^2 - t = (x_l - 1)(x_v - 1)
        k = (s * s - big) * iq2
        kw, kt, k_mu = -4.0 * w * (s * s - big) * iq3, 2.0 * (s * s - big) * iq3, -2.0 * big * iq2
    return (
        d1, d1w * w_mu + d1t * t_mu, d1w * w_s + d1t * t_s,
        h, hw * w_mu + ht * t_mu, hw * w_s + ht * t_s,
        k, kw * w_mu + kt * t_mu + k_mu, kw * w_s + kt * t_s,
    )


def _wide_saturation_terms(phases: _Phases, offset: float, order: int) -> tuple[float, ...]:
    """:func:`_saturation_terms` for well-separated phases, differentiated through x_l and x_v.

    At low temperature x_l + o = w - d is a small difference of large numbers, so derivatives taken
    through (w, t) would cancel; here every quantity is written in pl = x_l + o and pv = x_v + o.
    """
    e, delta = phases.e, phases.delta
    yl, yv = e * math.exp(-delta), e * math.exp(delta)  # x_l - 1, x_v - 1
    s = 1.0 + offset
    pl, pv = yl + s, yv + s
    W = 0.5 * (yl + yv)
    q = pl * pv
    if order == 1:
        d1, d1_l, d1_v = -1.0 / q, 1.0 / (pl * q), 1.0 / (pv * q)
        d = 0.5 * (pv - pl)
        w = 0.5 * (pv + pl)
        L = 2.0 * delta if offset == -1.0 else math.log(pv / pl)
        d2, d3, d4 = d * d, d * d * d, d * d * d * d
        h = L / (2.0 * d3) - 1.0 / (d2 * w)
        common = 1.0 / (d3 * w)
        h_v = 1.0 / (2.0 * pv * d3) - 3.0 * L / (4.0 * d4) + common + 0.5 / (d2 * w * w)
        h_l = -1.0 / (2.0 * pl * d3) + 3.0 * L / (4.0 * d4) - common + 0.5 / (d2 * w * w)
        if s != 0.0:
            extra = s / (q * w * W)
            h += extra
            h_l += -extra / pl - 0.5 * extra / w - 0.5 * extra / W
            h_v += -extra / pv - 0.5 * extra / w - 0.5 * extra / W
        k, k_l, k_v = s / q, -s / (pl * q), -s / (pv * q)
    else:
        q2 = q * q
        d1 = -(pl + pv) / q2
        d1_l = -1.0 / q2 + 2.0 * (pl + pv) / (pl * q2)
        d1_v = -1.0 / q2 + 2.0 * (pl + pv) / (pv * q2)
        h = 2.0 * s / (q2 * W)
        h_l = -2.0 * h / pl - 0.5 * h / W
        h_v = -2.0 * h / pv - 0.5 * h / W
        big = yl * yv
        k = (s * s - big) / q2
        k_l = -yv / q2 - 2.0 * k / pl
        k_v = -yl / q2 - 2.0 * k / pv
    half = 0.5 / delta

    def chain(dl: float, dv: float) -> tuple[float, float]:
        return dl * yl + dv * yv, (dv * yv - dl * yl) * half

    d1_mu, d1_s = chain(d1_l, d1_v)
    h_mu, h_s = chain(h_l, h_v)
    k_mu, k_s = chain(k_l, k_v)
    return d1, d1_mu, d1_s, h, h_mu, h_s, k, k_mu, k_s


def _spinodal_terms(phases: _Phases, offset: float, order: int):
    """Per term of p_x: (D1, D1_w, D1_t, Pm, Pm_w, Pm_t) for (x + o)^-order, order 2 or 3."""
    w, q = phases.term(offset)
    t = phases.t
    iq = 1.0 / q
    iq2 = iq * iq
    iq3 = iq2 * iq
    w2 = w * w
    if order == 2:
        return (
            -2.0 * w * iq2, -2.0 * iq2 + 8.0 * w2 * iq3, -4.0 * w * iq3,
            (w2 + t) * iq2, 2.0 * w * iq2 - 4.0 * w * (w2 + t) * iq3, iq2 + 2.0 * (w2 + t) * iq3,
        )
    iq4 = iq3 * iq
    a = 3.0 * w2 + t
    b = w2 + 3.0 * t
    return (
        -a * iq3, -6.0 * w * iq3 + 6.0 * w * a * iq4, -iq3 - 3.0 * a * iq4,
        w * b * iq3, 3.0 * (w2 + t) * iq3 - 6.0 * w2 * b * iq4, 3.0 * w * iq3 + 3.0 * w * b * iq4,
    )


# ---------------------------------------------------------------------------------------------
# The systems handed to the engine
# ---------------------------------------------------------------------------------------------
SATURATION_UNKNOWNS = ("mean_log_volume", "log_width_squared", "log_pressure")
SPINODAL_UNKNOWNS = ("mean_log_volume", "log_width_squared")
FREE = "reduced_temperature"


class _CurveSystem(contin.System):
    """A pure-fluid system whose one evaluation gives the residual and both Jacobians exactly."""

    def __init__(self, fluid: CubicFluid, unknowns: tuple[str, ...], equations: tuple[str, ...]) -> None:
        self.fluid = fluid
        self.unknowns = unknowns
        self.parameters = (FREE,)
        self.parameter_values = np.array([DEFAULT_FROM_REDUCED_TEMPERATURE])
        self.start = None
        self.equations = equations
        self.kind = "algebraic"

    def evaluate(self, u: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(F, dF/du, dF/d theta)."""
        raise NotImplementedError

    def residual(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        return self.evaluate(u, p)[0]

    def linearise(self, u: np.ndarray, p: np.ndarray, free: int):
        return self.evaluate(u, p)

    def parameter_jacobian(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        return self.evaluate(u, p)[2][:, None]


class SaturationSystem(_CurveSystem):
    """Coexistence of a pure fluid, with analytic Jacobians.

    Unknowns: ``mean_log_volume`` mu = (a_l + a_v)/2, ``log_width_squared`` sigma = ((a_v - a_l)/2)^2
    with a = ln(v/b - 1), and ``log_pressure`` pi = ln(P b/(R Tc)); parameter ``reduced_temperature``
    T/Tc. Equations, each scaled to order one along the whole curve:

    - ``equal_pressure``: e^(2 mu) E1 = 0;
    - ``equal_area``: W^3 (E2 - E1/W) = 0 with W = m - 1 (the combination keeps the two rows apart at
      low temperature, where both are dominated by the steep liquid pressure);
    - ``pressure``: (Pmean + W E1) e^-pi - 1 = 0, the mean pressure where E1 = 0, written without
      the liquid pressure's cancellation.
    """

    def __init__(self, fluid: CubicFluid) -> None:
        super().__init__(fluid, SATURATION_UNKNOWNS, ("equal_pressure", "equal_area", "pressure"))

    def evaluate(self, u, p):
        mu, sigma, pi = float(u[0]), float(u[1]), float(u[2])
        c, dc = self.fluid.coefficients(float(p[0]))
        ph = _Phases(mu, sigma)
        e1 = e1_mu = e1_s = e1_th = 0.0
        h = h_mu = h_s = h_th = 0.0
        k = k_mu = k_s = k_th = 0.0
        for cj, dcj, (offset, order, _, _) in zip(c, dc, self.fluid.terms):
            d1, d1_mu, d1_s, hj, hj_mu, hj_s, kj, kj_mu, kj_s = _saturation_terms(ph, offset, order)
            e1 += cj * d1
            e1_mu += cj * d1_mu
            e1_s += cj * d1_s
            e1_th += dcj * d1
            h += cj * hj
            h_mu += cj * hj_mu
            h_s += cj * hj_s
            h_th += dcj * hj
            k += cj * kj
            k_mu += cj * kj_mu
            k_s += cj * kj_s
            k_th += dcj * kj
        e = ph.e
        s1 = e * e
        W = e * ph.ch
        s2 = W * W * W
        s2_s = 1.5 * W * W * e * ph.shc
        scale = math.exp(-pi)
        f = np.array([s1 * e1, s2 * h, k * scale - 1.0])
        jacobian = np.array(
            [
                [2.0 * s1 * e1 + s1 * e1_mu, s1 * e1_s, 0.0],
                [3.0 * s2 * h + s2 * h_mu, s2_s * h + s2 * h_s, 0.0],
                [k_mu * scale, k_s * scale, -k * scale],
            ]
        )
        return f, jacobian, np.array([s1 * e1_th, s2 * h_th, k_th * scale])


class SpinodalSystem(_CurveSystem):
    """Both spinodals (p_x = 0) of a pure fluid as one system, with analytic Jacobians.

    Unknowns as for :class:`SaturationSystem` without the pressure; equations e^(3 mu) times the
    divided difference of p_x over (x_l, x_v), and e^(2 mu) times the mean of p_x at the two ends.
    Both are symmetric in the two roots, so the double root at the critical point is removed.
    """

    def __init__(self, fluid: CubicFluid) -> None:
        super().__init__(fluid, SPINODAL_UNKNOWNS, ("divided_difference_of_slope", "mean_slope"))
        # p_x = sum_j -n_j c_j (x + o_j)^-(n_j + 1)
        self.slope_terms = tuple((o, n + 1, -float(n)) for o, n, _, _ in fluid.terms)

    def evaluate(self, u, p):
        mu, sigma = float(u[0]), float(u[1])
        c, dc = self.fluid.coefficients(float(p[0]))
        ph = _Phases(mu, sigma)
        g1 = g1_mu = g1_s = g1_th = 0.0
        g2 = g2_mu = g2_s = g2_th = 0.0
        for cj, dcj, (offset, order, factor) in zip(c, dc, self.slope_terms):
            d1, d1w, d1t, m, mw, mt = _spinodal_terms(ph, offset, order)
            cj, dcj = factor * cj, factor * dcj
            g1 += cj * d1
            g2 += cj * m
            g1_th += dcj * d1
            g2_th += dcj * m
            g1_mu += cj * (d1w * ph.w_mu + d1t * ph.t_mu)
            g1_s += cj * (d1w * ph.w_sigma + d1t * ph.t_sigma)
            g2_mu += cj * (mw * ph.w_mu + mt * ph.t_mu)
            g2_s += cj * (mw * ph.w_sigma + mt * ph.t_sigma)
        e = ph.e
        s1 = e * e * e
        s2 = e * e
        f = np.array([s1 * g1, s2 * g2])
        jacobian = np.array([[3.0 * s1 * g1 + s1 * g1_mu, s1 * g1_s], [2.0 * s2 * g2 + s2 * g2_mu, s2 * g2_s]])
        return f, jacobian, np.array([s1 * g1_th, s2 * g2_th])


# ---------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class CurveResult:
    """A pure-fluid result in SI units: rows in ``columns``, special points, rows at requested values.

    Attributes:
        kind: ``"saturation"``, ``"spinodal"`` or ``"critical"``.
        component: the fluid.
        family: the cubic equation of state.
        columns: column names; ``units`` maps each to its unit.
        points: array (N, len(columns)).
        special_points: dicts with ``kind``, ``name``, ``index`` (row in ``points``) and ``values``.
        at: array (M, len(columns)): rows at requested temperatures and pressures, sorted by T.
        status, message: the engine's termination status label and message.
        stats: timing and counting statistics (``setup_seconds``, ``trace_seconds``,
            ``newton_iterations``, ``jacobian_evaluations``, ...).
        caution: the caution that goes with every thermodynamic result.
    """

    kind: str
    component: Component
    family: CubicFamily
    columns: tuple[str, ...]
    units: dict
    points: np.ndarray
    special_points: tuple[dict, ...]
    at: np.ndarray
    status: str
    message: str
    stats: dict
    caution: str = CAUTION

    @property
    def success(self) -> bool:
        """Whether the curve was completed."""
        return self.status == "solved" or (self.status == "terminal_event" and any(
            p["kind"] == "critical" for p in self.special_points))

    def column(self, name: str) -> np.ndarray:
        """One column of ``points`` by name."""
        if name not in self.columns:
            from contin.base import suggest

            raise InputError(f"no column {name!r}; columns: {', '.join(self.columns)}{suggest(name, self.columns)}")
        return self.points[:, self.columns.index(name)]

    def special(self, kind: str) -> dict:
        """The first special point of ``kind`` (e.g. ``"critical"``)."""
        for point in self.special_points:
            if point["kind"] == kind:
                return point
        raise InputError(f"no special point of kind {kind!r} in this {self.kind} result")

    def to_dict(self) -> dict:
        """The JSON layout of docs/contracts.md, with ``caution``, ``fluid`` and ``eos`` keys added."""
        c = self.component
        return contin.json_document(
            self.status, self.message, self.columns, self.points.tolist(), self.special_points,
            self.at.tolist(), self.stats, caution=self.caution, kind=self.kind, units=self.units,
            fluid={"name": c.name, "Tc": c.Tc, "Pc": c.Pc, "omega": c.omega, "source": c.source},
            eos={"name": self.family.name, "label": self.family.label, "reference": self.family.reference},
        )

    def csv(self, units: str = "si") -> str:
        """CSV text: caution and units as comment lines, then the points (and no at rows).

        Args:
            units: ``"si"`` (K, Pa), ``"degC-bar"`` or ``"degF-psia"`` for temperatures and pressures.
        """
        from ..models._units import convert_rows, output_units

        c = self.component
        notes = [f"fluid: {c.name} (Tc = {c.Tc:g} K, Pc = {c.Pc:g} Pa, omega = {c.omega:g}; {c.source})",
                 f"equation of state: {self.family.label} ({self.family.reference})", *translation_notes(self.stats)]
        rows, names = convert_rows(self.columns, self.points.tolist(), self.units, output_units(units))
        return csv_text(self.columns, rows, names, title=f"{self.kind} curve", notes=notes)

    def to_csv(self, path: str | Path, units: str = "si") -> Path:
        """Write :meth:`csv` atomically to ``path``."""
        return atomic_write_text(path, self.csv(units))

    def plot(self, figure=None):
        """Draw the result (P-T and T-rho, or the spinodals) and return the two matplotlib axes."""
        from ..reports._plot_pure import draw_pure

        return draw_pure(self, figure)

    def to_dataframe(self):
        """The points as a pandas DataFrame in SI units (pandas is not a dependency: install it to use this)."""
        try:
            import pandas
        except ImportError as error:
            raise InputError("to_dataframe needs pandas, which contin does not install: pip install pandas") from error
        return pandas.DataFrame(self.points, columns=list(self.columns))

    def __repr__(self) -> str:
        critical = next((p["values"] for p in self.special_points if p["kind"] == "critical"), None)
        where = f"; critical point T = {critical['T']:.6g} K, P = {critical['P']:.6g} Pa" if critical else ""
        return (f"<{self.kind} of {self.component.name} ({self.family.label}): {len(self.points)} points"
                f"{where}; status {self.status}>")


# ---------------------------------------------------------------------------------------------
# Driving the engine
# ---------------------------------------------------------------------------------------------
_CRITICAL_EVENT = contin.Event("critical point", lambda u, p: u[1], direction=-1, terminal=True, kind="critical")


def _as_values(values, argument: str) -> list[float]:
    out = []
    for v in values or ():
        try:
            number = float(v)
        except (TypeError, ValueError):
            raise InputError(f"{argument}: {v!r} is not a number") from None
        if not math.isfinite(number):
            raise InputError(f"{argument}: {v!r} is not a finite number")
        out.append(number)
    return sorted(out)


def _start_theta(fluid: CubicFluid, from_temperature: float | None) -> float:
    Tc = fluid.component.Tc
    if from_temperature is None:
        return DEFAULT_FROM_REDUCED_TEMPERATURE
    T = float(from_temperature)
    if not math.isfinite(T) or T <= 0.0:
        raise InputError(f"--from-temperature {from_temperature!r} must be a positive temperature in K")
    if T >= Tc:
        raise InputError(
            f"--from-temperature {T:g} K is not below the critical temperature {Tc:g} K of {fluid.component.name}; "
            "the curves run from a lower temperature up to the critical point"
        )
    if T < 0.1 * Tc:
        raise InputError(
            f"--from-temperature {T:g} K is below 0.1 Tc = {0.1 * Tc:g} K; start at or above that "
            "(a cubic equation of state means little there)"
        )
    return T / Tc


def _polish_critical(system: _CurveSystem, u: np.ndarray, theta: float, tolerance: float = 1e-14):
    """Pin the landing point to sigma = 0 exactly: Newton on the other unknowns and theta."""
    keep = [i for i in range(len(u)) if i != 1]
    u = np.array(u, dtype=float)
    u[1] = 0.0
    p = np.array([theta])
    iterations = 0
    last = math.inf  # the last Newton step: how well the point is known
    for iterations in range(1, 11):
        f, jacobian, column = system.evaluate(u, p)
        matrix = np.column_stack([jacobian[:, keep], column])
        try:
            step = np.linalg.solve(matrix, -f)
        except np.linalg.LinAlgError:
            break
        if not np.all(np.isfinite(step)):
            break
        u[keep] += step[:-1]
        p[0] += step[-1]
        last = float(np.max(np.abs(step)))
        if last < tolerance:
            break
    residual = float(np.max(np.abs(system.evaluate(u, p)[0])))
    return u, float(p[0]), iterations, residual, last


def _trace(system: _CurveSystem, u0, theta0, at, tolerance, max_step, on_point=None):
    return contin.trace(
        system, np.asarray(u0, dtype=float), free=FREE, parameters={FREE: theta0}, events=[_CRITICAL_EVENT],
        at=at, step=0.05, max_step=max_step, tolerance=tolerance, max_points=5000, on_point=on_point,
    )


def _stats(branch: contin.Branch, extra_seconds: float, extra_iterations: int) -> dict:
    stats = dict(branch.stats)
    stats["setup_seconds"] = float(stats.get("setup_seconds", 0.0)) + extra_seconds
    stats["newton_iterations"] = int(stats.get("newton_iterations", 0)) + extra_iterations
    points = max(int(stats.get("points", len(branch.points))), 1)
    stats["newton_iterations_per_point"] = stats["newton_iterations"] / points
    return stats


def _snap(row: list[float], requested: dict[int, list[float]]) -> list[float]:
    """Show a requested value exactly where the located row differs from it only by rounding
    (the engine locates T/Tc and ln P; converting back costs an ulp or two)."""
    for column, values in requested.items():
        for value in values:
            if abs(row[column] - value) <= 1e-13 * abs(value):
                row[column] = value
    return row


def _saturation_row(fluid: CubicFluid, x: np.ndarray) -> list[float]:
    """Output row from engine coordinates (mu, sigma, pi, theta)."""
    mu, sigma, pi, theta = (float(v) for v in x)
    sigma = max(sigma, 0.0)
    ph = _Phases(mu, sigma)
    x_l = 1.0 + ph.e * math.exp(-ph.delta)
    x_v = 1.0 + ph.e * math.exp(ph.delta)
    b = fluid.b
    T = theta * fluid.component.Tc
    _, dc = fluid.coefficients(theta)
    # Clapeyron: h = T (v_v - v_l) dP/dT = R T * sum_j dc_j/dtheta * 2d * mean of (x + o_j)^-n_j
    total = 0.0
    for dcj, (offset, order, _, _) in zip(dc, fluid.terms):
        if ph.delta == 0.0:
            continue
        if order == 1:
            total += dcj * ph.log_ratio(offset)
        else:
            total += dcj * 2.0 * ph.e * math.sinh(ph.delta) / ((x_l + offset) * (x_v + offset))
    P = math.exp(pi) * fluid.pressure_unit
    return [T, P, b * x_l, b * x_v, 1.0 / (b * x_l), 1.0 / (b * x_v), GAS_CONSTANT * T * total]


def _spinodal_row(fluid: CubicFluid, x: np.ndarray) -> list[float]:
    mu, sigma, theta = (float(v) for v in x)
    ph = _Phases(mu, max(sigma, 0.0))
    x_l = 1.0 + ph.e * math.exp(-ph.delta)
    x_v = 1.0 + ph.e * math.exp(ph.delta)
    unit = fluid.pressure_unit
    return [theta * fluid.component.Tc, fluid.b * x_l, float(fluid.reduced_pressure(x_l, theta)) * unit,
            fluid.b * x_v, float(fluid.reduced_pressure(x_v, theta)) * unit]


def _check_temperatures(fluid: CubicFluid, temperatures: list[float], theta0: float) -> None:
    Tc = fluid.component.Tc
    for T in temperatures:
        if T > Tc:
            raise InputError(
                f"--at-temperatures: {T:g} K is above the critical temperature {Tc:g} K of {fluid.component.name}; "
                "there is no coexistence there"
            )
        if T < theta0 * Tc:
            raise InputError(
                f"--at-temperatures: {T:g} K is below the traced range, which starts at {theta0 * Tc:g} K; "
                "lower --from-temperature or drop the value"
            )


def saturation_curve(
    fluid,
    eos: str | CubicFamily = "pr",
    *,
    from_temperature: float | None = None,
    at_temperatures: Sequence[float] = (),
    at_pressures: Sequence[float] = (),
    tolerance: float = 1e-12,
    max_step: float = 0.5,
    on_point=None,
) -> CurveResult:
    """The vapour-liquid coexistence curve of a pure fluid, from a low temperature to the critical point.

    The branch is traced by :func:`contin.trace` on :class:`SaturationSystem` and ends with a terminal
    event exactly on the equation of state's own critical point (then pinned there by a Newton solve
    with the phase width set to zero).

    Args:
        fluid: a component name or alias, a :class:`Component`, or a :class:`CubicFluid`.
        eos: ``vdw``, ``rk``, ``srk`` or ``pr`` (or a :class:`CubicFamily`).
        from_temperature: lowest temperature, K (default 0.4 Tc; at least 0.1 Tc, below Tc).
        at_temperatures: temperatures (K) at which rows are returned exactly, within the range.
        at_pressures: pressures (Pa) at which rows are returned exactly (e.g. 101325 for the normal
            boiling point), between the pressure at ``from_temperature`` and Pc.
        tolerance: Newton tolerance on the residuals (scaled to order one).
        max_step: longest continuation step.
        on_point: passed to :func:`contin.trace` (e.g. a :class:`contin.Progress`).

    Returns:
        :class:`CurveResult` with columns T, P, v_liquid, v_vapour, rho_liquid, rho_vapour,
        h_vaporisation (K, Pa, m^3/mol, mol/m^3, J/mol) and the special point ``critical`` (T, P, v).

    Raises:
        InputError: unknown fluid or equation of state, a start temperature out of range, a requested
            temperature above Tc or below the range, a requested pressure above Pc or below the range.
    """
    import time

    began = time.perf_counter()
    pure = _fluid_from(fluid, eos)
    theta0 = _start_theta(pure, from_temperature)
    temperatures = _as_values(at_temperatures, "--at-temperatures")
    pressures = _as_values(at_pressures, "--at-pressures")
    _check_temperatures(pure, temperatures, theta0)
    x_l, x_v, p0 = pure.saturation_at(theta0)
    Pc, unit = pure.component.Pc, pure.pressure_unit
    for P in pressures:
        if P <= 0.0:
            raise InputError(f"--at-pressures: {P:g} Pa is not a positive pressure")
        if P > Pc * (1.0 + 1e-12):
            raise InputError(
                f"--at-pressures: {P:g} Pa is above the critical pressure {Pc:g} Pa of {pure.component.name}; "
                "there is no coexistence there"
            )
        if P < p0 * unit:
            raise InputError(
                f"--at-pressures: {P:g} Pa is below the traced range, which starts at {p0 * unit:g} Pa "
                f"(T = {theta0 * pure.component.Tc:g} K); lower --from-temperature"
            )
    a_l, a_v = math.log(x_l - 1.0), math.log(x_v - 1.0)
    u0 = [0.5 * (a_l + a_v), (0.5 * (a_v - a_l)) ** 2, math.log(p0)]
    at = {}
    inner_t = [T / pure.component.Tc for T in temperatures if T < pure.component.Tc]
    inner_p = [math.log(P / unit) for P in pressures if P < Pc]
    if inner_t:
        at[FREE] = inner_t
    if inner_p:
        at["log_pressure"] = inner_p
    system = SaturationSystem(pure)
    setup = time.perf_counter() - began
    branch = _trace(system, u0, theta0, at, tolerance, max_step, on_point)
    row = lambda x: _saturation_row(pure, x)  # noqa: E731
    points = [row(x) for x in branch.points]
    special, extra_iterations, critical_row = _pin_critical(system, branch, points, row, {"T": 0, "P": 1, "v": 2})
    at_rows = [_snap(_saturation_row(pure, sp.point), {0: temperatures, 1: pressures}) for sp in branch.at]
    if critical_row is not None:
        at_rows += [critical_row for T in temperatures if T >= pure.component.Tc]
        at_rows += [critical_row for P in pressures if P >= Pc]
    at_rows.sort(key=lambda row: (row[0], row[1]))
    status = str(branch.status)
    return CurveResult(
        "saturation", pure.component, pure.family, SATURATION_COLUMNS, dict(SATURATION_UNITS),
        np.array(points), tuple(special), np.array(at_rows).reshape(-1, len(SATURATION_COLUMNS)),
        status, _message(branch, critical_row is not None), _stats(branch, setup, extra_iterations),
    )


def _pin_critical(system, branch: contin.Branch, points: list, row, columns: dict):
    """Put the branch's last point exactly on the critical point (Newton with zero phase width).

    Replaces that row of ``points`` in place; returns (special points, extra Newton iterations, the
    critical row or None). ``columns`` maps T, P, v to their positions in a row.
    """
    special, extra_iterations, critical_row = [], 0, None
    n = len(system.unknowns)
    for sp in branch.special_points:
        if sp.kind != "critical":
            continue
        u, theta, iterations, residual, last_step = _polish_critical(system, sp.point[:n], float(sp.point[n]))
        extra_iterations += iterations
        critical_row = row(np.append(u, theta))
        points[sp.index] = critical_row
        special.append({
            "kind": "critical", "name": "critical point", "index": sp.index,
            "values": {name: critical_row[k] for name, k in columns.items()},
            "residual_norm": residual, "newton_iterations": iterations, "located_to": last_step,
        })
    return special, extra_iterations, critical_row


def _message(branch: contin.Branch, landed: bool) -> str:
    if landed:
        return "completed: traced up to and onto the critical point"
    return branch.message


def spinodal_curve(
    fluid,
    eos: str | CubicFamily = "pr",
    *,
    from_temperature: float | None = None,
    at_temperatures: Sequence[float] = (),
    tolerance: float = 1e-12,
    max_step: float = 0.5,
    on_point=None,
) -> CurveResult:
    """Liquid and vapour spinodals (dP/dv = 0 at fixed T) of a pure fluid, meeting at the critical point.

    Args:
        fluid, eos, from_temperature, tolerance, max_step: as for :func:`saturation_curve`.
        at_temperatures: temperatures (K) at which rows are returned exactly.

    Returns:
        :class:`CurveResult` with columns T, v_liquid_spinodal, P_liquid_spinodal, v_vapour_spinodal,
        P_vapour_spinodal (K, m^3/mol, Pa) and the special point ``critical`` (T, P, v).

    Raises:
        InputError: as for :func:`saturation_curve`.
    """
    import time

    began = time.perf_counter()
    pure = _fluid_from(fluid, eos)
    theta0 = _start_theta(pure, from_temperature)
    temperatures = _as_values(at_temperatures, "--at-temperatures")
    _check_temperatures(pure, temperatures, theta0)
    x_l, x_v = pure.spinodal_volumes(theta0)
    a_l, a_v = math.log(x_l - 1.0), math.log(x_v - 1.0)
    u0 = [0.5 * (a_l + a_v), (0.5 * (a_v - a_l)) ** 2]
    inner = [T / pure.component.Tc for T in temperatures if T < pure.component.Tc]
    system = SpinodalSystem(pure)
    setup = time.perf_counter() - began
    branch = _trace(system, u0, theta0, {FREE: inner} if inner else {}, tolerance, max_step, on_point)
    row = lambda x: _spinodal_row(pure, x)  # noqa: E731
    points = [row(x) for x in branch.points]
    special, extra_iterations, critical_row = _pin_critical(system, branch, points, row, {"T": 0, "P": 2, "v": 1})
    at_rows = [_snap(_spinodal_row(pure, sp.point), {0: temperatures}) for sp in branch.at]
    if critical_row is not None:
        at_rows += [critical_row for T in temperatures if T >= pure.component.Tc]
    at_rows.sort(key=lambda row: row[0])
    status = str(branch.status)
    return CurveResult(
        "spinodal", pure.component, pure.family, SPINODAL_COLUMNS, dict(SPINODAL_UNITS),
        np.array(points), tuple(special), np.array(at_rows).reshape(-1, len(SPINODAL_COLUMNS)),
        status, _message(branch, critical_row is not None), _stats(branch, setup, extra_iterations),
    )


def critical_point(fluid, eos: str | CubicFamily = "pr", *, tolerance: float = 1e-15) -> CurveResult:
    """The critical point of a pure fluid from dP/dv = d2P/dv2 = 0, solved independently of any trace.

    Newton's method on (v, T) from a guess 10 % off the closed form; the result is compared with the
    closed form T = Tc, P = Pc, v = Z_c R Tc/Pc (true by construction of Omega_a, Omega_b) in the
    special point's ``info``.

    Returns:
        :class:`CurveResult` with one row in columns T, P, v, rho, Z and the special point ``critical``.

    Raises:
        InputError: unknown fluid or equation of state; no convergence (not expected).
    """
    import time

    began = time.perf_counter()
    pure = _fluid_from(fluid, eos)
    f = pure.family
    x, theta = 1.1 * f.z_c / f.omega_b, 1.1
    iterations = 0
    h = 1e-7
    for iterations in range(1, 51):
        d1, d2, d3 = pure.reduced_pressure_derivatives(x, theta)
        up = pure.reduced_pressure_derivatives(x, theta + h)
        down = pure.reduced_pressure_derivatives(x, theta - h)
        # d/dtheta of (p_x, p_xx): p is linear in theta and alpha, so central differences are exact to h^2
        matrix = np.array([[d2, (up[0] - down[0]) / (2 * h)], [d3, (up[1] - down[1]) / (2 * h)]])
        step = np.linalg.solve(matrix, [-d1, -d2])
        x += float(step[0])
        theta += float(step[1])
        if abs(step[0]) < tolerance * x and abs(step[1]) < tolerance:
            break
    else:  # pragma: no cover
        raise InputError(f"the critical-point solve for {pure.component.name} did not converge")
    d1, d2, _ = pure.reduced_pressure_derivatives(x, theta)
    T = theta * pure.component.Tc
    P = float(pure.reduced_pressure(x, theta)) * pure.pressure_unit
    v = x * pure.b
    row = [T, P, v, 1.0 / v, P * v / (GAS_CONSTANT * T)]
    closed = {"T": pure.component.Tc, "P": pure.component.Pc,
              "v": f.z_c * GAS_CONSTANT * pure.component.Tc / pure.component.Pc, "Z": f.z_c}
    special = ({
        "kind": "critical", "name": "critical point", "index": 0, "values": {"T": T, "P": P, "v": v},
        "residual_norm": max(abs(d1), abs(d2)), "newton_iterations": iterations, "located_to": 0.0,
        "info": {"closed_form": closed},
    },)
    seconds = time.perf_counter() - began
    stats = {"setup_seconds": 0.0, "trace_seconds": seconds, "newton_iterations": iterations,
             "jacobian_evaluations": iterations, "points": 1}
    return CurveResult(
        "critical", pure.component, pure.family, CRITICAL_COLUMNS, dict(CRITICAL_UNITS), np.array([row]),
        special, np.empty((0, len(CRITICAL_COLUMNS))), "solved",
        "critical point solved from dP/dv = d2P/dv2 = 0", stats,
    )
