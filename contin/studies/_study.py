"""Studies: the same task over many cases, on any executor, each finished case saved so a study resumes."""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Callable, Iterable, Mapping
from concurrent.futures import Executor
from pathlib import Path

from ..base._errors import InputError
from ..base._output import json_ready, write_text_atomically

__all__ = ["run_study", "case_key"]


def case_key(case: Mapping) -> str:
    """A stable name for a case: a short hash of its JSON text with sorted keys."""
    text = json.dumps(json_ready(case), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]


def run_study(
    task: Callable[[dict], Mapping],
    cases: Iterable[Mapping],
    *,
    executor: Executor | None = None,
    folder: str | os.PathLike | None = None,
) -> list[dict]:
    """Run ``task(case)`` for every case and return the results in case order.

    Each case is a JSON-ready mapping (e.g. ``{"kij": 0.05}``); each result must be a JSON-ready
    mapping too (numbers, strings, lists, dicts: e.g. the special points of a traced curve). With
    ``folder``, each finished result is written there as ``<key>.json`` (the key is a hash of the
    case) the moment it arrives, and cases whose file already exists are not run again: an
    interrupted study picks up where it stopped.

    Args:
        task: a function of one case. For a process pool or a dask cluster it must be importable
            (defined at module level), like any function sent to another process.
        cases: the cases, in the order of the results.
        executor: a ``concurrent.futures``-style executor (``ThreadPoolExecutor``,
            ``ProcessPoolExecutor``, or a dask ``Client.get_executor()``); None runs in this process.
        folder: where finished results are kept (created if missing), or None.

    Returns:
        One dict per case: ``{"case": ..., "result": ...}``.

    Raises:
        InputError: a case that is not a mapping, two equal cases, or an unwritable folder.
        Any exception of ``task`` (results finished before it are already saved).
    """
    items = []
    for case in cases:
        if not isinstance(case, Mapping):
            raise InputError(f"each case must be a mapping (e.g. {{'kij': 0.05}}), got {type(case).__name__}")
        items.append(json_ready(dict(case)))
    keys = [case_key(case) for case in items]
    if len(set(keys)) != len(keys):
        raise InputError("two cases are equal; give each case once")
    store = None
    if folder is not None:
        store = Path(folder)
        try:
            store.mkdir(parents=True, exist_ok=True)
        except OSError as error:
            raise InputError(f"cannot create the study folder {str(store)!r}: {error.strerror or error}") from None
    results: dict[str, dict] = {}
    pending = []
    for key, case in zip(keys, items):
        saved = _load(store, key, case) if store is not None else None
        if saved is not None:
            results[key] = saved
        else:
            pending.append((key, case))

    def keep(key: str, case: dict, result) -> None:
        if not isinstance(result, Mapping):
            raise InputError(f"the task returned {type(result).__name__} for case {case}; return a mapping")
        entry = {"case": case, "result": json_ready(dict(result))}
        if store is not None:
            write_text_atomically(store / f"{key}.json", json.dumps(entry, indent=1) + "\n")
        results[key] = entry

    if executor is None:
        for key, case in pending:
            keep(key, case, task(case))
    else:
        futures = [(key, case, executor.submit(task, case)) for key, case in pending]
        for key, case, future in futures:
            keep(key, case, future.result())
    return [results[key] for key in keys]


def _load(store: Path, key: str, case: dict) -> dict | None:
    """A saved result, only if it is readable and belongs to exactly this case (else it is rerun)."""
    path = store / f"{key}.json"
    try:
        entry = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(entry, dict) or entry.get("case") != case or "result" not in entry:
        return None
    return entry
