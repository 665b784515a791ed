"""Plus-fraction characterisation: a laboratory analysis ending in C7+ becomes a few pseudo-components.

A gas or oil analysis names its light components and ends in a plus fraction (e.g. heptanes-plus)
given only by its mole fraction z+, molar mass M+ and specific gravity SG+. :func:`characterise`

1. splits the plus fraction into single-carbon-number (SCN) groups by a published molar
   distribution, reproducing z+ and M+ exactly (the distributions' sums telescope; the identity is
   checked and reported):

   - ``"gamma"`` (default): Whitson's three-parameter gamma distribution (Whitson, C. H.,
     Characterizing hydrocarbon plus fractions, Soc. Pet. Eng. J. 23 (1983) 683; also Whitson, C. H.
     and Brule, M. R., Phase Behavior, SPE Monograph 20 (2000)), with the lower bound
     eta = 14 n+ - 6 and SCN group n spanning molar masses 14 n - 6 .. 14 (n + 1) - 6 (the
     convention as recalled from memory), shape alpha = 1 by default (an exponential; Whitson's
     suggestion when no extended analysis is at hand, memory); the last group holds the whole tail;
   - ``"exponential"``: Pedersen's exponential distribution, ln z_n = A + B M_n with M_n = 14 n - 4
     (Pedersen, K. S., Thomassen, P. and Fredenslund, Aa., Thermodynamics of petroleum mixtures
     containing heavy hydrocarbons. 1., Ind. Eng. Chem. Process Des. Dev. 23 (1984) 163; the
     group molar masses 14 n - 4 recalled from memory), truncated at the last carbon number;

2. gives each group a specific gravity from a constant Watson characterisation factor
   Kw = Tb^(1/3) / SG (Tb in degR; Watson, K. M., Nelson, E. F. and Murphy, G. B., Ind. Eng. Chem. 27
   (1935) 1460), combined with the Riazi-Daubert boiling point (below) as Whitson (1983) writes it,
   SG = 6.0108 M^0.17947 Kw^-1.18241; Kw is fitted in closed form so that the groups' volumes add
   up to the plus fraction's, which reproduces SG+ exactly;

3. gives each group a normal boiling point from M and SG by Riazi & Daubert (Hydrocarbon Processing
   59(3) (1980) 115), M = 4.5673e-5 Tb^2.1962 SG^-1.0164 (Tb in degR), rearranged
   Tb = (4.5579 M^0.15178 SG^0.15427)^3 (Whitson 1983), and critical constants and acentric factor
   from one of two correlation sets (:data:`CORRELATIONS`):

   - ``"kesler-lee"`` (default): Tc, Pc and omega of Kesler & Lee (Hydrocarbon Processing 55(3)
     (1976) 153). Default because its acentric factor was fitted together with its own Tc and Pc to
     vapour pressures, so the three constants are consistent for a cubic equation of state, and
     because it covers boiling points up to about 1200 degF (memory), well past C20;
   - ``"riazi-daubert"``: Tc and Pc of Riazi & Daubert (1980), Tc = 24.2787 Tb^0.58848 SG^0.3596
     (degR), Pc = 3.12281e9 Tb^-2.3125 SG^2.3201 (psia), with Edmister's acentric factor
     omega = (3/7) log10(Pc/Pa) / (Tc/Tb - 1) - 1 (Edmister, W. C., Pet. Refiner 37(4) (1958) 173);
     its stated range is molar masses of about 70 to 300 (memory);

   (all correlation constants recalled from memory and checked in the tests against the n-alkanes
   of the component table);

4. lumps the groups into a few pseudo-components (``n_pseudo``, default 3) by one of two rules:

   - ``"equal-mass"`` (default): Pedersen et al. (1984): consecutive groups holding about equal
     weight fractions; Tc, Pc, omega and Tb of a lump are weight-fraction averages (the same source);
   - ``"whitson"``: Whitson (1983): group boundaries equally spaced in ln M between the first and the
     last group, M_I = M_first (M_last / M_first)^(I / n_pseudo); Tc, Pc, omega and Tb are
     mole-fraction averages (Kay's rule, Kay, W. B., Ind. Eng. Chem. 28 (1936) 1014);

   with either rule the lump's mole fraction is the sum, its molar mass the mole-fraction average
   (mass is conserved) and its specific gravity the volume-additive average
   SG = sum z M / sum (z M / SG), so z+, M+ and SG+ are reproduced by the lumps as well.

Every result carries the project's caution: characterised constants are estimates.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from functools import lru_cache
from importlib import resources

import numpy as np
from scipy.optimize import brentq
from scipy.special import gammaincc

from contin import InputError
from contin.base import suggest

from ._caution import CAUTION
from ._components import FORMULAS as _FORMULAS, OMEGA_REFUSE_RANGE, OMEGA_WARN_RANGE, Component, lookup

__all__ = [
    "CORRELATIONS",
    "LUMPING_RULES",
    "SPLIT_METHODS",
    "Characterisation",
    "PseudoComponent",
    "characterise",
    "correlate",
    "exponential_split",
    "gamma_split",
    "is_plus_fraction",
    "katz_firoozabadi_table",
    "lump",
    "molar_mass_of",
    "watson_specific_gravities",
]

PSIA = 6894.757293168361  # Pa per psi (1 lbf/in^2, exact by definition of the pound and the inch)
ATM_PSIA = 14.695948775513449  # 101325 Pa in psia
RANKINE = 1.8  # degR per K

#: Bounds of the plus fraction's specific gravity accepted (petroleum fractions lie inside).
SG_RANGE = (0.6, 1.2)

SPLIT_METHODS = {
    "gamma": "Whitson's three-parameter gamma distribution (Whitson, Soc. Pet. Eng. J. 23 (1983) 683; "
             "Whitson & Brule, Phase Behavior, SPE Monograph 20 (2000)); eta = 14 n+ - 6, group n between "
             "14 n - 6 and 14 (n + 1) - 6 (memory); the last group holds the tail",
    "exponential": "Pedersen's exponential distribution ln z_n = A + B M_n, M_n = 14 n - 4 (Pedersen, Thomassen & "
                   "Fredenslund, Ind. Eng. Chem. Process Des. Dev. 23 (1984) 163; M_n from memory)",
}
CORRELATIONS = {
    "kesler-lee": "Tc, Pc and omega of Kesler & Lee, Hydrocarbon Processing 55(3) (1976) 153 (constants from memory)",
    "riazi-daubert": "Tc and Pc of Riazi & Daubert, Hydrocarbon Processing 59(3) (1980) 115; omega of Edmister, "
                     "Pet. Refiner 37(4) (1958) 173 (constants from memory)",
}
LUMPING_RULES = {
    "equal-mass": "Pedersen, Thomassen & Fredenslund (1984): consecutive groups of about equal weight; Tc, Pc, "
                  "omega and Tb weight-fraction averages",
    "whitson": "Whitson (1983): boundaries equally spaced in ln M; Tc, Pc, omega and Tb mole-fraction averages "
               "(Kay, Ind. Eng. Chem. 28 (1936) 1014)",
}
_SG_METHOD = ("constant Watson factor Kw = Tb^(1/3)/SG (Watson, Nelson & Murphy, Ind. Eng. Chem. 27 (1935) 1460) "
              "with SG = 6.0108 M^0.17947 Kw^-1.18241 (Whitson 1983), Kw fitted to SG+ by volume additivity")
_TB_METHOD = ("Riazi & Daubert, Hydrocarbon Processing 59(3) (1980) 115: Tb = (4.5579 M^0.15178 SG^0.15427)^3 degR "
              "(as rearranged by Whitson 1983; constants from memory)")
_LUMP_SHARED = ("z: sum; molar mass: mole-fraction average; specific gravity: volume-additive "
                "sum z M / sum (z M / SG)")

# Standard atomic weights (IUPAC, conventional values), for the molar masses of the table's fluids.
_ATOMS = {"C": 12.011, "H": 1.008, "N": 14.007, "O": 15.999, "S": 32.06, "Ar": 39.948, "He": 4.002602}
_PLUS = re.compile(r"^\s*C(\d+)\s*\+\s*$", re.IGNORECASE)


def is_plus_fraction(name: str) -> bool:
    """Whether ``name`` names a plus fraction (``C7+``, ``c10 +``)."""
    return bool(_PLUS.match(str(name)))


def molar_mass_of(name: str) -> float | None:
    """Molar mass (g/mol) of a fluid of the component table from its formula, or None if not known."""
    formula = _FORMULAS.get(name)
    if formula is None:
        return None
    return float(sum(_ATOMS[atom] * (int(count) if count else 1)
                     for atom, count in re.findall(r"([A-Z][a-z]?)(\d*)", formula)))


@lru_cache(maxsize=1)
def katz_firoozabadi_table() -> tuple[dict, ...]:
    """The Katz & Firoozabadi (1978) generalised SCN table, C6..C20 (values from memory; see the data file).

    Returns:
        Rows with ``scn``, ``molar_mass`` (g/mol), ``specific_gravity`` and ``boiling_point`` (K).
    """
    text = resources.files("contin_thermo").joinpath("data/katz_firoozabadi.csv").read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if line.strip() and not line.startswith("#")]
    rows = []
    for row in csv.DictReader(io.StringIO("\n".join(lines))):
        rows.append({"scn": int(row["scn"]), "molar_mass": float(row["molar_mass"]),
                     "specific_gravity": float(row["specific_gravity"]),
                     "boiling_point": float(row["boiling_point_R"]) / RANKINE})
    return tuple(rows)


# ---------------------------------------------------------------------------------------------
# Splitting
# ---------------------------------------------------------------------------------------------
def _check_plus(z_plus: float, molar_mass: float, carbon_number: int, last: int) -> None:
    if not (math.isfinite(z_plus) and z_plus > 0):
        raise InputError(f"plus fraction: mole fraction {z_plus!r} must be positive")
    if not (math.isfinite(molar_mass) and molar_mass > 0):
        raise InputError(f"plus fraction: molar mass {molar_mass!r} must be a positive number of g/mol")
    if not (isinstance(carbon_number, (int, np.integer)) and 5 <= carbon_number <= 30):
        raise InputError(f"plus fraction: carbon number {carbon_number!r} must be a whole number 5..30 (C7+ is 7)")
    if not (isinstance(last, (int, np.integer)) and carbon_number + 1 <= last <= 200):
        raise InputError(f"last={last!r}: the last carbon number must lie between {carbon_number + 1} and 200")


def gamma_split(z_plus: float, molar_mass: float, carbon_number: int = 7, *, alpha: float = 1.0,
                last: int = 45) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Split a plus fraction by Whitson's three-parameter gamma distribution (Whitson 1983).

    p(M) = (M - eta)^(alpha - 1) exp(-(M - eta)/beta) / (beta^alpha Gamma(alpha)), beta = (M+ - eta)/alpha,
    eta = 14 n+ - 6; group n holds the probability between 14 n - 6 and 14 (n + 1) - 6 and its molar
    mass is the mean of M there, eta + alpha beta [Q(alpha+1, .)] / [Q(alpha, .)] differences of the
    regularised upper incomplete gamma function Q. The last group runs to infinity. The sums
    telescope: sum z_n = z+ and sum z_n M_n = z+ M+ to round-off.

    Args:
        z_plus: mole fraction of the plus fraction; molar_mass: its molar mass M+ (g/mol), above eta.
        carbon_number: n+ of the plus fraction (7 for C7+).
        alpha: shape parameter (positive; 1 gives an exponential).
        last: carbon number of the last group, which holds the tail.

    Returns:
        (carbon numbers, mole fractions, molar masses), arrays of length last - n+ + 1.

    Raises:
        InputError: non-positive z+ or alpha, M+ not above eta, carbon numbers out of range.
    """
    z_plus, molar_mass = float(z_plus), float(molar_mass)
    _check_plus(z_plus, molar_mass, carbon_number, last)
    alpha = float(alpha)
    if not (math.isfinite(alpha) and 0.0 < alpha <= 20.0):
        raise InputError(f"alpha={alpha!r}: the gamma shape parameter must lie in (0, 20]; 1 is the usual default")
    eta = 14.0 * carbon_number - 6.0
    if not molar_mass > eta:
        raise InputError(f"plus fraction: molar mass {molar_mass:g} must exceed the gamma distribution's lower "
                         f"bound eta = 14 n - 6 = {eta:g} g/mol for C{carbon_number}+")
    beta = (molar_mass - eta) / alpha
    n = np.arange(carbon_number, last + 1)
    lower = (14.0 * n - 6.0 - eta) / beta
    upper = np.append(lower[1:], np.inf)
    q0 = gammaincc(alpha, lower) - gammaincc(alpha, upper)
    q1 = gammaincc(alpha + 1.0, lower) - gammaincc(alpha + 1.0, upper)
    if np.any(q0 <= 0):
        raise InputError(f"plus fraction: molar mass {molar_mass:g} puts no weight in some groups up to C{last}; "
                         "lower last= or check the molar mass")
    masses = eta + alpha * beta * q1 / q0
    return n, z_plus * q0 / q0.sum(), masses


def exponential_split(z_plus: float, molar_mass: float, carbon_number: int = 7, *,
                      last: int = 45) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Split a plus fraction by Pedersen's exponential distribution ln z_n = A + B M_n (Pedersen et al. 1984).

    M_n = 14 n - 4 for n = n+ .. last; B solves the mean-molar-mass condition sum M_n e^(B M_n) /
    sum e^(B M_n) = M+ (a monotone function of B, solved by Brent's method to round-off) and A the
    normalisation sum z_n = z+.

    Returns:
        (carbon numbers, mole fractions, molar masses).

    Raises:
        InputError: non-positive z+, M+ not between the first and the last group's molar mass.
    """
    z_plus, molar_mass = float(z_plus), float(molar_mass)
    _check_plus(z_plus, molar_mass, carbon_number, last)
    n = np.arange(carbon_number, last + 1)
    masses = 14.0 * n - 4.0
    if not masses[0] < molar_mass < masses[-1]:
        raise InputError(f"plus fraction: molar mass {molar_mass:g} must lie between {masses[0]:g} (C{carbon_number}) "
                         f"and {masses[-1]:g} g/mol (C{last}) for the exponential split; raise last= for heavier fractions")
    offset = masses - masses[0]

    def excess(b: float) -> float:
        w = np.exp(b * offset - np.max(b * offset))
        return float(w @ masses / w.sum()) - molar_mass

    high = 1.0
    while excess(-high) > 0 or excess(high) < 0:
        high *= 2.0
    b = brentq(excess, -high, high, xtol=1e-18, rtol=1e-15, maxiter=500)
    w = np.exp(b * offset - np.max(b * offset))
    return n, z_plus * w / w.sum(), masses


_SG_C, _SG_P, _SG_Q = 6.0108, 0.17947, 1.18241


def watson_specific_gravities(z: Sequence[float], molar_masses: Sequence[float],
                              specific_gravity: float) -> tuple[float, np.ndarray]:
    """The constant Watson factor Kw reproducing SG+ and the groups' specific gravities (Whitson 1983).

    SG_n = 6.0108 M_n^0.17947 Kw^-1.18241; Kw^1.18241 = 6.0108 sum z M / (SG+ sum z M^0.82053), the
    closed form of SG+ = sum z M / sum (z M / SG_n) (volumes add).

    Returns:
        (Kw, specific gravities).

    Raises:
        InputError: SG+ outside 0.6..1.2.
    """
    sg = float(specific_gravity)
    if not (math.isfinite(sg) and SG_RANGE[0] <= sg <= SG_RANGE[1]):
        raise InputError(f"plus fraction: specific gravity {specific_gravity!r} is outside {SG_RANGE[0]}..{SG_RANGE[1]}; "
                         "give SG at 60 degF relative to water (e.g. 0.80), not a density in kg/m3 or degrees API")
    z = np.asarray(z, dtype=float)
    m = np.asarray(molar_masses, dtype=float)
    kw = (_SG_C * float(z @ m) / (sg * float(z @ m ** (1.0 - _SG_P)))) ** (1.0 / _SG_Q)
    return kw, _SG_C * m**_SG_P * kw ** (-_SG_Q)


# ---------------------------------------------------------------------------------------------
# Correlations
# ---------------------------------------------------------------------------------------------
def _kesler_lee(tb: np.ndarray, sg: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    tc = 341.7 + 811.0 * sg + (0.4244 + 0.1174 * sg) * tb + (0.4669 - 3.2623 * sg) * 1e5 / tb
    ln_pc = (8.3634 - 0.0566 / sg - (0.24244 + 2.2898 / sg + 0.11857 / sg**2) * 1e-3 * tb
             + (1.4685 + 3.648 / sg + 0.47227 / sg**2) * 1e-7 * tb**2 - (0.42019 + 1.6977 / sg**2) * 1e-10 * tb**3)
    pc = np.exp(ln_pc)
    tbr = tb / tc
    kw = np.cbrt(tb) / sg
    low = ((-np.log(pc / ATM_PSIA) - 5.92714 + 6.09648 / tbr + 1.28862 * np.log(tbr) - 0.169347 * tbr**6)
           / (15.2518 - 15.6875 / tbr - 13.4721 * np.log(tbr) + 0.43577 * tbr**6))
    high = -7.904 + 0.1352 * kw - 0.007465 * kw**2 + 8.359 * tbr + (1.408 - 0.01063 * kw) / tbr
    return tc, pc, np.where(tbr <= 0.8, low, high)


def _riazi_daubert(tb: np.ndarray, sg: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    tc = 24.2787 * tb**0.58848 * sg**0.3596
    pc = 3.12281e9 * tb**-2.3125 * sg**2.3201
    omega = 3.0 / 7.0 * np.log10(pc / ATM_PSIA) / (tc / tb - 1.0) - 1.0
    return tc, pc, omega


def correlate(boiling_point: Sequence[float] | float, specific_gravity: Sequence[float] | float,
              correlations: str = "kesler-lee") -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Tc (K), Pc (Pa) and omega from the normal boiling point (K) and specific gravity.

    Args:
        correlations: ``"kesler-lee"`` (default) or ``"riazi-daubert"`` (see :data:`CORRELATIONS`).

    Raises:
        InputError: an unknown correlation set.
    """
    if correlations not in CORRELATIONS:
        raise InputError(f"correlations={correlations!r} is not known; choose one of {', '.join(CORRELATIONS)}"
                         f"{suggest(str(correlations), CORRELATIONS)}")
    tb = np.asarray(boiling_point, dtype=float) * RANKINE
    sg = np.asarray(specific_gravity, dtype=float)
    tc, pc, omega = (_kesler_lee if correlations == "kesler-lee" else _riazi_daubert)(tb, sg)
    return tc / RANKINE, pc * PSIA, omega


def _boiling_point(molar_mass: np.ndarray, sg: np.ndarray) -> np.ndarray:
    """Riazi-Daubert (1980) normal boiling point, K, as rearranged by Whitson (1983)."""
    return (4.5579 * molar_mass**0.15178 * sg**0.15427) ** 3 / RANKINE


# ---------------------------------------------------------------------------------------------
# Lumping
# ---------------------------------------------------------------------------------------------
def _partition(rule: str, z: np.ndarray, masses: np.ndarray, n_pseudo: int) -> list[tuple[int, int]]:
    count = len(z)
    if rule == "equal-mass":
        weight = np.cumsum(z * masses) / float(z @ masses)
        edges, start = [], 0
        for k in range(1, n_pseudo):
            # the group whose cumulative weight comes nearest k / n_pseudo, leaving one group per later lump
            allowed = np.arange(start, count - (n_pseudo - k))
            end = int(allowed[np.argmin(np.abs(weight[allowed] - k / n_pseudo))])
            edges.append((start, end + 1))
            start = end + 1
        edges.append((start, count))
        return edges
    bounds = masses[0] * (masses[-1] / masses[0]) ** (np.arange(1, n_pseudo) / n_pseudo)
    cut = [0, *(int(np.searchsorted(masses, b, side="right")) for b in bounds), count]
    edges = [(cut[k], cut[k + 1]) for k in range(n_pseudo)]
    if any(b <= a for a, b in edges):
        raise InputError(f"n_pseudo={n_pseudo}: Whitson's ln M boundaries leave a pseudo-component without a group; "
                         "ask for fewer pseudo-components or use lumping='equal-mass'")
    return edges


@dataclass(frozen=True)
class PseudoComponent:
    """A single-carbon-number group or a lump of them.

    Attributes:
        name: ``C7``.. for groups; ``C7-C9``, ``C10-C14``, ``C15+`` (holding the tail) for lumps.
        z: mole fraction in the whole feed; molar_mass (g/mol); specific_gravity (60/60 degF);
        boiling_point (K); Tc (K); Pc (Pa); omega.
        first, last: carbon numbers covered; tail: whether the last group's tail is included.
    """

    name: str
    z: float
    molar_mass: float
    specific_gravity: float
    boiling_point: float
    Tc: float
    Pc: float
    omega: float
    first: int
    last: int
    tail: bool

    def as_dict(self) -> dict:
        """The table row: name, z, molar_mass, specific_gravity, boiling_point, Tc, Pc, omega."""
        return {"name": self.name, "z": self.z, "molar_mass": self.molar_mass, "specific_gravity": self.specific_gravity,
                "boiling_point": self.boiling_point, "Tc": self.Tc, "Pc": self.Pc, "omega": self.omega}


def _lump_name(first: int, last: int, tail: bool) -> str:
    if tail:
        return f"C{first}+"
    return f"C{first}-C{last}" if last > first else f"C{first} group"


def lump(groups: Sequence[PseudoComponent], n_pseudo: int = 3, rule: str = "equal-mass") -> tuple[PseudoComponent, ...]:
    """Lump consecutive SCN groups into ``n_pseudo`` pseudo-components by a published rule.

    Args:
        groups: the split, lightest first (as :func:`characterise` makes them).
        n_pseudo: number of pseudo-components, 1 .. number of groups.
        rule: ``"equal-mass"`` (Pedersen et al. 1984, weight-fraction averages) or ``"whitson"``
            (Whitson 1983, ln M boundaries, mole-fraction averages); see :data:`LUMPING_RULES`.

    Raises:
        InputError: an unknown rule or a number of pseudo-components outside 1 .. number of groups.
    """
    if rule not in LUMPING_RULES:
        raise InputError(f"lumping={rule!r} is not known; choose one of {', '.join(LUMPING_RULES)}"
                         f"{suggest(str(rule), LUMPING_RULES)}")
    if isinstance(n_pseudo, bool) or not isinstance(n_pseudo, (int, np.integer)) or not 1 <= n_pseudo <= len(groups):
        raise InputError(f"n_pseudo={n_pseudo!r}: the number of pseudo-components must be a whole number from 1 to "
                         f"the {len(groups)} carbon-number groups of the split (3 to 5 is usual)")
    z = np.array([g.z for g in groups])
    masses = np.array([g.molar_mass for g in groups])
    lumps = []
    for a, b in _partition(rule, z, masses, int(n_pseudo)):
        part = groups[a:b]
        zi = z[a:b]
        mass = zi * masses[a:b]
        weights = mass / mass.sum() if rule == "equal-mass" else zi / zi.sum()

        def average(key: str, part=part, weights=weights) -> float:
            return float(weights @ np.array([getattr(g, key) for g in part]))

        volume = float(np.sum(mass / np.array([g.specific_gravity for g in part])))
        lumps.append(PseudoComponent(
            _lump_name(part[0].first, part[-1].last, part[-1].tail), float(zi.sum()), float(mass.sum() / zi.sum()),
            float(mass.sum() / volume), average("boiling_point"), average("Tc"), average("Pc"), average("omega"),
            part[0].first, part[-1].last, part[-1].tail))
    return tuple(lumps)


# ---------------------------------------------------------------------------------------------
# The feed and the result
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Characterisation:
    """A feed with its plus fraction characterised.

    Attributes:
        components: the explicit components and the pseudo-components (as :class:`Component`), in feed
            order, the pseudo-components where the plus fraction stood.
        z: mole fractions of ``components`` (sum 1).
        pseudo: the pseudo-components with their molar masses, specific gravities and boiling points.
        groups: the single-carbon-number split before lumping.
        watson_k: the fitted Watson characterisation factor.
        plus: the plus fraction as given: ``name``, ``z``, ``molar_mass``, ``specific_gravity``.
        methods: each step's method with its source.
        checks: z+, M+ and SG+ as given and as reproduced by the split and by the lumps.
        caution: the project's caution.
    """

    components: tuple[Component, ...]
    z: np.ndarray
    pseudo: tuple[PseudoComponent, ...]
    groups: tuple[PseudoComponent, ...]
    watson_k: float
    plus: dict
    methods: dict
    checks: dict
    caution: str = CAUTION
    notes: tuple[str, ...] = field(default=())

    @property
    def molar_masses(self) -> dict:
        """name -> molar mass (g/mol) of every component whose molar mass is known (pseudo-components
        from the split, table fluids from their formulas)."""
        masses = {c.name: molar_mass_of(c.name) for c in self.components}
        masses.update({p.name: p.molar_mass for p in self.pseudo})
        return {name: mass for name, mass in masses.items() if mass is not None}

    def mixture(self, eos="pr", kij=None):
        """A :class:`~contin_thermo.models._mixture.Mixture` of :attr:`components` under ``eos``.

        Args:
            kij: None (zeros), ``"defaults"`` (:func:`contin_thermo.models._kij.default_kij`) or a matrix.
        """
        from ._eos import family
        from ._mixture import Mixture

        model = family(eos, "eos")
        if isinstance(kij, str):
            if kij != "defaults":
                raise InputError(f"kij={kij!r}: give 'defaults', None or a symmetric matrix")
            from ._kij import default_kij

            kij = default_kij(self.components, model.name).matrix
        return Mixture(self.components, model, kij)

    def table(self) -> list[dict]:
        """The pseudo-components' rows (name, z, molar_mass, specific_gravity, boiling_point, Tc, Pc, omega)."""
        return [p.as_dict() for p in self.pseudo]

    def to_dict(self) -> dict:
        """``{"components": [...], "methods": {...}, "checks": {...}, "caution": ...}`` (SI units, g/mol)."""
        return {"components": self.table(), "methods": dict(self.methods), "checks": dict(self.checks),
                "watson_k": self.watson_k, "plus": dict(self.plus), "caution": self.caution}


def _row(row, number: int) -> dict:
    where = f"feed row {number}"
    if isinstance(row, Mapping):
        unknown = sorted(set(row) - {"name", "z", "molar_mass", "specific_gravity"})
        if unknown:
            raise InputError(f"{where}: unknown key {unknown[0]!r}; use name, z, molar_mass, specific_gravity"
                             f"{suggest(unknown[0], ('name', 'z', 'molar_mass', 'specific_gravity'))}")
        if "name" not in row or "z" not in row:
            raise InputError(f"{where}: needs at least 'name' and 'z'")
        entry = dict(row)
    else:
        values = tuple(row)
        if len(values) not in (2, 4):
            raise InputError(f"{where}: give (name, z) or, for a plus fraction, (name, z, molar_mass, specific_gravity)")
        entry = dict(zip(("name", "z", "molar_mass", "specific_gravity"), values))
    name = entry["name"]
    label = name.name if isinstance(name, Component) else str(name).strip()
    out = {"name": name, "label": label}
    for key in ("z", "molar_mass", "specific_gravity"):
        if key in entry and entry[key] is not None:
            try:
                out[key] = float(entry[key])
            except (TypeError, ValueError):
                raise InputError(f"{where} ({label}): {key} {entry[key]!r} is not a number") from None
            if not math.isfinite(out[key]):
                raise InputError(f"{where} ({label}): {key} {entry[key]!r} is not a finite number")
    if out["z"] <= 0:
        raise InputError(f"{where} ({label}): mole fraction {out['z']:g} must be positive; leave absent components out")
    return out


def _pseudo_component(p: PseudoComponent, source: str) -> Component:
    # Built directly, not by custom_component: heavy ends have acentric factors above its warning
    # threshold of 1.5 legitimately; the result's notes say so instead of a warning.
    values = (p.Tc, p.Pc, p.omega)
    if not (all(math.isfinite(v) for v in values) and p.Tc > 0 and p.Pc > 0
            and OMEGA_REFUSE_RANGE[0] <= p.omega <= OMEGA_REFUSE_RANGE[1]):
        raise InputError(f"pseudo-component {p.name}: the correlations give Tc={p.Tc:g} K, Pc={p.Pc:g} Pa, "
                         f"omega={p.omega:g}, outside their range; lower last= or use correlations='kesler-lee'")
    return Component(p.name, p.Tc, p.Pc, p.omega, source)


def _relative(a: float, b: float) -> float:
    return abs(a - b) / abs(b)


def _reproduced(z: np.ndarray, masses: np.ndarray, sg: np.ndarray, plus: dict) -> dict:
    total = float(z.sum())
    mass = float(z @ masses)
    values = {"z": total, "molar_mass": mass / total, "specific_gravity": mass / float(np.sum(z * masses / sg))}
    return {key: {"given": plus[key], "reproduced": v, "relative_error": _relative(v, plus[key])}
            for key, v in values.items()}


def characterise(
    feed_rows: Sequence,
    *,
    split: str = "gamma",
    alpha: float = 1.0,
    last: int = 45,
    correlations: str = "kesler-lee",
    n_pseudo: int = 3,
    lumping: str = "equal-mass",
    normalise: bool = False,
    extra: Sequence[Component] = (),
) -> Characterisation:
    """Characterise a feed whose analysis ends in a plus fraction (see the module text for the methods).

    Args:
        feed_rows: rows ``(name, z)`` for components of the table (or :class:`Component` objects) and
            one row ``("C7+", z, molar_mass, specific_gravity)`` for the plus fraction (mappings with
            keys ``name``, ``z``, ``molar_mass``, ``specific_gravity`` work too). Mole fractions sum to
            1 (within 1e-6) unless ``normalise``.
        split: ``"gamma"`` (Whitson 1983, default) or ``"exponential"`` (Pedersen et al. 1984).
        alpha: the gamma distribution's shape parameter (default 1).
        last: carbon number of the last group (default 45).
        correlations: ``"kesler-lee"`` (default) or ``"riazi-daubert"``.
        n_pseudo: number of pseudo-components (default 3).
        lumping: ``"equal-mass"`` (default) or ``"whitson"``.
        normalise: scale the mole fractions to sum to 1.
        extra: user components the names may refer to.

    Returns:
        A :class:`Characterisation`.

    Raises:
        InputError: no or several plus fractions, a non-positive mole fraction, fractions not summing
            to 1, a plus fraction without molar mass or specific gravity, a molar mass not above the
            heaviest explicit component's, SG+ outside 0.6..1.2, an unknown method, or more
            pseudo-components than groups.
    """
    if split not in SPLIT_METHODS:
        raise InputError(f"split={split!r} is not known; choose one of {', '.join(SPLIT_METHODS)}"
                         f"{suggest(str(split), SPLIT_METHODS)}")
    if lumping not in LUMPING_RULES:
        raise InputError(f"lumping={lumping!r} is not known; choose one of {', '.join(LUMPING_RULES)}"
                         f"{suggest(str(lumping), LUMPING_RULES)}")
    correlate(300.0, 0.7, correlations)  # validates the name before any work
    rows = [_row(row, k) for k, row in enumerate(feed_rows, start=1)]
    plus_rows = [k for k, r in enumerate(rows) if isinstance(r["name"], str) and _PLUS.match(r["label"])]
    if len(plus_rows) != 1:
        raise InputError(f"feed: found {len(plus_rows)} plus fractions; give exactly one row such as "
                         "('C7+', 0.04, 182.0, 0.815)")
    where = plus_rows[0]
    plus_row = rows[where]
    for key in ("molar_mass", "specific_gravity"):
        if key not in plus_row:
            raise InputError(f"feed row {where + 1} ({plus_row['label']}): the plus fraction needs its {key}")
    total = sum(r["z"] for r in rows)
    if normalise:
        for r in rows:
            r["z"] /= total
    elif abs(total - 1.0) > 1e-6:
        raise InputError(f"feed: mole fractions sum to {total:.8g}, not 1; correct them or pass normalise=True")
    explicit = []
    heaviest = None
    for k, r in enumerate(rows):
        if k == where:
            continue
        component = r["name"] if isinstance(r["name"], Component) else lookup(r["name"], extra, argument=f"feed row {k + 1}")
        mass = r.get("molar_mass", molar_mass_of(component.name))
        if mass is not None and (heaviest is None or mass > heaviest[1]):
            heaviest = (component.name, mass)
        explicit.append((k, component))
    carbon = int(_PLUS.match(plus_row["label"]).group(1))
    plus = {"name": f"C{carbon}+", "z": plus_row["z"], "molar_mass": plus_row["molar_mass"],
            "specific_gravity": plus_row["specific_gravity"]}
    if heaviest is not None and not plus["molar_mass"] > heaviest[1]:
        raise InputError(f"feed row {where + 1} ({plus_row['label']}): molar mass {plus['molar_mass']:g} g/mol is not "
                         f"above that of the explicit component {heaviest[0]!r} ({heaviest[1]:.4g} g/mol); a plus "
                         "fraction is the heaviest part of the analysis")
    if not (math.isfinite(plus["specific_gravity"]) and SG_RANGE[0] <= plus["specific_gravity"] <= SG_RANGE[1]):
        raise InputError(f"feed row {where + 1} ({plus_row['label']}): specific gravity {plus['specific_gravity']:g} "
                         f"is outside {SG_RANGE[0]}..{SG_RANGE[1]}; give SG at 60 degF relative to water (e.g. 0.80)")
    if split == "gamma":
        numbers, z, masses = gamma_split(plus["z"], plus["molar_mass"], carbon, alpha=alpha, last=last)
    else:
        numbers, z, masses = exponential_split(plus["z"], plus["molar_mass"], carbon, last=last)
    count = len(numbers)
    if isinstance(n_pseudo, bool) or not isinstance(n_pseudo, (int, np.integer)) or not 1 <= n_pseudo <= count:
        raise InputError(f"n_pseudo={n_pseudo!r}: the number of pseudo-components must be a whole number from 1 to "
                         f"the {count} carbon-number groups of the split (3 to 5 is usual)")
    kw, sg = watson_specific_gravities(z, masses, plus["specific_gravity"])
    tb = _boiling_point(masses, sg)
    tc, pc, omega = correlate(tb, sg, correlations)
    tail = split == "gamma"
    groups = tuple(
        PseudoComponent(f"C{n}" + ("+" if tail and i == count - 1 else ""), float(z[i]), float(masses[i]), float(sg[i]),
                        float(tb[i]), float(tc[i]), float(pc[i]), float(omega[i]), int(n), int(n), tail and i == count - 1)
        for i, n in enumerate(numbers))
    lumps = lump(groups, n_pseudo, lumping)
    # The lumps' fractions add up to z+ as given, not to a round-off neighbour of it, so that a single
    # pseudo-component carries the analysis's own number.
    lumps = (*lumps[:-1], replace(lumps[-1], z=plus["z"] - math.fsum(p.z for p in lumps[:-1])))
    source = (f"pseudo-component of {plus['name']} (M+ = {plus['molar_mass']:g}, SG+ = {plus['specific_gravity']:g}): "
              f"{split} split, {correlations} correlations, {lumping} lumping")
    pseudo_components = [_pseudo_component(p, source) for p in lumps]
    names = {c.name for _, c in explicit}
    clash = sorted(names & {c.name for c in pseudo_components})
    if clash:
        raise InputError(f"feed: the explicit component {clash[0]!r} has the name of a pseudo-component; rename it")
    components, fractions = [], []
    for k, r in enumerate(rows):
        if k == where:
            components.extend(pseudo_components)
            fractions.extend(p.z for p in lumps)
        else:
            components.append(next(c for j, c in explicit if j == k))
            fractions.append(r["z"])
    fractions = np.array(fractions)
    fractions.setflags(write=False)
    checks = {
        "split": _reproduced(z, masses, sg, plus),
        "lumps": _reproduced(np.array([p.z for p in lumps]), np.array([p.molar_mass for p in lumps]),
                             np.array([p.specific_gravity for p in lumps]), plus),
    }
    methods = {
        "split": SPLIT_METHODS[split] + (f"; alpha = {float(alpha):g}" if split == "gamma" else "")
                 + f"; groups C{numbers[0]}..C{numbers[-1]}",
        "specific_gravity": _SG_METHOD,
        "boiling_point": _TB_METHOD,
        "critical_constants": CORRELATIONS[correlations],
        "lumping": LUMPING_RULES[lumping] + "; " + _LUMP_SHARED,
    }
    notes = tuple(f"{p.name}: acentric factor {p.omega:.3g} above 1.5, as the correlations give for very heavy ends"
                  for p in lumps if p.omega > OMEGA_WARN_RANGE[1])
    if correlations == "riazi-daubert" and masses[-1] > 300:
        notes += (f"the Riazi-Daubert (1980) correlations are stated for molar masses up to about 300 (memory); "
                 f"the heaviest group here has {masses[-1]:.0f} g/mol",)
    return Characterisation(tuple(components), fractions, lumps, groups, float(kw), plus, methods, checks,
                            notes=notes)
