"""Lazy re-export for a package's ``__init__``: public names resolved on first use (PEP 562).

A package lists its public names in one table ``name -> "module"`` (or ``"module:attribute"`` when
the public name differs) and gets a module ``__getattr__`` and ``__dir__``; ``from package import
name`` works as with eager imports, but nothing heavy (sympy, scipy, matplotlib) is imported before
a name that needs it is used, so that the command line starts fast.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable, Mapping

__all__ = ["lazy_exports"]


def lazy_exports(package: str, table: Mapping[str, str], namespace: dict) -> tuple[Callable, Callable]:
    """``(__getattr__, __dir__)`` for ``package`` whose public names live in the modules of ``table``.

    Each name is imported once, on first use, and kept in ``namespace`` (the package's globals), so
    later look-ups are plain attribute reads.
    """

    def __getattr__(name: str):
        where = table.get(name)
        if where is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        module, _, attribute = where.partition(":")
        value = getattr(importlib.import_module(module, package), attribute or name)
        namespace[name] = value
        return value

    def __dir__() -> list[str]:
        return sorted(set(namespace) | set(table))

    return __getattr__, __dir__
