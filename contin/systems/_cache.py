"""Compile cache for symbolic systems: in memory, and on disk so a second process skips the symbolic work.

Entries are keyed by a hash of the expressions, the back end and the library versions (see
:func:`cache_key`). On disk each entry is one file: a JSON header line (format, versions, length, an
HMAC-SHA256 checksum) followed by the payload. A payload is either text (the pure-sympy back end
stores its derivative expressions as text, read back by the same allow-list parser as problem files,
so nothing in it can execute) or a pickle (the symengine back end stores its compiled functions).

Pickles are code: loading one can run anything. The cache therefore only loads files it wrote
itself: the checksum is an HMAC keyed with a random secret kept in the cache folder (created
readable by the owner only), so a file put there by anyone who cannot read that secret fails the
check. A corrupt, truncated, stale (other versions or format) or unreadable entry is detected,
deleted and rebuilt, never trusted.

The folder is ``$CONTIN_CACHE_DIR`` if set, else ``$XDG_CACHE_HOME/contin``, else ``~/.cache/contin``.
Set ``CONTIN_CACHE_DIR`` to an empty string (or ``off``) to switch the disk cache off.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import os
import secrets
import sys
import tempfile
from collections import OrderedDict
from collections.abc import Callable
from pathlib import Path
from typing import Any

__all__ = ["CompileCache", "cache_directory", "cache_key", "default_cache", "FORMAT"]

#: Layout version of cache files; bump when the payload layout changes.
FORMAT = 1
_SECRET = "secret.key"
_SUFFIX = ".entry"


def _versions() -> dict[str, str]:
    import numpy
    import sympy

    from ..base._version import __version__ as contin_version

    versions = {
        "contin": contin_version,
        "python": "%d.%d.%d" % sys.version_info[:3],
        "numpy": numpy.__version__,
        "sympy": sympy.__version__,
    }
    try:
        import symengine

        versions["symengine"] = symengine.__version__
    except ImportError:  # the pure-sympy back end works without it
        versions["symengine"] = "absent"
    return versions


def cache_directory() -> Path | None:
    """The disk cache folder from the environment, or None when the disk cache is switched off."""
    chosen = os.environ.get("CONTIN_CACHE_DIR")
    if chosen is not None:
        if chosen.strip() == "" or chosen.strip().lower() == "off":
            return None
        return Path(chosen).expanduser()
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "contin"


def cache_key(*parts: str) -> str:
    """SHA-256 hex digest of ``parts`` together with the cache format and the library versions."""
    digest = hashlib.sha256()
    header = json.dumps({"format": FORMAT, **_versions()}, sort_keys=True)
    for part in (header, *parts):
        encoded = part.encode("utf-8")
        digest.update(len(encoded).to_bytes(8, "little"))
        digest.update(encoded)
    return digest.hexdigest()


class CompileCache:
    """Memory and disk cache of compiled symbolic systems.

    Args:
        directory: disk folder; ``None`` reads the environment at each use (see module docs);
            ``False`` switches the disk cache off.
        memory_entries: how many entries the in-memory cache keeps (least recently used dropped).

    The cache is a pure memo keyed by content: it never changes what a system computes, only how
    long building it takes.
    """

    def __init__(self, directory: Path | str | None | bool = None, memory_entries: int = 64) -> None:
        self._directory = directory
        self._memory: OrderedDict[str, Any] = OrderedDict()
        self._memory_entries = memory_entries

    # -- memory ---------------------------------------------------------------------------------
    def recall(self, key: str) -> Any | None:
        """The in-memory object for ``key``, or None."""
        if key in self._memory:
            self._memory.move_to_end(key)
            return self._memory[key]
        return None

    def remember(self, key: str, value: Any) -> None:
        """Keep ``value`` in memory under ``key``."""
        self._memory[key] = value
        self._memory.move_to_end(key)
        while len(self._memory) > self._memory_entries:
            self._memory.popitem(last=False)

    def forget(self) -> None:
        """Empty the in-memory cache (the disk cache is kept)."""
        self._memory.clear()

    # -- disk -----------------------------------------------------------------------------------
    def directory(self) -> Path | None:
        """The disk folder in use, or None when the disk cache is off."""
        if self._directory is False:
            return None
        if self._directory is None or self._directory is True:
            return cache_directory()
        return Path(self._directory)

    def path(self, key: str) -> Path | None:
        """File of the entry ``key`` (it may not exist), or None when the disk cache is off."""
        folder = self.directory()
        return None if folder is None else folder / f"{key}{_SUFFIX}"

    def read(self, key: str, kind: str) -> bytes | None:
        """The verified payload of entry ``key`` of ``kind`` ("text" or "pickle"), or None.

        An entry that fails any check (header, versions, kind, length, checksum) is deleted.
        """
        path = self.path(key)
        if path is None or not path.is_file():
            return None
        try:
            secret = self._secret(create=False)
            data = path.read_bytes()
            newline = data.index(b"\n")
            header = json.loads(data[:newline].decode("utf-8"))
            payload = data[newline + 1 :]
            expected = {"format": FORMAT, "kind": kind, "versions": _versions(), "length": len(payload)}
            good = (
                secret is not None
                and isinstance(header, dict)
                and all(header.get(name) == value for name, value in expected.items())
                and hmac.compare_digest(str(header.get("checksum", "")), _checksum(secret, key, kind, payload))
            )
        except (OSError, ValueError, UnicodeDecodeError):
            good = False
        if not good:
            self.discard(key)
            return None
        return payload

    def write(self, key: str, kind: str, payload: bytes) -> bool:
        """Store ``payload`` under ``key`` atomically; False (and nothing left behind) if it cannot."""
        path = self.path(key)
        if path is None:
            return False
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            secret = self._secret(create=True)
            if secret is None:
                return False
            header = {
                "format": FORMAT,
                "kind": kind,
                "versions": _versions(),
                "length": len(payload),
                "checksum": _checksum(secret, key, kind, payload),
            }
            _atomic_write(path, json.dumps(header, sort_keys=True).encode("utf-8") + b"\n" + payload)
        except OSError:
            return False
        return True

    def discard(self, key: str) -> None:
        """Delete the disk entry ``key`` if it exists."""
        path = self.path(key)
        if path is not None:
            try:
                path.unlink()
            except OSError:
                pass

    def fetch(self, key: str, build: Callable[[], Any]) -> tuple[Any, str]:
        """The object for ``key`` from memory, else ``build()``; returns (object, "memory" | "built")."""
        found = self.recall(key)
        if found is not None:
            return found, "memory"
        value = build()
        self.remember(key, value)
        return value, "built"

    def _secret(self, create: bool) -> bytes | None:
        folder = self.directory()
        if folder is None:
            return None
        path = folder / _SECRET
        try:
            return bytes.fromhex(path.read_text().strip())
        except (OSError, ValueError):
            if not create:
                return None
        # Readable and writable by the owner only: the HMAC is only as safe as this secret.
        try:
            handle = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        except FileExistsError:  # another process made it first, or it is corrupt
            try:
                return bytes.fromhex(path.read_text().strip())
            except (OSError, ValueError):
                path.unlink(missing_ok=True)
                return None
        with os.fdopen(handle, "w") as stream:
            value = secrets.token_hex(32)
            stream.write(value)
        return bytes.fromhex(value)


def _checksum(secret: bytes, key: str, kind: str, payload: bytes) -> str:
    message = key.encode("ascii") + b"\0" + kind.encode("ascii") + b"\0" + payload
    return hmac.new(secret, message, hashlib.sha256).hexdigest()


def _atomic_write(path: Path, data: bytes) -> None:
    handle, temporary = tempfile.mkstemp(prefix=".tmp-", suffix=_SUFFIX, dir=path.parent)
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


_DEFAULT = CompileCache()


def default_cache() -> CompileCache:
    """The process-wide cache that symbolic systems use unless given another."""
    return _DEFAULT
