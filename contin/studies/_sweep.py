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

__all__ = ["SweepRun", "SweepTask", "problem_task", "run_sweep", "sweep_grid", "sweep_report"]

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


@dataclass(frozen=True)
class SweepTask:
    """What a sweep runs, given as a description that travels to the workers.

    Attributes:
        run: a module-level (importable) function ``run(description, values, start)`` returning one
            run's JSON-ready document, with at least ``status``, ``success``, ``columns`` and
            ``special_points``; it builds its problem from ``description`` in whatever process it lands.
        description: JSON-ready text and numbers from which ``run`` builds the problem.
        identity: what a resumed sweep must share with the one in the folder: label -> JSON-ready
            value (e.g. ``{"--eos": "pr"}``); a difference is named by its label.
        start_of: ``start_of(document)``: the start guess a finished neighbour's document gives (or
            None); called in this process only.
    """

    run: Callable[[Mapping, dict, object], dict]
    description: Mapping
    identity: Mapping[str, object]
    start_of: Callable[[dict], object] | None = None


def problem_task(text: str, label: str, problem=None) -> SweepTask:
    """The sweep task of a problem file: trace its text once per combination (``contin sweep``).

    ``problem``: the text already loaded (a :class:`~contin.Problem`), so it is not read twice; else it
    is loaded and checked here, before any worker starts.
    """
    if problem is None:
        from ..systems._problem import problem_from_text

        problem = problem_from_text(text, label)
    unknowns = list(problem.system.unknowns)

    def start_of(document: dict) -> dict | None:
        if not document.get("points"):
            return None
        return {name: float(value) for name, value in zip(document["columns"], document["points"][0])
                if name in unknowns}

    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return SweepTask(trace_one, {"text": text, "label": label}, {"problem file sha256": digest}, start_of)


def _render(value) -> str:
    text = json.dumps(value)
    return text if len(text) <= 80 else text[:77] + "..."


def _difference(old, new, path: str) -> tuple[str, object, object] | None:
    """The first place where two JSON values differ: (path such as ``components[1].Tc``, old, new)."""
    if isinstance(old, dict) and isinstance(new, dict):
        for key in sorted(set(old) | set(new), key=str):
            if key not in old or key not in new:
                return f"{path}.{key}", old.get(key, "nothing"), new.get(key, "nothing")
            found = _difference(old[key], new[key], f"{path}.{key}")
            if found is not None:
                return found
        return None
    if isinstance(old, list) and isinstance(new, list) and len(old) == len(new):
        for index, (a, b) in enumerate(zip(old, new)):
            found = _difference(a, b, f"{path}[{index}]")
            if found is not None:
                return found
        return None
    return None if old == new else (path, old, new)


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
    for section, prefix in (("over", "over."), ("task", "")):
        old, new = saved.get(section), definition[section]
        old = old if isinstance(old, dict) else {}
        for name in sorted(set(old) | set(new)):
            before, after = old.get(name, "nothing"), new.get(name, "nothing")
            # A list of values is shown whole; a model is shown at its first difference.
            found = (_difference(before, after, name) if section == "task"
                     else None if before == after else (f"{prefix}{name}", before, after))
            if found is not None:
                where, before, after = found
                raise InputError(f"{folder}: the sweep there has {where} = {_render(before)}, this one "
                                 f"{_render(after)}; resume with the same definition, or choose another output folder")


def _saved(folder: Path, index: int, values: dict) -> dict | None:
    """A finished run's document, only if readable and of exactly these values (else it is rerun)."""
    try:
        document = json.loads((folder / f"run-{index}.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(document, dict) or document.get("sweep_values") != values or "status" not in document:
        return None
    return document


def trace_one(description: Mapping, values: dict, start: dict | None = None) -> dict:
    """One run of a problem file, in whatever process it lands: build it from its text, trace it with ``values``.

    Returns the branch's JSON document with ``success`` added.
    """
    from ..systems._problem import problem_from_text
    from ..tracing._trace import trace

    problem = problem_from_text(description["text"], description["label"])
    begin = dict(problem.start) if start is None else {**dict(problem.start), **start}
    branch = trace(problem.system, begin, events=list(problem.events), parameters=dict(values), **problem.options)
    document = branch.to_dict()
    document["success"] = branch.success
    return json_ready(document)


def chains(grid: Sequence[dict]) -> list[int | None]:
    """The warm-start parent of each run: the grid is cut into about sqrt(n) chains of neighbouring runs;
    each run but a chain's first starts from the nearest earlier run of its chain (by scaled grid
    distance, ties to the later run).

    The parents depend on the grid alone, never on which run happens to finish first, so a serial
    sweep, a process pool and a dask cluster start every run from the same guess and give the same
    numbers; the chains can run side by side.
    """
    count = len(grid)
    length = max(1, math.ceil(count / max(1, round(math.sqrt(count)))))
    parents: list[int | None] = []
    for index in range(count):
        first = index - index % length
        if index == first:
            parents.append(None)
            continue
        parents.append(min(range(first, index), key=lambda other, index=index: (_distance(grid, index, other), -other)))
    return parents


def _distance(grid: Sequence[dict], index: int, other: int) -> float:
    """How far apart two runs' values are, each parameter scaled by 1 + its size."""
    return sum(abs(grid[index][name] - grid[other][name]) / (1.0 + abs(grid[other][name])) for name in grid[index])


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


def _prepare_folder(folder: Path, definition: dict) -> None:
    """Check the output folder (a folder, and the same sweep if one is there) before anything is written."""
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{folder}: the sweep's output folder is a file; choose a folder")
    if folder.is_dir():
        _check_definition(folder, definition)


def run_sweep(task: SweepTask, over: Mapping[str, Sequence[float]], folder: str | Path, *,
              executor: Executor | None = None, workers: int | None = None, scheduler: str | None = None,
              timeout: float = 10.0, warm: bool = True, stream=None) -> list[SweepRun]:
    """Run ``task`` once per combination of ``over``; write and return the runs.

    Args:
        task: what to run (see :class:`SweepTask`; :func:`problem_task` for a problem file).
        over: parameter label -> values (their product is the grid, the last label changing fastest).
        folder: where ``run-<k>.json``, ``sweep.json`` and ``summary.csv`` go (created if missing).
        executor: a ``concurrent.futures``-style executor (a process pool, a dask client's executor);
            or ``workers`` (a local process pool of that many) or ``scheduler`` (the address of a
            running dask.distributed scheduler, answered within ``timeout`` seconds); none of them
            runs in this process, one run after the other.
        warm: start each run from its parent's result (see :func:`chains`): fewer Newton iterations
            where neighbours are close.
        stream: where the progress line goes (standard error by default; silent if not a terminal).

    Returns:
        The runs in grid order; each finished run's document carries its values under ``sweep_values``.

    Raises:
        InputError: an empty grid, a folder that cannot be used, a changed sweep definition, a bad
            ``workers``, a scheduler that does not answer (nothing is written then).
    """
    grid = sweep_grid(over)
    if not grid:
        raise InputError("the sweep has no runs: give every parameter at least one value")
    folder = Path(folder)
    definition = {"over": {name: [float(v) for v in values] for name, values in over.items()},
                  "task": json_ready(dict(task.identity))}
    _prepare_folder(folder, definition)
    shutdown = None
    if executor is None:
        executor, shutdown = executor_for(workers, scheduler, timeout)
    elif workers is not None or scheduler is not None:
        raise InputError("give an executor, workers or a scheduler, not several")
    try:
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as error:
            raise InputError(f"{folder}: cannot create the sweep's output folder ({error.strerror or error})") from None
        write_text_atomically(folder / DEFINITION, json.dumps(definition, indent=1) + "\n")
        runs = _run_grid(task, grid, folder, executor, warm, stream if stream is not None else sys.stderr)
    finally:
        if shutdown is not None:
            shutdown()
    write_text_atomically(folder / SUMMARY, summary_csv(runs, list(over)))
    return runs


def _run_grid(task: SweepTask, grid: list[dict], folder: Path, executor: Executor | None, warm: bool,
              stream) -> list[SweepRun]:
    """Every run not already in ``folder``, each submitted once its warm-start parent is done."""
    finished: dict[int, dict] = {}
    for index, values in enumerate(grid):
        document = _saved(folder, index, values)
        if document is not None:
            finished[index] = document
    reused = set(finished)
    errors: dict[int, str] = {}
    parents = chains(grid) if warm and task.start_of is not None else [None] * len(grid)
    waiting = [index for index in range(len(grid)) if index not in finished]
    progress = _Progress(len(grid), stream)

    def keep(index: int, document: dict | None, error: str | None) -> None:
        if document is not None:
            document = {**document, "sweep_values": dict(grid[index])}
            write_text_atomically(folder / f"run-{index}.json", json.dumps(document, indent=1) + "\n")
            finished[index] = document
        else:
            errors[index] = error or "failed"

    def ready() -> list[int]:
        done = set(finished) | set(errors)
        found = [index for index in waiting if parents[index] is None or parents[index] in done]
        for index in found:
            waiting.remove(index)
        return found

    def start(index: int):
        parent = finished.get(parents[index]) if parents[index] is not None else None
        return task.start_of(parent) if parent is not None and parent.get("success") else None

    running: dict[Future, int] = {}
    while waiting or running:
        for index in ready():
            if executor is None:
                progress.show(len(finished), 1, len(errors))
                try:
                    keep(index, task.run(task.description, grid[index], start(index)), None)
                except InputError as error:
                    keep(index, None, str(error))
            else:
                running[executor.submit(task.run, task.description, grid[index], start(index))] = index
        if not running:
            continue
        future = next(as_completed(running))
        index = running.pop(future)
        try:
            keep(index, future.result(), None)
        except InputError as error:
            keep(index, None, str(error))
        except Exception as error:  # noqa: BLE001 - a worker's failure is that run's error, not the sweep's
            keep(index, None, f"{type(error).__name__}: {error}")
        progress.show(len(finished), len(running), len(errors))
    progress.close()
    return [SweepRun(index, grid[index], finished.get(index), errors.get(index), index in reused)
            for index in range(len(grid))]


def summary_csv(runs: Sequence[SweepRun], names: Sequence[str]) -> str:
    """One row per special point per run (a run without special points: one row with an empty kind).

    The value columns are those the special points carry, in the order of the runs' own columns.
    """
    columns: list[str] = []
    for run in runs:
        if run.document is None:
            continue
        carried = [key for sp in run.document.get("special_points", []) for key in sp.get("values", {})]
        for name in [*run.document.get("columns", []), *carried]:
            if name in carried and name not in columns:
                columns.append(name)
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


def sweep_report(runs: Sequence[SweepRun], title: str, folder: str | Path) -> str:
    """What a sweep command prints: the counts, then one line per failed run with its values and reason."""
    failed = [run for run in runs if not run.success]
    reused = sum(run.reused for run in runs)
    lines = [(f"sweep of {title}: {len(runs)} runs ({reused} reused from an earlier sweep), "
              f"{len(runs) - len(failed)} succeeded, {len(failed)} failed; files in {folder}")]
    for run in failed:
        values = ", ".join(f"{name} = {value:g}" for name, value in run.values.items())
        reason = run.error if run.error is not None else str(run.document.get("message"))
        lines.append(f"  run {run.index} ({values}): {run.status}: {' '.join(reason.split())}")
    return "\n".join(lines)


def executor_for(workers: int | None, scheduler: str | None, timeout: float = 10.0):
    """The executor of ``--workers N`` (a process pool) or ``--scheduler ADDRESS`` (dask.distributed),
    and a function that shuts it down; (None, None) for a serial sweep.

    Raises:
        InputError: both given, a bad worker count, dask not installed, a scheduler not reached in time.
    """
    if workers is not None and scheduler is not None:
        raise InputError("--workers and --scheduler both given; a sweep runs on one or the other")
    if isinstance(timeout, bool) or not isinstance(timeout, (int, float)) or not 0 < timeout < 3600:
        raise InputError(f"--timeout {timeout!r} must be a number of seconds above 0 and below 3600")
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
