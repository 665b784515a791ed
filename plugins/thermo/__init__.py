"""contin_thermo: cubic equations of state, pure-fluid coexistence curves and critical points for contin.

Every thermodynamic result carries :data:`CAUTION`.
"""

from ._caution import CAUTION, caution_comment
from ._components import Component, all_components, custom_component, load_components, lookup, parse_component
from ._eos import FAMILIES, GAS_CONSTANT, CubicFamily, family

__all__ = [
    "CAUTION",
    "Component",
    "CubicFamily",
    "FAMILIES",
    "GAS_CONSTANT",
    "all_components",
    "caution_comment",
    "custom_component",
    "family",
    "load_components",
    "lookup",
    "parse_component",
]
