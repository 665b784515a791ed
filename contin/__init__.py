"""contin: pseudo-arclength continuation of parameter-dependent nonlinear systems F(u, p) = 0."""

from ._errors import ContinError, InputError, TraceError
from ._system import CallableSystem, System

__version__ = "0.1.0"

__all__ = ["CallableSystem", "ContinError", "InputError", "System", "TraceError", "__version__"]
