"""The JSON document and CSV file layouts shared by every result (a fixed contract: docs/contracts.md)."""

from __future__ import annotations

import contextlib
import csv
import io
import math
import os
import secrets
import stat
from collections.abc import Callable, Iterable, Mapping, Sequence
from pathlib import Path

import numpy as np

from ._errors import InputError

__all__ = ["json_document", "json_ready", "write_text_atomically", "csv_text", "Outputs", "check_target", "check_folder",
           "describe_os_error", "describe_value_error", "fill_text", "read_input_text"]


def json_ready(value):
    """``value`` with numpy scalars and arrays turned into Python ones and non-finite floats into None."""
    if isinstance(value, Mapping):
        return {str(k): json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_ready(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def json_document(
    status: str,
    message: str,
    columns: Sequence[str],
    points: Iterable[Sequence],
    special_points: Iterable[Mapping],
    at: Iterable[Sequence],
    stats: Mapping,
    **extra,
) -> dict:
    """The result object of docs/contracts.md: status, message, columns, points, special_points, at, stats.

    Args:
        status: the status label (e.g. ``"bound_reached"``).
        message: the human message.
        columns: column names, in row order.
        points: rows of values in column order.
        special_points: objects with at least ``kind``, ``index`` and ``values`` (keyed by column).
        at: rows at requested values, in column order.
        stats: must hold ``setup_seconds``, ``trace_seconds``, ``newton_iterations``,
            ``jacobian_evaluations``; more keys are kept.
        extra: further top-level keys (e.g. ``caution``), kept after the fixed ones.
    """
    document = {
        "status": str(status),
        "message": str(message),
        "columns": list(columns),
        "points": [list(row) for row in points],
        "special_points": [dict(sp) for sp in special_points],
        "at": [list(row) for row in at],
        "stats": dict(stats),
    }
    document.update(extra)
    return json_ready(document)


def _format(value) -> str:
    if isinstance(value, (float, np.floating)):
        return repr(float(value)) if math.isfinite(value) else ""
    return str(value)


def csv_text(columns: Sequence[str], rows: Iterable[Sequence], comments: Sequence[str] = ()) -> str:
    """CSV text: ``# comment`` lines, then a header row, then the rows at full precision."""
    buffer = io.StringIO()
    for line in comments:
        for part in str(line).splitlines() or [""]:
            buffer.write(f"# {part}\n")
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([_format(v) for v in row])
    return buffer.getvalue()


def _create_exclusively(path: Path) -> int:
    """Open a new file for writing with mode 0666 less the umask (the mode every output gets)."""
    return os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0), 0o666)


def _temporary_beside(target: Path, suffix: str = ".part") -> tuple[int, Path]:
    """A new, empty, uniquely named file in the folder of ``target`` (short name: never over NAME_MAX)."""
    directory = target.parent if str(target.parent) else Path(".")
    for _ in range(100):
        candidate = directory / f".contin-{secrets.token_hex(6)}{suffix}"
        try:
            return _create_exclusively(candidate), candidate
        except FileExistsError:
            continue
    raise FileExistsError(f"cannot make a temporary file in {str(directory)!r}")


def write_text_atomically(path: str | os.PathLike, text: str) -> Path:
    """Write ``text`` to ``path`` through a temporary file and a rename: never a half-written file.

    The file gets mode 0666 less the user's umask, like every other output (pictures included).
    """
    target = Path(path)
    handle, temporary = _temporary_beside(target)
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="") as stream:
            stream.write(text)
        os.replace(temporary, target)
    except BaseException:
        try:
            os.unlink(temporary)
        except OSError:
            pass
        raise
    return target


def fill_text(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` into ``path`` in place (for the staged temporary files of :class:`Outputs`)."""
    with open(path, "w", encoding="utf-8", newline="") as stream:
        stream.write(text)


def describe_os_error(error: OSError) -> str:
    """An OSError as one line: the file and the system's reason, without Python's own wording."""
    reason = error.strerror or str(error) or type(error).__name__
    name = error.filename
    return f"{reason} ({os.fsdecode(name)!r})" if name is not None else reason


def describe_value_error(error: Exception) -> str:
    """A reader's ValueError as one line in the user's terms (not Python's advice on its own limits)."""
    text = " ".join(str(error).split())
    if "integer string conversion" in text:
        return "a number has more than 4300 digits; write it with an exponent (e.g. 1e300)"
    return text


_NAME_MAX = 255


def read_input_text(path: str | os.PathLike, what: str, limit: int, missing: str = "does not exist") -> str:
    """The UTF-8 text of an input file, checked first: a regular file (not a folder, device or pipe),
    at most ``limit`` bytes, valid UTF-8.

    Args:
        path: the file.
        what: how messages name it, e.g. ``"run record 'r.json'"``.
        limit: the largest size read, in bytes.
        missing: the words for a file that is not there.

    Raises:
        InputError: ``"<what> <what is wrong>"``, in one line.
    """
    try:
        info = os.stat(path)
        if stat.S_ISDIR(info.st_mode):
            raise InputError(f"{what} is a folder, not a file")
        if not stat.S_ISREG(info.st_mode):
            raise InputError(f"{what} is not a regular file (a device, pipe or socket)")
        if info.st_size > limit:
            raise InputError(f"{what} is larger than {limit // 2**20} MiB")
        with open(path, "rb") as stream:
            raw = stream.read(limit + 1)
    except InputError:
        raise  # a folder, a device or too large: already said in full (it is a ValueError too)
    except (FileNotFoundError, NotADirectoryError):
        raise InputError(f"{what} {missing}") from None
    except OSError as error:
        raise InputError(f"{what} cannot be read: {describe_os_error(error)}") from None
    except ValueError as error:  # a NUL character in the name
        raise InputError(f"{what} cannot be read: {error}") from None
    if len(raw) > limit:
        raise InputError(f"{what} is larger than {limit // 2**20} MiB")
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as error:
        raise InputError(f"{what} is not UTF-8 text ({error.reason} at byte {error.start}); is it a binary file?") from None


def _check_name(text: str, option: str) -> None:
    if not text.strip():
        raise InputError(f"{option}: the file name is empty; give a file name")
    if "\0" in text:
        raise InputError(f"{option} {text!r}: the name holds a NUL character")
    for part in Path(text).parts:
        if len(os.fsencode(part)) > _NAME_MAX:
            raise InputError(f"{option}: the name {part[:24]!r}... is longer than {_NAME_MAX} bytes; give a shorter name")


def _resolve(text: str, option: str) -> Path:
    try:
        return Path(text).resolve()
    except (OSError, RuntimeError) as error:  # a loop of links, an unreadable folder
        raise InputError(f"{option} {text!r}: cannot resolve the path: {error}") from None


def _check_folder_of(resolved: Path, text: str, option: str, *, create: bool = False) -> None:
    """The folder that will hold ``resolved`` exists (or, with ``create``, can be made) and is writable."""
    folder = resolved.parent
    shown = str(Path(text).parent)
    while True:
        try:
            info = os.stat(folder)
        except FileNotFoundError:
            if not create:
                raise InputError(f"{option} {text!r}: the folder {shown!r} does not exist") from None
            folder = folder.parent  # a folder to be made: its nearest existing ancestor must be writable
            continue
        except NotADirectoryError:
            raise InputError(f"{option} {text!r}: a part of the folder {shown!r} is a file, not a folder") from None
        except OSError as error:
            raise InputError(f"{option} {text!r}: cannot use the folder {shown!r}: {describe_os_error(error)}") from None
        break
    if not stat.S_ISDIR(info.st_mode):
        raise InputError(f"{option} {text!r}: {str(folder)!r} is a file, not a folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"{option} {text!r}: the folder {str(folder)!r} is not writable")
    _probe(folder, text, option)


def _probe(folder: Path, text: str, option: str) -> None:
    """Create and remove a temporary file in ``folder``: a read-only or special file system fails now,
    before any work, rather than at the end (permission bits alone do not tell, e.g. for root)."""
    try:
        handle, probe = _temporary_beside(folder / "probe")
        os.close(handle)
        os.unlink(probe)
    except OSError as error:
        raise InputError(f"{option} {text!r}: cannot create files in the folder {str(folder)!r}: "
                         f"{error.strerror or error}") from None


def check_target(value: str | os.PathLike, option: str, made: Iterable[Path] = ()) -> Path:
    """The resolved path an output option will write, after checking it before any work is done.

    A target is a regular file (through any links) or a new name in an existing, writable folder.
    Folders, devices, pipes, sockets, empty names, names over 255 bytes and a folder part that is a
    file are refused. ``made``: checked folders the command makes before writing (e.g. ``--out``).

    Raises:
        InputError: naming the option, the value and what is wrong.
    """
    text = os.fspath(value)
    if isinstance(text, bytes):
        text = os.fsdecode(text)
    _check_name(text, option)
    if text.endswith(("/", os.sep)) or Path(text).name in ("", ".", ".."):
        raise InputError(f"{option} {text!r} names a folder; give a file name")
    resolved = _resolve(text, option)
    try:
        info = os.stat(resolved)
    except FileNotFoundError:
        info = None
    except NotADirectoryError:
        raise InputError(f"{option} {text!r}: a part of the folder {str(Path(text).parent)!r} is a file, not a folder") from None
    except OSError as error:
        raise InputError(f"{option} {text!r}: cannot use the file: {describe_os_error(error)}") from None
    if info is not None:
        if stat.S_ISDIR(info.st_mode):
            raise InputError(f"{option} {text!r} is a folder; give a file name")
        if not stat.S_ISREG(info.st_mode):
            raise InputError(f"{option} {text!r} is not a regular file (a device, pipe or socket); give a file name")
    if resolved.parent in set(made):
        return resolved
    _check_folder_of(resolved, text, option)
    return resolved


def check_folder(value: str | os.PathLike, option: str) -> Path:
    """The resolved folder an option writes into (made at the end if new), checked before any work."""
    text = os.fspath(value)
    if isinstance(text, bytes):
        text = os.fsdecode(text)
    _check_name(text, option)
    resolved = _resolve(text, option)
    try:
        info = os.stat(resolved)
    except FileNotFoundError:
        _check_folder_of(resolved, text, option, create=True)
        return resolved
    except NotADirectoryError:
        raise InputError(f"{option} {text!r}: a part of the path is a file, not a folder") from None
    except OSError as error:
        raise InputError(f"{option} {text!r}: cannot use the folder: {describe_os_error(error)}") from None
    if not stat.S_ISDIR(info.st_mode):
        raise InputError(f"{option} {text!r} exists and is not a folder; give a folder to write into")
    if not os.access(resolved, os.W_OK | os.X_OK):
        raise InputError(f"{option} {text!r}: the folder is not writable")
    _probe(resolved, text, option)
    return resolved


class Outputs:
    """The files of one command, written together or not at all.

    Every target is checked when it is named (:meth:`target`, :meth:`folder`), before any work.
    :meth:`add` queues a writer ``write(path)``; :meth:`commit` calls each writer on a temporary
    name beside its target and, once all have succeeded, renames every temporary file onto its
    target. A failure leaves no temporary file, no new folder and no output of the run behind; an
    ``OSError`` becomes an :class:`InputError` naming the option.
    """

    def __init__(self) -> None:
        self._named: dict[Path, str] = {}
        self._folders: set[Path] = set()
        self._pending: list[tuple[str, Path, Callable[[Path], object]]] = []

    def _claim(self, path: Path, option: str) -> Path:
        if path in self._named and self._named[path] != option:
            raise InputError(f"{self._named[path]} and {option} name the same file {str(path)!r}; give each its own")
        self._named[path] = option
        return path

    def target(self, option: str, value: str | os.PathLike) -> Path:
        """Check and remember an output file (see :func:`check_target`); returns its resolved path."""
        return self._claim(check_target(value, option, self._folders), option)

    def folder(self, option: str, value: str | os.PathLike) -> Path:
        """Check an output folder (see :func:`check_folder`); returns its resolved path."""
        folder = check_folder(value, option)
        self._folders.add(folder)
        return folder

    def inside(self, option: str, folder: Path, name: str) -> Path:
        """A file ``name`` inside a checked output folder, remembered like a target."""
        _check_name(name, option)
        path = folder / name
        if path.is_dir():
            raise InputError(f"{option} {str(folder)!r}: {name!r} there is a folder; move it or choose another folder")
        if path.exists() and not path.is_file():
            raise InputError(f"{option} {str(folder)!r}: {name!r} there is not a regular file")
        return self._claim(path.resolve() if path.is_symlink() else path, option)

    def add(self, option: str, path: Path, write: Callable[[Path], object]) -> None:
        """Queue ``write(temporary_path)`` for the checked target ``path`` of ``option``."""
        self._pending.append((option, path, write))

    def commit(self) -> list[Path]:
        """Write every queued file to a temporary name, then rename them all onto their targets.

        If a rename fails, the targets already renamed get their old content back (kept as hard
        links until the end) or, if they were new, are removed.
        """
        made: list[Path] = []
        staged: list[tuple[Path, Path]] = []
        renamed: list[tuple[Path, Path | None]] = []
        done = False
        option = ""
        try:
            for option, path, write in self._pending:
                made += _make_folders(path.parent)
                suffix = path.suffix if 0 < len(path.suffix) <= 8 else ""
                handle, temporary = _temporary_beside(path, ".part" + suffix)
                os.close(handle)
                staged.append((temporary, path))
                write(temporary)
            for (temporary, path), (option, _, _) in zip(staged, self._pending):
                renamed.append((path, _keep_old(path)))
                os.replace(temporary, path)
            done = True
        except OSError as error:
            raise InputError(f"{option}: cannot write the file: {describe_os_error(error)}") from None
        finally:
            if not done:
                for path, old in reversed(renamed):
                    with contextlib.suppress(OSError):
                        if old is not None:
                            os.replace(old, path)
                        else:
                            os.unlink(path)
                for temporary, _ in staged:
                    with contextlib.suppress(OSError):
                        os.unlink(temporary)
                for folder in reversed(made):
                    with contextlib.suppress(OSError):
                        folder.rmdir()
            for _, old in renamed:
                if old is not None:
                    with contextlib.suppress(OSError):
                        os.unlink(old)
        self._pending.clear()
        return [path for _, path in staged]


def _keep_old(path: Path) -> Path | None:
    """A hard link to the file now at ``path`` (to restore it if a later rename fails), or None."""
    if not path.is_file():
        return None
    for _ in range(100):
        candidate = path.parent / f".contin-{secrets.token_hex(6)}.old"
        try:
            os.link(path, candidate)
            return candidate
        except FileExistsError:
            continue
        except OSError:  # a file system without hard links: no way back, as before
            return None
    return None


def _make_folders(folder: Path) -> list[Path]:
    """Make ``folder`` and missing parents; returns those made, outermost first."""
    missing = []
    current = folder
    while not current.exists():
        missing.append(current)
        current = current.parent
    made = []
    for path in reversed(missing):
        path.mkdir()
        made.append(path)
    return made
