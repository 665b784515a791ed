"""Mixtures under a cubic equation of state: pressure, volume roots, fugacities and their derivatives.

All composition derivatives come from the five-variable residual Helmholtz energy of ``_helmholtz``
by the chain rule through B = sum n_i b_i and D = sum n_i n_j a_ij (one-fluid van der Waals mixing,
a_ij = (1 - k_ij) sqrt(a_i a_j)), as laid out in Michelsen & Mollerup, Thermodynamic Models:
Fundamentals and Computational Aspects, 2nd ed. (2007), ch. 3-4. Everything is numpy over the
components; nothing loops over pairs in Python.

Units: K, Pa, m^3 and mol throughout.
"""

from __future__ import annotations

import functools
import math
import operator
from dataclasses import dataclass, field

import numpy as np

from contin import InputError

from ._helmholtz import GAS_CONSTANT, derivatives

__all__ = ["Mixture", "PhaseState", "rachford_rice", "wilson_k"]

R = GAS_CONSTANT

# Positions of the values the hot paths use in the compiled tuples (see _helmholtz.derivative_names).
_FIRST = ("F_n", "F_V", "F_B", "F_D")
_SECOND = ("F_n", "F_V", "F_B", "F_D", "F_nn", "F_nT", "F_nV", "F_nB", "F_nD", "F_TV", "F_TB", "F_TD",
           "F_VV", "F_VB", "F_VD", "F_BB", "F_BD", "F_DD")


@dataclass(frozen=True)
class _Compiled:
    """The scalar compiled Helmholtz derivatives of one family with the positions the hot paths read."""

    first: object
    second: object
    first_at: object  # itemgetter of _FIRST from the order-1 tuple
    second_at: object  # itemgetter of _SECOND from the order-2 tuple


@functools.lru_cache(maxsize=None)
def _compiled(delta1: float, delta2: float) -> _Compiled:
    # One compilation serves both paths: the residual-only path reads its four values from the
    # second-order tuple (a microsecond more per call, but a tenth of a second less at start-up).
    second = derivatives(delta1, delta2, order=2)
    return _Compiled(second._scalar, second._scalar, operator.itemgetter(*(second.names.index(k) for k in _FIRST)),
                     operator.itemgetter(*(second.names.index(k) for k in _SECOND)))


@dataclass(frozen=True)
class PhaseState:
    """One phase at (T, V, n): pressure, Helmholtz-side composition derivatives and their kin.

    Attributes:
        T: temperature (K); V: total volume (m^3); n: amounts (mol), array (N,); total: sum of n.
        P: pressure (Pa); P_V, P_T: its partial derivatives at fixed n; P_n: dP/dn_i at fixed T, V.
        F_n: dF/dn_i at fixed T, V (F = A_res/RT), so ln f_i = ln(n_i R T / V) + F_n[i].
        F_nn: d2F/dn_i dn_j at fixed T, V, array (N, N).
        F_nV: d2F/dn_i dV; F_nT: d2F/dn_i dT (total, including a_ij(T)).
    """

    T: float
    V: float
    n: np.ndarray
    total: float
    P: float
    P_V: float
    P_T: float
    P_n: np.ndarray
    F_n: np.ndarray
    F_nn: np.ndarray
    F_nV: np.ndarray
    F_nT: np.ndarray

    @property
    def partial_volumes(self) -> np.ndarray:
        """Partial molar volumes -(dP/dn_i)/(dP/dV), m^3/mol."""
        return -self.P_n / self.P_V

    @property
    def ln_phi(self) -> np.ndarray:
        """ln of the fugacity coefficients, ln phi_i = F_n[i] - ln Z (Michelsen & Mollerup, ch. 2)."""
        return self.F_n - math.log(self.P * self.V / (self.total * R * self.T))


@dataclass(frozen=True)
class Mixture:
    """A mixture of components under one cubic family with a binary interaction matrix.

    Args:
        components: objects with ``name``, ``Tc`` (K), ``Pc`` (Pa) and ``omega``; at least two.
        family: a cubic family (``contin_thermo.models._eos.CubicFamily``): ``delta1``, ``delta2``,
            ``omega_a``, ``omega_b``, ``alpha(T, Tc, omega)``.
        kij: symmetric interaction matrix (N, N) with zero diagonal, entries in (-1, 1); zeros if None.

    Raises:
        InputError: fewer than two components, repeated names, bad critical constants, or a kij
            matrix of the wrong shape, not symmetric, with a non-zero diagonal or an entry outside (-1, 1).
    """

    components: tuple
    family: object
    kij: np.ndarray | None = None
    Tc: np.ndarray = field(init=False, repr=False)
    Pc: np.ndarray = field(init=False, repr=False)
    omega: np.ndarray = field(init=False, repr=False)
    a_critical: np.ndarray = field(init=False, repr=False)
    b: np.ndarray = field(init=False, repr=False)

    def __post_init__(self) -> None:
        components = tuple(self.components)
        object.__setattr__(self, "components", components)
        if len(components) < 2:
            raise InputError(
                "a mixture needs at least two components; for one fluid use 'contin thermo saturation'"
            )
        names = [c.name for c in components]
        repeated = sorted({x for x in names if names.count(x) > 1})
        if repeated:
            raise InputError(f"component {repeated[0]!r} appears twice in the mixture; give each component once")
        Tc = np.array([float(c.Tc) for c in components])
        Pc = np.array([float(c.Pc) for c in components])
        omega = np.array([float(c.omega) for c in components])
        for label, values in (("critical temperature", Tc), ("critical pressure", Pc)):
            bad = np.flatnonzero(~(np.isfinite(values) & (values > 0)))
            if bad.size:
                raise InputError(f"component {names[bad[0]]!r} has {label} {values[bad[0]]!r}; it must be positive")
        n = len(components)
        kij = np.zeros((n, n)) if self.kij is None else np.array(self.kij, dtype=float)
        if kij.shape != (n, n):
            raise InputError(f"kij must be a {n} x {n} matrix for {n} components, not shape {kij.shape}")
        if not np.all(np.isfinite(kij)) or np.any(np.abs(kij) >= 1):
            raise InputError("every kij must lie strictly between -1 and 1")
        if np.any(np.diag(kij) != 0):
            raise InputError("kij must have a zero diagonal (no interaction of a component with itself)")
        if not np.array_equal(kij, kij.T):
            raise InputError("kij must be symmetric: kij[i, j] == kij[j, i]")
        kij.setflags(write=False)
        a_c, b = self.family.a_b(Tc, Pc)
        for name, value in (("Tc", Tc), ("Pc", Pc), ("omega", omega), ("a_critical", a_c), ("b", b)):
            value = np.array(value, dtype=float)
            value.setflags(write=False)
            object.__setattr__(self, name, value)
        object.__setattr__(self, "kij", kij)

    # -- basic facts -----------------------------------------------------------------------------
    @property
    def names(self) -> tuple[str, ...]:
        """Component names, in order."""
        return tuple(c.name for c in self.components)

    @property
    def size(self) -> int:
        """Number of components."""
        return len(self.components)

    @property
    def helmholtz(self):
        """Compiled second-order derivatives of the residual Helmholtz energy for this family."""
        return derivatives(self.family.delta1, self.family.delta2, order=2)

    @functools.cached_property
    def _constants(self):
        # What does not change along a trace: 1 - k_ij, sqrt(a_c), the alpha slopes m and sqrt(Tc),
        # and the compiled scalar derivatives of the family.
        return (1.0 - self.kij, np.sqrt(self.a_critical), np.asarray(self.family.m(self.omega), dtype=float),
                np.sqrt(self.Tc), _compiled(self.family.delta1, self.family.delta2))

    def attraction_roots(self, T: float) -> tuple[np.ndarray, np.ndarray]:
        """a_ij(T), array (N, N), and l_i = d ln sqrt(a_i)/dT (1/K), so da_ij/dT = a_ij (l_i + l_j)."""
        one_minus_k, root_ac, m, root_tc, _ = self._constants
        if self.family.alpha_form == "soave":
            s = math.sqrt(T) / root_tc
            g = 1.0 + m * (1.0 - s)
            root = root_ac * g
            slope = -0.5 * m * s / (T * g)
        else:
            alpha, dalpha, _ = self.family.alpha(T, self.Tc, self.omega)
            root = root_ac * np.sqrt(alpha)
            slope = 0.5 * dalpha / alpha
        return one_minus_k * np.outer(root, root), slope

    def attraction(self, T: float) -> tuple[np.ndarray, np.ndarray]:
        """a_ij(T) and da_ij/dT, arrays (N, N), with a_ij = (1 - k_ij) sqrt(a_i a_j)."""
        matrix, slope = self.attraction_roots(T)
        return matrix, matrix * (slope[:, None] + slope[None, :])

    # -- Helmholtz side: T, V, n -----------------------------------------------------------------
    def _mixing(self, V: float, n: np.ndarray, A: np.ndarray) -> tuple[np.ndarray, float]:
        """(A n, B = b.n) of amounts n; ValueError when V <= B (no such state of the cubic)."""
        B = float(self.b @ n)
        if not V > B:
            raise ValueError(f"volume {V!r} m3 is not above the co-volume {B!r} m3")
        return A @ n, B

    def fugacity_pressure(self, T: float, V: float, n: np.ndarray, A: np.ndarray) -> tuple[np.ndarray, float]:
        """(dF/dn_i at fixed T, V; pressure) of amounts n in volume V: the residual-only hot path.

        Args:
            T, V, n: temperature (K), total volume (m^3), amounts (mol, array (N,)).
            A: a_ij(T) from :meth:`attraction_roots`.

        Raises:
            ValueError: V <= B (no such state of the cubic).
        """
        compiled, b = self._constants[4], self.b
        An, B = self._mixing(V, n, A)
        total = float(n.sum())
        F_n, F_V, F_B, F_D = compiled.first_at(compiled.first(total, T, V, B, float(n @ An)))
        RT = R * T
        return F_n + F_B * b + (2.0 * F_D) * An, total * RT / V - RT * F_V

    def linear_state(self, T: float, V: float, n: np.ndarray, A: np.ndarray, slope: np.ndarray,
                     with_hessian: bool = True) -> tuple:
        """The values and first derivatives the two-phase Jacobians need, without a PhaseState.

        Returns:
            (F_n, P, P_V, P_T, P_n, F_nV, F_nT, F_nn or None) as in :class:`PhaseState`.

        Raises:
            ValueError: V <= B.
        """
        compiled, b = self._constants[4], self.b
        An, B = self._mixing(V, n, A)
        total = float(n.sum())
        weighted = slope * n
        D_T = 2.0 * float(weighted @ An)
        (F_n0, F_V, F_B, F_D, F_nn0, F_nT0, F_nV0, F_nB, F_nD, F_TV, F_TB, F_TD, F_VV, F_VB, F_VD, F_BB, F_BD,
         F_DD) = compiled.second_at(compiled.second(total, T, V, B, float(n @ An)))
        # Every composition vector is a combination of 1, b, D_n = 2 A n and D_nT = d D_n/dT: one
        # small matrix product gives F_n, F_nV and F_nT together.
        basis = np.empty((4, n.size))
        basis[0] = 1.0
        basis[1] = b
        basis[2] = 2.0 * An
        basis[3] = 2.0 * (slope * An + A @ weighted)
        coefficients = np.array([
            [F_n0, F_B, F_D, 0.0],
            [F_nV0, F_VB, F_VD, 0.0],
            [F_nT0 + F_nD * D_T, F_TB + F_BD * D_T, F_TD + F_DD * D_T, F_D],
        ])
        F_n, F_nV, F_nT = coefficients @ basis
        RT = R * T
        P = total * RT / V - RT * F_V
        P_V = -RT * F_VV - total * RT / V**2
        P_T = P / T - RT * (F_TV + F_VD * D_T)
        P_n = RT / V - RT * F_nV
        F_nn = None
        if with_hessian:
            # F_nn = 2 F_D A + W C W^T with W = [1, b, D_n]: the chain rule through n, B and D at once.
            W = basis[:3]
            C = np.array([[F_nn0, F_nB, F_nD], [F_nB, F_BB, F_BD], [F_nD, F_BD, F_DD]])
            F_nn = (2.0 * F_D) * A + W.T @ (C @ W)
        return F_n, P, P_V, P_T, P_n, F_nV, F_nT, F_nn

    def constant_response(self, T: float, V: float, n: np.ndarray, A: np.ndarray) -> tuple:
        """The linear map from a change of the constants (dA = da_ij/dq, db = db_i/dq) to (dF_n/dq, dP/dq)
        at fixed T, V, n: the coefficients read by :meth:`constant_state`.

        The chain rule through B = b.n and D = n.A.n (Michelsen & Mollerup 2007, ch. 3): with
        dB = db.n and dD = n.dA.n,
        dF_n,i = (F_nB + F_BB b_i + F_BD D_n,i) dB + (F_nD + F_BD b_i + F_DD D_n,i) dD + F_B db_i + 2 F_D (dA n)_i
        and dP = -RT (F_VB dB + F_VD dD), where D_n = 2 A n. Exact: the second derivatives are those of
        the one compiled Helmholtz energy.

        Raises:
            ValueError: V <= B.
        """
        compiled, b = self._constants[4], self.b
        An, B = self._mixing(V, n, A)
        (_, _, F_B, F_D, _, _, _, F_nB, F_nD, _, _, _, _, F_VB, F_VD, F_BB, F_BD,
         F_DD) = compiled.second_at(compiled.second(float(n.sum()), T, V, B, float(n @ An)))
        D_n = 2.0 * An
        RT = R * T
        return (F_nB + F_BB * b + F_BD * D_n, F_nD + F_BD * b + F_DD * D_n, F_B, 2.0 * F_D, -RT * F_VB, -RT * F_VD)

    @staticmethod
    def constant_state(response: tuple, n: np.ndarray, dA: np.ndarray, db: np.ndarray) -> tuple[np.ndarray, float]:
        """(dF_n/dq, dP/dq) of amounts n for the change (dA, db), from :meth:`constant_response`."""
        c_B, c_D, F_B, two_F_D, p_B, p_D = response
        dB = float(db @ n)
        dAn = dA @ n
        dD = float(n @ dAn)
        return c_B * dB + c_D * dD + F_B * db + two_F_D * dAn, p_B * dB + p_D * dD

    def state(self, T: float, V: float, n: np.ndarray, attraction=None) -> PhaseState:
        """The phase of amounts ``n`` (mol) in volume ``V`` (m^3) at ``T`` (K).

        Args:
            T, V: temperature and total volume; V must exceed B = sum n_i b_i.
            n: amounts, array (N,), non-negative, not all zero.
            attraction: ``attraction_roots(T)`` if already computed (saves work when two phases share T).

        Returns:
            A :class:`PhaseState`.

        Raises:
            ValueError: V <= B (no such state of the cubic).
        """
        A, slope = self.attraction_roots(T) if attraction is None else attraction
        n = np.asarray(n, dtype=float)
        F_n, P, P_V, P_T, P_n, F_nV, F_nT, F_nn = self.linear_state(T, V, n, A, slope)
        return PhaseState(T, V, n, float(n.sum()), P, P_V, P_T, P_n, F_n, F_nn, F_nV, F_nT)

    def pressure(self, T: float, v: float, x: np.ndarray) -> float:
        """Pressure (Pa) of composition ``x`` at molar volume ``v`` (m^3/mol) and ``T`` (K)."""
        x = np.asarray(x, dtype=float)
        return self.state(T, v * x.sum(), x).P

    # -- pressure side: T, P, x ------------------------------------------------------------------
    def volume_roots(self, T: float, P: float, x: np.ndarray) -> tuple[float, float]:
        """Smallest and largest molar-volume roots (m^3/mol) of the cubic at (T, P) for composition x.

        The cubic in Z, Z^3 + c2 Z^2 + c1 Z + c0 = 0 with A = aP/(RT)^2, B = bP/(RT), u = delta1 +
        delta2, w = delta1 delta2: c2 = (u - 1)B - 1, c1 = A + wB^2 - uB(B + 1),
        c0 = -(AB + wB^2(B + 1)). Roots come from the companion matrix, are kept only if real and
        above B, and are polished by Newton's method. With one real root both values are equal.
        """
        x = np.asarray(x, dtype=float)
        x = x / x.sum()
        A_matrix, _ = self.attraction_roots(T)
        a = float(x @ A_matrix @ x)
        bm = float(self.b @ x)
        RT = R * T
        big_a = a * P / RT**2
        big_b = bm * P / RT
        u = self.family.delta1 + self.family.delta2
        w = self.family.delta1 * self.family.delta2
        c = np.array([1.0, (u - 1.0) * big_b - 1.0, big_a + w * big_b**2 - u * big_b * (big_b + 1.0),
                      -(big_a * big_b + w * big_b**2 * (big_b + 1.0))])
        roots = np.roots(c)
        real = np.sort(roots.real[(np.abs(roots.imag) <= 1e-7 * np.maximum(1.0, np.abs(roots.real))) & (roots.real > big_b)])
        if real.size == 0:
            real = np.array([max(roots.real.max(), big_b * (1 + 1e-6))])
        polished = []
        for z in (real[0], real[-1]):
            for _ in range(4):
                f = ((z + c[1]) * z + c[2]) * z + c[3]
                df = (3.0 * z + 2.0 * c[1]) * z + c[2]
                if df == 0:
                    break
                z_new = z - f / df
                if not z_new > big_b:
                    break
                z = z_new
            polished.append(z * RT / P)
        return float(polished[0]), float(polished[1])

    def volume(self, T: float, P: float, x: np.ndarray, phase: str = "stable") -> float:
        """Molar volume (m^3/mol) of the ``phase`` root: ``"liquid"``, ``"vapour"`` or ``"stable"``.

        ``"stable"`` picks, of the two outer roots, the one with the lower Gibbs energy.

        Raises:
            InputError: an unknown phase name.
        """
        liquid, vapour = self.volume_roots(T, P, x)
        if phase == "liquid":
            return liquid
        if phase == "vapour":
            return vapour
        if phase != "stable":
            raise InputError(f"phase={phase!r} is not known; use 'liquid', 'vapour' or 'stable'")
        if liquid == vapour:
            return liquid
        x = np.asarray(x, dtype=float) / np.sum(x)
        g = [float(x @ self.ln_phi(T, P, x, v)) for v in (liquid, vapour)]
        return liquid if g[0] < g[1] else vapour

    def ln_phi(self, T: float, P: float, x: np.ndarray, phase: str | float = "stable") -> np.ndarray:
        """ln of the fugacity coefficients of composition ``x`` at (T, P).

        Args:
            phase: ``"liquid"``, ``"vapour"``, ``"stable"`` or a molar volume (m^3/mol) already found.
        """
        x = np.asarray(x, dtype=float) / np.sum(x)
        v = phase if isinstance(phase, float) else self.volume(T, P, x, phase)
        state = self.state(T, v, x)
        return state.F_n - math.log(P * v / (R * T))

    def ln_phi_derivatives(self, T: float, P: float, x: np.ndarray, phase: str | float = "stable"):
        """ln phi_i and its derivatives at (T, P, x) (Michelsen & Mollerup 2007, ch. 2-3).

        Returns:
            (ln_phi (N,), d ln_phi/dT (N,), d ln_phi/dP (N,), n d ln_phi_i/dn_j (N, N)), the last at a
            total of one mole, all at fixed values of the other variables.
        """
        x = np.asarray(x, dtype=float) / np.sum(x)
        v = phase if isinstance(phase, float) else self.volume(T, P, x, phase)
        s = self.state(T, v, x)
        RT = R * T
        partial = s.partial_volumes
        ln_phi = s.F_n - math.log(P * v / RT)
        d_T = s.F_nT + 1.0 / T - partial * s.P_T / RT
        d_P = partial / RT - 1.0 / P
        d_n = s.F_nn + 1.0 + np.outer(s.P_n, s.P_n) / (RT * s.P_V)
        return ln_phi, d_T, d_P, d_n

    # -- starting values -------------------------------------------------------------------------
    def wilson(self, T: float, P: float) -> np.ndarray:
        """Wilson's K-values (vapour over liquid), K_i = (Pc_i/P) exp(5.373 (1 + omega_i)(1 - Tc_i/T)).

        Reference: Wilson, G. M., A modified Redlich-Kwong equation of state, application to general
        physical data calculations, AIChE 65th National Meeting, Cleveland (1969), paper 15C.
        """
        return wilson_k(T, P, self.Tc, self.Pc, self.omega)

    # -- critical-point helpers (Helmholtz side) -------------------------------------------------
    def helmholtz_hessian(self, T: float, V: float, n: np.ndarray) -> np.ndarray:
        """Q_ij = d2(A/RT)/dn_i dn_j at fixed T, V, residual plus ideal part (delta_ij / n_i)."""
        s = self.state(T, V, n)
        return s.F_nn + np.diag(1.0 / np.asarray(n, dtype=float))

    def cubic_form(self, T: float, V: float, n: np.ndarray, dn: np.ndarray) -> float:
        """C = sum_ijk d3(A/RT)/dn_i dn_j dn_k dn_i dn_j dn_k at fixed T, V.

        The third directional derivative of A/RT along n + s dn: through n_total (slope sum dn),
        B (slope b.dn) and D (slope 2 n.A.dn, curvature 2 dn.A.dn), plus the ideal part
        -sum dn_i^3 / n_i^2. This is the cubic form of the Heidemann & Khalil criterion
        (AIChE J. 26 (1980) 769) as written by Michelsen & Mollerup (2007), ch. 12.
        """
        n = np.asarray(n, dtype=float)
        dn = np.asarray(dn, dtype=float)
        A, _ = self.attraction_roots(T)
        third = derivatives(self.family.delta1, self.family.delta2, order=3)
        An = A @ n
        d = third.evaluate_scalar(float(n.sum()), T, V, float(self.b @ n), float(n @ An))
        slope = {"n": float(dn.sum()), "B": float(self.b @ dn), "D": float(2.0 * An @ dn), "V": 0.0}
        curvature_D = float(2.0 * dn @ A @ dn)
        total = 0.0
        for name in third.names:
            letters = name[2:]
            if len(letters) != 3:
                continue
            counts = {c: letters.count(c) for c in set(letters)}
            multiplicity = 6 // math.prod(math.factorial(k) for k in counts.values())
            total += multiplicity * d[name] * math.prod(slope[c] for c in letters)
        # 3 F_aD x'_a x''_D: the curvature of D along the line
        total += 3.0 * curvature_D * (d["F_nD"] * slope["n"] + d["F_BD"] * slope["B"] + d["F_DD"] * slope["D"])
        with np.errstate(divide="ignore", invalid="ignore"):
            ideal = np.where(dn != 0, -dn**3 / n**2, 0.0)
        return total + float(ideal.sum())


def wilson_k(T: float, P: float, Tc: np.ndarray, Pc: np.ndarray, omega: np.ndarray) -> np.ndarray:
    """Wilson's K-value correlation (Wilson 1969): (Pc/P) exp(5.373 (1 + omega)(1 - Tc/T))."""
    return (np.asarray(Pc) / P) * np.exp(5.373 * (1.0 + np.asarray(omega)) * (1.0 - np.asarray(Tc) / T))


def rachford_rice(z: np.ndarray, K: np.ndarray, *, tolerance: float = 1e-12) -> float:
    """Vapour fraction beta solving sum z_i (K_i - 1) / (1 + beta (K_i - 1)) = 0 (Rachford & Rice 1952).

    Solved on the bracket between the asymptotes by Newton's method safeguarded with bisection, so
    the answer may lie outside [0, 1] (negative flash): below 0 the feed is a subcooled liquid,
    above 1 a superheated vapour, for these K-values.

    Reference: Rachford & Rice, J. Petrol. Technol. 4 (1952) 19.

    Raises:
        InputError: all K_i on one side of 1 (no root: single phase for any beta).
    """
    z = np.asarray(z, dtype=float)
    K = np.asarray(K, dtype=float)
    c = K - 1.0
    if not (np.any(c > 0) and np.any(c < 0)):
        raise InputError("Rachford-Rice has no root: every K-value lies on the same side of 1")
    low = 1.0 / (1.0 - K.max())
    high = 1.0 / (1.0 - K.min())
    beta = 0.5 * (low + high)
    for _ in range(200):
        g = float(np.sum(z * c / (1.0 + beta * c)))
        if g > 0:
            low = beta
        else:
            high = beta
        dg = -float(np.sum(z * c * c / (1.0 + beta * c) ** 2))
        step = beta - g / dg
        beta = step if low < step < high else 0.5 * (low + high)
        if abs(g) < tolerance or high - low < tolerance * max(1.0, abs(beta)):
            break
    return float(beta)
