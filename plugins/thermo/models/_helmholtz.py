"""The residual Helmholtz energy of the generic two-constant cubic, and its compiled derivatives.

One symbolic function serves every cubic equation of state and every mixture size. In the scalar
form of Michelsen & Mollerup (Thermodynamic Models: Fundamentals and Computational Aspects, 2nd ed.,
Tie-Line Publications, 2007, ch. 3), the reduced residual Helmholtz energy is

    F(n, T, V, B, D) = A_res / (R T)
                     = -n ln(1 - B/V) - D / (R T B (delta1 - delta2)) ln((V + delta1 B) / (V + delta2 B))

with n the total amount, B = sum_i n_i b_i and D = sum_ij n_i n_j a_ij(T). For delta1 = delta2 = delta
the second term has the limit -D / (R T (V + delta B)) (van der Waals: delta = 0). Because F depends on
five scalars only, sympy differentiates it once per (delta1, delta2); the composition derivatives of a
mixture of any size follow by the chain rule through B and D (see ``_mixture``), so the symbolic cost
does not grow with the number of components.

The temperature T here is the explicit 1/T of the second term only: the temperature dependence of
D through a_ij(T) is added by the caller with the chain rule.
"""

from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass
from collections.abc import Callable, Mapping

import numpy as np

__all__ = [
    "GAS_CONSTANT",
    "VARIABLES",
    "HelmholtzDerivatives",
    "derivative_names",
    "derivatives",
    "helmholtz_expression",
]

#: Molar gas constant in J/(mol K): exact since the 2019 SI redefinition (Avogadro x Boltzmann).
GAS_CONSTANT = 8.31446261815324

#: The five scalar arguments of F, in the order used in derivative names ("F_nV", "F_BBD", ...).
VARIABLES = ("n", "T", "V", "B", "D")

# Third derivatives are needed only at fixed temperature (pressure curvature, the cubic form of the
# Heidemann-Khalil criterion), so the third order runs over these four.
_THIRD_ORDER_VARIABLES = ("n", "V", "B", "D")


def _symbols():
    import sympy

    return sympy.symbols("n T V B D", positive=True)


def helmholtz_expression(delta1: float, delta2: float):
    """The reduced residual Helmholtz energy F(n, T, V, B, D) as a sympy expression.

    Args:
        delta1, delta2: the two constants of the cubic's attractive term,
            P = RT/(v - b) - a / ((v + delta1 b)(v + delta2 b)).

    Returns:
        A sympy expression in the symbols ``n, T, V, B, D`` (all positive).

    Raises:
        ValueError: a delta is not a finite number.

    Reference: Michelsen & Mollerup, Thermodynamic Models: Fundamentals and Computational Aspects,
    2nd ed. (2007), ch. 3.
    """
    import sympy

    d1, d2 = _check_deltas(delta1, delta2)
    n, T, V, B, D = _symbols()
    repulsive = -n * sympy.log(1 - B / V)
    if d1 == d2:
        attractive = -D / (GAS_CONSTANT * T * (V + sympy.Float(d1) * B))
    else:
        s1, s2 = sympy.Float(d1), sympy.Float(d2)
        attractive = -D / (GAS_CONSTANT * T * B * (s1 - s2)) * sympy.log((V + s1 * B) / (V + s2 * B))
    return repulsive + attractive


def _check_deltas(delta1: float, delta2: float) -> tuple[float, float]:
    values = []
    for name, value in (("delta1", delta1), ("delta2", delta2)):
        if isinstance(value, bool) or not isinstance(value, (int, float, np.floating)) or not math.isfinite(value):
            raise ValueError(f"{name}={value!r} must be a finite number")
        values.append(float(value))
    # Order does not matter to F; a canonical order lets (d1, d2) and (d2, d1) share one compilation.
    return max(values), min(values)


def derivative_names(order: int = 2) -> tuple[str, ...]:
    """Names of the values :meth:`HelmholtzDerivatives.evaluate` returns for a given highest order.

    ``"F"`` is the function itself; ``"F_xy..."`` the partial derivative with respect to the listed
    variables of :data:`VARIABLES`, in that canonical order (``"F_nV"``, ``"F_TT"``, ``"F_VVV"``).
    Order 3 adds the third derivatives over ``n, V, B, D`` (temperature fixed).
    """
    if order not in (1, 2, 3):
        raise ValueError(f"order={order!r} must be 1, 2 or 3")
    names = ["F"]
    for k in range(1, min(order, 2) + 1):
        names += ["F_" + "".join(c) for c in itertools.combinations_with_replacement(VARIABLES, k)]
    if order == 3:
        names += ["F_" + "".join(c) for c in itertools.combinations_with_replacement(_THIRD_ORDER_VARIABLES, 3)]
    return tuple(names)


@dataclass(frozen=True)
class HelmholtzDerivatives:
    """Compiled partial derivatives of F(n, T, V, B, D) for one pair (delta1, delta2).

    Attributes:
        delta1, delta2: the cubic's constants (delta1 >= delta2).
        order: highest derivative order compiled (1, 2 or 3).
        names: the names of the returned values, see :func:`derivative_names`.
    """

    delta1: float
    delta2: float
    order: int
    names: tuple[str, ...]
    _vector: Callable = None  # numpy version, broadcasting
    _scalar: Callable = None  # math-module version, for plain floats (fast in scalar hot paths)

    def evaluate(self, n, T, V, B, D) -> Mapping[str, np.ndarray]:
        """All compiled derivatives at (n, T, V, B, D), broadcast together with numpy rules.

        Args:
            n: total amount (mol); T: temperature (K); V: total volume (m^3); B = sum n_i b_i (m^3);
                D = sum n_i n_j a_ij (J m^3); any shapes that broadcast.

        Returns:
            dict name -> float array of the broadcast shape (see :attr:`names`).
        """
        args = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (n, T, V, B, D)))
        values = self._vector(*args)
        shape = args[0].shape
        return {k: np.broadcast_to(np.asarray(v, dtype=float), shape) for k, v in zip(self.names, values)}

    def evaluate_scalar(self, n: float, T: float, V: float, B: float, D: float) -> dict[str, float]:
        """The same values for plain float arguments, as floats (no numpy overhead)."""
        return dict(zip(self.names, self._scalar(float(n), float(T), float(V), float(B), float(D))))

    def values_scalar(self, n: float, T: float, V: float, B: float, D: float) -> tuple[float, ...]:
        """The values of :meth:`evaluate_scalar` as a tuple in the order of :attr:`names`."""
        return self._scalar(n, T, V, B, D)


def derivatives(delta1: float, delta2: float, order: int = 2) -> HelmholtzDerivatives:
    """Compiled derivatives of F for a cubic with constants (delta1, delta2), cached per process.

    The symbolic work (differentiation, common-subexpression elimination, code generation) happens
    once per (delta1, delta2, order); later calls return the same object.

    Args:
        delta1, delta2: the cubic's constants (van der Waals 0, 0; Soave-Redlich-Kwong 1, 0;
            Peng-Robinson 1 + sqrt 2, 1 - sqrt 2).
        order: highest derivative order (1, 2 or 3).

    Returns:
        A :class:`HelmholtzDerivatives`.

    Raises:
        ValueError: a delta is not finite or the order is not 1, 2 or 3.

    Reference: Michelsen & Mollerup (2007), ch. 3, for the function and its use.
    """
    d1, d2 = _check_deltas(delta1, delta2)
    names = derivative_names(order)  # validates order
    return _compile(d1, d2, order, names)


@functools.lru_cache(maxsize=None)
def _compile(d1: float, d2: float, order: int, names: tuple[str, ...]) -> HelmholtzDerivatives:
    import sympy

    symbols = _symbols()
    by_name = dict(zip(VARIABLES, symbols))
    F = helmholtz_expression(d1, d2)
    expressions = []
    cache: dict[str, object] = {"F": F}
    for name in names:
        if name not in cache:
            parts = name[2:]
            parent = "F_" + parts[:-1] if len(parts) > 1 else "F"
            cache[name] = sympy.diff(cache[parent], by_name[parts[-1]])
        expressions.append(cache[name])
    vector = sympy.lambdify(symbols, expressions, modules="numpy", cse=True)
    scalar = sympy.lambdify(symbols, expressions, modules="math", cse=True)
    return HelmholtzDerivatives(d1, d2, order, names, vector, scalar)
