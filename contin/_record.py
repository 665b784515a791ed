"""Run records: everything needed to see how a result was made, and to continue from any saved point."""

from __future__ import annotations

import datetime as _datetime
import json
import os
import platform
from collections.abc import Mapping, Sequence
from importlib import metadata
from pathlib import Path

import numpy as np

from ._branch import Branch
from ._errors import InputError
from ._output import json_ready, write_text_atomically
from ._system import System

__all__ = ["RECORD_VERSION", "document_record", "run_record", "write_record", "read_record", "restart", "restart_start"]

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
    from . import __version__

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
    """Read and check a run record.

    Raises:
        InputError: the file is missing, not JSON, not a run record, or from an incompatible version.
    """
    source = Path(path)
    try:
        record = json.loads(source.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"run record {str(path)!r} does not exist") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as error:
        raise InputError(f"run record {str(path)!r} is not readable JSON: {error}") from None
    if not isinstance(record, dict) or record.get("record") != _KIND:
        raise InputError(f"{str(path)!r} is not a contin run record (write one with --record FILE)")
    version = record.get("record_version")
    if version != RECORD_VERSION:
        raise InputError(
            f"run record {str(path)!r} has record version {version!r} (written by contin "
            f"{record.get('contin_version', 'unknown')}); this contin reads version {RECORD_VERSION}: "
            "re-run the original input with this version"
        )
    result = record.get("result")
    if not isinstance(result, dict) or not isinstance(result.get("points"), list) or not result.get("columns"):
        raise InputError(f"run record {str(path)!r} holds no traced points")
    return record


def restart_start(source: Branch | Mapping, index: int) -> tuple[dict, dict, np.ndarray, str]:
    """(start values, parameter values, tangent, free parameter) at row ``index`` of a branch or record.

    Raises:
        InputError: an index outside the branch.
    """
    if isinstance(source, Branch):
        columns, points, tangents = source.columns, source.points, source.tangents
        parameters, free = dict(source.parameters), source.free
    else:
        result = source["result"] if "result" in source else source
        columns = tuple(result["columns"])
        points = np.array(result["points"], dtype=float)
        tangents = np.array(result.get("tangents") or np.zeros_like(points), dtype=float)
        parameters, free = dict(result.get("parameters", {})), result.get("free", columns[-1])
    count = len(points)
    if isinstance(index, bool) or not isinstance(index, (int, np.integer)) or not -count <= index < count:
        raise InputError(f"--restart-at {index!r}: the branch has points 0 to {count - 1}")
    row = points[index]
    start = {name: float(value) for name, value in zip(columns[:-1], row[:-1])}
    parameters[free] = float(row[-1])
    return start, parameters, tangents[index], free


def restart(source: Branch | Mapping, index: int, system: System, *, free: str | None = None,
            direction: int = 1, **keywords) -> Branch:
    """Continue from row ``index`` of a branch (or run record), in a new direction or another parameter.

    With the same free parameter the trace starts along the saved tangent (``direction=-1`` reverses
    it), so a fold or any other saved point is a valid start. With another free parameter the old one
    stays fixed at its value there; if dF/du is singular at that point (e.g. a fold), the start
    direction is the null vector of [dF/du, dF/dq].

    Args:
        source: a :class:`Branch` or a run record (as read by :func:`read_record`).
        index: the row to start from (negative counts from the end).
        system: the system the branch was traced on (with any parameter values it needs).
        free: the new free parameter (default: the branch's).
        direction: +1 or -1.
        keywords: further :func:`contin.trace` options (bounds, events, at, step, ...).
    """
    from ._trace import trace

    start, parameters, saved_tangent, old_free = restart_start(source, index)
    parameters = {name: value for name, value in parameters.items() if name in system.parameters}
    free = free or old_free
    if free == old_free and np.any(saved_tangent):
        return trace(system, start, free=free, parameters=parameters, direction=direction,
                     tangent=saved_tangent, **keywords)
    u = np.array([start[name] for name in system.unknowns])
    p = system.parameter_vector(parameters)
    k = system.index_of_parameter(free)
    _, ju, jq = system.linearise(u, p, k)
    if np.linalg.matrix_rank(ju) == system.size:
        return trace(system, start, free=free, parameters=parameters, direction=direction, **keywords)
    null = np.linalg.svd(np.column_stack([ju, jq]))[2][-1]
    if null[-1] < 0:
        null = -null
    return trace(system, start, free=free, parameters=parameters, direction=direction, tangent=null, **keywords)
