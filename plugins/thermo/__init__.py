"""contin_thermo: cubic equations of state for contin: pure-fluid coexistence curves, spinodals and
critical points; mixture phase envelopes, critical points, stability and binary diagrams.

Every thermodynamic result carries :data:`CAUTION`: cubic equations of state are approximate, and
results do not replace measured data, applicable design codes or review by a qualified engineer.
"""

from ._binary import BinaryDiagram, pxy, txy
from ._build import mixture
from ._caution import CAUTION, caution_comment
from ._components import Component, all_components, custom_component, load_components, lookup, parse_component
from ._envelope import Envelope, trace_envelope
from ._eos import FAMILIES, GAS_CONSTANT, CubicFamily, family
from ._mixture import Mixture
from ._mixture_critical import critical_point as mixture_critical_point
from ._pure import CurveResult, CubicFluid, critical_point, saturation_curve, spinodal_curve
from ._stability import tangent_plane_test
from ._units import parse_pressure, parse_temperature

__all__ = [
    "BinaryDiagram",
    "CAUTION",
    "Component",
    "CubicFamily",
    "CurveResult",
    "Envelope",
    "FAMILIES",
    "GAS_CONSTANT",
    "Mixture",
    "CubicFluid",
    "all_components",
    "caution_comment",
    "critical_point",
    "custom_component",
    "family",
    "load_components",
    "lookup",
    "mixture",
    "mixture_critical_point",
    "parse_component",
    "parse_pressure",
    "parse_temperature",
    "pxy",
    "saturation_curve",
    "spinodal_curve",
    "tangent_plane_test",
    "trace_envelope",
    "txy",
]
