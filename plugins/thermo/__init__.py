"""contin_thermo: cubic equations of state for contin: pure-fluid coexistence curves, spinodals and
critical points; mixture phase envelopes, critical points, stability and binary diagrams.

Every thermodynamic result carries :data:`CAUTION`: cubic equations of state are approximate, and
results do not replace measured data, applicable design codes or review by a qualified engineer.
Names are imported on first use (see ``contin._lazy``), so that the command line starts fast.
"""

from contin._lazy import lazy_exports

# public name -> the private module that defines it ("module:attribute" where the names differ)
_EXPORTS = {
    "BinaryDiagram": "._binary",
    "CAUTION": "._caution",
    "Component": "._components",
    "CubicFamily": "._eos",
    "CubicFluid": "._pure",
    "CurveResult": "._pure",
    "Envelope": "._envelope",
    "FAMILIES": "._eos",
    "GAS_CONSTANT": "._eos",
    "Mixture": "._mixture",
    "all_components": "._components",
    "caution_comment": "._caution",
    "critical_point": "._pure",
    "custom_component": "._components",
    "family": "._eos",
    "load_components": "._components",
    "lookup": "._components",
    "mixture": "._build",
    "mixture_critical_point": "._mixture_critical:critical_point",
    "parse_component": "._components",
    "parse_pressure": "._units",
    "parse_temperature": "._units",
    "pxy": "._binary",
    "saturation_curve": "._pure",
    "spinodal_curve": "._pure",
    "tangent_plane_test": "._stability",
    "trace_envelope": "._envelope",
    "txy": "._binary",
    "Characterisation": "._characterise",
    "PseudoComponent": "._characterise",
    "characterise": "._characterise",
    "KijDefaults": "._kij",
    "default_kij": "._kij",
    "VolumeShifts": "._translation",
    "translate_curve": "._translation",
    "volume_shifts": "._translation",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS, globals())
