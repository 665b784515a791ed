"""The ``contin`` command line: ``contin run`` for problem files, plus the subcommands of plug-ins.

Plug-ins are the entry points of the group ``contin.plugins``. Each is a callable
``register(subparsers)`` that adds its subcommands to the argparse ``subparsers`` object and sets
``handler`` on each of them (``parser.set_defaults(handler=function)``, ``function(namespace) -> int``).
A plug-in that fails to load gets a warning on stderr; ``contin run`` keeps working.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import sys
import tempfile
from collections.abc import Sequence
from importlib import metadata, resources
from pathlib import Path

from ._errors import ContinError, InputError
from ._names import suggest

__all__ = ["main", "example_names", "example_path", "build_parser"]


def example_names() -> list[str]:
    """Names of the problem files shipped in contin/examples (sorted)."""
    folder = resources.files("contin.examples")
    return sorted(entry.name[: -len(".toml")] for entry in folder.iterdir() if entry.name.endswith(".toml"))


def example_summary(name: str) -> str:
    """The first comment line of an example file (what it shows)."""
    text = (resources.files("contin.examples") / f"{name}.toml").read_text(encoding="utf-8")
    for line in text.splitlines():
        if line.startswith("#"):
            return line.lstrip("#").strip()
    return ""


@contextlib.contextmanager
def example_path(name: str):
    """A file-system path of the shipped example ``name`` (a context manager)."""
    names = example_names()
    if name not in names:
        raise InputError(f"--example {name!r} is not a shipped example (examples: {', '.join(names)}){suggest(name, names)}")
    with resources.as_file(resources.files("contin.examples") / f"{name}.toml") as path:
        yield path


def build_parser(*, load_plugins: bool = True, stderr=None) -> argparse.ArgumentParser:
    """The argument parser: ``run`` and every plug-in's subcommands."""
    parser = argparse.ArgumentParser(
        prog="contin",
        description="Trace solution curves of parameter-dependent equations and find their special points.",
    )
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND")
    run = subparsers.add_parser(
        "run",
        help="trace a problem file",
        description="Trace the branch described by a TOML problem file and report its special points.",
    )
    source = run.add_mutually_exclusive_group()
    source.add_argument("problem", nargs="?", metavar="PROBLEM.toml", help="the problem file")
    source.add_argument("--example", metavar="NAME", help="run a shipped example problem file")
    source.add_argument("--list-examples", action="store_true", help="list the shipped example problem files")
    run.add_argument("--json", action="store_true", help="print the result as one JSON object instead of a summary")
    run.add_argument("--out", metavar="DIR", help="write the branch as CSV and JSON files into DIR")
    run.add_argument(
        "--backend", choices=("auto", "symengine", "sympy"), default="auto",
        help="symbolic back end (default: auto, symengine when installed)",
    )
    run.set_defaults(handler=_run)
    if load_plugins:
        _load_plugins(subparsers, stderr or sys.stderr)
    return parser


def _load_plugins(subparsers, stderr) -> None:
    try:
        entries = sorted(metadata.entry_points(group="contin.plugins"), key=lambda e: e.name)
    except Exception as error:  # a broken installation must not break `contin run`
        print(f"contin: warning: cannot list plug-ins: {error}", file=stderr)
        return
    for entry in entries:
        try:
            register = entry.load()
            register(subparsers)
        except Exception as error:
            print(f"contin: warning: plug-in {entry.name!r} could not be loaded ({type(error).__name__}: {error}); "
                  "its commands are unavailable", file=stderr)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status (0 success, 1 trace failed, 2 bad input)."""
    stdout, stderr = sys.stdout, sys.stderr
    try:
        parser = build_parser(stderr=stderr)
        try:
            namespace = parser.parse_args(list(argv) if argv is not None else None)
        except SystemExit as exit_:  # argparse: --help (0) or a usage error (2, message printed)
            return int(exit_.code or 0)
        handler = getattr(namespace, "handler", None)
        if handler is None:
            parser.print_help(stdout)
            return 2
        return int(handler(namespace) or 0)
    except (InputError, ContinError) as error:
        print(f"contin: error: {_one_line(str(error))}", file=stderr)
        return 2
    except KeyboardInterrupt:
        print("contin: interrupted", file=stderr)
        return 130


def _one_line(message: str) -> str:
    return " ".join(message.split())


def _run(namespace: argparse.Namespace) -> int:
    from ._problem import load_problem, run_problem

    if namespace.list_examples:
        for name in example_names():
            print(f"{name:24s} {example_summary(name)}")
        return 0
    if namespace.example is None and namespace.problem is None:
        raise InputError("contin run needs a problem file, --example NAME or --list-examples")
    if namespace.out is not None and Path(namespace.out).exists() and not Path(namespace.out).is_dir():
        raise InputError(f"--out {namespace.out!r} exists and is not a folder; give a folder to write into")
    with contextlib.ExitStack() as stack:
        if namespace.example is not None:
            path = stack.enter_context(example_path(namespace.example))
            name = namespace.example
        else:
            path = Path(namespace.problem)
            name = path.stem
        problem = load_problem(path, backend=namespace.backend)
        branch = run_problem(problem)
    document = branch.to_dict()
    if namespace.out is not None:
        _write_outputs(Path(namespace.out), name, branch.to_csv(), json.dumps(document, indent=1) + "\n")
    if namespace.json:
        print(json.dumps(document))
    else:
        print(summary(branch, name))
    return 0 if branch.status.success else 1


def _write_outputs(folder: Path, name: str, csv_text: str, json_text: str) -> None:
    """Write NAME.csv and NAME.json into ``folder``: both or neither (temporary files, then renames)."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise InputError(f"--out {str(folder)!r}: cannot create the folder: {error}") from None
    written: list[tuple[str, Path]] = []
    try:
        for suffix, text in ((".csv", csv_text), (".json", json_text)):
            handle, temporary = tempfile.mkstemp(prefix=f".{name}-", suffix=suffix + ".tmp", dir=folder)
            written.append((temporary, folder / f"{name}{suffix}"))
            with os.fdopen(handle, "w", encoding="utf-8", newline="") as stream:
                stream.write(text)
        for temporary, final in written:
            os.replace(temporary, final)
    except OSError as error:
        raise InputError(f"--out {str(folder)!r}: cannot write the results: {error}") from None
    finally:
        for temporary, _ in written:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(temporary)


def _format_values(values: dict, limit: int = 6) -> str:
    items = list(values.items())
    if len(items) > limit:  # long systems: the first unknowns and the free parameter (last column)
        shown = [f"{key} = {value:.10g}" for key, value in items[: limit - 2]]
        return ", ".join([*shown, "...", f"{items[-1][0]} = {items[-1][1]:.10g}"])
    return ", ".join(f"{key} = {value:.10g}" for key, value in items)


def summary(branch, name: str) -> str:
    """A readable summary: status, number of points, special points and requested values."""
    lines = [
        f"problem: {name}",
        f"status: {branch.status.label} ({'success' if branch.status.success else 'failure'}): {branch.message}",
        f"points: {len(branch.points)} (free parameter {branch.free})",
    ]
    if branch.special_points:
        lines.append("special points:")
        for point in branch.special_points:
            lines.append(f"  {point.kind:10s} {point.name:24s} {_format_values(point.values)}  (point {point.index})")
    else:
        lines.append("special points: none")
    if branch.at:
        lines.append("at requested values:")
        for point in branch.at:
            lines.append(f"  {point.name:35s} {_format_values(point.values)}")
    stats = branch.stats
    lines.append(
        f"work: {stats.get('newton_iterations', 0)} Newton iterations, "
        f"{stats.get('jacobian_evaluations', 0)} Jacobian evaluations, "
        f"{stats.get('setup_seconds', 0.0) + stats.get('trace_seconds', 0.0):.3g} s"
    )
    return "\n".join(lines)
