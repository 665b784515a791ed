"""Exceptions raised by contin."""

from __future__ import annotations

__all__ = ["ContinError", "InputError", "TraceError"]


class ContinError(Exception):
    """Base class of every error contin raises on purpose."""


class InputError(ContinError, ValueError):
    """Bad input: the message names the argument (or file, key and line) and says how to fix it."""


class TraceError(ContinError):
    """A trace ended without success and the caller asked for an exception (``throw=True``).

    Attributes:
        branch: the partial :class:`~contin.Branch`, with every point already computed.
    """

    def __init__(self, message: str, branch: object) -> None:
        super().__init__(message)
        self.branch = branch
