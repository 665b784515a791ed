"""Bordered linear algebra: the tangent of the solution curve, from one LU factorisation."""

from __future__ import annotations

import math
import threading
from collections.abc import Iterator
from contextlib import contextmanager

import numpy as np
from scipy.linalg.lapack import dgetrf, dgetrs

__all__ = ["Bordered", "SingularMatrix", "from_factors", "one_blas_thread", "tangent"]

_blas_lock = threading.Lock()
_blas_state: dict = {"depth": 0, "limiter": None, "controller": None}


def _blas_controller():
    """The threadpoolctl controller of the loaded BLAS libraries, made once (None without threadpoolctl)."""
    if _blas_state["controller"] is None:
        try:
            from threadpoolctl import ThreadpoolController
        except ImportError:  # pragma: no cover - a declared dependency; without it threads are left alone
            _blas_state["controller"] = False
        else:
            _blas_state["controller"] = ThreadpoolController()
    return _blas_state["controller"] or None


@contextmanager
def one_blas_thread() -> Iterator[None]:
    """Run the block with BLAS limited to one thread, then restore the caller's setting.

    The engine's matrices are small (n + 1 rows): threaded BLAS only adds start-up and
    synchronisation cost there, and its summation order changes the rounding, so Newton counts and
    points would depend on the machine's thread setting. The limit is process-wide while any
    block is open (BLAS thread counts are global); nested and concurrent blocks share it and the
    last one to leave restores the setting found by the first.
    """
    with _blas_lock:
        if _blas_state["depth"] == 0:
            controller = _blas_controller()
            _blas_state["limiter"] = controller.limit(limits=1, user_api="blas") if controller else None
        _blas_state["depth"] += 1
    try:
        yield
    finally:
        with _blas_lock:
            _blas_state["depth"] -= 1
            if _blas_state["depth"] == 0 and _blas_state["limiter"] is not None:
                _blas_state["limiter"].restore_original_limits()
                _blas_state["limiter"] = None


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
