"""Default binary interaction parameters: a small published table and Chueh-Prausnitz for methane with heavy ends.

:func:`default_kij` gives the k_ij matrix of a list of components for ``pr`` or ``srk`` and says where
each value came from:

- pairs of ``data/kij.csv`` (CO2, N2 and H2S with the light hydrocarbons and with each other, and
  CO2 and N2 with the "heavy" class: n-heptane and heavier n-alkanes of the table and
  pseudo-components of a characterised plus fraction), each row with its source (values recalled
  from memory are marked so in the file);
- methane with each heavy component from the correlation of Chueh & Prausnitz (AIChE J. 13 (1967)
  1099) in the critical volumes,
  k_ij = 1 - (2 (Vc_i Vc_j)^(1/6) / (Vc_i^(1/3) + Vc_j^(1/3)))^n, with n = 3 as published (memory).
  Chueh & Prausnitz wrote it for the critical-temperature combining rule of their Redlich-Kwong
  mixtures; using it directly as the k_ij of a_ij = (1 - k_ij) sqrt(a_i a_j) is a common practice
  (memory), and ``exponent`` lets a user soften it. The component table has no critical volumes, so
  they are estimated as Vc = Zc R Tc / Pc with Zc = 0.291 - 0.080 omega (Pitzer et al., J. Am. Chem.
  Soc. 77 (1955) 3433, memory) -- the same estimate for every component, so that a pair of like sizes
  gets k_ij close to 0;
- every other pair 0 (hydrocarbon pairs: common practice).

User values override single pairs (source "user").
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

from contin import InputError
from contin.base import suggest

from ._caution import CAUTION
from ._components import FORMULAS, Component, lookup
from ._eos import GAS_CONSTANT
from ._units import parse_number

__all__ = ["KIJ_BASES", "KijDefaults", "chueh_prausnitz", "critical_volume", "default_kij", "kij_table", "kij_matrix",
           "resolve_kij", "split_pair"]

#: The table's n-alkanes counted as heavy ends (the rest of the table is light or not a hydrocarbon).
HEAVY_TABLE_NAMES = ("n-heptane", "n-octane", "n-nonane", "n-decane", "n-dodecane")
_PSEUDO = re.compile(r"^C\d+(\+|-C\d+\+?| group)$")
_SOURCE_CP = ("Chueh & Prausnitz, AIChE J. 13 (1967) 1099, exponent {n:g}; Vc = Zc R Tc/Pc with "
              "Zc = 0.291 - 0.080 omega (Pitzer et al. 1955, memory)")
_SOURCE_ZERO = "no default for this pair: 0 (hydrocarbon pairs: common practice)"
_SOURCE_UNKNOWN = "no default for this pair in the table: 0; give a value if one is published for it"
_SOURCE_NONE = "none: 0 (kij none)"
#: The bases of a kij request: the default table and correlation, or zeros; user pairs override either.
KIJ_BASES = ("defaults", "none")


@lru_cache(maxsize=1)
def kij_table() -> tuple[dict, ...]:
    """The rows of ``data/kij.csv``: ``component_1``, ``component_2``, ``eos``, ``kij``, ``source``."""
    text = resources.files("contin_thermo").joinpath("data/kij.csv").read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if line.strip() and not line.startswith("#")]
    return tuple({**row, "kij": float(row["kij"])} for row in csv.DictReader(io.StringIO("\n".join(lines))))


def critical_volume(component: Component) -> float:
    """Estimated critical volume, m^3/mol: Zc R Tc / Pc with Zc = 0.291 - 0.080 omega (Pitzer et al. 1955)."""
    return (0.291 - 0.080 * component.omega) * GAS_CONSTANT * component.Tc / component.Pc


def chueh_prausnitz(vc_i: float, vc_j: float, exponent: float = 3.0) -> float:
    """k_ij = 1 - (2 (Vc_i Vc_j)^(1/6) / (Vc_i^(1/3) + Vc_j^(1/3)))^n (Chueh & Prausnitz 1967)."""
    ci, cj = vc_i ** (1.0 / 3.0), vc_j ** (1.0 / 3.0)
    return 1.0 - (2.0 * math.sqrt(ci * cj) / (ci + cj)) ** exponent


def _canonical(component: Component) -> str:
    """The table name a component stands for, ``heavy`` for heavy ends, or its own name."""
    if component.name in HEAVY_TABLE_NAMES or _PSEUDO.match(component.name) or component.source.startswith(
            "pseudo-component"):
        return "heavy"
    try:
        found = lookup(component.name, argument="kij defaults")
    except InputError:
        return component.name
    if (found.Tc, found.Pc, found.omega) != (component.Tc, component.Pc, component.omega):
        return f"user fluid {component.name}"  # only shares a name with the table: no table value applies
    return "heavy" if found.name in HEAVY_TABLE_NAMES else found.name


def _hydrocarbon(kind: str) -> bool:
    formula = FORMULAS.get(kind)
    return kind == "heavy" or (formula is not None and set(formula) <= set("CH0123456789"))


@dataclass(frozen=True)
class KijDefaults:
    """A k_ij matrix with the source of every pair.

    Attributes:
        names: component names, in order; eos: ``pr`` or ``srk``.
        matrix: symmetric (N, N) with zero diagonal, read-only.
        sources: ``(name_i, name_j) -> source`` for every pair i < j.
        caution: the project's caution (interaction parameters are fitted, not universal).
    """

    names: tuple[str, ...]
    eos: str
    matrix: np.ndarray
    sources: dict
    caution: str = CAUTION

    def pairs(self) -> list[dict]:
        """Every pair i < j: ``component_1``, ``component_2``, ``kij``, ``source`` (for the run record)."""
        return [{"component_1": a, "component_2": b, "kij": float(self.matrix[i, j]), "source": self.sources[(a, b)]}
                for i, a in enumerate(self.names) for j, b in enumerate(self.names) if i < j]


def default_kij(
    components: Sequence[Component],
    eos: str = "pr",
    *,
    methane_heavy: str = "chueh-prausnitz",
    exponent: float = 3.0,
    overrides: Mapping[tuple[str, str], float] | None = None,
) -> KijDefaults:
    """Default interaction parameters for ``components`` under ``eos`` (see the module text).

    Args:
        components: the mixture's components (table entries, user components, pseudo-components).
        eos: ``"pr"`` or ``"srk"`` (the table has no values for the other families).
        methane_heavy: ``"chueh-prausnitz"`` (default) or ``"none"`` (methane with heavy ends 0).
        exponent: the Chueh-Prausnitz exponent n (3 as published).
        overrides: ``(name_i, name_j) -> value`` for single pairs (either order).

    Raises:
        InputError: an equation of state without defaults, an unknown ``methane_heavy`` choice, an
            override naming a component not in the list, or a value outside (-1, 1).
    """
    name = getattr(eos, "name", eos)
    if name not in ("pr", "srk"):
        raise InputError(f"eos={name!r}: default kij exist for 'pr' and 'srk' only; give kij explicitly")
    if methane_heavy not in ("chueh-prausnitz", "none"):
        raise InputError(f"methane_heavy={methane_heavy!r}: choose 'chueh-prausnitz' or 'none'")
    if not (math.isfinite(exponent) and exponent > 0):
        raise InputError(f"exponent={exponent!r}: the Chueh-Prausnitz exponent must be positive (3 as published)")
    components = tuple(components)
    names = tuple(c.name for c in components)
    kinds = [_canonical(c) for c in components]
    table = {}
    for row in kij_table():
        if row["eos"] == name:
            table[frozenset((row["component_1"], row["component_2"]))] = (row["kij"], row["source"])
    n = len(components)
    matrix = np.zeros((n, n))
    sources = {}
    for i in range(n):
        for j in range(i + 1, n):
            pair = frozenset((kinds[i], kinds[j]))
            value = 0.0
            source = _SOURCE_ZERO if _hydrocarbon(kinds[i]) and _hydrocarbon(kinds[j]) else _SOURCE_UNKNOWN
            if len(pair) == 2 and pair in table:
                value, source = table[pair]
            elif pair == frozenset(("methane", "heavy")) and methane_heavy == "chueh-prausnitz":
                value = chueh_prausnitz(critical_volume(components[i]), critical_volume(components[j]), exponent)
                source = _SOURCE_CP.format(n=exponent)
            matrix[i, j] = matrix[j, i] = value
            sources[(names[i], names[j])] = source
    for (a, b), value in (overrides or {}).items():
        missing = [x for x in (a, b) if x not in names]
        if missing or a == b:
            raise InputError(f"kij override ({a!r}, {b!r}): {'unknown component ' + repr(missing[0]) if missing else 'a pair needs two components'}; "
                             f"the components are {', '.join(names)}")
        value = float(value)
        if not (math.isfinite(value) and -1.0 < value < 1.0):
            raise InputError(f"kij override ({a!r}, {b!r}) = {value!r}: must lie strictly between -1 and 1")
        i, j = sorted((names.index(a), names.index(b)))
        matrix[i, j] = matrix[j, i] = value
        sources[(names[i], names[j])] = "user"
    matrix.setflags(write=False)
    return KijDefaults(names, name, matrix, sources)


# -- kij from pair names: {"methane-n-butane": 0.02} -> a symmetric matrix --------------------
# The model layer's reading of kij; the command line turns its --kij text into the same pairs and
# calls kij_matrix, so scripts and the command line refuse the same things.
def split_pair(pair: str, names: Sequence[str], extra: Sequence[Component] = (),
               argument: str = "kij") -> tuple[int, int]:
    """Positions in ``names`` of the two components of ``"a-b"``.

    Names may contain hyphens and spaces (``n-butane``, ``carbon dioxide``): every split at a hyphen is
    tried, and the first whose two sides are both components of the mixture is used.

    Raises:
        InputError: the pair is not two components of the mixture.
    """
    pieces = str(pair).strip().split("-")
    for k in range(1, len(pieces)):
        a, b = "-".join(pieces[:k]), "-".join(pieces[k:])
        try:
            ca, cb = lookup(a, extra, argument=argument), lookup(b, extra, argument=argument)
        except InputError:
            continue
        if ca.name in names and cb.name in names:
            return names.index(ca.name), names.index(cb.name)
    raise InputError(f"{argument} pair {str(pair).strip()!r} is not a pair of components of the mixture "
                     f"({', '.join(names)})")


def kij_matrix(pairs: Mapping[str, float] | Iterable[tuple[str, float]] | None, names: Sequence[str],
               extra: Sequence[Component] = (), *, argument: str = "kij") -> np.ndarray:
    """The symmetric kij matrix (zero diagonal) for the mixture of ``names``; pairs not given are 0.

    Args:
        pairs: pair name -> value, e.g. ``{"methane-carbon dioxide": 0.1}``, or (pair, value) items
            in order (so that a pair given twice can be told).
        names: the mixture's component names, in order.
        extra: user components that pair names may refer to.
        argument: what to call the input in messages (``kij`` in scripts, ``--kij`` on the command line).

    Raises:
        InputError: a pair not in the mixture, a component paired with itself, a value that is not a
            finite number or lies outside (-1, 1), a pair given twice (in either order).
    """
    names = list(names)
    n = len(names)
    kij = np.zeros((n, n))
    if not pairs:
        return kij
    items = list(pairs.items()) if isinstance(pairs, Mapping) else list(pairs)
    given: dict[tuple[int, int], str] = {}
    for pair, value in items:
        if not isinstance(pair, str):
            raise InputError(f"{argument}: the pair {pair!r} must be text 'a-b', e.g. 'methane-ethane'")
        shown = pair.strip()
        number = parse_number(value, f"{argument} {shown!r}")
        i, j = split_pair(shown, names, extra, argument)
        if i == j:
            raise InputError(f"{argument} pair {shown!r} pairs a component with itself; kij is zero on the diagonal")
        if not -1.0 < number < 1.0:
            raise InputError(f"{argument} {shown!r} = {number:g} lies outside (-1, 1)")
        key = (min(i, j), max(i, j))
        if key in given:
            raise InputError(f"{argument} gives the pair {names[key[0]]}-{names[key[1]]} twice ({given[key]!r} and "
                             f"{shown!r}); give each pair once")
        given[key] = shown
        kij[i, j] = kij[j, i] = number
    return kij


def resolve_kij(components: Sequence[Component], eos: str, base: str,
                pairs: Iterable[tuple[str, float]] = (), extra: Sequence[Component] = (), *,
                argument: str = "kij") -> KijDefaults:
    """The kij of a mixture with every pair's source: ``base`` (``"defaults"``, :func:`default_kij`, or
    ``"none"``, zeros) with the user's ``pairs`` (``("methane-ethane", 0.01)`` items, read as by
    :func:`kij_matrix`) overriding single pairs (source ``"user"``).

    Raises:
        InputError: an unknown base, or a pair :func:`kij_matrix` refuses.
    """
    if base not in KIJ_BASES:
        raise InputError(f"{argument}: unknown base {base!r}; choose defaults or none, then pairs such as "
                         f"methane-ethane=0.01{suggest(str(base), KIJ_BASES)}")
    components = tuple(components)
    names = [c.name for c in components]
    pairs = list(pairs)
    user = kij_matrix(pairs, names, extra, argument=argument)  # checks every pair before it is used
    overrides = {}
    for pair, _ in pairs:
        i, j = split_pair(pair, names, extra, argument)
        overrides[(names[i], names[j])] = float(user[i, j])
    name = getattr(eos, "name", eos)
    if base == "defaults":
        if name not in ("pr", "srk"):
            raise InputError(f"{argument} defaults: the default table is for the pr and srk equations only; with "
                             f"{name} use '{argument} none' (then pairs, if you have values)")
        return default_kij(components, name, overrides=overrides)
    matrix = user.copy()
    matrix.setflags(write=False)
    sources = {(a, b): ("user" if (a, b) in overrides or (b, a) in overrides else _SOURCE_NONE)
               for i, a in enumerate(names) for b in names[i + 1:]}
    return KijDefaults(tuple(names), name, matrix, sources)
