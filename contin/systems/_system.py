"""Residual systems F(u, p) = 0: the interface the driver talks to, and systems from Python callables.

A system has named unknowns u (n of them), named parameters p (m of them, with default values), and
n residual equations. The driver never sees names: it calls

- ``residual(u, p)`` -> array (n,)
- ``linearise(u, p, free)`` -> (F, dF/du (n, n), dF/dp[free] (n,)) in one call,
- ``parameter_jacobian(u, p)`` -> dF/dp for every parameter, (n, m), for sensitivities,

with ``u`` and ``p`` plain float arrays in the order of ``unknowns`` and ``parameters``. The free
parameter travels as an argument (``p[free]``), never through state on the system.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
import numpy as np

from ..base._errors import InputError
from ..base._names import check_names, suggest

__all__ = ["System", "CallableSystem", "finite_difference_step", "is_sparse"]


def is_sparse(matrix) -> bool:
    """Whether ``matrix`` is a scipy.sparse matrix or array (without importing scipy.sparse for dense ones)."""
    return hasattr(matrix, "tocsc") and hasattr(matrix, "nnz")


def finite_difference_step(x: np.ndarray) -> np.ndarray:
    """Central-difference step sizes: the cube root of machine epsilon scaled by each coordinate's size.

    Central differences err by O(h^2), so this step balances truncation against rounding at about
    eps^(2/3) ~ 4e-11 relative: accurate enough to locate folds to 1e-10 (forward differences, at
    about 1e-8, are not).
    """
    return np.cbrt(np.finfo(float).eps) * np.maximum(1.0, np.abs(x))


class System:
    """Base class of residual systems F(u, p) = 0.

    Subclasses set the attributes below and implement :meth:`residual`; they override
    :meth:`linearise` and :meth:`parameter_jacobian` when they know derivatives exactly (the
    defaults here use central differences).

    Attributes:
        unknowns: names of the unknowns, in the order of ``u``.
        parameters: names of the parameters, in the order of ``p``.
        parameter_values: default parameter values, array (m,).
        start: default start values of the unknowns, array (n,), or None.
        equations: names of the equations (residual components).
        kind: ``"algebraic"`` (F(u, p) = 0) or ``"ode"`` (du/dt = F(u, p); equilibria are F = 0).
    """

    unknowns: tuple[str, ...]
    parameters: tuple[str, ...]
    parameter_values: np.ndarray
    start: np.ndarray | None
    equations: tuple[str, ...]
    kind: str = "algebraic"

    # -- what a subclass provides -------------------------------------------------------------
    def residual(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        """Return F(u, p), an array of shape (n,)."""
        raise NotImplementedError

    def linearise(self, u: np.ndarray, p: np.ndarray, free: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Return (F, dF/du, dF/dp_free) at (u, p) by central differences.

        Args:
            u: unknowns, array (n,).
            p: all parameter values, array (m,).
            free: index of the free parameter in ``p``.
        """
        f0 = self.residual(u, p)
        return f0, self._difference_jacobian(u, p, f0), self._difference_parameter_column(u, p, free, f0)

    def parameter_jacobian(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        """Return dF/dp for every parameter, array (n, m), by central differences."""
        f0 = self.residual(u, p)
        return np.column_stack([self._difference_parameter_column(u, p, k, f0) for k in range(len(p))])

    # -- helpers ------------------------------------------------------------------------------
    @property
    def size(self) -> int:
        """Number of unknowns (and of equations)."""
        return len(self.unknowns)

    def index_of_parameter(self, name: str, argument: str = "free") -> int:
        """Index of parameter ``name``; an :class:`InputError` naming ``argument`` if it is not one."""
        if name in self.parameters:
            return self.parameters.index(name)
        hint = suggest(name, self.parameters)
        raise InputError(
            f"{argument}={name!r} is not a parameter of this system (parameters: "
            f"{', '.join(self.parameters) or 'none'}){hint}"
        )

    def parameter_vector(self, overrides: Mapping[str, float] | None = None) -> np.ndarray:
        """The default parameter values with ``overrides`` (name -> value) applied; a new array."""
        p = np.array(self.parameter_values, dtype=float, copy=True)
        for name, value in (overrides or {}).items():
            p[self.index_of_parameter(name, argument="parameters")] = float(value)
        return p

    def _difference_jacobian(self, u: np.ndarray, p: np.ndarray, f0: np.ndarray) -> np.ndarray:
        h = finite_difference_step(u)
        columns = np.empty((f0.size, u.size))
        for j in range(u.size):
            plus, minus = u.copy(), u.copy()
            plus[j] += h[j]
            minus[j] -= h[j]
            columns[:, j] = (self.residual(plus, p) - self.residual(minus, p)) / (2.0 * h[j])
        return columns

    def _difference_parameter_column(self, u: np.ndarray, p: np.ndarray, k: int, f0: np.ndarray) -> np.ndarray:
        h = finite_difference_step(p[k : k + 1])[0]
        plus, minus = p.copy(), p.copy()
        plus[k] += h
        minus[k] -= h
        return (self.residual(u, plus) - self.residual(u, minus)) / (2.0 * h)

    def __repr__(self) -> str:
        return (
            f"{type(self).__name__}(unknowns={list(self.unknowns)}, "
            f"parameters={dict(zip(self.parameters, map(float, self.parameter_values)))}, kind={self.kind!r})"
        )


class CallableSystem(System):
    """A system from plain Python callables.

    Args:
        residual: ``f(u, p) -> array (n,)`` with ``u`` (n,) and ``p`` (m,) float arrays.
        unknowns: names of the unknowns, or their number (named ``u0``, ``u1``, ...).
        parameters: mapping of parameter name to default value (order is kept).
        jacobian: optional ``j(u, p) -> array (n, n)``, dF/du, dense or a scipy.sparse matrix (a
            sparse one makes the trace factorise with sparse LU, see docs/linear-solvers.md); central
            differences otherwise.
        parameter_jacobian: optional ``jp(u, p) -> array (n, m)``, dF/dp; forward differences otherwise.
        start: optional default start values of the unknowns.
        equations: optional names of the equations (default ``f0``, ``f1``, ...).
        kind: ``"algebraic"`` or ``"ode"``.

    Raises:
        InputError: on empty or repeated names, a wrong number of start values, or an unknown kind.
    """

    def __init__(
        self,
        residual: Callable[[np.ndarray, np.ndarray], np.ndarray],
        unknowns: Sequence[str] | int,
        parameters: Mapping[str, float],
        *,
        jacobian: Callable[[np.ndarray, np.ndarray], np.ndarray] | None = None,
        parameter_jacobian: Callable[[np.ndarray, np.ndarray], np.ndarray] | None = None,
        start: Sequence[float] | None = None,
        equations: Sequence[str] | None = None,
        kind: str = "algebraic",
    ) -> None:
        if not callable(residual):
            raise InputError("residual must be a callable f(u, p) returning an array of n residuals")
        names = tuple(f"u{i}" for i in range(unknowns)) if isinstance(unknowns, int) else tuple(unknowns)
        check_names(names, "unknowns")
        parameter_names = tuple(parameters)
        check_names(parameter_names, "parameters", allow_empty=False)
        overlap = sorted(set(names) & set(parameter_names))
        if overlap:
            raise InputError(f"names used both as unknown and as parameter: {', '.join(overlap)}")
        equation_names = tuple(equations) if equations is not None else tuple(f"f{i}" for i in range(len(names)))
        if len(equation_names) != len(names):
            raise InputError(f"equations names {len(equation_names)} equations but there are {len(names)} unknowns")
        if kind not in ("algebraic", "ode"):
            raise InputError(f"kind={kind!r} is not known; use 'algebraic' or 'ode'")
        start_values = None
        if start is not None:
            start_values = np.asarray(start, dtype=float).reshape(-1)
            if start_values.size != len(names):
                raise InputError(f"start has {start_values.size} values but there are {len(names)} unknowns")
        values = np.array([float(parameters[k]) for k in parameter_names], dtype=float)
        self.residual_function = residual
        self.unknowns = names
        self.parameters = parameter_names
        self.parameter_values = values
        self.jacobian_function = jacobian
        self.parameter_jacobian_function = parameter_jacobian
        self.start = start_values
        self.equations = equation_names
        self.kind = kind

    def residual(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        return np.asarray(self.residual_function(u, p), dtype=float).reshape(-1)

    def linearise(self, u: np.ndarray, p: np.ndarray, free: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        f0 = self.residual(u, p)
        if self.jacobian_function is None:
            ju = self._difference_jacobian(u, p, f0)
        else:
            ju = _shaped(self.jacobian_function(u, p), (len(self.unknowns), u.size), "jacobian")
        if self.parameter_jacobian_function is None:
            jf = self._difference_parameter_column(u, p, free, f0)
        else:
            jf = self.parameter_jacobian(u, p)[:, free]
        return f0, ju, jf

    def parameter_jacobian(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        if self.parameter_jacobian_function is None:
            return super().parameter_jacobian(u, p)
        matrix = _shaped(self.parameter_jacobian_function(u, p), (len(self.unknowns), p.size), "parameter_jacobian")
        return matrix.toarray() if is_sparse(matrix) else matrix  # n x m: small whatever n is


def _shaped(value, shape: tuple[int, int], argument: str):
    """A user's matrix as floats: exactly ``shape``, or flat with that many entries (row by row); a
    scipy.sparse matrix of that shape is kept sparse (as CSR)."""
    if is_sparse(value):
        if tuple(value.shape) != shape:
            raise InputError(f"{argument} returned a sparse matrix of shape {tuple(value.shape)}; it must have shape "
                             f"{shape} (equations x {'unknowns' if argument == 'jacobian' else 'parameters'})")
        return value.tocsr().astype(float, copy=False)
    array = np.asarray(value, dtype=float)
    if array.shape == shape:
        return array
    if array.ndim <= 1 and array.size == shape[0] * shape[1]:
        return array.reshape(shape)
    raise InputError(f"{argument} returned an array of shape {array.shape}; it must have shape {shape} "
                     f"(equations x {'unknowns' if argument == 'jacobian' else 'parameters'})")
