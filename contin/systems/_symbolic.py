"""Systems from equations: exact Jacobians, one compiled call for residual and both Jacobians, cached.

A :class:`SymbolicSystem` takes equations as text (read by the safe parser of :mod:`contin.systems._parse`)
or as sympy expressions. Each equation is differentiated only with respect to the symbols that appear
in it, so sparse systems cost what their nonzeros cost. The residual, dF/du and dF/dp (every
parameter) are compiled into ONE numeric function after common-subexpression elimination; parameter
values are inputs of that function, so changing them never recompiles.

Back ends:

- ``"symengine"``: differentiation in symengine (a C++ symbolic library) and evaluation through its
  LLVM-compiled ``Lambdify``. Much faster to set up and to evaluate (see benchmarks/bench_symbolic.py).
- ``"sympy"``: differentiation in sympy, ``sympy.cse`` and ``sympy.lambdify`` on Python's ``math``
  module. Always available.
- ``"auto"`` (default): symengine when it can be imported, else sympy. The environment variable
  ``CONTIN_SYMBOLIC_BACKEND`` overrides ``"auto"``.

Compiled functions are kept in a :class:`~contin.systems._cache.CompileCache` (memory and disk).
"""

from __future__ import annotations

import contextlib
import contextvars
import functools
import json
import keyword
import math
import os
import pickle
import re
import signal
import threading
import time
import unicodedata
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np
import sympy
from sympy.printing.str import StrPrinter

from ._cache import CompileCache, cache_key, default_cache
from ..base._errors import InputError
from ..base._names import check_names, suggest
from ._parse import FUNCTIONS, parse_expression
from ._structure import analyse_structure
from ._system import System

__all__ = [
    "BACKENDS",
    "SETUP_SECONDS",
    "SymbolicSystem",
    "choose_backend",
    "compile_expression",
    "expression_event",
    "symengine_available",
]

#: Accepted values of ``backend`` (and of the environment variable CONTIN_SYMBOLIC_BACKEND).
BACKENDS = ("auto", "symengine", "sympy")
#: LLVM optimisation level. Measured (n = 200 chain, 12-unknown envelope-sized system): level 0
#: compiles 3-8x faster than 1-3 and evaluates as fast, since call overhead dominates.
_LLVM_OPT_LEVEL = 0


@functools.cache
def symengine_available() -> bool:
    """True when symengine imports and its LLVM evaluation works on this machine."""
    try:
        import symengine

        x = symengine.Symbol("x")
        probe = symengine.Lambdify([x], [x * 2.0], backend="llvm", real=True)
        return bool(abs(float(np.asarray(probe(np.array([1.5]))).reshape(-1)[0]) - 3.0) < 1e-15)
    except Exception:  # ImportError, or a build without LLVM
        return False


def choose_backend(backend: str = "auto") -> str:
    """Resolve ``backend`` ("auto", "symengine" or "sympy") to the back end that will be used.

    Raises:
        InputError: for an unknown name, or "symengine" asked for but not importable.
    """
    if not isinstance(backend, str) or backend not in BACKENDS:
        raise InputError(f"backend={backend!r} is not known; use one of {', '.join(BACKENDS)}{suggest(str(backend), BACKENDS)}")
    if backend == "auto":
        chosen = os.environ.get("CONTIN_SYMBOLIC_BACKEND", "auto").strip() or "auto"
        if chosen not in BACKENDS:
            raise InputError(
                f"environment variable CONTIN_SYMBOLIC_BACKEND={chosen!r} is not known; use one of "
                f"{', '.join(BACKENDS)}{suggest(chosen, BACKENDS)}"
            )
        backend = chosen
    if backend == "auto":
        return "symengine" if symengine_available() else "sympy"
    if backend == "symengine" and not symengine_available():
        raise InputError(
            "backend='symengine' but symengine (with LLVM) cannot be imported; install it with "
            "'pip install symengine' or use backend='sympy'"
        )
    return backend


class _CachePrinter(StrPrinter):
    """Prints sympy expressions as text the allow-list parser reads back exactly."""

    def _print_Float(self, expr: sympy.Float) -> str:
        return repr(float(expr))

    def _print_Rational(self, expr: sympy.Rational) -> str:
        return f"({expr.p}/{expr.q})"

    def _print_Integer(self, expr: sympy.Integer) -> str:
        return str(int(expr))


def _text(expr: sympy.Expr) -> str:
    return _CachePrinter({"full_prec": True}).doprint(expr)


def _smooth(expr: sympy.Expr) -> sympy.Expr:
    """Heaviside (from derivatives of Min/Max) written with sign(), which every back end evaluates."""
    if expr.has(sympy.Heaviside):
        expr = expr.replace(sympy.Heaviside, lambda z, *rest: (1 + sympy.sign(z)) / 2)
    return expr


def _to_symengine(expr: sympy.Basic):
    """Convert a sympy object (never text: text only ever goes through the safe parser) to symengine."""
    import symengine

    if not isinstance(expr, sympy.Basic):
        raise TypeError(f"expected a sympy expression, got {type(expr).__name__}")
    return symengine.sympify(expr)


class _Layout:
    """Where each output of the compiled function goes: residual, then dF/du and dF/dp nonzeros."""

    def __init__(self, n: int, m: int, entries: Sequence[tuple[int, int]]) -> None:
        rows = np.array([i for i, _ in entries], dtype=np.intp)
        cols = np.array([j for _, j in entries], dtype=np.intp)
        in_u = cols < n
        self.n, self.m = n, m
        self.u_rows, self.u_cols = rows[in_u], cols[in_u]
        self.p_rows, self.p_cols = rows[~in_u], cols[~in_u] - n
        self.u_slice = slice(n, n + int(in_u.sum()))
        self.p_slice = slice(self.u_slice.stop, self.u_slice.stop + int((~in_u).sum()))
        # The compiled outputs are ordered u-entries first, then p-entries (see _derivatives).
        assert np.all(in_u[: int(in_u.sum())])
        # dF/du as CSR: the outputs taken in row-major order fill ``data`` directly.
        self.csr_order = np.lexsort((self.u_cols, self.u_rows))
        self.csr_indices = self.u_cols[self.csr_order]
        self.csr_indptr = np.concatenate(([0], np.cumsum(np.bincount(self.u_rows, minlength=n)))).astype(np.intp)

    def sparse_jacobian(self, out: np.ndarray):
        """dF/du from the compiled outputs as a scipy.sparse CSR array (only the non-zeros stored)."""
        from scipy.sparse import csr_array

        data = out[self.u_slice][self.csr_order]
        return csr_array((data, self.csr_indices.copy(), self.csr_indptr.copy()), shape=(self.n, self.n))


#: From this many unknowns a SymbolicSystem whose dF/du has at most :data:`SPARSE_DENSITY` non-zeros
#: per entry returns dF/du as a sparse matrix by default (the trace then uses sparse LU).
SPARSE_SIZE = 400
SPARSE_DENSITY = 0.05


#: Longest symbolic set-up (parsing, differentiation, compilation) of one system, in seconds. The
#: environment variable CONTIN_SETUP_SECONDS sets another limit ("off" or 0: none).
SETUP_SECONDS = 120.0
_DEADLINE: contextvars.ContextVar[float | None] = contextvars.ContextVar("contin_setup_deadline", default=None)


class _SetupTimeout(Exception):
    """Internal: the set-up ran past its time limit."""


def _setup_seconds() -> float | None:
    text = os.environ.get("CONTIN_SETUP_SECONDS", "").strip().lower()
    if not text:
        return SETUP_SECONDS
    if text in ("off", "none", "0"):
        return None
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"CONTIN_SETUP_SECONDS={text!r} is not a number of seconds (or 'off')") from None
    if not math.isfinite(value) or value < 0:
        raise InputError(f"CONTIN_SETUP_SECONDS={text!r} must be a positive number of seconds (or 'off')")
    return value or None


def _check_deadline() -> None:
    deadline = _DEADLINE.get()
    if deadline is not None and time.monotonic() > deadline:
        raise _SetupTimeout


def _on_alarm(signum, frame):
    raise _SetupTimeout


@contextlib.contextmanager
def _time_limit():
    """Stop a symbolic set-up that runs past :data:`SETUP_SECONDS` with an InputError.

    The limit is checked between derivatives and, in the main thread, also by a timer signal (so a
    single long sympy operation is interrupted too; a long call inside a compiled library ends first).
    """
    seconds = _setup_seconds()
    if seconds is None or _DEADLINE.get() is not None:
        yield
        return
    token = _DEADLINE.set(time.monotonic() + seconds)
    alarm = (threading.current_thread() is threading.main_thread() and hasattr(signal, "setitimer")
             and signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0))
    previous = signal.signal(signal.SIGALRM, _on_alarm) if alarm else None
    try:
        if alarm:
            signal.setitimer(signal.ITIMER_REAL, seconds)
        yield
    except _SetupTimeout:
        raise InputError(
            f"the symbolic set-up took longer than {seconds:g} s (the limit; CONTIN_SETUP_SECONDS changes it): "
            "the equations are too large to differentiate and compile; split them with intermediate unknowns"
        ) from None
    finally:
        if alarm:
            signal.signal(signal.SIGALRM, signal.SIG_IGN)  # a last alarm now must not escape
            signal.setitimer(signal.ITIMER_REAL, 0.0)
            signal.signal(signal.SIGALRM, previous)
        _DEADLINE.reset(token)


def _derivatives(residuals: Sequence[Any], variables: Sequence[Any], n: int, backend: str):
    """Nonzero derivatives dF_i/dx_j for the symbols x_j present in F_i, u-columns before p-columns.

    ``residuals`` and ``variables`` are objects of the back end's library (symengine for
    "symengine", sympy for "sympy").

    Returns:
        (entries [(i, j)], derivative expressions in the back end's library).
    """
    index = {symbol: k for k, symbol in enumerate(variables)}
    nonsmooth_types = _symengine_nonsmooth() if backend == "symengine" else ()
    u_part: list[tuple[tuple[int, int], Any]] = []
    p_part: list[tuple[tuple[int, int], Any]] = []
    for i, expr in enumerate(residuals):
        _check_deadline()
        present = sorted(index[s] for s in expr.free_symbols if s in index)
        if backend == "symengine" and expr.atoms(*nonsmooth_types):
            # symengine cannot differentiate abs/min/max: sympy does (with real symbols), then it is converted.
            real = {sympy.Symbol(v.name): sympy.Symbol(v.name, real=True) for v in variables}
            translated = expr._sympy_().xreplace(real)
            derivatives = [_to_symengine(_smooth(sympy.diff(translated, real[sympy.Symbol(variables[j].name)]))) for j in present]
        elif backend == "symengine":
            derivatives = [expr.diff(variables[j]) for j in present]
        else:
            derivatives = [_smooth(sympy.diff(expr, variables[j])) for j in present]
        _check_deadline()
        for j, derivative in zip(present, derivatives):
            if derivative == 0:
                continue
            (u_part if j < n else p_part).append(((i, j), derivative))
    ordered = u_part + p_part
    return [entry for entry, _ in ordered], [d for _, d in ordered]


@functools.cache
def _symengine_nonsmooth() -> tuple[type, ...]:
    import symengine

    x, y = symengine.symbols("x y")
    return tuple(type(f) for f in (symengine.Abs(x), symengine.Max(x, y), symengine.Min(x, y), symengine.sign(x)))


class _SympyFunctions:
    """Residual-only and residual-plus-Jacobians functions from sympy's lambdify on ``math``."""

    def __init__(self, variables, residual_plan, full_plan) -> None:
        self.residual_function = _lambdify(variables, *residual_plan)
        self.full_function = _lambdify(variables, *full_plan)
        self.sizes = (len(residual_plan[1]), len(full_plan[1]))

    def residual(self, x: np.ndarray) -> np.ndarray:
        return _call(self.residual_function, x, self.sizes[0])

    def full(self, x: np.ndarray) -> np.ndarray:
        return _call(self.full_function, x, self.sizes[1])


def _lambdify(variables, replacements, outputs):
    return sympy.lambdify([list(variables)], list(outputs), modules="math", cse=lambda e: (list(replacements), e))


def _call(function, x: np.ndarray, size: int) -> np.ndarray:
    try:
        return np.asarray(function(x.tolist()), dtype=float).reshape(size)
    except (OverflowError, ZeroDivisionError, ValueError, TypeError):
        # math raises where LLVM code returns inf/nan; the driver treats non-finite values as a failed step.
        return np.full(size, np.nan)


class _SymengineFunctions:
    """Residual-only and residual-plus-Jacobians functions compiled by symengine's LLVM Lambdify."""

    def __init__(self, residual_function, full_function) -> None:
        self.residual_function = residual_function
        self.full_function = full_function

    def residual(self, x: np.ndarray) -> np.ndarray:
        return np.asarray(self.residual_function(x), dtype=float).reshape(-1)

    def full(self, x: np.ndarray) -> np.ndarray:
        return np.asarray(self.full_function(x), dtype=float).reshape(-1)


def _build(residuals, variables, n, backend):
    """Differentiate and compile; returns (functions, entries, payload kind, payload bytes)."""
    entries, derivatives = _derivatives(residuals, variables, n, backend)
    _check_deadline()
    converted = list(residuals)
    if backend == "symengine":
        import symengine

        engine_variables = list(variables)
        residual_function = symengine.Lambdify(
            engine_variables, converted, backend="llvm", cse=True, real=True, opt_level=_LLVM_OPT_LEVEL
        )
        full_function = symengine.Lambdify(
            engine_variables, [*converted, *derivatives], backend="llvm", cse=True, real=True, opt_level=_LLVM_OPT_LEVEL
        )
        functions = _SymengineFunctions(residual_function, full_function)
        try:
            payload = pickle.dumps((entries, residual_function, full_function), protocol=pickle.HIGHEST_PROTOCOL)
        except Exception:  # a symengine build that cannot pickle: no disk cache, still works
            payload = None
        return functions, entries, "pickle", payload
    symbols = sympy.numbered_symbols("_c")
    residual_plan = sympy.cse(list(converted), symbols=sympy.numbered_symbols("_r"))
    full_plan = sympy.cse([*converted, *derivatives], symbols=symbols)
    functions = _SympyFunctions(variables, residual_plan, full_plan)
    document = {
        "entries": entries,
        "residual": [[[str(s), _text(e)] for s, e in residual_plan[0]], [_text(e) for e in residual_plan[1]]],
        "full": [[[str(s), _text(e)] for s, e in full_plan[0]], [_text(e) for e in full_plan[1]]],
    }
    return functions, entries, "text", json.dumps(document).encode("utf-8")


def _build_along(residuals, variables, n, backend):
    """Compiled exact directional derivative of the Jacobians, d/de [dF/du | dF/dp](u + e x, p) at
    e = 0: the Jacobian, in (u, p), of G(u, p; x) = dF/du(u, p) x.

    Returns:
        (function of the inputs (u, p, x) giving the nonzeros, their entries [(i, j)]).
    """
    entries, first = _derivatives(residuals, variables, n, backend)
    if backend == "symengine":
        import symengine

        # names no equation can use (the parser's identifiers never hold a space)
        directions = [symengine.Symbol(f"along {k}") for k in range(n)]
        zero = symengine.Integer(0)
    else:
        directions = [sympy.Symbol(f"_along{k}", real=True) for k in range(n)]
        zero = sympy.S.Zero
    along = [zero] * len(residuals)
    for (i, j), derivative in zip(entries, first):
        if j < n:
            along[i] = along[i] + derivative * directions[j]
    along_entries, second = _derivatives(along, variables, n, backend)
    inputs = [*variables, *directions]
    if backend == "symengine":
        function = symengine.Lambdify(inputs, second or [zero], backend="llvm", cse=True, real=True,
                                      opt_level=_LLVM_OPT_LEVEL)
        return (lambda x: np.asarray(function(x), dtype=float).reshape(-1)[: len(second)]), along_entries
    plan = sympy.cse(list(second), symbols=sympy.numbered_symbols("_a"))
    compiled = _lambdify(inputs, *plan)
    return (lambda x: _call(compiled, x, len(second))), along_entries


def _load(kind: str, payload: bytes, variables):
    """Functions and entries from a verified cache payload; raises on anything unexpected."""
    if kind == "pickle":
        entries, residual_function, full_function = pickle.loads(payload)  # HMAC-verified by the cache
        return _SymengineFunctions(residual_function, full_function), [tuple(e) for e in entries]
    document = json.loads(payload.decode("utf-8"))
    names = {str(v): v for v in variables}

    def plan(part):
        replacements = []
        for name, text in part[0]:
            # Names end up in code that sympy generates: only the shapes contin itself writes.
            if not (isinstance(name, str) and re.fullmatch(r"_[cr][0-9]+", name)):
                raise ValueError(f"unexpected name {name!r} in a cache entry")
            symbol = sympy.Symbol(name)
            replacements.append((symbol, parse_expression(text, names, label="cache", _cache_format=True)))
            names[name] = symbol
        outputs = [parse_expression(text, names, label="cache", _cache_format=True) for text in part[1]]
        return replacements, outputs

    residual_plan = plan(document["residual"])
    full_plan = plan(document["full"])
    return _SympyFunctions(variables, residual_plan, full_plan), [tuple(e) for e in document["entries"]]


_ELEMENT = re.compile(r"([^\[\]]+)\[(0|[1-9][0-9]*)\]")


def _check_declared_names(names: Sequence[str], argument: str) -> None:
    """Names usable in equations: identifiers, or entries ``u[3]`` of an indexed family ``u``."""
    for declared in names:
        element = _ELEMENT.fullmatch(declared)
        name = element.group(1) if element else declared
        if not name.isidentifier() or keyword.iskeyword(name):
            raise InputError(
                f"{argument} name {name!r} is not usable in equations: use letters, digits and "
                "underscores, starting with a letter"
            )
        normal = unicodedata.normalize("NFKC", name)
        if normal != name:
            raise InputError(
                f"{argument} name {name!r} changes under Unicode normalisation to {normal!r}, which is how "
                f"expressions read it; write it as {normal!r}"
            )
        if name in FUNCTIONS:
            raise InputError(f"{argument} name {name!r} is also a function name ({name}(...)); rename it")


class SymbolicSystem(System):
    """A system F(u, p) = 0 given as equations, with exact compiled Jacobians.

    Args:
        equations: equation name -> expression (text, or a sympy expression in symbols named like
            the unknowns, parameters and constants); the equation is ``expression = 0`` (or
            ``du/dt = expression`` for ``kind="ode"``, in the order of the unknowns).
        unknowns: unknown name -> start value (or a sequence of names: no default start).
        parameters: parameter name -> default value.
        constants: optional name -> value, substituted before differentiation.
        kind: ``"algebraic"`` or ``"ode"``.
        backend: ``"auto"``, ``"symengine"`` or ``"sympy"`` (see module docs).
        cache: the :class:`~contin.systems._cache.CompileCache` to use (default: the process-wide one), or
            False for none.
        labels: optional equation name -> where it comes from, put in front of parse messages
            (e.g. ``"reactor.toml: equation 'heat' (line 12)"``).
        sparse: return dF/du from :meth:`linearise` as a scipy.sparse CSR matrix (True), dense (False),
            or decide by size (None: sparse from :data:`SPARSE_SIZE` unknowns when at most
            :data:`SPARSE_DENSITY` of the entries are non-zero). The pattern is the structure graph's:
            only the derivatives of an equation by the symbols in it are compiled.

    Raises:
        InputError: bad names, a text expression outside the allow-list (with the equation name and
            column), a symbol nobody declared, unequal numbers of equations and unknowns, a
            structurally singular system (naming equations and unknowns), non-finite values.

    Example:
        >>> system = SymbolicSystem({"balance": "u**3 - u + p"}, {"u": 0.0}, {"p": -1.0})
        >>> system.residual(np.array([1.0]), np.array([0.5]))
        array([0.5])
    """

    def __init__(
        self,
        equations: Mapping[str, str | sympy.Expr],
        unknowns: Mapping[str, float] | Sequence[str],
        parameters: Mapping[str, float],
        constants: Mapping[str, float] | None = None,
        *,
        kind: str = "algebraic",
        backend: str = "auto",
        cache: CompileCache | bool | None = None,
        labels: Mapping[str, str] | None = None,
        sparse: bool | None = None,
    ) -> None:
        began = time.perf_counter()
        if sparse not in (None, True, False):
            raise InputError(f"sparse={sparse!r} must be True, False or None (decide by size)")
        if not isinstance(equations, Mapping):
            raise InputError("equations must be a mapping of equation name -> expression")
        if isinstance(unknowns, Mapping):
            unknown_names = tuple(unknowns)
            start = [unknowns[name] for name in unknown_names]
        else:
            unknown_names, start = tuple(unknowns), None
        if not isinstance(parameters, Mapping):
            raise InputError("parameters must be a mapping of parameter name -> value")
        constants = dict(constants or {})
        equation_names = tuple(equations)
        check_names(equation_names, "equations")
        check_names(unknown_names, "unknowns")
        check_names(tuple(parameters), "parameters")
        check_names(tuple(constants), "constants", allow_empty=True)
        for argument, names in (("unknown", unknown_names), ("parameter", tuple(parameters)), ("constant", tuple(constants))):
            _check_declared_names(names, argument)
        groups = {"unknowns": set(unknown_names), "parameters": set(parameters), "constants": set(constants)}
        for first, second in (("unknowns", "parameters"), ("unknowns", "constants"), ("parameters", "constants")):
            overlap = sorted(groups[first] & groups[second])
            if overlap:
                raise InputError(f"{', '.join(overlap)} declared both in {first} and in {second}; use one name once")
        if kind not in ("algebraic", "ode"):
            raise InputError(f"kind={kind!r} is not known; use 'algebraic' or 'ode'{suggest(str(kind), ('algebraic', 'ode'))}")
        if len(equation_names) != len(unknown_names):
            raise InputError(
                f"there are {len(equation_names)} equations but {len(unknown_names)} unknowns; "
                "a system needs exactly one equation per unknown"
            )
        self.backend = choose_backend(backend)
        values = {}
        for argument, mapping in (("parameters", parameters), ("constants", constants)):
            for name, value in mapping.items():
                values[name] = _finite(value, f"{argument}[{name!r}]")
        if start is not None:
            start = [_finite(value, f"unknowns[{name!r}] (start value)") for name, value in zip(unknown_names, start)]

        symbols = {name: sympy.Symbol(name, real=True) for name in (*unknown_names, *parameters)}
        constant_values = {name: sympy.Float(values[name]) for name in constants}
        self.unknowns = unknown_names
        self.parameters = tuple(parameters)
        self.parameter_values = np.array([values[name] for name in self.parameters], dtype=float)
        self.start = None if start is None else np.array(start, dtype=float)
        self.equations = equation_names
        self.kind = kind
        self.constants = {name: values[name] for name in constants}
        self.symbols = symbols
        self._names: dict[str, sympy.Expr] = {**symbols, **constant_values}
        self._sources = {name: equations[name] for name in equation_names}
        self._labels = {name: (labels or {}).get(name, f"equation {name!r}") for name in equation_names}
        self._expressions: dict[str, sympy.Expr] | None = None
        self._engine_expressions: list | None = None
        self._cache = default_cache() if cache is None or cache is True else (cache or None)
        with _time_limit():
            self._compile()
        nonzeros = int(self._layout.u_rows.size)
        n = len(unknown_names)
        self.sparse = bool(sparse) if sparse is not None else (
            n >= SPARSE_SIZE and nonzeros <= SPARSE_DENSITY * n * n)
        self.setup_seconds = time.perf_counter() - began

    @property
    def _library(self) -> str:
        """The library expressions are built in: symengine for that back end (much faster), else sympy."""
        return "symengine" if self.backend == "symengine" else "sympy"

    def _engine_table(self) -> dict:
        """Name -> symbol or constant value in the back end's library."""
        if self._library == "sympy":
            return self._names
        import symengine

        table = {name: symengine.Symbol(name) for name in (*self.unknowns, *self.parameters)}
        table.update({name: symengine.RealDouble(value) for name, value in self.constants.items()})
        return table

    def _engine_expression(self, value: object, table: Mapping, label: str):
        """One equation (text or sympy) as an expression of the back end's library."""
        if isinstance(value, str) and self._library == "symengine":
            return parse_expression(value, table, label=label, library="symengine")
        expr = _as_expression(value, self._names, label, label)
        return _to_symengine(expr) if self._library == "symengine" else expr

    def _residual_expressions(self) -> list:
        """The equations in the back end's library, in equation order (parsed on first use)."""
        if self._engine_expressions is None:
            table = self._engine_table()
            self._engine_expressions = [
                self._engine_expression(self._sources[name], table, self._labels[name]) for name in self.equations
            ]
        return self._engine_expressions

    @property
    def expressions(self) -> dict[str, sympy.Expr]:
        """Equation name -> sympy expression (built on first use; symbols are ``self.symbols``)."""
        if self._expressions is None:
            if self._library == "sympy":
                self._expressions = dict(zip(self.equations, self._residual_expressions()))
            else:
                by_name = {sympy.Symbol(name): symbol for name, symbol in self.symbols.items()}
                self._expressions = {
                    name: expr._sympy_().xreplace(by_name) for name, expr in zip(self.equations, self._residual_expressions())
                }
        return self._expressions

    @classmethod
    def from_sympy(
        cls,
        expressions: Sequence[sympy.Expr],
        unknowns: Mapping[sympy.Symbol | str, float] | Sequence[sympy.Symbol | str],
        parameters: Mapping[sympy.Symbol | str, float],
        constants: Mapping[sympy.Symbol | str, float] | None = None,
        *,
        equations: Sequence[str] | None = None,
        kind: str = "algebraic",
        backend: str = "auto",
        cache: CompileCache | bool | None = None,
    ) -> SymbolicSystem:
        """A system from a list of sympy expressions and sympy symbols (or their names).

        Args:
            expressions: residual expressions, one per unknown.
            unknowns, parameters, constants: as for the constructor, keyed by symbols or names.
            equations: optional equation names (default ``f0``, ``f1``, ...).
        """
        def name_of(key):
            return key.name if isinstance(key, sympy.Symbol) else key

        names = tuple(equations) if equations is not None else tuple(f"f{i}" for i in range(len(expressions)))
        if len(names) != len(expressions):
            raise InputError(f"equations names {len(names)} equations but {len(expressions)} expressions were given")
        if isinstance(unknowns, Mapping):
            unknown_arg: Any = {name_of(k): v for k, v in unknowns.items()}
        else:
            unknown_arg = [name_of(k) for k in unknowns]
        return cls(
            dict(zip(names, expressions)),
            unknown_arg,
            {name_of(k): v for k, v in parameters.items()},
            {name_of(k): v for k, v in (constants or {}).items()},
            kind=kind,
            backend=backend,
            cache=cache,
        )

    # -- compilation -------------------------------------------------------------------------------
    def _variables(self) -> list[sympy.Symbol]:
        return [sympy.Symbol(f"_x{k}", real=True) for k in range(len(self.unknowns) + len(self.parameters))]

    def _key(self) -> str:
        parts = [self.backend, " ".join(self.unknowns), " ".join(self.parameters)]
        parts.append(" ".join(f"{name}={value!r}" for name, value in self.constants.items()))
        for name in self.equations:
            source = self._sources[name]
            parts.append(f"{name}\0text\0{source}" if isinstance(source, str) else f"{name}\0sympy\0{_text(source)}")
        return cache_key(*parts)

    def _compile(self) -> None:
        """Compiled functions from the cache (memory, then disk), else differentiate and compile.

        A text equation is only parsed when the system is built: a cache entry exists only for text
        that was parsed, checked and found structurally sound before.
        """
        variables = self._variables()
        n, m = len(self.unknowns), len(self.parameters)
        key = self.cache_key = self._key()
        cache = self._cache
        kind = "pickle" if self.backend == "symengine" else "text"
        found, source = (cache.recall(key) if cache is not None else None), "memory"
        if found is None and cache is not None:
            payload = cache.read(key, kind)
            if payload is not None:
                try:
                    found, source = _load(kind, payload, variables), "disk"
                except Exception:  # verified but unreadable (e.g. a library changed behind a version): rebuild
                    cache.discard(key)
        if found is None:
            expressions = self._residual_expressions()
            unknown_set = set(self.unknowns)
            incidence = {
                name: {s.name for s in expr.free_symbols if s.name in unknown_set}
                for name, expr in zip(self.equations, expressions)
            }
            self.structure = analyse_structure(self.equations, self.unknowns, incidence, warn=True)
            residuals, variables = self._compilable(expressions, variables)
            functions, entries, kind, payload = _build(residuals, variables, n, self.backend)
            found, source = (functions, entries), "built"
            if cache is not None and payload is not None:
                cache.write(key, kind, payload)
        else:
            incidence = {name: set() for name in self.equations}
            for i, j in found[1]:
                if j < n:
                    incidence[self.equations[i]].add(self.unknowns[j])
            self.structure = analyse_structure(self.equations, self.unknowns, incidence, warn=True)
        if cache is not None:
            cache.remember(key, found)
        self._functions, entries = found
        self._layout = _Layout(n, m, entries)
        self.cache_source = source

    def _compilable(self, expressions: list, variables: list) -> tuple[list, list]:
        """(residuals, variables) as the back end compiles them: sympy in the numbered symbols
        ``_x<k>``, symengine in the user's own symbols."""
        if self._library == "sympy":
            rename = {self.symbols[name]: v for name, v in zip((*self.unknowns, *self.parameters), variables)}
            return [expr.xreplace(rename) for expr in expressions], variables
        table = self._engine_table()
        return expressions, [table[name] for name in (*self.unknowns, *self.parameters)]

    # -- System interface --------------------------------------------------------------------------
    def _inputs(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        return np.concatenate((np.asarray(u, dtype=float).reshape(-1), np.asarray(p, dtype=float).reshape(-1)))

    def residual(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        """F(u, p), array (n,)."""
        return self._functions.residual(self._inputs(u, p))

    def evaluate(self, u: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(F (n,), dF/du (n, n), dF/dp (n, m)) from one compiled call."""
        out = self._functions.full(self._inputs(u, p))
        layout = self._layout
        jacobian = np.zeros((layout.n, layout.n))
        jacobian[layout.u_rows, layout.u_cols] = out[layout.u_slice]
        parameter_jacobian = np.zeros((layout.n, layout.m))
        parameter_jacobian[layout.p_rows, layout.p_cols] = out[layout.p_slice]
        return out[: layout.n].copy(), jacobian, parameter_jacobian

    def linearise(self, u: np.ndarray, p: np.ndarray, free: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(F, dF/du, dF/dp[free]) at (u, p), exact, from one compiled call; dF/du is a CSR matrix when
        the system is ``sparse``."""
        out = self._functions.full(self._inputs(u, p))
        layout = self._layout
        if self.sparse:
            jacobian = layout.sparse_jacobian(out)
        else:
            jacobian = np.zeros((layout.n, layout.n))
            jacobian[layout.u_rows, layout.u_cols] = out[layout.u_slice]
        column = np.zeros(layout.n)
        chosen = layout.p_cols == free
        column[layout.p_rows[chosen]] = out[layout.p_slice][chosen]
        return out[: layout.n].copy(), jacobian, column

    def parameter_jacobian(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        """dF/dp for every parameter, exact, array (n, m)."""
        return self.evaluate(u, p)[2]

    def jacobian(self, u: np.ndarray, p: np.ndarray) -> np.ndarray:
        """dF/du, exact, array (n, n)."""
        return self.evaluate(u, p)[1]

    def jacobian_along(self, u: np.ndarray, p: np.ndarray, x: np.ndarray) -> np.ndarray:
        """d/de [dF/du | dF/dp](u + e x, p) at e = 0, exact, array (n, n + m): the second derivatives
        F_uu[x, .] and F_up[x, .] that curves of folds and Hopf points, branch switching and the first
        Lyapunov coefficient need (they fall back to differences of the Jacobian for systems without
        this method). Differentiated and compiled on first use, then kept with the system."""
        if getattr(self, "_along", None) is None:
            variables = self._variables()
            residuals, variables = self._compilable(self._residual_expressions(), variables)
            function, entries = _build_along(residuals, variables, len(self.unknowns), self.backend)
            rows = np.array([i for i, _ in entries], dtype=np.intp)
            cols = np.array([j for _, j in entries], dtype=np.intp)
            self._along = (function, rows, cols)
        function, rows, cols = self._along
        values = function(np.concatenate((self._inputs(u, p), np.asarray(x, dtype=float).reshape(-1))))
        out = np.zeros((len(self.unknowns), len(self.unknowns) + len(self.parameters)))
        out[rows, cols] = values
        return out

    def structure_summary(self) -> dict:
        """JSON-ready block structure of the system (copied into ``branch.stats["structure"]``)."""
        return self.structure.summary()

    def symbolic_summary(self) -> dict:
        """JSON-ready facts about the compilation: back end, set-up time, where it came from."""
        return {
            "backend": self.backend,
            "setup_seconds": self.setup_seconds,
            "compiled_from": self.cache_source,
            "jacobian_nonzeros": int(self._layout.u_rows.size),
            "parameter_jacobian_nonzeros": int(self._layout.p_rows.size),
            "jacobian_format": "sparse" if self.sparse else "dense",
        }

    def __getstate__(self) -> dict:
        # Compiled functions are rebuilt (from the cache) in the receiving process.
        state = self.__dict__.copy()
        for name in ("_functions", "_layout", "_cache", "structure", "_engine_expressions", "_expressions", "_along"):
            state.pop(name, None)
        state["_use_cache"] = self._cache is not None
        return state

    def __setstate__(self, state: dict) -> None:
        use_cache = state.pop("_use_cache", True)
        self.__dict__.update(state)
        self._engine_expressions = self._expressions = None
        self._cache = default_cache() if use_cache else None
        self._compile()


def _finite(value: object, argument: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise InputError(f"{argument} is {value!r}, which is not a number")
    result = float(value)
    if not math.isfinite(result):
        raise InputError(f"{argument} is {result}, which is not finite")
    return result


def _as_expression(value: object, table: Mapping[str, sympy.Expr], equation: str, label: str | None = None) -> sympy.Expr:
    """Equation text or sympy expression -> sympy expression in the system's symbols."""
    where = label or f"equation {equation!r}"
    if isinstance(value, str):
        return parse_expression(value, table, label=where)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        value = sympy.Float(value)
    if not isinstance(value, sympy.Basic) or not isinstance(value, sympy.Expr):
        raise InputError(f"{where} is {type(value).__name__}; give text or a sympy expression")
    replace = {}
    for symbol in sorted(value.free_symbols, key=lambda s: s.name):
        if symbol.name not in table:
            hint = suggest(symbol.name, table)
            raise InputError(f"{where} uses symbol {symbol.name!r}, which is not declared{hint}")
        replace[symbol] = table[symbol.name]
    result = value.xreplace(replace)
    if result.has(sympy.I):
        raise InputError(f"{where} holds the imaginary unit; every constant must be real")
    if result.has(sympy.zoo, sympy.nan, sympy.oo, -sympy.oo):
        raise InputError(f"{where} is infinite or undefined (a division by zero?)")
    unsupported = sorted({type(f).__name__ for f in result.atoms(sympy.Function) if not _supported(f)})
    if unsupported:
        raise InputError(
            f"{where} uses {', '.join(unsupported)}, which contin cannot compile; allowed "
            f"functions: {', '.join(sorted(FUNCTIONS))}"
        )
    return result


_SUPPORTED = tuple({entry[0] for entry in FUNCTIONS.values() if isinstance(entry[0], type)}) + (sympy.sign, sympy.Heaviside)


def _supported(function: sympy.Basic) -> bool:
    return isinstance(function, _SUPPORTED) or (isinstance(function, sympy.Pow))


def compile_expression(system: SymbolicSystem, expression: str | sympy.Expr, *, label: str = "expression") -> Callable[[np.ndarray, np.ndarray], float]:
    """A compiled scalar function ``g(u, p) -> float`` of the system's unknowns and parameters.

    Args:
        system: the :class:`SymbolicSystem` whose names the expression uses (constants too).
        expression: text (safe parser) or a sympy expression.
        label: where the text comes from, for messages.

    Raises:
        InputError: as for equations.
    """
    if not isinstance(system, SymbolicSystem):
        raise InputError("compile_expression needs a SymbolicSystem (its names give the expression meaning)")
    expr = _as_expression(expression, system._names, label, label)
    variables = system._variables()
    rename = {system.symbols[name]: v for name, v in zip((*system.unknowns, *system.parameters), variables)}
    expr = _smooth(expr.xreplace(rename))
    if system.backend == "symengine":
        import symengine

        function = symengine.Lambdify([_to_symengine(v) for v in variables], [_to_symengine(expr)], backend="llvm", real=True,
                                       opt_level=_LLVM_OPT_LEVEL)

        def evaluate(u: np.ndarray, p: np.ndarray) -> float:
            return float(np.asarray(function(system._inputs(u, p))).reshape(-1)[0])

    else:
        function = sympy.lambdify([variables], expr, modules="math")

        def evaluate(u: np.ndarray, p: np.ndarray) -> float:
            try:
                return float(function(system._inputs(u, p).tolist()))
            except (OverflowError, ZeroDivisionError, ValueError, TypeError):
                return math.nan

    evaluate.__doc__ = f"{label}: {expression}"
    return evaluate


def expression_event(
    system: SymbolicSystem,
    name: str,
    expression: str | sympy.Expr,
    *,
    direction: int = 0,
    terminal: bool = False,
    kind: str = "event",
):
    """A :class:`contin.Event` whose function is the compiled ``expression`` (zero crossings reported).

    Args:
        system: the system whose names the expression uses.
        name: the event's name (reported with each special point).
        expression: text or sympy expression of the unknowns, parameters and constants.
        direction: 0 any crossing, 1 only increasing, -1 only decreasing.
        terminal: stop the trace at the first located crossing.
        kind: kind of the reported special point.
    """
    from ._events import Event  # the engine's; imported late so this module loads before it exists

    function = compile_expression(system, expression, label=f"event {name!r}")
    return Event(name, function, direction=direction, terminal=terminal, kind=kind)

