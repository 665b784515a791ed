"""The engine's base: errors, name suggestions, files, the house look of pictures, progress lines.

Every layer of the engine builds on these, and so may a plug-in: the names below are the plug-in
kit, kept as stable as the public API of :mod:`contin` (the modules behind them are private).
"""

from ._lazy import lazy_exports

# name -> the private module that defines it ("module:attribute" where the names differ)
_EXPORTS = {
    "Outputs": "._output",
    "add_sweep_options": "._arguments",
    "axis_label": "._plot",
    "describe_kind": "._plot",
    "fill_text": "._output",
    "lazy_exports": "._lazy",
    "mark_special": "._plot",
    "pyplot": "._plot:_pyplot",
    "read_input_text": "._output",
    "save_figure": "._plot",
    "smooth_xy": "._plot",
    "suggest": "._names",
    "write_text_atomically": "._output",
}

__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS, globals())
