"""Run records: everything needed to see how a result was made, and to continue from any saved point."""

from __future__ import annotations

import datetime as _datetime
import json
import math
import os
import platform
from collections.abc import Mapping, Sequence
from importlib import metadata
from pathlib import Path

import numpy as np

from ._branch import Branch
from ..base._errors import InputError
from ..base._output import describe_value_error, json_ready, read_input_text, write_text_atomically

__all__ = ["RECORD_VERSION", "document_record", "run_record", "write_record", "read_record", "restart_start",
           "check_file_name", "check_problem_record", "check_record_matches"]

RECORD_VERSION = 1
_KIND = "contin run record"
_DEPENDENCIES = ("numpy", "scipy", "sympy", "networkx", "matplotlib", "symengine")


def _version(package: str) -> str | None:
    try:
        return metadata.version(package)
    except metadata.PackageNotFoundError:
        return None


def run_record(branch: Branch, *, input: Mapping, command: Sequence[str] | None = None,
               options: Mapping | None = None) -> dict:
    """A JSON-ready run record of ``branch``.

    Args:
        branch: the traced branch.
        input: the full input, e.g. ``{"kind": "problem_file", "name": ..., "text": ...}`` or, for a
            thermodynamic command, the component data and interaction parameters actually used.
        command: the command line, if the run came from one.
        options: tolerances and trace options used.

    Returns:
        A dict with the record's kind and version, the versions of contin, Python and dependencies,
        the input, the options, and the result (status, timings, points, tangents, special points).
    """
    result = branch.to_dict()
    result["tangents"] = json_ready(branch.tangents)
    return document_record(result, input=input, command=command, options=options)


def document_record(document: Mapping, *, input: Mapping, command: Sequence[str] | None = None,
                    options: Mapping | None = None) -> dict:
    """A run record around any result document in the JSON layout of docs/contracts.md (e.g. a plug-in's).

    Args: as for :func:`run_record`, with ``document`` in place of the branch.
    """
    from ..base._version import __version__

    result = dict(document)
    return json_ready({
        "record": _KIND,
        "record_version": RECORD_VERSION,
        "contin_version": __version__,
        "created": _datetime.datetime.now(_datetime.timezone.utc).isoformat(timespec="seconds"),
        "python": platform.python_version(),
        "dependencies": {name: _version(name) for name in _DEPENDENCIES},
        "command": list(command) if command is not None else None,
        "input": dict(input),
        "options": dict(options or {}),
        "result": result,
    })


def write_record(path: str | os.PathLike, record: Mapping) -> Path:
    """Write a run record as JSON, atomically (never half-written)."""
    return write_text_atomically(path, json.dumps(record, indent=1) + "\n")


def read_record(path: str | os.PathLike) -> dict:
    """Read and check a run record (untrusted input: every field is checked before use).

    Raises:
        InputError: the file is missing, not JSON, not a run record, from an incompatible version, or
            a field of the wrong type or shape; the message names the record and the field.
    """
    label = str(path)
    text = read_input_text(path, f"run record {label!r}", _MAX_RECORD_BYTES)
    try:
        record = json.loads(text, parse_constant=_refuse_constant)
    except (json.JSONDecodeError, ValueError, RecursionError) as error:
        reason = describe_value_error(error) if not isinstance(error, RecursionError) else "nested too deeply"
        raise InputError(f"run record {label!r} is not readable JSON: {reason}") from None
    if not isinstance(record, dict) or record.get("record") != _KIND:
        raise InputError(f"{label!r} is not a contin run record (write one with --record FILE)")
    version = record.get("record_version")
    if isinstance(version, bool) or version != RECORD_VERSION:
        contin_version = record.get("contin_version")
        raise InputError(
            f"run record {label!r} has record version {version!r} (written by contin "
            f"{contin_version if isinstance(contin_version, str) else 'unknown'}); this contin reads version "
            f"{RECORD_VERSION}: re-run the original input with this version"
        )
    check = _Checker(label)
    check.envelope(record)
    result = record.get("result")
    strict = isinstance(record.get("input"), dict) and record["input"].get("kind") == "problem_file"
    if not isinstance(result, dict) or not isinstance(result.get("points"), list) or not result.get("columns") \
            or (strict and not result["points"]):
        raise InputError(f"run record {label!r} holds no traced points")
    check.result(result, strict=strict)
    return record


_MAX_RECORD_BYTES = 256 * 2**20
_MAX_NAME_BYTES = 255


def _refuse_constant(word: str):
    raise ValueError(f"{word} is not JSON (contin writes non-finite values as null)")


def _is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _kind(value) -> str:
    """The JSON word for a value's type, for messages."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "an object"
    return type(value).__name__


def check_file_name(value, where: str) -> str:
    """``value`` if it is a plain file name (no folder part, no NUL, at most 255 bytes), else InputError.

    Args:
        value: the candidate name (from untrusted input).
        where: what is being read, put in front of the message (e.g. "run record 'r.json': input.name").
    """
    if not isinstance(value, str):
        raise InputError(f"{where} is {_kind(value)}; expected a file name as text, e.g. \"problem.toml\"")
    problem = None
    if not value.strip():
        problem = "is empty"
    elif "\0" in value:
        problem = "holds a NUL character"
    elif value in (".", ".."):
        problem = f"is {value!r}, a folder"
    elif "/" in value or "\\" in value or os.sep in value or (os.altsep and os.altsep in value):
        problem = f"{value!r} has a folder part"
    elif any(not character.isprintable() for character in value):
        problem = f"{value!r} holds control characters"
    elif len(value.encode("utf-8", errors="surrogatepass")) > _MAX_NAME_BYTES:
        problem = f"is longer than {_MAX_NAME_BYTES} bytes"
    if problem:
        raise InputError(f"{where} {problem}; expected a plain file name such as \"problem.toml\"")
    return value


class _Checker:
    """Checks a record's fields against the layout run_record() writes; messages name record and field."""

    def __init__(self, label: str) -> None:
        self.label = label

    def fail(self, field: str, message: str) -> InputError:
        return InputError(f"run record {self.label!r}: {field} {message}")

    def expect(self, value, field: str, types, expected: str):
        if isinstance(value, bool) and bool not in (types if isinstance(types, tuple) else (types,)):
            raise self.fail(field, f"is {_kind(value)}; expected {expected}")
        if not isinstance(value, types):
            raise self.fail(field, f"is {_kind(value)}; expected {expected}")
        return value

    def envelope(self, record: dict) -> None:
        for key in ("contin_version", "created", "python"):
            if record.get(key) is not None:
                self.expect(record[key], key, str, "text")
        if record.get("dependencies") is not None:
            for name, version in self.expect(record["dependencies"], "dependencies", dict, "an object").items():
                if version is not None:
                    self.expect(version, f"dependencies.{name}", str, "a version as text or null")
        if record.get("command") is not None:
            for k, word in enumerate(self.expect(record["command"], "command", list, "a list of words or null")):
                self.expect(word, f"command[{k}]", str, "text")
        for key in ("input", "options", "result"):
            if key in record:
                self.expect(record[key], key, dict, "an object")

    def number_row(self, row, field: str, width: int, *, finite: bool) -> None:
        self.expect(row, field, list, f"a list of {width} numbers")
        if len(row) != width:
            raise self.fail(field, f"has {len(row)} values; expected {width}, one per name of result.columns")
        for k, value in enumerate(row):
            if not finite and (value is None or isinstance(value, str)):
                continue  # a plug-in's document may hold labels or non-finite values (null)
            if not _is_number(value):
                raise self.fail(f"{field}[{k}]", f"is {_kind(value)}; expected a{' finite' if finite else ''} number")
            if finite and not math.isfinite(value):
                raise self.fail(f"{field}[{k}]", f"is {value}; expected a finite number")

    def result(self, result: dict, *, strict: bool) -> None:
        """The result: columns, points, tangents, free, parameters (strict: as restart() needs them)."""
        columns = self.expect(result["columns"], "result.columns", list, "a list of column names")
        for k, name in enumerate(columns):
            self.expect(name, f"result.columns[{k}]", str, "a column name as text")
            if not name:
                raise self.fail(f"result.columns[{k}]", "is empty; expected a column name")
        repeated = sorted({name for name in columns if columns.count(name) > 1})
        if repeated:
            raise self.fail("result.columns", f"names {repeated[0]!r} twice; expected distinct column names")
        if strict and len(columns) < 2:
            raise self.fail("result.columns", "has fewer than two names; expected the unknowns and the free parameter")
        width = len(columns)
        for k, row in enumerate(result["points"]):
            self.number_row(row, f"result.points[{k}]", width, finite=strict)
        for key in ("status", "message"):
            if result.get(key) is not None:
                self.expect(result[key], f"result.{key}", str, "text")
        if not strict:
            return
        tangents = result.get("tangents")
        if tangents is not None:
            self.expect(tangents, "result.tangents", list, "a list of rows, one per point, or null")
            if len(tangents) != len(result["points"]):
                raise self.fail("result.tangents", f"has {len(tangents)} rows; expected {len(result['points'])}, "
                                                   "one per point")
            for k, row in enumerate(tangents):
                self.number_row(row, f"result.tangents[{k}]", width, finite=True)
        free = result.get("free", columns[-1])
        self.expect(free, "result.free", str, "the free parameter's name as text")
        if free != columns[-1]:
            raise self.fail("result.free", f"is {free!r}; expected the last column, {columns[-1]!r}")
        parameters = self.expect(result.get("parameters", {}), "result.parameters", dict,
                                 "an object of parameter name -> number")
        for name, value in parameters.items():
            if not _is_number(value) or not math.isfinite(value):
                raise self.fail(f"result.parameters.{name}", f"is {_kind(value) if not _is_number(value) else value}; "
                                                              "expected a finite number")
            if name in columns[:-1]:
                raise self.fail(f"result.parameters.{name}", "is also a column of an unknown; expected parameters only")


def check_problem_record(record: Mapping, label: str) -> dict:
    """The ``input`` of a record written by ``contin run``: kind, a plain file name, the problem text.

    Raises:
        InputError: the record holds no problem file, or its name is not a plain file name (a
            record never chooses where anything is written).
    """
    given = record.get("input")
    if not isinstance(given, dict) or given.get("kind") != "problem_file":
        raise InputError(f"--from {label!r}: the record was not written by 'contin run' "
                         "(it holds no problem file to restart)")
    checker = _Checker(label)
    checker.expect(given.get("text"), "input.text", str, "the problem file's text")
    check_file_name(given.get("name", "problem.toml"), f"run record {label!r}: input.name")
    return given


def check_record_matches(record: Mapping, label: str, unknowns: Sequence[str], parameters: Sequence[str]) -> None:
    """Refuse a record whose columns, free parameter or parameters are not those of the problem."""
    result = record["result"]
    columns = list(result["columns"])
    checker = _Checker(label)
    if columns[:-1] != list(unknowns):
        raise checker.fail("result.columns", f"starts with {', '.join(columns[:-1])}; expected the problem's "
                                             f"unknowns in order: {', '.join(unknowns)}")
    if columns[-1] not in parameters:
        raise checker.fail("result.columns", f"ends with {columns[-1]!r}; expected a parameter of the problem "
                                             f"({', '.join(parameters)})")
    for name in result.get("parameters", {}):
        if name not in parameters:
            raise checker.fail(f"result.parameters.{name}", f"is not a parameter of the problem "
                                                           f"({', '.join(parameters)})")


def restart_start(source: Branch | Mapping, index: int) -> tuple[dict, dict, np.ndarray, str]:
    """(start values, parameter values, tangent, free parameter) at row ``index`` of a branch or record.

    Raises:
        InputError: an index outside the branch; a record of the wrong layout.
    """
    if isinstance(source, Branch):
        columns, points, tangents = source.columns, source.points, source.tangents
        parameters, free = dict(source.parameters), source.free
    else:
        if not isinstance(source, Mapping):
            raise InputError(f"restart needs a Branch or a run record, not {type(source).__name__}")
        result = source["result"] if "result" in source else source
        checker = _Checker("given")
        checker.expect(result, "result", Mapping, "an object")
        if not isinstance(result.get("points"), list) or not result.get("points") or not result.get("columns"):
            raise InputError("run record 'given' holds no traced points")
        checker.result(dict(result), strict=True)
        columns = tuple(result["columns"])
        points = np.array(result["points"], dtype=float)
        tangents = result.get("tangents")
        tangents = np.zeros_like(points) if tangents is None else np.array(tangents, dtype=float)
        parameters, free = dict(result.get("parameters", {})), result.get("free", columns[-1])
    count = len(points)
    if isinstance(index, bool) or not isinstance(index, (int, np.integer)) or not -count <= index < count:
        raise InputError(f"--restart-at {index!r}: the branch has points 0 to {count - 1}")
    row = points[index]
    start = {name: float(value) for name, value in zip(columns[:-1], row[:-1])}
    parameters[free] = float(row[-1])
    return start, parameters, tangents[index], free
