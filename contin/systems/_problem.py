"""Problem files: a system, its start point and how to trace it, in TOML.

The format (public; keep it stable)::

    kind = "algebraic"            # or "ode": equations are right-hand sides du/dt = f(u, p)
    [unknowns]                    # name = start value
    u = 0.0
    [parameters]                  # name = value; the free one varies
    p = -1.0
    [constants]                   # optional: name = value, substituted before differentiation
    [equations]                   # name = "expression" meaning expression = 0
    balance = "u**3 - u + p"
    [trace]
    free = "p"
    direction = 1                 # initial direction of the free parameter: 1 or -1
    bounds = { p = [-2.0, 2.0] }  # stop on leaving; any unknown or the free parameter
    max_points = 2000
    step = 0.01
    min_step = 1e-8
    max_step = 0.5
    tolerance = 1e-10             # Newton: every |residual_i| <= tolerance + relative_tolerance * w_i
    relative_tolerance = 1e-13    # w_i: size of equation i's terms (0: the absolute test alone)
    at = { p = [0.1, 0.2] }       # optional: output exactly at these values of a coordinate
    linear_solver = "auto"        # "dense" or "sparse" LU of the bordered matrix (auto: by size)
    [[events]]                    # optional, repeatable
    name = "u_zero"
    expression = "u"
    terminal = false
    direction = 0                 # 0 any crossing, 1 increasing, -1 decreasing

Indexed families, for discretised problems with many unknowns::

    [unknowns]
    u = { count = 100, start = 0.0 }  # u[0] .. u[99]; start is one number or a list of count numbers
    [equations]
    left = "u[0]"
    row = { for = "i in 1..99", expression = "u[i-1] - 2*u[i] + u[i+1] + h**2*lam*exp(u[i])" }
    right = "u[99]"

``for = "i in a..b"`` runs i from a to b - 1 (``a..=b``: to b), giving equations ``row[a]`` ..; an
index is whole numbers and index variables with + - *, and a bare index variable is its value as a
number. An index outside its family is refused with the file, key, line and the value of i.

A problem file is untrusted input: expressions go through the allow-list parser of
:mod:`contin.systems._parse`, and every mistake is reported with the file, the key and its line.
"""

from __future__ import annotations

import keyword
import math
import re
import tomllib
import unicodedata
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

from ..base._errors import InputError
from ..base._names import suggest
from ._parse import element_name, expand_indices
from ._symbolic import SymbolicSystem, compile_expression

__all__ = ["Problem", "load_problem", "problem_from_text", "TOP_KEYS", "TRACE_KEYS",
           "EVENT_KEYS", "SWEEP_KEYS"]

TOP_KEYS = ("kind", "unknowns", "parameters", "constants", "equations", "trace", "events", "sweep")
SWEEP_KEYS = ("over", "output")
TRACE_KEYS = ("free", "direction", "bounds", "max_points", "step", "min_step", "max_step", "tolerance", "at",
              "folds", "detect", "corrector", "relative_tolerance", "max_turn", "max_correction", "follow",
              "start_at", "explore", "max_branches", "linear_solver")
EVENT_KEYS = ("name", "expression", "terminal", "direction")
FAMILY_KEYS = ("count", "start")
EQUATION_FAMILY_KEYS = ("for", "expression")
#: Most entries of one indexed family (and most equations of one equation family).
MAX_FAMILY = 10**6
_RANGE = re.compile(r"\s*([A-Za-z_][A-Za-z_0-9]*)\s+in\s+(-?[0-9]+)\s*\.\.(=?)\s*(-?[0-9]+)\s*")
_REQUIRED = ("unknowns", "parameters", "equations", "trace")


@dataclass(frozen=True)
class Problem:
    """A loaded problem file, ready to trace.

    Attributes:
        path: the file it came from.
        system: the :class:`~contin.SymbolicSystem`.
        start: unknown name -> start value.
        options: keyword arguments for :func:`contin.trace` from ``[trace]`` (read-only mapping).
        events: the :class:`~contin.Event` objects of ``[[events]]``.
        sweep: from ``[sweep]``: ``{"over": {name: (values...)}, "output": folder}``, or None.
        curves: from ``[trace]`` ``follow``/``explore``: ``{"follow": "fold" | "hopf", "second": name,
            "start_at": row or None}`` or ``{"explore": True, "max_branches": N}``; None for one branch.
    """

    path: Path
    system: SymbolicSystem
    start: Mapping[str, float]
    options: Mapping[str, Any]
    events: tuple = field(default=())
    sweep: Mapping[str, Any] | None = None
    curves: Mapping[str, Any] | None = None

    @property
    def name(self) -> str:
        """The file name without its suffix (used to name output files)."""
        return self.path.stem


class _Lines:
    """Finds the line of a table or key in TOML text (tomllib gives values, not positions)."""

    _HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?")

    def __init__(self, text: str) -> None:
        self.lines = text.splitlines()

    def _tables(self):
        table, count = None, {}
        for number, line in enumerate(self.lines, start=1):
            match = self._HEADER.match(line)
            if match:
                table = match.group(2).strip().strip('"')
                count[table] = count.get(table, 0) + 1
                yield number, line, table, count[table], True
            else:
                yield number, line, table, count.get(table, 0), False

    def table(self, name: str, occurrence: int = 1) -> int | None:
        for number, _, table, seen, header in self._tables():
            if header and table == name and seen == occurrence:
                return number
        return None

    def key(self, table: str | None, key: str, occurrence: int = 1) -> int | None:
        pattern = re.compile(r"^\s*(?:\"" + re.escape(key) + r"\"|'" + re.escape(key) + r"'|" + re.escape(key) + r")\s*=")
        for number, line, current, seen, header in self._tables():
            if header:
                continue
            if current == table and (table is None or seen == occurrence) and pattern.match(line):
                return number
        return None


def load_problem(path: str | Path, *, backend: str = "auto") -> Problem:
    """Read and check a problem file; build its system.

    Args:
        path: the TOML file.
        backend: symbolic back end for the system (see :class:`~contin.SymbolicSystem`).

    Returns:
        The :class:`Problem`.

    Raises:
        InputError: the file cannot be read or is not TOML; an unknown key (with the nearest valid
            key); a missing section; a free parameter not declared; unequal numbers of equations
            and unknowns; a value of the wrong type; an expression the safe parser refuses. Each
            message names the file, the key and its line.
    """
    from ..base._output import read_input_text

    path = Path(path)
    text = read_input_text(path, f"{path}:", MAX_FILE_BYTES, missing="no such problem file")
    return problem_from_text(text, path, backend=backend)


def problem_from_text(text: str, path: str | Path, *, backend: str = "auto", label: str | None = None) -> Problem:
    """A problem from TOML text (e.g. the copy kept in a run record); ``path`` names it, ``label`` (default
    the path) starts every message. Nothing is written: the text is read where it is."""
    path = Path(path)
    shown = label if label is not None else str(path)
    if "\0" in text:
        raise InputError(f"{shown}: not valid TOML: the text holds a NUL character")
    try:
        data = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, ValueError) as error:
        from ..base._output import describe_value_error

        raise InputError(f"{shown}: not valid TOML: {describe_value_error(error)}") from None
    except RecursionError:
        raise InputError(f"{shown}: not valid TOML: nested too deeply") from None
    return _Reader(path, text, data, backend, shown).problem()


#: Largest problem file read, in bytes.
MAX_FILE_BYTES = 16 * 2**20


class _Reader:
    def __init__(self, path: Path, text: str, data: dict, backend: str, label: str | None = None) -> None:
        self.path, self.data, self.backend = path, data, backend
        self.label = label if label is not None else str(path)
        self.lines = _Lines(text)

    # -- messages -------------------------------------------------------------------------------
    def where(self, table: str | None, key: str | None = None, occurrence: int = 1) -> str:
        line = self.lines.key(table, key, occurrence) if key is not None else None
        if line is None and table is None and key is not None:
            line = self.lines.table(key)  # a top-level key written as a [table]
        if line is None and table is not None:
            line = self.lines.table(table, occurrence)
        return f"{self.label}, line {line}" if line is not None else self.label

    def fail(self, table: str | None, key: str | None, message: str, occurrence: int = 1) -> InputError:
        return InputError(f"{self.where(table, key, occurrence)}: {message}")

    def check_keys(self, table: str | None, found: Mapping, allowed: tuple[str, ...], occurrence: int = 1) -> None:
        for key in found:
            if key not in allowed:
                place = f"[{table}]" if table else "the top level"
                if table == "events":
                    place = f"[[events]] number {occurrence}"
                raise self.fail(
                    table, key,
                    f"unknown key {key!r} in {place} (allowed: {', '.join(allowed)}){suggest(key, allowed)}",
                    occurrence,
                )

    def section(self, name: str, required: bool = True) -> dict:
        if name not in self.data:
            if not required:
                return {}
            raise InputError(f"{self.label}: missing section [{name}]; a problem file needs {', '.join(f'[{s}]' for s in _REQUIRED)}")
        value = self.data[name]
        if not isinstance(value, dict):
            raise self.fail(None, name, f"{name} must be a table ([{name}] with name = value lines), not {type(value).__name__}")
        return value

    def number(self, table: str, key: str, value: object, what: str) -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.fail(table, key, f"{table}.{key} = {value!r} is not a number; give the {what} as a number, e.g. {key} = 0.5")
        if not math.isfinite(value):
            raise self.fail(table, key, f"{table}.{key} = {value} is not finite; give a finite {what}")
        return float(value)

    # -- sections -------------------------------------------------------------------------------
    def problem(self) -> Problem:
        self.check_keys(None, self.data, TOP_KEYS)
        kind = self.data.get("kind", "algebraic")
        if kind not in ("algebraic", "ode"):
            raise self.fail(None, "kind", f"kind = {kind!r} is not known; use \"algebraic\" or \"ode\"{suggest(str(kind), ('algebraic', 'ode'))}")
        unknowns, families = self.unknowns()
        parameters = self.values("parameters", "parameter value")
        constants = self.values("constants", "constant value", required=False)
        for name in families:
            if name in parameters or name in constants:
                raise self.fail("unknowns", name, f"{name!r} is an indexed family of unknowns and also a parameter or "
                                "constant; use one name once")
        equations, labels = self.equations(families)
        if len(equations) != len(unknowns):
            raise self.fail(
                "equations", None,
                f"[equations] has {len(equations)} equations but [unknowns] has {len(unknowns)} unknowns; "
                "a problem needs exactly one equation per unknown",
            )
        system = self.build(equations, unknowns, parameters, constants, kind, labels)
        options = self.trace_options(system)
        curves = options.pop("curves", None)
        events = self.events(system)
        sweep = self.sweep(system, options["free"])
        return Problem(self.path, system, MappingProxyType(dict(unknowns)), MappingProxyType(options), events, sweep,
                       None if curves is None else MappingProxyType(curves))

    def sweep(self, system: SymbolicSystem, free: str) -> Mapping[str, Any] | None:
        """``[sweep]``: over = { name = [values] } of fixed parameters (their product), output = "folder"."""
        if "sweep" not in self.data:
            return None
        table = self.section("sweep")
        self.check_keys("sweep", table, SWEEP_KEYS)
        over = table.get("over")
        if not isinstance(over, dict) or not over:
            raise self.fail("sweep", "over", "[sweep] needs over = { name = [values] }, e.g. over = { B = [12.0, 18.0] }")
        grid: dict[str, tuple[float, ...]] = {}
        for name, values in over.items():
            if name == free:
                raise self.fail("sweep", "over", f"over names {name!r}, the free parameter, which varies along each "
                                "trace; sweep the fixed parameters")
            if name not in system.parameters:
                raise self.fail("sweep", "over", f"over names {name!r}, which is not a declared parameter "
                                f"(parameters: {', '.join(system.parameters)}){suggest(name, system.parameters)}")
            if not isinstance(values, list) or not values or not all(
                    isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in values):
                raise self.fail("sweep", "over", f"over.{name} = {values!r}; give a non-empty list of finite numbers, "
                                f"e.g. {name} = [1.0, 2.0]")
            if len(set(values)) != len(values):
                raise self.fail("sweep", "over", f"over.{name} gives a value twice; give each value once")
            grid[name] = tuple(float(v) for v in values)
        output = table.get("output", "sweep-out")
        if not isinstance(output, str) or not output.strip() or "\0" in output:
            raise self.fail("sweep", "output", f"output = {output!r}; give a folder name as text, e.g. output = \"sweep-out\"")
        return MappingProxyType({"over": MappingProxyType(grid), "output": output})

    def unknowns(self) -> tuple[dict[str, float], dict[str, int]]:
        """``[unknowns]``: name -> start value, with each family ``u = { count, start }`` as u[0] .. u[count-1];
        and the families' sizes."""
        table = self.section("unknowns")
        if not table:
            raise self.fail("unknowns", None, "[unknowns] is empty; declare at least one name = value")
        plain = {key: value for key, value in table.items() if not isinstance(value, dict)}
        values = self.values("unknowns", "start value", required=False, table=plain)
        families: dict[str, int] = {}
        result: dict[str, float] = {}
        for key, value in table.items():
            if not isinstance(value, dict):
                result[key] = values[key]
                continue
            self.check_name("unknowns", key)
            self.check_inline("unknowns", key, value, FAMILY_KEYS)
            count = value.get("count")
            if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= MAX_FAMILY:
                raise self.fail("unknowns", key, f"unknowns.{key}: count = {count!r}; give the number of entries as a "
                                f"whole number from 1 to {MAX_FAMILY}, e.g. {key} = {{ count = 100, start = 0.0 }}")
            start = value.get("start", 0.0)
            starts = start if isinstance(start, list) else [start] * count
            if len(starts) != count:
                raise self.fail("unknowns", key, f"unknowns.{key}: start has {len(starts)} values but count = {count}; "
                                "give one number, or count numbers")
            for index, number in enumerate(starts):
                result[element_name(key, index)] = self.number("unknowns", key, number, "start value")
            families[key] = count
        return result, families

    def equations(self, families: Mapping[str, int]) -> tuple[dict[str, str], dict[str, str]]:
        """``[equations]``: name -> expression text, each family ``row = { for, expression }`` expanded into
        row[a] .., with every index checked against its family; and each equation's label for messages."""
        table = self.section("equations")
        equations: dict[str, str] = {}
        labels: dict[str, str] = {}
        for name, value in table.items():
            where = self.where("equations", name)
            if isinstance(value, str):
                equations[name], labels[name] = value, f"{where}: equation {name!r}"
                continue
            if not isinstance(value, dict):
                raise self.fail("equations", name, f"equations.{name} must be the expression as text in quotes, e.g. "
                                f"{name} = \"u**2 - p\", or a family {name} = {{ for = \"i in 1..99\", expression = \"...\" }}")
            self.check_inline("equations", name, value, EQUATION_FAMILY_KEYS)
            variable, first, last = self.index_range(name, value.get("for"), families)
            text = value.get("expression")
            if not isinstance(text, str):
                raise self.fail("equations", name, f"equations.{name} needs expression = \"...\" (text in quotes)")
            for index in range(first, last):
                member = element_name(name, index)
                label = f"{where}: equation {member!r}"
                equations[member] = expand_indices(text, {variable: index}, families, label=f"{where}: equations.{name}")
                labels[member] = label
        return equations, labels

    def index_range(self, name: str, text: object, families: Mapping[str, int]) -> tuple[str, int, int]:
        """(variable, first, one past the last) of ``for = "i in a..b"`` (b excluded) or ``"i in a..=b"``."""
        example = "for = \"i in 1..99\" (i = 1 to 98) or \"i in 1..=98\""
        match = _RANGE.fullmatch(text) if isinstance(text, str) else None
        if match is None:
            raise self.fail("equations", name, f"equations.{name}: for = {text!r} is not a range; write {example}")
        variable, first, inclusive, last = match.group(1), int(match.group(2)), match.group(3), int(match.group(4))
        if variable in families:
            raise self.fail("equations", name, f"equations.{name}: the index {variable!r} is also a family of unknowns; "
                            "call it i, j or k")
        stop = last + 1 if inclusive else last
        if not first < stop:
            raise self.fail("equations", name, f"equations.{name}: for = {text!r} is empty ({first} to {stop - 1}); the "
                            f"first index must come before the last, e.g. {example}")
        if stop - first > MAX_FAMILY:
            raise self.fail("equations", name, f"equations.{name}: for = {text!r} makes {stop - first} equations; the "
                            f"limit is {MAX_FAMILY}")
        return variable, first, stop

    def check_inline(self, table: str, key: str, found: Mapping, allowed: tuple[str, ...]) -> None:
        """The keys of an inline table ``key = { ... }`` of ``[table]`` (reported at the line of ``key``)."""
        for inner in found:
            if inner not in allowed:
                raise self.fail(table, key, f"unknown key {inner!r} in {table}.{key} (allowed: {', '.join(allowed)})"
                                f"{suggest(inner, allowed)}")

    def check_name(self, name: str, key: str) -> None:
        if not key.isidentifier() or keyword.iskeyword(key):
            raise self.fail(
                name, key,
                f"{name}.{key!r} cannot be used in equations: names are letters, digits and underscores, "
                "starting with a letter (e.g. T_wall)",
            )
        normal = unicodedata.normalize("NFKC", key)
        if normal != key:
            raise self.fail(
                name, key,
                f"{name}.{key!r} changes under Unicode normalisation to {normal!r}, which is how "
                f"expressions read it; write it as {normal!r}",
            )

    def values(self, name: str, what: str, required: bool = True, table: Mapping | None = None) -> dict[str, float]:
        table = self.section(name, required) if table is None else table
        if required and not table:
            raise self.fail(name, None, f"[{name}] is empty; declare at least one name = value")
        for key in table:
            self.check_name(name, key)
        return {key: self.number(name, key, value, what) for key, value in table.items()}

    def build(self, equations, unknowns, parameters, constants, kind, labels) -> SymbolicSystem:
        try:
            return SymbolicSystem(equations, unknowns, parameters, constants, kind=kind, backend=self.backend, labels=labels)
        except InputError as error:
            message = str(error)
            if message.startswith(self.label):
                raise
            raise InputError(f"{self.label}: {message}") from None

    def trace_options(self, system: SymbolicSystem) -> dict[str, Any]:
        table = self.section("trace")
        self.check_keys("trace", table, TRACE_KEYS)
        if "free" not in table:
            raise self.fail("trace", None, "[trace] needs free = \"name\": the parameter that varies along the branch")
        free = table["free"]
        curves = self.curves(table, system)
        if curves is not None and "follow" in curves:
            free = free[0]
        if not isinstance(free, str) or free not in system.parameters:
            hint = suggest(str(free), system.parameters)
            raise self.fail(
                "trace", "free",
                f"free = {free!r} is not a declared parameter (parameters: {', '.join(system.parameters)}){hint}",
            )
        options: dict[str, Any] = {"free": free}
        coordinates = (*system.unknowns, free)
        if "direction" in table:
            direction = table["direction"]
            if isinstance(direction, bool) or direction not in (1, -1):
                raise self.fail("trace", "direction", f"direction = {direction!r}; use 1 (free parameter increasing) or -1")
            options["direction"] = int(direction)
        if "max_points" in table:
            count = table["max_points"]
            if isinstance(count, bool) or not isinstance(count, int) or count < 2:
                raise self.fail("trace", "max_points", f"max_points = {count!r}; give a whole number of at least 2")
            options["max_points"] = count
        for key in ("step", "min_step", "max_step", "tolerance", "max_turn", "max_correction"):
            if key in table:
                value = self.number("trace", key, table[key], key.replace("_", " "))
                if value <= 0:
                    raise self.fail("trace", key, f"{key} = {value!r} must be positive")
                if key == "max_turn" and value >= math.pi:
                    raise self.fail("trace", key, f"max_turn = {value!r} must be below pi radians (a turn of half a circle)")
                options[key] = value
        if "relative_tolerance" in table:
            value = self.number("trace", "relative_tolerance", table["relative_tolerance"], "relative tolerance")
            if not 0 <= value < 1:
                raise self.fail("trace", "relative_tolerance", f"relative_tolerance = {value!r} must be at least 0 "
                                "and below 1 (0 keeps the absolute residual test alone; the default is 1e-13)")
            options["relative_tolerance"] = value
        for key in ("bounds", "at"):
            if key in table:
                options[key] = self.coordinate_table(key, table[key], coordinates, system)
        for key, choices, example in (("folds", coordinates, '["x"]'),
                                      ("detect", ("fold", "branch_point", "hopf"), '["fold", "branch_point"]')):
            if key in table:
                names = table[key]
                if not isinstance(names, list) or not all(isinstance(n, str) for n in names):
                    raise self.fail("trace", key, f"{key} = {names!r}; give a list of names, e.g. {key} = {example}")
                for name in names:
                    if name not in choices:
                        raise self.fail("trace", key, f"{key} names {name!r} (choose from {', '.join(choices)})"
                                                      f"{suggest(name, choices)}")
                options[key] = tuple(names)
        if "linear_solver" in table:
            solver = table["linear_solver"]
            if solver not in ("auto", "dense", "sparse"):
                raise self.fail("trace", "linear_solver", f"linear_solver = {solver!r}; use \"auto\", \"dense\" or "
                                                          f"\"sparse\"{suggest(str(solver), ('auto', 'dense', 'sparse'))}")
            options["linear_solver"] = solver
        if "corrector" in table:
            corrector = table["corrector"]
            if corrector not in ("arclength", "local"):
                raise self.fail("trace", "corrector", f"corrector = {corrector!r}; use \"arclength\" or \"local\"")
            options["corrector"] = corrector
        if curves is not None:
            options["curves"] = curves
        return options

    def curves(self, table: Mapping, system: SymbolicSystem) -> dict | None:
        """``follow = "fold" | "hopf"`` with ``free = [p, q]`` (and ``start_at``), or ``explore = true``
        (and ``max_branches``): what is traced besides the one-parameter branch."""
        follow, explore = table.get("follow"), table.get("explore")
        for key, needs in (("start_at", "follow"), ("max_branches", "explore")):
            if key in table and needs not in table:
                raise self.fail("trace", key, f"{key} goes with {needs} = ...")
        if follow is None and explore is None:
            free = table.get("free")
            if isinstance(free, list):
                raise self.fail("trace", "free", f"free = {free!r} names two parameters, which goes with follow = "
                                "\"fold\" or \"hopf\"; for one branch give one name, e.g. free = \"p\"")
            return None
        if follow is not None and explore is not None:
            raise self.fail("trace", "explore", "follow and explore both given; a problem file does one or the other")
        if explore is not None:
            if not isinstance(explore, bool):
                raise self.fail("trace", "explore", f"explore = {explore!r}; use true or false")
            budget = table.get("max_branches", 8)
            if isinstance(budget, bool) or not isinstance(budget, int) or budget < 1:
                raise self.fail("trace", "max_branches", f"max_branches = {budget!r}; give a whole number of at least 1")
            return {"explore": True, "max_branches": budget} if explore else None
        if follow not in ("fold", "hopf"):
            raise self.fail("trace", "follow", f"follow = {follow!r}; use \"fold\" or \"hopf\""
                                               f"{suggest(str(follow), ('fold', 'hopf'))}")
        if follow == "hopf" and system.kind != "ode":
            raise self.fail("trace", "follow", "follow = \"hopf\" needs kind = \"ode\": Hopf points belong to "
                                               "equilibria of du/dt = F(u, p)")
        free = table.get("free")
        if not (isinstance(free, list) and len(free) == 2 and all(isinstance(n, str) for n in free)):
            raise self.fail("trace", "free", f"with follow, free = {free!r} must name two parameters, e.g. "
                                             "free = [\"p\", \"q\"] (the branch's, then the second)")
        if free[0] == free[1]:
            raise self.fail("trace", "free", f"free names {free[0]!r} twice; give two different parameters")
        for name in free:
            if name not in system.parameters:
                raise self.fail("trace", "free", f"free names {name!r}, which is not a declared parameter "
                                f"(parameters: {', '.join(system.parameters)}){suggest(name, system.parameters)}")
        start_at = table.get("start_at")
        if start_at is not None and (isinstance(start_at, bool) or not isinstance(start_at, int) or start_at < 0):
            raise self.fail("trace", "start_at", f"start_at = {start_at!r}; give the point number of a special point "
                                                 "in the summary (a whole number)")
        return {"follow": follow, "second": free[1], "start_at": start_at}

    def coordinate_table(self, key: str, value: object, coordinates: tuple[str, ...], system: SymbolicSystem) -> dict:
        example = "{ p = [-2.0, 2.0] }" if key == "bounds" else "{ p = [0.1, 0.2] }"
        if not isinstance(value, dict):
            raise self.fail("trace", key, f"{key} must be an inline table such as {key} = {example}")
        result = {}
        for name, entry in value.items():
            if name not in coordinates:
                other = " (a fixed parameter: only the free one moves)" if name in system.parameters else ""
                raise self.fail(
                    "trace", key,
                    f"{key} names {name!r}{other}, which is not a coordinate of the branch (coordinates: "
                    f"{', '.join(coordinates)}){suggest(name, coordinates)}",
                )
            if key == "at" and isinstance(entry, (int, float)) and not isinstance(entry, bool):
                entry = [entry]
            if not isinstance(entry, list) or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in entry):
                raise self.fail("trace", key, f"{key}.{name} = {entry!r}; give a list of numbers, e.g. {key} = {example}")
            if key == "bounds":
                if len(entry) != 2 or not entry[0] < entry[1]:
                    raise self.fail("trace", key, f"bounds.{name} = {entry!r}; give [low, high] with low < high")
                result[name] = (float(entry[0]), float(entry[1]))
            else:
                result[name] = [float(v) for v in entry]
        return result

    def events(self, system: SymbolicSystem) -> tuple:
        from ._events import Event

        entries = self.data.get("events", [])
        if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
            raise self.fail(None, "events", "events must be written as [[events]] tables (name, expression, terminal, direction)")
        events = []
        seen: set[str] = set()
        for number, entry in enumerate(entries, start=1):
            self.check_keys("events", entry, EVENT_KEYS, number)
            for key in ("name", "expression"):
                if not isinstance(entry.get(key), str) or not entry.get(key):
                    raise self.fail("events", None, f"[[events]] number {number} needs {key} = \"...\" (text)", number)
            name = entry["name"]
            if name in seen:
                raise self.fail("events", "name", f"two events are called {name!r}; give each a different name", number)
            seen.add(name)
            terminal = entry.get("terminal", False)
            if not isinstance(terminal, bool):
                raise self.fail("events", "terminal", f"terminal = {terminal!r}; use true or false", number)
            direction = entry.get("direction", 0)
            if isinstance(direction, bool) or direction not in (-1, 0, 1):
                raise self.fail("events", "direction", f"direction = {direction!r}; use 0 (any crossing), 1 or -1", number)
            label = f"{self.where('events', 'expression', number)}: event {name!r}"
            function = compile_expression(system, entry["expression"], label=label)
            events.append(Event(name, function, direction=int(direction), terminal=terminal))
        return tuple(events)
