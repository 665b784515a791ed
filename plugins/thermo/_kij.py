"""Binary interaction parameters from pair names: ``{"methane-n-butane": 0.02}`` -> a symmetric matrix.

This is the model layer's reading of kij; the command line turns its ``--kij`` text into the same
pairs and calls :func:`kij_matrix`, so scripts and the command line refuse the same things.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence

import numpy as np

from contin import InputError

from ._components import Component, lookup
from ._units import parse_number

__all__ = ["kij_matrix", "split_pair"]


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
