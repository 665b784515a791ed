"""Cubic equations of state in the general two-constant form.

Every family shares one pressure law,

    P = R T / (v - b) - a(T) / ((v + delta1 b) (v + delta2 b)),    a(T) = a_c alpha(T),

and differs in the two roots ``delta1``, ``delta2`` of the attractive-term denominator and in the
temperature function alpha. The critical-point constants Omega_a, Omega_b and Z_c of each family are
not typed in: they follow from ``delta1`` and ``delta2`` alone (the critical conditions dP/dv =
d2P/dv2 = 0 make the cubic in Z a perfect cube) and are computed once, to machine precision, when the
family is built.

References:
    van der Waals, J. D. (1873), Over de continuiteit van den gas- en vloeistoftoestand (thesis, Leiden).
    Redlich, O. and Kwong, J. N. S. (1949), Chem. Rev. 44, 233.
    Soave, G. (1972), Chem. Eng. Sci. 27, 1197 (Soave-Redlich-Kwong, m(omega)).
    Peng, D.-Y. and Robinson, D. B. (1976), Ind. Eng. Chem. Fundam. 15, 59 (1976 m(omega)).
    Robinson, D. B. and Peng, D.-Y. (1978), GPA Research Report RR-28 (m(omega) for omega > 0.49).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.polynomial import Polynomial

from contin import InputError
from contin.base import suggest

__all__ = ["GAS_CONSTANT", "CubicFamily", "FAMILIES", "family", "critical_constants"]

#: Molar gas constant, J/(mol K): exact since the 2019 SI redefinition (Avogadro x Boltzmann constants).
GAS_CONSTANT = 8.31446261815324

# Peng & Robinson (1976) and Robinson & Peng (1978) m(omega); Soave (1972) m(omega).
_PR1976 = (0.37464, 1.54226, -0.26992)
_PR1978 = (0.379642, 1.48503, -0.164423, 0.016666)
_SRK = (0.480, 1.574, -0.176)
_PR1978_FROM_OMEGA = 0.49


def critical_constants(delta1: float, delta2: float) -> tuple[float, float, float]:
    """Omega_a, Omega_b and Z_c of the cubic with attractive-term roots ``delta1``, ``delta2``.

    At the critical point the cubic in Z,
    Z^3 + (uB - B - 1) Z^2 + (A + wB^2 - uB - uB^2) Z - (AB + wB^2 + wB^3) = 0 with
    u = delta1 + delta2, w = delta1 delta2, A = a P/(RT)^2 and B = b P/(RT), has a triple root Z_c.
    Matching coefficients gives Z_c = (1 + B - uB)/3, A = 3 Z_c^2 + uB + (u - w) B^2 and one cubic
    polynomial in B, whose root in (0, Z_c) is Omega_b; a Newton polish takes it to machine precision.

    Args:
        delta1, delta2: roots of the attractive-term denominator (v + delta1 b)(v + delta2 b).

    Returns:
        (omega_a, omega_b, z_c).

    Raises:
        InputError: if delta1 < delta2 or delta2 <= -1, or no physical root exists.
    """
    if not (delta1 >= delta2 > -1.0):
        raise InputError(
            f"delta1={delta1!r}, delta2={delta2!r}: need delta1 >= delta2 > -1 so that the attractive "
            "denominator (v + delta1 b)(v + delta2 b) stays positive for every v > b"
        )
    u = delta1 + delta2
    w = delta1 * delta2
    zc = Polynomial([1.0 / 3.0, (1.0 - u) / 3.0])
    big_a = 3.0 * zc**2 + Polynomial([0.0, u, u - w])
    condition = zc**3 - big_a * Polynomial([0.0, 1.0]) - Polynomial([0.0, 0.0, w, w])
    candidates = sorted(
        r.real for r in condition.roots() if abs(r.imag) < 1e-9 and 0.0 < r.real < zc(r.real)
    )
    if not candidates:
        raise InputError(f"delta1={delta1!r}, delta2={delta2!r} give no cubic with a physical critical point")
    b = candidates[0]
    slope = condition.deriv()
    for _ in range(3):  # Newton polish of the polynomial root
        b -= condition(b) / slope(b)
    return float(big_a(b)), float(b), float(zc(b))


@dataclass(frozen=True)
class CubicFamily:
    """One cubic equation of state of the general two-constant form.

    Attributes:
        name: short name used on the command line: ``vdw``, ``rk``, ``srk`` or ``pr``.
        label: the name for people (plots, summaries).
        delta1, delta2: roots of the attractive-term denominator (vdW 0, 0; RK and SRK 1, 0;
            PR 1 + sqrt 2, 1 - sqrt 2).
        alpha_form: ``"constant"`` (alpha = 1), ``"inverse_root"`` (alpha = Tr^-1/2) or ``"soave"``
            (alpha = (1 + m (1 - Tr^1/2))^2 with m(omega) of the family).
        reference: the published source of the family.
        omega_a, omega_b, z_c: critical constants, computed from delta1 and delta2.
    """

    name: str
    label: str
    delta1: float
    delta2: float
    alpha_form: str
    reference: str
    omega_a: float = field(init=False)
    omega_b: float = field(init=False)
    z_c: float = field(init=False)

    def __post_init__(self) -> None:
        if self.alpha_form not in ("constant", "inverse_root", "soave"):
            raise InputError(f"alpha_form={self.alpha_form!r} is not known; use 'constant', 'inverse_root' or 'soave'")
        omega_a, omega_b, z_c = critical_constants(self.delta1, self.delta2)
        object.__setattr__(self, "omega_a", omega_a)
        object.__setattr__(self, "omega_b", omega_b)
        object.__setattr__(self, "z_c", z_c)

    def m(self, omega: np.ndarray | float) -> np.ndarray:
        """Slope m(omega) of the Soave-type alpha function; zeros for the other forms.

        SRK: Soave (1972). PR: Peng & Robinson (1976) for omega <= 0.49, Robinson & Peng (1978) above.
        """
        w = np.asarray(omega, dtype=float)
        if self.alpha_form != "soave":
            return np.zeros_like(w)
        if self.name == "srk":
            return _SRK[0] + w * (_SRK[1] + w * _SRK[2])
        early = _PR1976[0] + w * (_PR1976[1] + w * _PR1976[2])
        late = _PR1978[0] + w * (_PR1978[1] + w * (_PR1978[2] + w * _PR1978[3]))
        return np.where(w > _PR1978_FROM_OMEGA, late, early)

    def alpha(
        self, T: np.ndarray | float, Tc: np.ndarray | float, omega: np.ndarray | float
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """alpha(T) and its first two temperature derivatives, vectorised over components.

        Args:
            T: temperature, K (scalar or broadcastable against ``Tc``).
            Tc: critical temperatures, K.
            omega: acentric factors.

        Returns:
            (alpha, dalpha/dT in 1/K, d2alpha/dT2 in 1/K^2), arrays of the broadcast shape.
        """
        T = np.asarray(T, dtype=float)
        Tc = np.asarray(Tc, dtype=float)
        shape = np.broadcast_shapes(T.shape, Tc.shape, np.shape(omega))
        if self.alpha_form == "constant":
            return np.ones(shape), np.zeros(shape), np.zeros(shape)
        tr = T / Tc
        if self.alpha_form == "inverse_root":
            alpha = tr**-0.5
            return alpha, -0.5 * alpha / T, 0.75 * alpha / T**2
        m = self.m(omega)
        s = np.sqrt(tr)
        g = 1.0 + m * (1.0 - s)
        ds = 0.5 * s / T  # d sqrt(T/Tc)/dT
        d2s = -0.25 * s / T**2
        dg = -m * ds
        alpha = g * g
        return np.broadcast_to(alpha, shape).copy(), np.broadcast_to(2.0 * g * dg, shape).copy(), np.broadcast_to(
            2.0 * dg * dg - 2.0 * g * m * d2s, shape
        ).copy()

    def a_b(self, Tc: np.ndarray | float, Pc: np.ndarray | float) -> tuple[np.ndarray, np.ndarray]:
        """Attraction constant at the critical temperature a_c (Pa m^6/mol^2) and co-volume b (m^3/mol).

        a_c = Omega_a R^2 Tc^2 / Pc and b = Omega_b R Tc / Pc, vectorised over components.
        """
        Tc = np.asarray(Tc, dtype=float)
        Pc = np.asarray(Pc, dtype=float)
        return self.omega_a * (GAS_CONSTANT * Tc) ** 2 / Pc, self.omega_b * GAS_CONSTANT * Tc / Pc

    def pressure(self, T: float, v: np.ndarray | float, a: float, b: float) -> np.ndarray:
        """Pressure P(T, v), Pa, for attraction ``a`` = a_c alpha(T) (Pa m^6/mol^2) and co-volume ``b``."""
        v = np.asarray(v, dtype=float)
        return GAS_CONSTANT * T / (v - b) - a / ((v + self.delta1 * b) * (v + self.delta2 * b))


_ROOT2 = math.sqrt(2.0)

#: The four families, by command-line name.
FAMILIES: dict[str, CubicFamily] = {
    f.name: f
    for f in (
        CubicFamily("vdw", "van der Waals", 0.0, 0.0, "constant", "van der Waals (1873)"),
        CubicFamily("rk", "Redlich-Kwong", 1.0, 0.0, "inverse_root", "Redlich & Kwong, Chem. Rev. 44 (1949) 233"),
        CubicFamily("srk", "Soave-Redlich-Kwong", 1.0, 0.0, "soave", "Soave, Chem. Eng. Sci. 27 (1972) 1197"),
        CubicFamily(
            "pr",
            "Peng-Robinson",
            1.0 + _ROOT2,
            1.0 - _ROOT2,
            "soave",
            "Peng & Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59; m(omega) of Robinson & Peng (1978) for omega > 0.49",
        ),
    )
}


def family(name: str, argument: str = "--eos") -> CubicFamily:
    """The cubic family called ``name`` (``vdw``, ``rk``, ``srk`` or ``pr``; case-insensitive).

    Raises:
        InputError: naming ``argument`` for an unknown name, with a suggestion.
    """
    if isinstance(name, CubicFamily):
        return name
    key = str(name).strip().lower()
    if key in FAMILIES:
        return FAMILIES[key]
    raise InputError(
        f"unknown equation of state {name!r} in {argument}; choose one of {', '.join(FAMILIES)}"
        f"{suggest(key, FAMILIES)}"
    )
