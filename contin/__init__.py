"""contin: pseudo-arclength continuation of parameter-dependent nonlinear systems F(u, p) = 0.

The public face of the engine; everything not named here is private and free to change. Names are
imported on first use (see ``contin._lazy``): ``import contin`` and the command line start without
sympy, scipy or matplotlib.
"""

from ._lazy import lazy_exports

__version__ = "0.1.0"

# public name -> the private module that defines it ("module:attribute" where the names differ)
_EXPORTS = {
    "Branch": "._branch",
    "CallableSystem": "._system",
    "CompileCache": "._cache",
    "ContinError": "._errors",
    "Crossing": "._crossing",
    "Diagram": "._diagram",
    "Event": "._events",
    "InputError": "._errors",
    "Landing": "._crossing",
    "Problem": "._problem",
    "Progress": "._progress",
    "Sensitivities": "._sensitivity",
    "SpecialPoint": "._branch",
    "Status": "._status",
    "Structure": "._structure",
    "StructureWarning": "._structure",
    "SymbolicSystem": "._symbolic",
    "System": "._system",
    "TraceError": "._errors",
    "TraceOptions": "._options",
    "analyse_structure": "._structure",
    "build_diagram": "._diagram",
    "compile_expression": "._symbolic",
    "default_cache": "._cache",
    "document_record": "._record",
    "explore": "._explore",
    "expression_event": "._symbolic",
    "first_lyapunov_coefficient": "._lyapunov",
    "follow": "._follow",
    "json_document": "._output",
    "load_problem": "._problem",
    "plot_branch": "._plot",
    "read_record": "._record",
    "restart": "._record",
    "run_problem": "._problem",
    "run_record": "._record",
    "run_study": "._study",
    "sensitivities": "._sensitivity",
    "sweep": "._natural",
    "switch_branch": "._switching",
    "trace": "._trace",
    "write_record": "._record",
}

__all__ = sorted(["__version__", *_EXPORTS])
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS, globals())
