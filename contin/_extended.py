"""The system seen by the driver: coordinates x = (u, p_free), evaluation counts, callback failures."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ._errors import InputError
from ._system import System

__all__ = ["CallbackFailure", "Counters", "Extended"]


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
            system (see :func:`contin._corrector.correct`); 0 keeps the absolute test alone.
    """

    def __init__(self, system: System, parameters: np.ndarray, free: int, counters: Counters,
                 relative_tolerance: float = 0.0) -> None:
        self.system = system
        self.parameters = np.array(parameters, dtype=float)
        self.free = free
        self.n = system.size
        self.counters = counters
        self.relative_tolerance = float(relative_tolerance)

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
        jacobian = np.empty((self.n, self.n + 1))
        jacobian[:, : self.n] = ju
        jacobian[:, self.n] = jp
        return np.asarray(f, dtype=float), jacobian
