"""Pure-component constants: the shipped table, look-up by name or alias, and user components.

The table lives in ``data/components.csv`` (package data), one fluid a row with its critical
temperature (K), critical pressure (Pa), acentric factor, aliases and the published source of the row.
Users add their own fluids with :func:`custom_component` or from a CSV or TOML file
(:func:`load_components`).
"""

from __future__ import annotations

import re

import csv
import io
import tomllib
import warnings
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
from collections.abc import Iterable, Sequence

from contin import InputError
from contin.base import suggest

__all__ = [
    "Component",
    "all_components",
    "custom_component",
    "load_components",
    "lookup",
    "parse_component",
    "OMEGA_WARN_RANGE",
    "OMEGA_REFUSE_RANGE",
]

#: Acentric factors outside this range draw a warning (unusual for real fluids).
OMEGA_WARN_RANGE = (-0.5, 1.5)
#: Acentric factors outside this range are refused (no real fluid comes near).
OMEGA_REFUSE_RANGE = (-1.0, 3.0)


@dataclass(frozen=True)
class Component:
    """A pure fluid's constants for a cubic equation of state.

    Attributes:
        name: common lower-case name (``methane``, ``n-butane``, ``carbon dioxide``).
        Tc: critical temperature, K.
        Pc: critical pressure, Pa.
        omega: acentric factor (Pitzer 1955).
        source: where the numbers come from.
        aliases: other accepted names (formulas, the trade's short forms).
    """

    name: str
    Tc: float
    Pc: float
    omega: float
    source: str = "user-defined"
    aliases: tuple[str, ...] = ()


def _key(name: str) -> str:
    return " ".join(str(name).replace("_", " ").split()).lower()


def custom_component(
    name: str,
    Tc: float,
    Pc: float,
    omega: float,
    *,
    source: str = "user-defined",
    aliases: Sequence[str] = (),
    argument: str = "component",
) -> Component:
    """A validated user component.

    Args:
        name: the fluid's name (non-empty).
        Tc: critical temperature, K (> 0).
        Pc: critical pressure, Pa (> 0).
        omega: acentric factor; a warning outside -0.5..1.5, refused outside -1..3.
        source: where the numbers come from.
        aliases: other names.
        argument: what to call the input in messages (e.g. ``--tc/--pc/--omega``).

    Returns:
        The :class:`Component`.

    Raises:
        InputError: on an empty name, non-numeric or non-finite values, Tc or Pc not positive, or an
            acentric factor outside -1..3.
    """
    from ._units import looks_like_number, parse_number

    if not isinstance(name, str):
        raise InputError(f"{argument}: the component name is {type(name).__name__} {name!r}; give it as text")
    label = name.strip()
    if not label:
        raise InputError(f"{argument}: the component name is empty; give a name such as 'my-fluid'")
    if not label.isprintable() or len(label) > 200:
        raise InputError(f"{argument}: the component name {label[:40]!r} holds control characters or is over "
                         "200 characters; give a short plain name")
    values = {}
    for key, value, unit in (("Tc", Tc, "K"), ("Pc", Pc, "Pa"), ("omega", omega, "")):
        if isinstance(value, bool) or not isinstance(value, (str, int, float)) or (
                isinstance(value, str) and not looks_like_number(value)):
            raise InputError(f"{argument}: {key} of {label!r} is {value!r}, not a number"
                             + (" (write it with the digits 0-9, e.g. 190.6)" if isinstance(value, str) else ""))
        values[key] = parse_number(value, f"{argument}: {key} of {label!r}")
    if not isinstance(source, str):
        raise InputError(f"{argument}: source of {label!r} is {type(source).__name__}; give it as text")
    if isinstance(aliases, str) or not all(isinstance(a, str) for a in aliases):
        raise InputError(f"{argument}: aliases of {label!r} must be a list of names as text, e.g. [\"nC9\"]")
    for key, unit in (("Tc", "K"), ("Pc", "Pa")):
        if values[key] <= 0.0:
            raise InputError(
                f"{argument}: {key} of {label!r} is {values[key]:g} {unit}; it must be positive "
                f"({'kelvin' if key == 'Tc' else 'pascal, e.g. 4.6e6 for 46 bar'})"
            )
    w = values["omega"]
    low, high = OMEGA_REFUSE_RANGE
    if not low <= w <= high:
        raise InputError(
            f"{argument}: acentric factor omega={w:g} of {label!r} is outside the plausible range "
            f"{low:g}..{high:g}; real fluids lie between about -0.4 and 1.5"
        )
    low, high = OMEGA_WARN_RANGE
    if not low <= w <= high:
        warnings.warn(
            f"{argument}: acentric factor omega={w:g} of {label!r} is outside the usual range {low:g}..{high:g}; "
            "check the value",
            UserWarning,
            stacklevel=2,
        )
    return Component(label, values["Tc"], values["Pc"], w, source, tuple(a.strip() for a in aliases if a.strip()))


def _rows_from_csv(text: str, origin: str) -> list[Component]:
    lines = [line for line in text.splitlines() if line.strip() and not line.lstrip().startswith("#")]
    reader = csv.DictReader(io.StringIO("\n".join(lines)))
    header = [h.strip() for h in (reader.fieldnames or [])]
    missing = [k for k in ("name", "Tc", "Pc", "omega") if k not in header]
    if missing:
        raise InputError(
            f"{origin}: the header lacks column(s) {', '.join(missing)}; expected name,Tc,Pc,omega[,aliases,source]"
        )
    components = []
    for number, row in enumerate(reader, start=2):
        row = {str(k).strip(): (v or "").strip() for k, v in row.items() if k is not None}
        aliases = [a for a in row.get("aliases", "").split(";") if a.strip()]
        components.append(
            custom_component(
                row["name"],
                row["Tc"],
                row["Pc"],
                row["omega"],
                source=row.get("source") or f"{origin}",
                aliases=aliases,
                argument=f"{origin}, data row {number - 1}",
            )
        )
    return components


def _rows_from_toml(text: str, origin: str) -> list[Component]:
    try:
        document = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, ValueError, RecursionError) as error:
        reason = " ".join(str(error).split()) if not isinstance(error, RecursionError) else "nested too deeply"
        if "integer string conversion" in reason:
            reason = "a number has more than 4300 digits"
        raise InputError(f"{origin}: not valid TOML ({reason})") from None
    entries = document.get("component")
    if not isinstance(entries, list) or not entries:
        raise InputError(
            f"{origin}: no [[component]] tables found; write one per fluid with keys name, Tc, Pc, omega"
        )
    components = []
    for number, entry in enumerate(entries, start=1):
        where = f"{origin}, [[component]] number {number}"
        if not isinstance(entry, dict):
            raise InputError(f"{where}: is {type(entry).__name__}, not a table; write [[component]] tables "
                             "with keys name, Tc, Pc, omega")
        missing = [k for k in ("name", "Tc", "Pc", "omega") if k not in entry]
        if missing:
            raise InputError(f"{where}: missing key(s) {', '.join(missing)}")
        unknown = sorted(set(entry) - {"name", "Tc", "Pc", "omega", "aliases", "source"})
        if unknown:
            hint = suggest(unknown[0], ("name", "Tc", "Pc", "omega", "aliases", "source"))
            raise InputError(f"{where}: unknown key {unknown[0]!r}{hint}")
        aliases = entry.get("aliases", [])
        if isinstance(aliases, str):
            aliases = [a for a in aliases.split(";") if a.strip()]
        if not isinstance(aliases, list):
            raise InputError(f"{where}: aliases = {aliases!r}; give a list of names, e.g. aliases = [\"nC9\"]")
        components.append(
            custom_component(
                entry["name"], entry["Tc"], entry["Pc"], entry["omega"],
                source=entry.get("source", origin), aliases=aliases, argument=where,
            )
        )
    return components


def _check_unique(components: Iterable[Component], origin: str) -> None:
    seen: dict[str, str] = {}
    names: set[str] = set()
    for c in components:
        if _key(c.name) in names:
            raise InputError(f"{origin}: the component {c.name!r} is given twice; give each component once")
        names.add(_key(c.name))
        for label in (c.name, *c.aliases):
            key = _key(label)
            if seen.get(key, c.name) != c.name:
                raise InputError(f"{origin}: the name {label!r} is used by both {seen[key]!r} and {c.name!r}")
            seen[key] = c.name


def load_components(path: str | Path) -> tuple[Component, ...]:
    """User components from a CSV (name,Tc,Pc,omega[,aliases,source]) or TOML ([[component]]) file.

    Units: Tc in K, Pc in Pa. Lines starting with ``#`` in a CSV file are comments.

    Raises:
        InputError: if the file is missing, of an unknown type, or holds a bad row (the row is named).
    """
    from contin.base import read_input_text

    path = Path(path)
    suffix = path.suffix.lower()
    text = read_input_text(path, f"component file {str(path)!r}", 16 * 2**20,
                           missing="does not exist; give the path of a .csv or .toml file")
    if suffix not in (".csv", ".toml"):
        raise InputError(f"component file {path.name!r} must end in .csv or .toml (got {suffix or 'no suffix'!r})")
    if "\0" in text:
        raise InputError(f"component file {str(path)!r} holds NUL characters; is it a binary file?")
    if suffix == ".csv":
        components = _rows_from_csv(text, path.name)
    elif suffix == ".toml":
        components = _rows_from_toml(text, path.name)
    else:
        raise InputError(f"component file {path.name!r} must end in .csv or .toml (got {suffix or 'no suffix'!r})")
    _check_unique(components, path.name)
    return tuple(components)


@lru_cache(maxsize=1)
def _table() -> tuple[Component, ...]:
    text = resources.files("contin_thermo").joinpath("data/components.csv").read_text(encoding="utf-8")
    components = _rows_from_csv(text, "components.csv")
    _check_unique(components, "components.csv")
    return tuple(sorted(components, key=lambda c: c.name))


def all_components() -> tuple[Component, ...]:
    """Every component of the shipped table, sorted by name."""
    return _table()


_CARBON_NUMBER = re.compile(r"^\s*[cC](\d{1,3})(\+?)\s*$", re.ASCII)


def _carbon_number_fraction(name, extra: Sequence[Component]) -> str:
    """Why a bare ``C7`` (or ``C7+``) is not a component here, with what to write instead; "" otherwise.

    In gas and oil analyses ``C6``, ``C7``, ... name carbon-number fractions (everything boiling between
    two n-alkanes), not the n-alkane itself, so the table gives them no meaning (common practice).
    """
    match = _CARBON_NUMBER.match(str(name))
    if not match or int(match.group(1)) < 6:
        return ""
    count, plus = int(match.group(1)), match.group(2)
    shown = f"C{count}{plus}"
    alkane = next((c for c in (*extra, *_table()) if f"nC{count}" in c.aliases), None)
    if plus:
        return (f"{shown!r} is a plus fraction in gas analyses (all of carbon number {count} and above), not a "
                "component here; describe it as a component of your own with its Tc, Pc and omega")
    instead = (f"for {alkane.name} write 'nC{count}' or {alkane.name!r}" if alkane is not None
               else "describe the fraction as a component of your own with its Tc, Pc and omega")
    return f"{shown!r} is a carbon-number fraction in gas analyses, not a component here; {instead}"


def lookup(name: str, extra: Sequence[Component] = (), argument: str = "--fluid") -> Component:
    """The component called ``name`` (name or alias, case-insensitive; ``_`` counts as a space).

    Args:
        name: e.g. ``"methane"``, ``"C1"``, ``"co2"``, ``"n-butane"``, ``"nC4"``.
        extra: user components searched first (they may shadow table entries).
        argument: what to call the input in messages.

    Raises:
        InputError: for an unknown name, with the closest known name suggested.
    """
    key = _key(name)
    for component in (*extra, *_table()):
        if key == _key(component.name) or any(key == _key(a) for a in component.aliases):
            return component
    fraction = _carbon_number_fraction(name, extra)
    if fraction:
        raise InputError(f"{argument}: {fraction}")
    choices = [c.name for c in (*extra, *_table())]
    hint = suggest(str(name).strip(), choices) or suggest(
        str(name).strip(), [a for c in (*extra, *_table()) for a in c.aliases]
    )
    raise InputError(
        f"unknown component {str(name)!r} in {argument}{hint or '; run `contin thermo components` for the list'}"
    )


def parse_component(text: str, argument: str = "--component") -> Component:
    """A user component from ``"NAME,Tc,Pc,omega"`` (K, Pa), as given to ``--component``.

    Raises:
        InputError: if the text does not have four comma-separated fields or a value is bad.
    """
    parts = [p.strip() for p in str(text).split(",")]
    if len(parts) != 4:
        raise InputError(
            f"{argument} {text!r} must be NAME,Tc,Pc,omega with Tc in K and Pc in Pa, "
            "e.g. 'my-oil,620.5,2.1e6,0.52'"
        )
    return custom_component(*parts, source=f"{argument} on the command line", argument=f"{argument} {text!r}")


#: Molecular formulas of fluids of the table (for molar masses and for telling hydrocarbons apart).
FORMULAS = {
    "methane": "CH4", "ethane": "C2H6", "propane": "C3H8", "n-butane": "C4H10", "isobutane": "C4H10",
    "n-pentane": "C5H12", "isopentane": "C5H12", "n-hexane": "C6H14", "n-heptane": "C7H16", "n-octane": "C8H18",
    "n-nonane": "C9H20", "n-decane": "C10H22", "n-dodecane": "C12H26", "ethylene": "C2H4", "propylene": "C3H6",
    "cyclohexane": "C6H12", "benzene": "C6H6", "toluene": "C7H8", "nitrogen": "N2", "oxygen": "O2", "argon": "Ar",
    "hydrogen": "H2", "helium": "He", "carbon monoxide": "CO", "carbon dioxide": "CO2", "hydrogen sulfide": "H2S",
    "sulfur dioxide": "SO2", "ammonia": "NH3", "water": "H2O", "methanol": "CH4O",
}
