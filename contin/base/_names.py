"""Checks on names, and "did you mean" suggestions for mistyped ones."""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Sequence

from ._errors import InputError

__all__ = ["check_names", "suggest"]


def suggest(word: str, choices: Iterable[str]) -> str:
    """``"; did you mean 'x'?"`` for the closest of ``choices`` to ``word``, or ``""`` if none is close."""
    options = sorted(set(choices))
    close = difflib.get_close_matches(word, options, n=1, cutoff=0.6)
    if not close:
        lowered = {c.lower(): c for c in options}
        close = [lowered[c] for c in difflib.get_close_matches(word.lower(), sorted(lowered), n=1, cutoff=0.6)]
    if not close:
        # Short names defeat similarity ratios: offer a name one substitution away ('q' for 'p').
        close = [c for c in options if len(c) == len(word) and sum(a != b for a, b in zip(c, word)) == 1][:1]
    return f"; did you mean {close[0]!r}?" if close else ""


def check_names(names: Sequence[str], argument: str, *, allow_empty: bool = False) -> None:
    """Refuse empty, non-string or repeated names, naming ``argument`` in the message."""
    if not names and not allow_empty:
        raise InputError(f"{argument} is empty: give at least one name")
    seen: set[str] = set()
    for name in names:
        if not isinstance(name, str) or not name:
            raise InputError(f"{argument} holds {name!r}, which is not a non-empty string")
        if name in seen:
            raise InputError(f"{argument} names {name!r} twice")
        seen.add(name)
