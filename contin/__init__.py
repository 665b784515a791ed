"""contin: pseudo-arclength continuation of parameter-dependent nonlinear systems F(u, p) = 0.

The public face of the engine; everything not named here is private and free to change.
"""

from ._branch import Branch, SpecialPoint
from ._errors import ContinError, InputError, TraceError
from ._events import Event
from ._natural import sweep
from ._options import TraceOptions
from ._output import json_document
from ._plot import plot_branch
from ._progress import Progress
from ._record import read_record, restart, run_record, write_record
from ._status import Status
from ._system import CallableSystem, System
from ._trace import trace

__version__ = "0.1.0"

__all__ = [
    "Branch",
    "CallableSystem",
    "ContinError",
    "Event",
    "InputError",
    "SpecialPoint",
    "Status",
    "System",
    "TraceError",
    "TraceOptions",
    "__version__",
    "json_document",
    "plot_branch",
    "Progress",
    "read_record",
    "restart",
    "run_record",
    "sweep",
    "trace",
    "write_record",
]
