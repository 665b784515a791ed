"""The system seen by the driver: coordinates x = (u, p_free), evaluation counts, callback failures."""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass, field

import numpy as np

from ..base._errors import InputError
from ..systems._system import System
from ._linear import LinearSolver, choose_solver, is_sparse

__all__ = ["CallbackFailure", "Counters", "Extended", "describe_non_finite"]

_EXP_LIMIT = math.log(np.finfo(float).max)  # exp overflows above this argument (about 709.78)
_LARGEST = float(np.finfo(float).max)


class CallbackFailure(Exception):
    """A user callback (residual, Jacobian, event) raised; the original exception is ``__cause__``."""


@dataclass
class Counters:
    """Evaluation counts of one trace (mutable: owned by that trace alone)."""

    residual_evaluations: int = 0
    jacobian_evaluations: int = 0
    newton_iterations: int = 0
    accepted_steps: int = 0
    rejected_steps: int = 0
    rejections: dict[str, int] = field(default_factory=dict)

    def reject(self, reason: str) -> None:
        self.rejected_steps += 1
        self.rejections[reason] = self.rejections.get(reason, 0) + 1


class Extended:
    """F(u, p) = 0 as G(x) = 0 with x = (u, p[free]): n equations in n + 1 coordinates.

    Args:
        system: the residual system.
        parameters: all parameter values, array (m,); ``parameters[free]`` is overwritten by x[-1].
        free: index of the free parameter.
        counters: where evaluations are counted.
        relative_tolerance: the scaled part of Newton's residual test for every correction of this
            system (see :func:`contin.tracing._corrector.correct`); 0 keeps the absolute test alone.
        linear_solver: ``"auto"``, ``"dense"``, ``"sparse"`` or a
            :class:`~contin.tracing._linear.LinearSolver`; "auto" is decided by the format of the first
            dF/du the system returns (see :func:`contin.tracing._linear.choose_solver`).
    """

    def __init__(self, system: System, parameters: np.ndarray, free: int, counters: Counters,
                 relative_tolerance: float = 0.0, linear_solver: LinearSolver | str = "auto") -> None:
        self.system = system
        self.parameters = np.array(parameters, dtype=float)
        self.free = free
        self.n = system.size
        self.counters = counters
        self.relative_tolerance = float(relative_tolerance)
        self._choice = linear_solver
        self._solver: LinearSolver | None = None if linear_solver == "auto" else choose_solver(linear_solver, None)

    @property
    def solver(self) -> LinearSolver:
        """The linear solver of this system's bordered matrices ("auto" decides at the first linearisation,
        which comes before any factorisation)."""
        return self._solver if self._solver is not None else choose_solver("dense", None)

    def split(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(u, p) for coordinates x."""
        p = self.parameters.copy()
        p[self.free] = x[self.n]
        return x[: self.n], p

    def residual(self, x: np.ndarray) -> np.ndarray:
        """G(x); raises CallbackFailure if the system raises."""
        u, p = self.split(x)
        self.counters.residual_evaluations += 1
        try:
            return self.system.residual(u, p)
        except InputError:
            raise  # the system refused what its callable returned: bad input, not a crash
        except Exception as error:  # noqa: BLE001 - any user failure is reported, with its cause
            raise CallbackFailure(f"the residual raised {type(error).__name__}: {error}") from error

    def linearise(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(G(x), dG/dx of shape (n, n + 1)); raises CallbackFailure if the system raises."""
        u, p = self.split(x)
        self.counters.residual_evaluations += 1
        self.counters.jacobian_evaluations += 1
        try:
            f, ju, jp = self.system.linearise(u, p, self.free)
        except InputError:
            raise
        except Exception as error:  # noqa: BLE001
            raise CallbackFailure(f"the Jacobian raised {type(error).__name__}: {error}") from error
        if self._solver is None:
            self._solver = choose_solver(self._choice, ju)
        return np.asarray(f, dtype=float), self._solver.assemble(ju, np.asarray(jp, dtype=float).reshape(-1))


# -- what made an evaluation non-finite ------------------------------------------------------------
def _symbolic_culprit(expression, values: dict) -> str | None:
    """The innermost operation of a sympy expression that overflows or leaves the real numbers at
    ``values`` (symbol -> float), in words, or None. Arguments are evaluated in sympy's arbitrary
    precision, so a value too large for a float is still seen as a number."""
    import sympy

    for node in sympy.postorder_traversal(expression):
        if not isinstance(node, sympy.Basic) or not node.args or node.is_Symbol:
            continue
        try:
            args = [complex(sympy.N(arg.subs(values), 30)) for arg in node.args]
        except (TypeError, ValueError, OverflowError):
            continue
        if any(math.isinf(a.real) or math.isinf(a.imag) or math.isnan(a.real) for a in args):
            continue  # an inner node is the culprit; it was reported first, or it is not a float problem
        if any(abs(a.imag) > 0.0 for a in args):
            continue
        real = [a.real for a in args]
        name = type(node).__name__
        if isinstance(node, sympy.exp) and real[0] > _EXP_LIMIT:
            return f"exp overflows (its argument is {real[0]:.6g}, above {_EXP_LIMIT:.6g})"
        if isinstance(node, (sympy.sinh, sympy.cosh)) and abs(real[0]) > _EXP_LIMIT + math.log(2.0):
            return f"{name} overflows (its argument is {real[0]:.6g})"
        if isinstance(node, sympy.log) and real[0] <= 0.0:
            return f"log of {real[0]:.6g}, which is not positive"
        if isinstance(node, sympy.Pow):
            base, power = real
            if base == 0.0 and power < 0.0:
                return f"division by zero ({node} with {node.args[0]} = 0)"
            if base < 0.0 and not float(power).is_integer():
                return f"a non-integer power ({power:g}) of the negative number {base:.6g} ({node})"
        try:
            value = complex(sympy.N(node.subs(values), 30))
        except (TypeError, ValueError, OverflowError):
            continue
        if abs(value) > _LARGEST:
            return f"{node} overflows (its value is about {value.real:.3g})"
    return None


def _numeric_culprit(system: System, u: np.ndarray, p: np.ndarray) -> str | None:
    """numpy's own account of the failing operation (e.g. "exp overflows"), evaluating once more with
    floating-point errors raised; None when the evaluation does not go through numpy's functions."""
    try:
        with warnings.catch_warnings(), np.errstate(all="raise"):
            warnings.simplefilter("ignore")
            system.residual(u, p)
            system.linearise(u, p, 0)
    except FloatingPointError as error:
        found = re.search(r"(overflow|divide by zero|invalid value) encountered in (\w+)", str(error))
        if found:
            what, where = found.groups()
            return {"overflow": f"{where} overflows", "divide by zero": f"{where} divides by zero",
                    "invalid value": f"{where} gives an invalid value (e.g. log or sqrt of a negative number)"}[what]
        return str(error)
    except Exception:  # noqa: BLE001 - only a diagnosis: the real failure is reported by the caller
        return None
    return None


def _non_finite_entries(jacobian) -> list[tuple[int, int]]:
    """(row, column) of every entry of a dense or sparse Jacobian that is not finite, in row order."""
    if is_sparse(jacobian):
        coo = jacobian.tocoo()
        bad = ~np.isfinite(coo.data)
        return sorted(zip(coo.row[bad].tolist(), coo.col[bad].tolist()))
    return [(int(i), int(j)) for i, j in np.argwhere(~np.isfinite(jacobian))]


def describe_non_finite(extended: Extended, x: np.ndarray, residual: np.ndarray, jacobian: np.ndarray) -> str:
    """One line saying which equation (by name) is not finite at x, and what made it so where that
    can be told (an overflowing exp, a log of a negative number, a division by zero)."""
    system = extended.system
    names = tuple(getattr(system, "equations", ()) or ())
    columns = tuple(system.unknowns) + (system.parameters[extended.free],)
    u, p = extended.split(x)

    def equation(i: int) -> str:
        return f"equation {names[i]!r}" if i < len(names) else f"equation {i}"

    bad = [i for i in range(residual.size) if not math.isfinite(residual[i])]
    if bad:
        entries = [(i, None) for i in bad]
    else:
        entries = _non_finite_entries(jacobian)
    rows = sorted({i for i, _ in entries})
    expressions = getattr(system, "expressions", None) if isinstance(getattr(system, "symbols", None), dict) else None
    culprit = None
    (i, j) = entries[0]
    if expressions is not None:
        symbols = system.symbols
        values = {symbols[name]: float(v) for name, v in zip((*system.unknowns, *system.parameters), (*u, *p))
                  if name in symbols}
        for k, column in entries:
            try:
                culprit = _symbolic_culprit(expressions[names[k]], values) if k < len(names) else None
            except Exception:  # noqa: BLE001 - a diagnosis only
                culprit = None
            if culprit is not None:
                i, j = k, column
                break
    if j is None:
        text = f"the residual of {equation(i)} is {residual[i]}"
    else:
        text = f"the derivative of {equation(i)} by {columns[j]} is {jacobian[i, j]}"
    others = f" (and {len(rows) - 1} more equation{'s' if len(rows) > 2 else ''})" if len(rows) > 1 else ""
    if culprit is None:
        culprit = _numeric_culprit(system, u, p)
    reason = f": {culprit}" if culprit else ": an overflow, a division by zero or a value outside a function's domain"
    point = ", ".join(f"{name} = {value:.6g}" for name, value in zip(columns, x))
    return f"{text}{others} at {point}{reason}; start nearer a solution, where every equation is finite"
