"""Bordered linear algebra: the tangent of the solution curve, from one factorisation (see _linear)."""

from __future__ import annotations

import math
import threading
from collections.abc import Iterator
from contextlib import contextmanager

import numpy as np

from ._linear import LinearSolver, SingularMatrix, solver_for

__all__ = ["SingularMatrix", "factorise_bordered", "one_blas_thread", "tangent"]

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


def factorise_bordered(jacobian, row: np.ndarray, solver: LinearSolver | None = None):
    """Factors of the bordered matrix [dG/dx; row], shape (n + 1, n + 1), by ``solver`` (by default the
    one the Jacobian's format calls for: dense LU for an array, sparse LU for a scipy.sparse matrix).

    The same factors serve a Newton correction (right-hand side [-G; -c]) and the tangent
    (right-hand side [0; 1]); re-using them is why the tangent of an accepted point costs no new
    Jacobian (Keller 1977).

    Raises:
        SingularMatrix: a pivot is at or below 1e-13 of the largest.
    """
    return (solver or solver_for(jacobian)).factorise(jacobian, row)


def tangent(bordered, previous: np.ndarray) -> np.ndarray:
    """Unit tangent in the null space of dG/dx, oriented to agree with ``previous``.

    Args:
        bordered: factors of [dG/dx; row] (:func:`factorise_bordered`) with any row not orthogonal to
            the tangent.
        previous: the previous tangent (orientation reference).
    """
    rhs = np.zeros(bordered.row.size)
    rhs[-1] = 1.0
    z = bordered.solve(rhs)
    z /= math.sqrt(float(z @ z))
    return z if z @ previous >= 0.0 else -z
