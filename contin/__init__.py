"""contin: pseudo-arclength continuation of parameter-dependent nonlinear systems F(u, p) = 0.

The public face of the engine; everything not named here is private and free to change.
"""

from ._switching import switch_branch
from ._branch import Branch, SpecialPoint
from ._cache import CompileCache, default_cache
from ._crossing import Crossing, Landing
from ._diagram import Diagram, build_diagram
from ._errors import ContinError, InputError, TraceError
from ._explore import explore
from ._events import Event
from ._follow import follow
from ._lyapunov import first_lyapunov_coefficient
from ._natural import sweep
from ._options import TraceOptions
from ._output import json_document
from ._plot import plot_branch
from ._problem import Problem, load_problem, run_problem
from ._progress import Progress
from ._record import document_record, read_record, restart, run_record, write_record
from ._sensitivity import Sensitivities, sensitivities
from ._status import Status
from ._structure import Structure, StructureWarning, analyse_structure
from ._study import run_study
from ._symbolic import SymbolicSystem, compile_expression, expression_event
from ._system import CallableSystem, System
from ._trace import trace

__version__ = "0.1.0"

__all__ = [
    "Branch",
    "CallableSystem",
    "CompileCache",
    "ContinError",
    "Crossing",
    "Diagram",
    "Event",
    "InputError",
    "Landing",
    "Problem",
    "Progress",
    "Sensitivities",
    "SpecialPoint",
    "Status",
    "Structure",
    "StructureWarning",
    "SymbolicSystem",
    "System",
    "TraceError",
    "TraceOptions",
    "__version__",
    "analyse_structure",
    "build_diagram",
    "compile_expression",
    "default_cache",
    "document_record",
    "explore",
    "expression_event",
    "first_lyapunov_coefficient",
    "follow",
    "json_document",
    "load_problem",
    "plot_branch",
    "read_record",
    "restart",
    "run_problem",
    "run_record",
    "run_study",
    "sensitivities",
    "sweep",
    "switch_branch",
    "trace",
    "write_record",
]
