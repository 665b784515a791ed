"""Sweeps: one trace of a problem file per combination of fixed-parameter values, saved and resumable.

A problem file's ``[sweep]`` section names fixed parameters and their values
(``over = { B = [12.0, 18.0] }``; several parameters: their product). Each combination is one run:
the problem traced with those values. Every finished run is written the moment it finishes, as
``run-<k>.json`` (the branch object plus the run's values under ``sweep_values``), and at the end
``summary.csv`` lists every special point of every run. Running the same sweep again recomputes
only the runs whose file is missing or unreadable; a sweep whose definition changed is refused.

What travels to a worker is the problem's text and the run's values: the worker builds the system
itself (through the compile cache, so a second run pays no symbolic cost), so nothing depends on
pickling compiled functions.
"""

from __future__ import annotations

import csv
import hashlib
import io
import itertools
import json
import math
import sys
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import Executor, Future, ProcessPoolExecutor, as_completed
from dataclasses import dataclass
from pathlib import Path

from ..base._errors import InputError
from ..base._output import json_ready, write_text_atomically

__all__ = ["SweepRun", "run_sweep", "sweep_grid"]

DEFINITION = "sweep.json"
SUMMARY = "summary.csv"


@dataclass(frozen=True)
class SweepRun:
    """One run of a sweep: its number, values, result document (or the error) and whether it was reused."""

    index: int
    values: dict
    document: dict | None
    error: str | None
    reused: bool

    @property
    def status(self) -> str:
        return "error" if self.document is None else str(self.document.get("status"))

    @property
    def success(self) -> bool:
        return self.document is not None and bool(self.document.get("success"))


def sweep_grid(over: Mapping[str, Sequence[float]]) -> list[dict]:
    """Every combination of the values, the last parameter changing fastest (in the order given)."""
    names = list(over)
    return [dict(zip(names, combination)) for combination in itertools.product(*(over[name] for name in names))]


def _definition(text: str, over: Mapping[str, Sequence[float]]) -> dict:
    return {"problem_sha256": hashlib.sha256(text.encode("utf-8")).hexdigest(),
            "over": {name: [float(v) for v in values] for name, values in over.items()}}


def _check_definition(folder: Path, definition: dict) -> None:
    """Refuse to resume a sweep whose definition changed, naming what differs."""
    path = folder / DEFINITION
    try:
        saved = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        return
    except (OSError, ValueError):
        raise InputError(f"{path}: not a readable sweep definition; move the folder away or choose another "
                         "output folder") from None
    if not isinstance(saved, dict):
        raise InputError(f"{path}: not a sweep definition; choose another output folder")
    old, new = saved.get("over") or {}, definition["over"]
    for name in sorted(set(old) | set(new)):
        if old.get(name) != new.get(name):
            raise InputError(f"{folder}: the sweep there has over.{name} = {old.get(name)!r}, this one "
                             f"{new.get(name)!r}; resume with the same values, or choose another output folder")
    if saved.get("problem_sha256") != definition["problem_sha256"]:
        raise InputError(f"{folder}: the sweep there was started from a different problem file; keep the file "
                         "as it was to resume, or choose another output folder")


def _saved(folder: Path, index: int, values: dict) -> dict | None:
    """A finished run's document, only if readable and of exactly these values (else it is rerun)."""
    try:
        document = json.loads((folder / f"run-{index}.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(document, dict) or document.get("sweep_values") != values or "status" not in document:
        return None
    return document


def trace_one(text: str, label: str, values: dict, start: dict | None = None) -> dict:
    """One run, in whatever process it lands: build the problem from its text, trace it with ``values``.

    Returns the branch's JSON document with ``success`` and ``sweep_values`` added.
    """
    from ..systems._problem import problem_from_text
    from ..tracing._trace import trace

    problem = problem_from_text(text, label)
    begin = dict(problem.start) if start is None else {**dict(problem.start), **start}
    branch = trace(problem.system, begin, events=list(problem.events), parameters=dict(values), **problem.options)
    document = branch.to_dict()
    document["success"] = branch.success
    document["sweep_values"] = dict(values)
    return json_ready(document)


def _warm_start(index: int, grid: list[dict], finished: dict[int, dict], unknowns: int) -> tuple[dict | None, int | None]:
    """The start point of the nearest finished, successful run (by grid distance): a better Newton guess."""
    best = None
    for other, document in finished.items():
        if not document.get("success") or not document.get("points"):
            continue
        distance = sum(abs(grid[index][name] - grid[other][name]) / (1.0 + abs(grid[other][name]))
                       for name in grid[index])
        if best is None or (distance, other) < best[:2]:
            best = (distance, other, document)
    if best is None:
        return None, None
    _, other, document = best
    columns = document["columns"]
    return {name: float(value) for name, value in zip(columns[:unknowns], document["points"][0])}, other


class _Progress:
    """One line on a terminal: runs done, running and failed; silent when not on a terminal."""

    def __init__(self, total: int, stream) -> None:
        self.total, self.stream = total, stream
        self.live = bool(getattr(stream, "isatty", lambda: False)())

    def show(self, done: int, running: int, failed: int) -> None:
        if self.live:
            self.stream.write(f"\rsweep: {done} of {self.total} done, {running} running, {failed} failed ")
            self.stream.flush()

    def close(self) -> None:
        if self.live:
            self.stream.write("\n")
            self.stream.flush()


def run_sweep(text: str, label: str, over: Mapping[str, Sequence[float]], folder: str | Path, *,
              executor: Executor | None = None, warm: bool = True, stream=None) -> list[SweepRun]:
    """Run every combination of ``over`` for the problem in ``text``; write and return the runs.

    Args:
        text: the problem file's text.
        label: its name in messages (and, without the suffix, nothing else: outputs go to ``folder``).
        over: parameter name -> values (the ``[sweep]`` section's ``over``).
        folder: where ``run-<k>.json``, ``sweep.json`` and ``summary.csv`` go (created if missing).
        executor: a ``concurrent.futures``-style executor (a process pool, a dask client's executor);
            None runs in this process, one run after the other.
        warm: start each run from the start point of its nearest finished neighbour (fewer Newton
            iterations where neighbours are close).
        stream: where the progress line goes (standard error by default; silent if not a terminal).

    Returns:
        The runs in grid order.

    Raises:
        InputError: an empty grid, a folder that cannot be used, a changed sweep definition.
    """
    from ..systems._problem import problem_from_text

    grid = sweep_grid(over)
    if not grid:
        raise InputError("the sweep has no runs: give every parameter in over at least one value")
    problem = problem_from_text(text, label)  # checked here, before any worker starts
    unknowns = len(problem.system.unknowns)
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{folder}: the sweep's output folder is a file; choose a folder")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise InputError(f"{folder}: cannot create the sweep's output folder ({error.strerror or error})") from None
    definition = _definition(text, over)
    _check_definition(folder, definition)
    write_text_atomically(folder / DEFINITION, json.dumps(definition, indent=1) + "\n")

    finished: dict[int, dict] = {}
    for index, values in enumerate(grid):
        document = _saved(folder, index, values)
        if document is not None:
            finished[index] = document
    reused = set(finished)
    errors: dict[int, str] = {}
    pending = [index for index in range(len(grid)) if index not in finished]
    progress = _Progress(len(grid), stream if stream is not None else sys.stderr)

    def keep(index: int, document: dict | None, error: str | None) -> None:
        if document is not None:
            write_text_atomically(folder / f"run-{index}.json", json.dumps(document, indent=1) + "\n")
            finished[index] = document
        else:
            errors[index] = error or "failed"

    def submit(index: int) -> tuple[Callable, tuple]:
        start, _ = _warm_start(index, grid, finished, unknowns) if warm else (None, None)
        return trace_one, (text, label, grid[index], start)

    if executor is None:
        for index in pending:
            progress.show(len(finished), 1, len(errors))
            function, arguments = submit(index)
            try:
                keep(index, function(*arguments), None)
            except InputError as error:
                keep(index, None, str(error))
    else:
        futures: dict[Future, int] = {}
        for index in pending:
            function, arguments = submit(index)
            futures[executor.submit(function, *arguments)] = index
        for future in as_completed(futures):
            index = futures[future]
            try:
                keep(index, future.result(), None)
            except InputError as error:
                keep(index, None, str(error))
            except Exception as error:  # noqa: BLE001 - a worker's failure is that run's error, not the sweep's
                keep(index, None, f"{type(error).__name__}: {error}")
            progress.show(len(finished), len(futures) - len(finished) - len(errors) + len(reused), len(errors))
    progress.close()
    runs = [SweepRun(index, grid[index], finished.get(index), errors.get(index), index in reused)
            for index in range(len(grid))]
    write_text_atomically(folder / SUMMARY, summary_csv(runs, list(over)))
    return runs


def summary_csv(runs: Sequence[SweepRun], names: Sequence[str]) -> str:
    """One row per special point per run (a run without special points: one row with an empty kind)."""
    columns: list[str] = []
    for run in runs:
        if run.document is not None:
            columns = list(run.document.get("columns", []))
            break
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    buffer.write("# sweep summary: one row per special point per run; values in the problem's own units\n")
    writer.writerow(["run", *names, "status", "kind", "name", "index", *columns])
    for run in runs:
        values = [repr(run.values[name]) for name in names]
        specials = [] if run.document is None else run.document.get("special_points", [])
        if not specials:
            writer.writerow([run.index, *values, run.status, "", "", "", *([""] * len(columns))])
        for sp in specials:
            point = [repr(float(sp["values"][c])) if isinstance(sp["values"].get(c), (int, float)) and
                     math.isfinite(sp["values"][c]) else "" for c in columns]
            writer.writerow([run.index, *values, run.status, sp["kind"], sp.get("name", ""), sp["index"], *point])
    return buffer.getvalue()


def executor_for(workers: int | None, scheduler: str | None, timeout: float = 10.0):
    """The executor of ``--workers N`` (a process pool) or ``--scheduler ADDRESS`` (dask.distributed),
    and a function that shuts it down; (None, None) for a serial sweep.

    Raises:
        InputError: both given, a bad worker count, dask not installed, a scheduler not reached in time.
    """
    if workers is not None and scheduler is not None:
        raise InputError("--workers and --scheduler both given; a sweep runs on one or the other")
    if workers is not None:
        if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
            raise InputError(f"--workers {workers!r} must be a whole number of at least 1")
        pool = ProcessPoolExecutor(max_workers=workers)
        return pool, pool.shutdown
    if scheduler is not None:
        try:
            from distributed import Client
        except ImportError:
            raise InputError("--scheduler needs dask.distributed, which is an optional extra: "
                             "pip install 'contin[distributed]'") from None
        try:
            client = Client(scheduler, timeout=f"{timeout:g}s")
        except Exception as error:  # noqa: BLE001 - any failure to connect is one line
            raise InputError(f"--scheduler {scheduler}: no dask scheduler answered within {timeout:g} s "
                             f"({type(error).__name__}); start one or check the address") from None
        return client.get_executor(), client.close
    return None, None
