"""Temperatures and pressures with units on input; named unit sets on output.

Input accepts a bare number (SI: K, Pa) or a number followed by a unit: ``K``, ``degC``, ``degF``,
``degR``, ``bar``, ``MPa``, ``kPa``, ``Pa``, ``psia``, ``atm``, and the gauge pressures ``barg``,
``psig`` and ``kPag`` (above a stated atmospheric pressure, 101325 Pa unless given). Files and JSON are always SI; the
printed summary and CSV may use a unit set named by what it contains: ``si`` (K, Pa), ``degC-bar``
or ``degF-psia``.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

from contin import InputError
from contin.base import suggest

__all__ = [
    "GAUGE_UNITS",
    "PRESSURE_UNITS",
    "STANDARD_ATMOSPHERE",
    "gauge_unit",
    "TEMPERATURE_UNITS",
    "UNIT_SYSTEMS",
    "UNIT_SYSTEMS_HELP",
    "OutputUnits",
    "parse_pressure",
    "parse_quantity",
    "parse_temperature",
    "parse_list",
    "parse_number",
    "looks_like_number",
    "output_units",
    "convert_rows",
]

# 1 atm = 101325 Pa (exact, definition); 1 psi = 0.45359237 kg x 9.80665 m/s^2 / (0.0254 m)^2 (exact).
PSI = 0.45359237 * 9.80665 / 0.0254**2
CELSIUS_OFFSET = 273.15  # 0 degC = 273.15 K (exact, definition)
# degR = K x 9/5 and degF = degR - 459.67 (exact, definition: 0 degC = 32 degF = 491.67 degR).
RANKINE_PER_KELVIN = 9.0 / 5.0
FAHRENHEIT_OFFSET = 459.67

TEMPERATURE_UNITS: dict[str, tuple[Callable[[float], float], Callable[[float], float]]] = {
    "K": (lambda v: v, lambda k: k),
    "degC": (lambda v: v + CELSIUS_OFFSET, lambda k: k - CELSIUS_OFFSET),
    "degF": (lambda v: (v + FAHRENHEIT_OFFSET) / RANKINE_PER_KELVIN, lambda k: k * RANKINE_PER_KELVIN - FAHRENHEIT_OFFSET),
    "degR": (lambda v: v / RANKINE_PER_KELVIN, lambda k: k * RANKINE_PER_KELVIN),
}
PRESSURE_UNITS: dict[str, float] = {
    "Pa": 1.0,
    "kPa": 1e3,
    "MPa": 1e6,
    "bar": 1e5,
    "atm": 101325.0,
    "psia": PSI,
}
#: Gauge pressures: absolute = value x factor + atmospheric pressure.
GAUGE_UNITS: dict[str, float] = {"barg": 1e5, "psig": PSI, "kPag": 1e3}
STANDARD_ATMOSPHERE = 101325.0  # Pa (exact, definition)
_KINDS = {"temperature": TEMPERATURE_UNITS, "pressure": {**PRESSURE_UNITS, **GAUGE_UNITS}}
_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z]*)\s*$", re.ASCII)
_PLAIN = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$", re.ASCII)
_NOT_FINITE = re.compile(r"^\s*[-+]?(?:nan|inf|infinity)\s*$", re.IGNORECASE)


def _shown(text) -> str:
    text = str(text)
    return text if len(text) <= 40 else text[:37] + "..."


def looks_like_number(text: str) -> bool:
    """Whether ``text`` is a plain ASCII number, or nan/inf (which :func:`parse_number` refuses as not finite)."""
    return bool(_PLAIN.match(text) or _NOT_FINITE.match(text))


def parse_number(text, argument: str) -> float:
    """A finite number from text written in ASCII digits (``1.5``, ``-2e-3``), or from a number.

    Raises:
        InputError: a boolean, text that is not a plain number (non-ASCII digits included), or a value
            that is not finite (``nan``, ``inf``, ``1e400``).
    """
    if isinstance(text, bool):
        raise InputError(f"{argument}: {str(text).lower()} is a boolean, not a number")
    if isinstance(text, (int, float)):
        try:
            value = float(text)
        except OverflowError:
            raise InputError(f"{argument}: the number is too large (not finite in double precision)") from None
    elif isinstance(text, str):
        shown = _shown(text)
        if _NOT_FINITE.match(text):
            raise InputError(f"{argument}: {shown!r} is not finite; give a finite number")
        if not _PLAIN.match(text):
            raise InputError(f"{argument}: {shown!r} is not a number (write it with the digits 0-9, e.g. 0.25 or 1e-3)")
        value = float(text)
    else:
        raise InputError(f"{argument}: {type(text).__name__} {_shown(repr(text))} is not a number")
    if not math.isfinite(value):
        if isinstance(text, str):
            raise InputError(f"{argument}: {_shown(text)!r} is not finite (too large for double precision); "
                             "give a finite number")
        raise InputError(f"{argument} is {value!r}; give a finite number")
    return value


def _unit_kind(unit: str) -> str | None:
    for kind, table in _KINDS.items():
        if unit in table:
            return kind
    return None


def gauge_unit(text) -> str | None:
    """The gauge unit (``barg``, ``psig``, ``kPag``) that ``text`` is written in, or None."""
    match = _NUMBER.match(str(text)) if isinstance(text, str) else None
    return match.group(2) if match and match.group(2) in GAUGE_UNITS else None


def parse_quantity(text: str | float, kind: str, argument: str, *, atmosphere: float = STANDARD_ATMOSPHERE) -> float:
    """A temperature (K) or pressure (Pa) from ``text``: a bare SI number or a number with a unit.

    Args:
        text: e.g. ``"300"``, ``"26.85 degC"``, ``"50 bar"``, ``"14.7psia"``, or a number.
        kind: ``"temperature"`` or ``"pressure"``.
        argument: the option or key being read, named in error messages.
        atmosphere: the atmospheric pressure (Pa) that gauge pressures are above.

    Raises:
        InputError: not a number, an unknown unit (with the nearest valid one), a unit of the other
            kind ("a pressure given in K"), a temperature at or below absolute zero, or a gauge
            pressure at or below minus one atmosphere (no absolute pressure).
    """
    if isinstance(text, bool):
        raise InputError(f"{argument}: {str(text).lower()} is a boolean, not a {kind}")
    if isinstance(text, (int, float)):
        value, unit = parse_number(text, argument), ""
    else:
        match = _NUMBER.match(str(text))
        if not match:
            raise InputError(
                f"{argument}: {_shown(text)!r} is not a number with an optional unit "
                f"(e.g. {'300 K or 26.85 degC' if kind == 'temperature' else '50 bar or 5 MPa'})"
            )
        value, unit = float(match.group(1)), match.group(2)
        if not math.isfinite(value):
            raise InputError(f"{argument}: {_shown(text)!r} is not finite (too large for double precision)")
    table = _KINDS[kind]
    if unit and unit not in table:
        other = _unit_kind(unit)
        if other is not None:
            raise InputError(f"{argument}: {text!r} is a {other}, but a {kind} is needed here "
                             f"(units: {', '.join(table)})")
        lowered = {u.lower(): u for u in table}
        if unit.lower() in lowered:
            hint = f"; did you mean {lowered[unit.lower()]!r}?"
        else:
            hint = suggest(unit, table)
        raise InputError(f"{argument}: unknown {kind} unit {unit!r} in {text!r} (units: {', '.join(table)}){hint}")
    if not math.isfinite(value):
        raise InputError(f"{argument}: {text!r} is not a finite number")
    if kind == "temperature":
        kelvin = TEMPERATURE_UNITS[unit or "K"][0](value)
        if kelvin <= 0.0:
            raise InputError(f"{argument}: {text!r} is at or below absolute zero")
        return kelvin
    if unit in GAUGE_UNITS:
        pascal = value * GAUGE_UNITS[unit] + atmosphere
        if not pascal > 0.0:
            raise InputError(f"{argument}: {text!r} is a gauge pressure at or below -1 atm (the atmosphere of "
                             f"{atmosphere:g} Pa), which leaves no absolute pressure; a gauge pressure must lie "
                             "above minus the atmosphere")
        return pascal
    pascal = value * PRESSURE_UNITS[unit or "Pa"]
    if pascal <= 0.0:
        raise InputError(f"{argument}: {text!r} must be a positive pressure")
    return pascal


def parse_temperature(text: str | float, argument: str = "temperature") -> float:
    """A temperature in K from a bare number (K) or a number with a unit (K, degC, degF, degR)."""
    return parse_quantity(text, "temperature", argument)


def parse_pressure(text: str | float, argument: str = "pressure", *, atmosphere: float = STANDARD_ATMOSPHERE) -> float:
    """A pressure in Pa from a bare number (Pa) or a number with a unit (Pa, kPa, MPa, bar, atm, psia; gauge
    barg, psig, kPag above ``atmosphere``)."""
    return parse_quantity(text, "pressure", argument, atmosphere=atmosphere)


def parse_list(text: str, kind: str, argument: str, *, atmosphere: float = STANDARD_ATMOSPHERE) -> list[float]:
    """A comma-separated list of temperatures or pressures, each with an optional unit."""
    parts = [part for part in str(text).split(",") if part.strip()]
    if not parts:
        raise InputError(f"{argument}: give at least one value (comma-separated)")
    return [parse_quantity(part, kind, argument, atmosphere=atmosphere) for part in parts]


@dataclass(frozen=True)
class OutputUnits:
    """How temperatures, pressures and the rest are shown in summaries and CSV files."""

    name: str
    temperature: str
    pressure: str

    def temperature_from_si(self, kelvin: float) -> float:
        return TEMPERATURE_UNITS[self.temperature][1](kelvin)

    def pressure_from_si(self, pascal: float) -> float:
        return pascal / PRESSURE_UNITS[self.pressure]


UNIT_SYSTEMS = {
    "si": OutputUnits("si", "K", "Pa"),
    "degC-bar": OutputUnits("degC-bar", "degC", "bar"),
    "degF-psia": OutputUnits("degF-psia", "degF", "psia"),
}
UNIT_SYSTEMS_HELP = "si (K, Pa), degC-bar or degF-psia"


def output_units(name: str, argument: str = "--units") -> OutputUnits:
    """The output unit set ``si``, ``degC-bar`` or ``degF-psia`` (named by the units it contains)."""
    if name not in UNIT_SYSTEMS:
        raise InputError(f"{argument}: unknown unit system {_shown(name)!r}: the sets are named by the units "
                         f"they contain; use si, degC-bar or degF-psia{suggest(str(name), UNIT_SYSTEMS)}")
    return UNIT_SYSTEMS[name]


def _is_temperature(column: str) -> bool:
    return column == "T" or column.startswith("T_")


def _is_pressure(column: str) -> bool:
    return column == "P" or column.startswith("P_")


def convert_rows(columns: Sequence[str], rows, units: Mapping[str, str], system: OutputUnits):
    """Rows and unit names in ``system`` (temperatures and pressures converted; the rest as they are)."""
    converted = []
    for row in rows:
        new = list(row)
        for k, column in enumerate(columns):
            value = new[k]
            if not isinstance(value, (int, float)) or isinstance(value, bool):
                continue
            if _is_temperature(column):
                new[k] = system.temperature_from_si(float(value))
            elif _is_pressure(column):
                new[k] = system.pressure_from_si(float(value))
        converted.append(new)
    names = {}
    for column in columns:
        if _is_temperature(column):
            names[column] = system.temperature
        elif _is_pressure(column):
            names[column] = system.pressure
        else:
            names[column] = units.get(column, "")
    return converted, names
