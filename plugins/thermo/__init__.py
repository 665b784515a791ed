"""contin_thermo: cubic equations of state for contin: pure-fluid coexistence curves, spinodals and
critical points; mixture phase envelopes, critical points, stability and binary diagrams.

Every thermodynamic result carries :data:`CAUTION`: cubic equations of state are approximate, and
results do not replace measured data, applicable design codes or review by a qualified engineer.
Names are imported on first use (see ``contin.base._lazy``), so that the command line starts fast.
"""

from contin.base import lazy_exports

# public name -> the private module that defines it ("module:attribute" where the names differ)
_EXPORTS = {
    "BinaryDiagram": ".curves._binary",
    "CAUTION": ".models._caution",
    "Component": ".models._components",
    "CubicFamily": ".models._eos",
    "CubicFluid": ".curves._pure",
    "CurveResult": ".curves._pure",
    "Envelope": ".curves._envelope",
    "FAMILIES": ".models._eos",
    "GAS_CONSTANT": ".models._eos",
    "Mixture": ".models._mixture",
    "all_components": ".models._components",
    "caution_comment": ".models._caution",
    "critical_point": ".curves._pure",
    "custom_component": ".models._components",
    "family": ".models._eos",
    "load_components": ".models._components",
    "lookup": ".models._components",
    "mixture": ".models._build",
    "mixture_critical_point": ".curves._mixture_critical:critical_point",
    "parse_component": ".models._components",
    "parse_pressure": ".models._units",
    "parse_temperature": ".models._units",
    "pxy": ".curves._binary",
    "saturation_curve": ".curves._pure",
    "spinodal_curve": ".curves._pure",
    "tangent_plane_test": ".curves._stability",
    "trace_envelope": ".curves._envelope",
    "txy": ".curves._binary",
    "Characterisation": ".models._characterise",
    "PseudoComponent": ".models._characterise",
    "characterise": ".models._characterise",
    "KijDefaults": ".models._kij",
    "default_kij": ".models._kij",
    "resolve_kij": ".models._kij",
    "VolumeShifts": ".models._translation",
    "translate_curve": ".models._translation",
    "translate_mixture_result": ".models._translation",
    "volume_shifts": ".models._translation",
    "EnvelopeSensitivities": ".curves._corner_sensitivity",
    "envelope_sensitivities": ".curves._corner_sensitivity",
    "ModelParameter": ".models._parameters",
    "parse_parameters": ".models._parameters",
    "parse_uncertainties": ".models._parameters",
    "blend_parameter": ".models._parameters",
    "CornerLoci": ".curves._corner_loci",
    "saturation_sensitivities": ".curves._corner_sensitivity",
    "corner_loci": ".curves._corner_loci",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS, globals())
