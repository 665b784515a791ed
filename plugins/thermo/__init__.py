"""contin_thermo: cubic equations of state, pure-fluid coexistence curves and critical points for contin.

Every thermodynamic result carries :data:`CAUTION`.
"""

from ._caution import CAUTION, caution_comment
from ._components import Component, all_components, custom_component, load_components, lookup, parse_component
from ._eos import FAMILIES, GAS_CONSTANT, CubicFamily, family
from ._pure import (
    CurveResult,
    PureFluid,
    SaturationSystem,
    SpinodalSystem,
    critical_point,
    saturation_curve,
    spinodal_curve,
)

__all__ = [
    "CAUTION",
    "Component",
    "CubicFamily",
    "CurveResult",
    "FAMILIES",
    "GAS_CONSTANT",
    "PureFluid",
    "SaturationSystem",
    "SpinodalSystem",
    "all_components",
    "caution_comment",
    "critical_point",
    "custom_component",
    "family",
    "load_components",
    "lookup",
    "parse_component",
    "saturation_curve",
    "spinodal_curve",
]
