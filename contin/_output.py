"""The JSON document and CSV file layouts shared by every result (a fixed contract: docs/contracts.md)."""

from __future__ import annotations

import csv
import io
import json
import math
import os
import tempfile
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path

import numpy as np

__all__ = ["json_document", "json_ready", "write_text_atomically", "csv_text"]


def json_ready(value):
    """``value`` with numpy scalars and arrays turned into Python ones and non-finite floats into None."""
    if isinstance(value, Mapping):
        return {str(k): json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_ready(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def json_document(
    status: str,
    message: str,
    columns: Sequence[str],
    points: Iterable[Sequence],
    special_points: Iterable[Mapping],
    at: Iterable[Sequence],
    stats: Mapping,
    **extra,
) -> dict:
    """The result object of docs/contracts.md: status, message, columns, points, special_points, at, stats.

    Args:
        status: the status label (e.g. ``"bound_reached"``).
        message: the human message.
        columns: column names, in row order.
        points: rows of values in column order.
        special_points: objects with at least ``kind``, ``index`` and ``values`` (keyed by column).
        at: rows at requested values, in column order.
        stats: must hold ``setup_seconds``, ``trace_seconds``, ``newton_iterations``,
            ``jacobian_evaluations``; more keys are kept.
        extra: further top-level keys (e.g. ``caution``), kept after the fixed ones.
    """
    document = {
        "status": str(status),
        "message": str(message),
        "columns": list(columns),
        "points": [list(row) for row in points],
        "special_points": [dict(sp) for sp in special_points],
        "at": [list(row) for row in at],
        "stats": dict(stats),
    }
    document.update(extra)
    return json_ready(document)


def _format(value) -> str:
    if isinstance(value, (float, np.floating)):
        return repr(float(value)) if math.isfinite(value) else ""
    return str(value)


def csv_text(columns: Sequence[str], rows: Iterable[Sequence], comments: Sequence[str] = ()) -> str:
    """CSV text: ``# comment`` lines, then a header row, then the rows at full precision."""
    buffer = io.StringIO()
    for line in comments:
        for part in str(line).splitlines() or [""]:
            buffer.write(f"# {part}\n")
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([_format(v) for v in row])
    return buffer.getvalue()


def write_text_atomically(path: str | os.PathLike, text: str) -> Path:
    """Write ``text`` to ``path`` through a temporary file and a rename: never a half-written file."""
    target = Path(path)
    directory = target.parent if str(target.parent) else Path(".")
    handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=directory)
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="") as stream:
            stream.write(text)
        os.replace(temporary, target)
    except BaseException:
        try:
            os.unlink(temporary)
        except OSError:
            pass
        raise
    return target
