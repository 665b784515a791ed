"""Peneloux-type volume translation: better liquid volumes, the same phase equilibrium.

A translated cubic equation of state is the original one moved along the volume axis by a constant
shift per component, v_translated = v - sum_i x_i c_i. Every isotherm moves rigidly, so the
saturation pressure (Maxwell's equal areas), the fugacity-coefficient ratios between phases and hence
every K-value, dew and bubble point and envelope are unchanged; only volumes and densities move.
The fugacity coefficients themselves change by the same factor in every phase,
ln phi_i,translated = ln phi_i - c_i P / (R T) (Peneloux, Rauzy & Freze 1982).

Shift correlations (c in m^3/mol):

- SRK: Peneloux, A., Rauzy, E. and Freze, R., A consistent correction for Redlich-Kwong-Soave
  volumes, Fluid Phase Equilibria 8 (1982) 7: c = 0.40768 (0.29441 - Z_RA) R Tc / Pc, with the
  Rackett compressibility factor from Yamada & Gunn (J. Chem. Eng. Data 18 (1973) 234),
  Z_RA = 0.29056 - 0.08775 omega (constants from memory);
- PR, default ``"jhaveri-youngren"``: Jhaveri, B. S. and Youngren, G. K., Three-parameter
  modification of the Peng-Robinson equation of state to improve volumetric predictions, SPE
  Reservoir Eng. 3 (1988) 1033: dimensionless shifts s = c / b for the light components
  (:data:`JHAVERI_YOUNGREN`) and s = 1 - d / M^e (paraffinic d = 2.258, e = 0.1823) for heavier
  hydrocarbons and pseudo-components of known molar mass (all values from memory); components it
  does not cover fall back to the Peneloux form below, and the source of each shift is reported;
- PR, ``"peneloux"``: the Peneloux form with Peng-Robinson constants,
  c = 0.50033 (0.25969 - Z_RA) R Tc / Pc (as given by Whitson & Brule, Phase Behavior, SPE
  Monograph 20 (2000); memory).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np

from contin import InputError

from ._caution import CAUTION
from ._components import Component
from ._eos import GAS_CONSTANT, family

__all__ = ["JHAVERI_YOUNGREN", "VolumeShifts", "rackett_compressibility", "translate_curve", "translate_mixture_result",
           "translate_volume", "translated_ln_phi", "volume_shifts"]

#: Jhaveri & Youngren (1988) dimensionless shifts s = c/b for the Peng-Robinson equation (memory).
JHAVERI_YOUNGREN = {
    "nitrogen": -0.1927, "carbon dioxide": -0.0817, "hydrogen sulfide": -0.1288, "methane": -0.1540,
    "ethane": -0.1002, "propane": -0.08501, "isobutane": -0.07935, "n-butane": -0.06413, "isopentane": -0.04350,
    "n-pentane": -0.04183, "n-hexane": -0.01478,
}
_JY_HEAVY = (2.258, 0.1823)
_JY_SOURCE = "Jhaveri & Youngren, SPE Reservoir Eng. 3 (1988) 1033 (memory)"
_PENELOUX_SRK = (0.40768, 0.29441)
_PENELOUX_PR = (0.50033, 0.25969)
_PENELOUX_SOURCE = ("Peneloux, Rauzy & Freze, Fluid Phase Equilibria 8 (1982) 7, with Z_RA = 0.29056 - 0.08775 omega "
                    "(Yamada & Gunn, J. Chem. Eng. Data 18 (1973) 234) (memory)")
_PENELOUX_PR_SOURCE = ("Peneloux form with Peng-Robinson constants, c = 0.50033 (0.25969 - Z_RA) R Tc/Pc "
                       "(Whitson & Brule, SPE Monograph 20 (2000); memory)")
CORRELATIONS = {"srk": ("peneloux",), "pr": ("jhaveri-youngren", "peneloux")}


def rackett_compressibility(omega: float | np.ndarray) -> np.ndarray:
    """Rackett compressibility factor Z_RA = 0.29056 - 0.08775 omega (Yamada & Gunn 1973)."""
    return 0.29056 - 0.08775 * np.asarray(omega, dtype=float)


@dataclass(frozen=True)
class VolumeShifts:
    """Volume shifts of a list of components under one equation of state.

    Attributes:
        names: component names; eos: ``srk`` or ``pr``.
        c: shifts, m^3/mol (read-only array); v_translated = v - sum x_i c_i.
        sources: where each shift comes from.
        caution: the project's caution (translated densities are estimates too).
    """

    names: tuple[str, ...]
    eos: str
    c: np.ndarray
    sources: tuple[str, ...]
    caution: str = CAUTION

    def of(self, x: Sequence[float]) -> float:
        """The mixture's shift sum x_i c_i (m^3/mol) for mole fractions ``x`` (normalised here)."""
        x = np.asarray(x, dtype=float)
        return float(self.c @ x / x.sum())

    def as_dict(self) -> dict:
        """``components``, ``c`` (m^3/mol) and ``sources``, for JSON output and run records."""
        return {"components": list(self.names), "c": [float(c) for c in self.c], "sources": list(self.sources)}


def volume_shifts(
    components: Sequence[Component],
    eos: str = "pr",
    *,
    correlation: str | None = None,
    molar_masses: Mapping[str, float] | None = None,
) -> VolumeShifts:
    """Peneloux-type shifts of ``components`` (see the module text for the correlations).

    Args:
        components: the components.
        eos: ``"srk"`` or ``"pr"``.
        correlation: ``"peneloux"`` (SRK, and PR with its own constants) or ``"jhaveri-youngren"``
            (PR, the default there).
        molar_masses: name -> g/mol, for Jhaveri & Youngren's heavy-end shifts (table fluids are known;
            :attr:`Characterisation.molar_masses` gives those of a characterised feed).

    Raises:
        InputError: an equation of state without a correlation here, or a correlation not of it.
    """
    model = family(eos, "eos")
    if model.name not in CORRELATIONS:
        raise InputError(f"eos={model.name!r}: volume translation is defined here for 'srk' and 'pr' only")
    choices = CORRELATIONS[model.name]
    correlation = choices[0] if correlation is None else correlation
    if correlation not in choices:
        raise InputError(f"correlation={correlation!r} is not one for {model.name}; choose {' or '.join(choices)}")
    from ._characterise import molar_mass_of

    masses = dict(molar_masses or {})
    shifts, sources = [], []
    for component in components:
        scale = GAS_CONSTANT * component.Tc / component.Pc
        z_ra = float(rackett_compressibility(component.omega))
        if model.name == "srk":
            shifts.append(_PENELOUX_SRK[0] * (_PENELOUX_SRK[1] - z_ra) * scale)
            sources.append(_PENELOUX_SOURCE)
            continue
        b = model.omega_b * scale
        mass = masses.get(component.name, molar_mass_of(component.name))
        if correlation == "jhaveri-youngren" and component.name in JHAVERI_YOUNGREN:
            shifts.append(JHAVERI_YOUNGREN[component.name] * b)
            sources.append(f"{_JY_SOURCE}: s = {JHAVERI_YOUNGREN[component.name]:g}")
        elif correlation == "jhaveri-youngren" and mass is not None and mass > 86.0 and _hydrocarbon(component):
            d, e = _JY_HEAVY
            shifts.append((1.0 - d / float(mass) ** e) * b)
            sources.append(f"{_JY_SOURCE}: s = 1 - {d:g}/M^{e:g}, M = {float(mass):.4g}")
        else:
            shifts.append(_PENELOUX_PR[0] * (_PENELOUX_PR[1] - z_ra) * scale)
            sources.append(_PENELOUX_PR_SOURCE)
    c = np.array(shifts, dtype=float)
    c.setflags(write=False)
    return VolumeShifts(tuple(c_.name for c_ in components), model.name, c, tuple(sources))


def _hydrocarbon(component: Component) -> bool:
    from ._characterise import _FORMULAS

    formula = _FORMULAS.get(component.name)
    if formula is None:  # pseudo-components and user fluids of known molar mass count as hydrocarbons
        return True
    return set(formula) <= set("CH0123456789")


def translate_volume(v: float | np.ndarray, x: Sequence[float], shifts: VolumeShifts) -> np.ndarray:
    """Translated molar volume(s) v - sum x_i c_i, m^3/mol."""
    return np.asarray(v, dtype=float) - shifts.of(x)


def translated_ln_phi(ln_phi: np.ndarray, shifts: VolumeShifts, T: float, P: float) -> np.ndarray:
    """ln phi_i of the translated equation: ln phi_i - c_i P / (R T), the same shift in every phase."""
    return np.asarray(ln_phi, dtype=float) - shifts.c * (P / (GAS_CONSTANT * T))


def _moved_table(columns: Sequence[str], rows, shift_of) -> list:
    """Rows with every molar-volume column ``v...`` less its shift ``shift_of(row, column)``, and the
    densities ``rho...`` and compressibility ``Z`` recomputed from them; other columns untouched."""
    out = []
    for row in rows:
        row = list(row)
        for k, column in enumerate(columns):
            if column == "v" or column.startswith("v_"):
                row[k] = float(row[k]) - shift_of(row, column)
        for k, column in enumerate(columns):
            if column.startswith("rho"):
                row[k] = 1.0 / row[columns.index("v" + column[3:])]
            elif column == "Z":
                row[k] = row[columns.index("P")] * row[columns.index("v")] / (GAS_CONSTANT * row[columns.index("T")])
        out.append(row)
    return out


def translate_curve(curve, *, correlation: str | None = None, molar_mass: float | None = None):
    """A pure-fluid :class:`~contin_thermo.curves._pure.CurveResult` (saturation curve, spinodal or
    critical point) with translated volumes, densities and Z.

    Temperatures, pressures and enthalpies of vaporisation are untouched (the translation leaves the
    equilibrium unchanged, the spinodal pressures too, and v_vapour - v_liquid); every volume moves by
    the shift c. ``stats["volume_translation"]`` names the shift and its source.

    Raises:
        InputError: an equation of state without shifts, or a shift that is not finite.
    """
    masses = {curve.component.name: molar_mass} if molar_mass is not None else None
    shifts = volume_shifts([curve.component], curve.family.name, correlation=correlation, molar_masses=masses)
    c = float(shifts.c[0])
    if not math.isfinite(c):
        raise InputError(f"{curve.component.name}: the volume shift is not finite; check Tc, Pc and omega")
    columns = list(curve.columns)

    def moved(points: np.ndarray) -> np.ndarray:
        points = np.asarray(points, dtype=float)
        return np.array(_moved_table(columns, points.tolist(), lambda row, column: c), dtype=float).reshape(points.shape)

    stats = {**curve.stats, "volume_translation": {"c": c, "source": shifts.sources[0]}}
    special = tuple({**sp, "values": {k: (v - c if k == "v" else v) for k, v in sp["values"].items()}}
                    for sp in curve.special_points)
    return replace(curve, points=moved(curve.points), at=moved(curve.at), special_points=special, stats=stats)


def translate_mixture_result(result, z=None, *, correlation: str | None = None,
                             molar_masses: Mapping[str, float] | None = None):
    """A phase envelope or a binary Pxy/Txy diagram (``.mixture``, ``.columns``, ``.rows``, ``.stats``)
    with translated volumes; temperatures, pressures, K-values and compositions untouched.

    Each volume moves by the shift of its own phase's composition: on an envelope ``v_feed`` by that
    of the feed ``z`` and ``v_incipient`` by that of the incipient phase w_i = K_i z_i / sum K z; on a
    binary diagram ``v_liquid`` by that of (x1, 1 - x1) and ``v_vapour`` by that of (y1, 1 - y1).

    Raises:
        InputError: an equation of state without shifts.
    """
    mixture = result.mixture
    shifts = volume_shifts(mixture.components, mixture.family.name, correlation=correlation,
                           molar_masses=molar_masses)
    columns = list(result.columns)
    k_columns = [k for k, column in enumerate(columns) if column.startswith("K_")]

    def shift_of(row, column):
        if column == "v_feed":
            return shifts.of(z)
        if column == "v_incipient":
            return shifts.of(np.array([row[k] for k in k_columns]) * np.asarray(z, dtype=float))
        first = row[columns.index("x1" if column == "v_liquid" else "y1")]
        return shifts.of([first, 1.0 - first])

    stats = {**result.stats, "volume_translation": shifts.as_dict()}
    return replace(result, rows=_moved_table(columns, result.rows, shift_of), stats=stats)
