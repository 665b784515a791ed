"""Feeds from a file: a laboratory analysis as TOML or CSV, ending (optionally) in a plus fraction.

CSV: one row per component, ``name, amount`` and optional ``key=value`` fields, ``#`` for comments:

    methane, 82.10
    ethane, 6.40
    C7+, 4.12, molar_mass=182.0, specific_gravity=0.815

TOML: ``[[component]]`` tables with ``name``, ``z`` (or ``percent``) and, for a plus fraction,
``molar_mass`` and ``specific_gravity``. Amounts are mole fractions, or mole percent when they sum to
100 (within 1e-6 relative). Every mistake names the file, the line and what was expected.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

from contin import InputError

from ._units import parse_number

__all__ = ["read_feed"]

_PLUS_KEYS = ("molar_mass", "specific_gravity")
MAX_FEED_BYTES = 1 << 20


def _read(path: Path) -> str:
    if not path.exists():
        raise InputError(f"--feed {str(path)!r}: no such file")
    if not path.is_file():
        raise InputError(f"--feed {str(path)!r}: not a regular file (a folder or a device?)")
    data = path.read_bytes()[: MAX_FEED_BYTES + 1]
    if len(data) > MAX_FEED_BYTES:
        raise InputError(f"--feed {str(path)!r}: larger than {MAX_FEED_BYTES} bytes; a feed is a short list")
    if b"\0" in data:
        raise InputError(f"--feed {str(path)!r}: a binary file, not a TOML or CSV feed")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(f"--feed {str(path)!r}: not UTF-8 text") from None


def _row(where: str, name: str, amount, extra: dict) -> dict:
    if not name:
        raise InputError(f"{where}: a row needs a component name first, e.g. 'methane, 82.1'")
    value = parse_number(amount, f"{where}: the amount of {name!r}")
    if not value > 0.0:
        raise InputError(f"{where}: the amount of {name!r} is {value:g}; give a positive mole fraction or percent "
                         "(leave absent components out)")
    row = {"name": name, "z": value, "line": where}
    for key, text in extra.items():
        if key not in _PLUS_KEYS:
            raise InputError(f"{where}: unknown field {key!r}; a plus fraction takes molar_mass= and specific_gravity=")
        row[key] = parse_number(text, f"{where}: {key} of {name!r}")
    return row


def _csv_rows(text: str, label: str) -> list[dict]:
    rows = []
    for number, line in enumerate(text.splitlines(), start=1):
        body = line.split("#", 1)[0].strip()
        if not body:
            continue
        fields = [field.strip() for field in body.split(",")]
        where = f"{label}, line {number}"
        if len(fields) < 2:
            raise InputError(f"{where}: expected 'name, amount' (and for a plus fraction molar_mass=..., "
                             f"specific_gravity=...), got {body!r}")
        extra = {}
        for field in fields[2:]:
            key, equals, value = field.partition("=")
            if not equals:
                raise InputError(f"{where}: expected key=value after the amount, got {field!r}")
            extra[key.strip()] = value.strip()
        rows.append(_row(where, fields[0], fields[1], extra))
    return rows


def _toml_rows(text: str, label: str) -> list[dict]:
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise InputError(f"{label}: not valid TOML ({error})") from None
    unknown = sorted(set(data) - {"component"})
    if unknown:
        raise InputError(f"{label}: unknown key {unknown[0]!r}; a TOML feed holds [[component]] tables")
    entries = data.get("component")
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise InputError(f"{label}: write each component as a [[component]] table with name and z (or percent)")
    rows = []
    for number, entry in enumerate(entries, start=1):
        where = f"{label}, [[component]] number {number}"
        name = entry.get("name")
        if not isinstance(name, str):
            raise InputError(f"{where}: name = {name!r}; give the component's name as text")
        amounts = [key for key in ("z", "percent") if key in entry]
        if len(amounts) != 1:
            raise InputError(f"{where}: give exactly one of z (mole fraction) or percent (mole percent)")
        amount = entry[amounts[0]]
        if isinstance(amount, bool) or not isinstance(amount, (int, float)):
            raise InputError(f"{where}: {amounts[0]} = {amount!r} is not a number")
        extra = {key: value for key, value in entry.items() if key not in ("name", "z", "percent")}
        for key, value in extra.items():
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise InputError(f"{where}: {key} = {value!r} is not a number")
        rows.append(_row(where, name, amount / 100.0 if amounts[0] == "percent" else amount, extra))
    return rows


def read_feed(path: str | Path) -> list[dict]:
    """The rows of a feed file: ``{"name", "z", "line"}`` and, for plus fractions, ``molar_mass`` and
    ``specific_gravity``; mole percent that sums to 100 becomes mole fractions.

    Raises:
        InputError: the file cannot be read, a row is malformed (file, line and what was expected), a
            name is given twice, or no component at all.
    """
    path = Path(path)
    text = _read(path)
    label = str(path)
    rows = _toml_rows(text, label) if path.suffix.lower() == ".toml" else _csv_rows(text, label)
    if not rows:
        raise InputError(f"{label}: no components; write one 'name, amount' row per component")
    seen = {}
    for row in rows:
        key = row["name"].strip().lower()
        if key in seen:
            raise InputError(f"{row['line']}: {row['name']!r} is given twice (first at {seen[key]}); give each once")
        seen[key] = row["line"]
    total = math.fsum(row["z"] for row in rows)
    if abs(total - 100.0) <= 1e-6 * 100.0:
        for row in rows:
            row["z"] /= 100.0
    return rows
