"""Building models from names, for scripts: ``mixture(["methane", "ethane"], "pr", kij={...})``."""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from contin import InputError

from ._components import Component, lookup
from ._eos import CubicFamily, family
from ._kij import kij_matrix
from ._mixture import Mixture

__all__ = ["mixture"]


def mixture(
    components: Sequence[str | Component],
    eos: str | CubicFamily = "pr",
    *,
    kij: Mapping[str, float] | np.ndarray | None = None,
    extra: Sequence[Component] = (),
) -> Mixture:
    """A :class:`Mixture` from component names (or components), a cubic family and interaction parameters.

    Args:
        components: names or aliases from the component table (or :class:`Component` objects, e.g.
            from ``custom_component``), at least two, each once.
        eos: ``"srk"``, ``"pr"`` (or ``"vdw"``, ``"rk"``), or a :class:`CubicFamily`.
        kij: pair name -> value, e.g. ``{"methane-n-heptane": 0.03}`` (hyphenated names work; pairs
            not given are 0), or a symmetric matrix with zero diagonal.
        extra: user components that names may refer to.

    Raises:
        InputError: an unknown component (with the nearest name), a repeated component, a pair that is
            not in the mixture, a kij outside (-1, 1).
    """
    chosen = tuple(c if isinstance(c, Component) else lookup(c, extra, argument="components") for c in components)
    model = family(eos, "eos") if isinstance(eos, str) else eos
    names = [c.name for c in chosen]
    if kij is None or isinstance(kij, np.ndarray):
        matrix = kij
    elif isinstance(kij, Mapping):
        matrix = kij_matrix(kij, names, extra, argument="kij")
    else:
        raise InputError("kij must be a mapping such as {'methane-ethane': 0.01} or a symmetric matrix")
    return Mixture(chosen, model, matrix)
