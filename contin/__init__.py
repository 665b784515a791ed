"""contin: pseudo-arclength continuation of parameter-dependent nonlinear systems F(u, p) = 0.

The public face of the engine; everything not named here is private and free to change. Names are
imported on first use (see ``contin.base._lazy``): ``import contin`` and the command line start without
sympy, scipy or matplotlib.
"""

from .base._lazy import lazy_exports

from .base._version import __version__  # noqa: F401 (public)

# public name -> the private module that defines it ("module:attribute" where the names differ)
_EXPORTS = {
    "Branch": ".results._branch",
    "CallableSystem": ".systems._system",
    "CompileCache": ".systems._cache",
    "ContinError": ".base._errors",
    "Crossing": ".tracing._crossing",
    "DenseLU": ".tracing._linear",
    "Diagram": ".results._diagram",
    "Event": ".systems._events",
    "InputError": ".base._errors",
    "Landing": ".tracing._crossing",
    "LinearSolver": ".tracing._linear",
    "Problem": ".systems._problem",
    "Progress": ".base._progress",
    "Sensitivities": ".studies._sensitivity",
    "SparseLU": ".tracing._linear",
    "SpecialPoint": ".results._branch",
    "Status": ".results._status",
    "Structure": ".systems._structure",
    "StructureWarning": ".systems._structure",
    "SweepRun": ".studies._sweep",
    "SweepTask": ".studies._sweep",
    "SymbolicSystem": ".systems._symbolic",
    "System": ".systems._system",
    "TraceError": ".base._errors",
    "TraceOptions": ".tracing._options",
    "analyse_structure": ".systems._structure",
    "build_diagram": ".results._diagram",
    "compile_expression": ".systems._symbolic",
    "default_cache": ".systems._cache",
    "document_record": ".results._record",
    "explore": ".studies._explore",
    "expression_event": ".systems._symbolic",
    "first_lyapunov_coefficient": ".tracing._lyapunov",
    "follow": ".studies._follow",
    "json_document": ".base._output",
    "load_problem": ".systems._problem",
    "plot_branch": ".base._plot",
    "read_record": ".results._record",
    "restart": ".studies._restart",
    "run_problem": ".studies._run",
    "run_record": ".results._record",
    "run_study": ".studies._study",
    "run_sweep": ".studies._sweep",
    "sensitivities": ".studies._sensitivity",
    "sweep": ".tracing._natural",
    "sweep_report": ".studies._sweep",
    "switch_branch": ".tracing._switching",
    "trace": ".tracing._trace",
    "write_record": ".results._record",
}

__all__ = sorted(["__version__", *_EXPORTS])
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS, globals())
