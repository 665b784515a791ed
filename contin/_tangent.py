"""Bordered linear algebra: the tangent of the solution curve, from one LU factorisation."""

from __future__ import annotations

import math

import numpy as np
from scipy.linalg.lapack import dgetrf, dgetrs

__all__ = ["Bordered", "SingularMatrix", "from_factors", "tangent"]


class SingularMatrix(Exception):
    """The bordered matrix is (numerically) singular."""


class _Factored:
    """A bordered factorisation made elsewhere (the corrector's last iteration), for :func:`tangent`."""

    __slots__ = ("row", "_lu")

    def __init__(self, factors: tuple, row: np.ndarray) -> None:
        self.row = row
        self._lu = factors

    def solve(self, rhs: np.ndarray) -> np.ndarray:
        solution, info = dgetrs(self._lu[0], self._lu[1], rhs)
        return solution

    @property
    def factors(self) -> tuple:
        """The LAPACK LU factors ``(lu, piv)`` (e.g. for the sign of the determinant)."""
        return self._lu


def from_factors(factors: tuple, row: np.ndarray) -> "_Factored":
    """Wrap LAPACK LU factors ``(lu, piv)`` of [dG/dx; row] so :func:`tangent` can use them."""
    return _Factored(factors, row)


class Bordered(_Factored):
    """LU factorisation of the bordered matrix [dG/dx; row], shape (n + 1, n + 1).

    The same factorisation serves a Newton correction (right-hand side [-G; -c]) and the tangent
    (right-hand side [0; 1]); re-using it is why the tangent of an accepted point costs no new
    Jacobian (Keller 1977).
    """

    __slots__ = ("jacobian",)

    def __init__(self, jacobian: np.ndarray, row: np.ndarray) -> None:
        self.jacobian = jacobian
        self.row = row
        size = row.size
        matrix = np.empty((size, size))
        matrix[:-1] = jacobian
        matrix[-1] = row
        # LAPACK directly: the scipy.linalg wrappers cost more than the factorisation at these sizes.
        lu, piv, info = dgetrf(matrix, overwrite_a=True)
        pivots = np.abs(lu.diagonal())
        largest = pivots.max()
        if info != 0 or not np.isfinite(largest) or pivots.min() <= 1e-13 * max(1.0, largest):
            raise SingularMatrix("the bordered Jacobian is singular")
        super().__init__((lu, piv), row)


def tangent(bordered: Bordered, previous: np.ndarray) -> np.ndarray:
    """Unit tangent in the null space of dG/dx, oriented to agree with ``previous``.

    Args:
        bordered: factorisation of [dG/dx; row] with any row not orthogonal to the tangent.
        previous: the previous tangent (orientation reference).
    """
    rhs = np.zeros(bordered.row.size)
    rhs[-1] = 1.0
    z = bordered.solve(rhs)
    z /= math.sqrt(float(z @ z))
    return z if z @ previous >= 0.0 else -z
