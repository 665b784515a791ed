"""Shared writers for thermodynamic results: CSV with caution and units header, summaries, atomic writes."""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping, Sequence
from pathlib import Path

from contin.base import write_text_atomically

from ..models._caution import CAUTION, caution_comment

__all__ = ["atomic_write_text", "csv_text", "translation_notes", "write_csv", "summary_lines", "format_value", "table_frame"]


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically (the engine's writer), creating the folder if needed.

    A reader never sees a half-written file, and an interrupted run leaves the old file in place.
    """
    path = Path(path)
    if str(path.parent):
        path.parent.mkdir(parents=True, exist_ok=True)
    return write_text_atomically(path, text)


def format_value(value: object) -> str:
    """A cell for CSV: floats with 17 significant digits (round-trip exact), other values as text."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) or hasattr(value, "dtype"):
        number = float(value)  # type: ignore[arg-type]
        return repr(number) if math.isfinite(number) else ("nan" if math.isnan(number) else repr(number))
    return str(value)


def csv_text(
    columns: Sequence[str],
    rows: Sequence[Sequence[object]],
    units: Mapping[str, str],
    *,
    title: str = "",
    notes: Sequence[str] = (),
) -> str:
    """CSV text: comment lines (title, notes, caution, units), then a header row and the data rows.

    Args:
        columns: column names.
        rows: data rows in column order.
        units: unit of each column (``""`` for dimensionless); shown in a ``# units:`` comment line.
        title: first comment line (what the file holds).
        notes: further comment lines (model, fluid, ...).
    """
    head = io.StringIO()
    if title:
        head.write(f"# {title}\n")
    for note in notes:
        head.write(f"# {note}\n")
    head.write(caution_comment())
    head.write("# units: " + ", ".join(f"{c} [{units.get(c, '') or '-'}]" for c in columns) + "\n")
    writer = csv.writer(head, lineterminator="\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([format_value(v) for v in row])
    return head.getvalue()


def translation_notes(stats: Mapping) -> list[str]:
    """CSV note lines saying that volumes are translated, with each shift and its source (none if not)."""
    moved = stats.get("volume_translation")
    if moved is None:
        return []
    if "components" in moved:
        shifts = "; ".join(f"{n}: c = {c!r} m3/mol ({s})" for n, c, s in zip(moved["components"], moved["c"],
                                                                              moved["sources"]))
    else:
        shifts = f"c = {moved['c']!r} m3/mol ({moved['source']})"
    return ["volumes and densities translated, v = v_eos - sum x_i c_i (temperatures and pressures unchanged): "
            + shifts]


def write_csv(path: str | Path, columns, rows, units, *, title: str = "", notes: Sequence[str] = ()) -> Path:
    """Write :func:`csv_text` atomically to ``path``; returns the path."""
    return atomic_write_text(path, csv_text(columns, rows, units, title=title, notes=notes))


def summary_lines(title: str, items: Sequence[tuple[str, str]]) -> list[str]:
    """Lines of a human summary: the title, aligned ``label: value`` pairs, then the caution."""
    width = max((len(label) for label, _ in items), default=0)
    lines = [title]
    lines += [f"  {label.ljust(width)} : {value}" for label, value in items]
    lines.append(CAUTION)
    return lines


def table_frame(columns, rows):
    """A pandas DataFrame of ``rows`` (pandas is not a dependency of contin: install it to use this)."""
    try:
        import pandas
    except ImportError as error:
        from contin import InputError

        raise InputError("to_dataframe needs pandas, which contin does not install: pip install pandas") from error
    return pandas.DataFrame([list(row) for row in rows], columns=list(columns))
