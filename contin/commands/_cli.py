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
import warnings
from collections.abc import Sequence
from importlib import metadata, resources
from pathlib import Path

from ..base._arguments import add_sweep_options
from ..base._errors import ContinError, InputError
from ..base._names import suggest

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


class Parser(argparse.ArgumentParser):
    """argparse with "did you mean" for a mistyped option or subcommand.

    Sub-commands made by ``add_subparsers().add_parser`` are of this class too, so plug-ins get the
    same help for free.
    """

    def __init__(self, *args, **keywords) -> None:
        keywords.setdefault("formatter_class", argparse.RawDescriptionHelpFormatter)
        super().__init__(*args, **keywords)

    def parse_known_args(self, args=None, namespace=None):
        self._words = list(sys.argv[1:] if args is None else args)
        return super().parse_known_args(args, namespace)

    def _chosen(self) -> argparse.ArgumentParser:
        """The deepest sub-command parser named on the command line (self if none)."""
        parser = self
        for word in getattr(self, "_words", []):
            actions = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
            if actions and word in actions[0].choices:
                parser = actions[0].choices[word]
        return parser

    def error(self, message: str):
        hint = ""
        if message.startswith("unrecognized arguments:"):
            words = message.split(":", 1)[1].split()
            options = [o for a in self._chosen()._actions for o in a.option_strings]
            for word in words:
                if word.startswith("-"):
                    hint = suggest(word.split("=", 1)[0], options)
                    if hint:
                        break
        elif "invalid choice:" in message:
            import re

            found = re.search(r"invalid choice: '([^']*)' \(choose from (.*)\)", message)
            if found:
                choices = [c.strip().strip("'") for c in found.group(2).split(",")]
                hint = suggest(found.group(1), choices)
        # One line, like every other error (argparse would print the usage block first).
        chosen = self._chosen()
        self.exit(2, f"contin: error: {chosen.prog}: {_one_line(message)}{hint} (see '{chosen.prog} --help')\n")


EPILOG_RUN = """examples:
  contin run --list-examples
  contin run --example stirred_tank --plot tank.png --axes Da,y
  contin run reactor.toml --json > reactor.json
  contin run reactor.toml --out results --record results/reactor-record.json
  contin run --from results/reactor-record.json --restart-at 20 --free Da --direction -1
"""


def build_parser(*, load_plugins: bool = True, stderr=None) -> argparse.ArgumentParser:
    """The argument parser: ``run`` and every plug-in's subcommands."""
    parser = Parser(
        prog="contin",
        description="Trace solution curves of parameter-dependent equations and find their special points.",
        epilog="examples:\n  contin demo\n  contin run --example stirred_tank\n"
               "  contin thermo saturation --fluid propane --eos pr\n  contin COMMAND --help",
    )
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND")
    run = subparsers.add_parser(
        "run",
        help="trace a problem file",
        description="Trace the branch described by a TOML problem file and report its special points.",
        epilog=EPILOG_RUN,
    )
    source = run.add_mutually_exclusive_group()
    source.add_argument("problem", nargs="?", metavar="PROBLEM.toml", help="the problem file")
    source.add_argument("--example", metavar="NAME", help="run a shipped example problem file, e.g. stirred_tank (see --list-examples)")
    source.add_argument("--list-examples", action="store_true", help="list the shipped example problem files")
    source.add_argument("--from", dest="record_in", metavar="RECORD",
                        help="continue from a run record (with --restart-at)")
    run.add_argument("--restart-at", type=int, metavar="INDEX",
                     help="with --from: the point to continue from (negative counts from the end)")
    run.add_argument("--free", metavar="NAME", help="with --from: free parameter of the new branch")
    run.add_argument("--direction", type=int, choices=(1, -1), default=1,
                     help="with --from: 1 continues along the saved tangent, -1 reverses it")
    run.add_argument("--json", action="store_true", help="print the result as one JSON object instead of a summary")
    run.add_argument("--out", metavar="DIR", help="write the branch as CSV and JSON files into DIR")
    run.add_argument("--plot", metavar="FILE", help="draw the branch (PNG, SVG or PDF by the extension)")
    run.add_argument("--axes", metavar="X,Y", help="columns for --plot (default: free parameter, first unknown)")
    run.add_argument("--record", metavar="FILE", help="write a run record (input, versions, options, result)")
    run.add_argument("--quiet", action="store_true", help="no progress line on stderr")
    run.add_argument(
        "--backend", choices=("auto", "symengine", "sympy"), default="auto",
        help="symbolic back end (default: auto, symengine when installed)",
    )
    run.set_defaults(handler=_run)
    sweep = subparsers.add_parser(
        "sweep",
        help="trace a problem file once per combination of its [sweep] values",
        description="Run the [sweep] of a problem file: one trace per combination of the listed parameter "
                    "values, each saved as run-<k>.json the moment it finishes, and summary.csv at the end. "
                    "Running the same sweep again computes only the runs that are missing.",
        epilog="examples:\n  contin sweep reactor.toml\n  contin sweep reactor.toml --workers 2 --out reactor-sweep\n"
               "  contin sweep reactor.toml --scheduler tcp://127.0.0.1:8786",
    )
    sweep.add_argument("problem", metavar="PROBLEM.toml", help="the problem file, with a [sweep] section")
    add_sweep_options(sweep, out="[sweep] output", cold="the problem file's start values")
    sweep.set_defaults(handler=_sweep)
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
        return _main(argv, stdout, stderr)
    except BrokenPipeError:
        # The reader went away (e.g. `contin ... | head`): stop quietly, as command-line tools do.
        with contextlib.suppress(OSError):
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        return 1


def _main(argv, stdout, stderr) -> int:
    try:
        parser = build_parser(stderr=stderr)
        try:
            words = list(argv) if argv is not None else sys.argv[1:]
            namespace = parser.parse_args(words)
            namespace.argv = ["contin", *words]  # the command line, for run records
        except SystemExit as exit_:  # argparse: --help (0) or a usage error (2, message printed)
            return int(exit_.code or 0)
        handler = getattr(namespace, "handler", None)
        if handler is None:
            parser.print_help(stdout)
            return 2
        with warnings.catch_warnings():
            warnings.simplefilter("default")
            warnings.showwarning = _warning_printer(stderr)
            return int(handler(namespace) or 0)
    except (InputError, ContinError) as error:
        print(f"contin: error: {_one_line(str(error))}", file=stderr)
        return 2
    except OSError as error:  # a file the command reads or writes: the system's reason, in one line
        from ..base._output import describe_os_error

        print(f"contin: error: {_one_line(describe_os_error(error))}", file=stderr)
        return 2
    except (RecursionError, MemoryError):
        print("contin: error: the input is too large or too deeply nested to handle", file=stderr)
        return 2
    except KeyboardInterrupt:
        print("contin: interrupted", file=stderr)
        return 130


def _run_curves(namespace: argparse.Namespace, problem, name: str, outputs, targets) -> int:
    """``contin run`` on a problem with ``follow`` or ``explore``: several branches and their diagram."""
    from ..base._output import fill_text
    from ..studies._run import run_curves

    csv_path, json_path, plot_path, record_path = targets
    if record_path is not None:
        raise InputError("--record keeps one branch; a problem with follow or explore gives several: "
                         "leave --record out (--out writes every branch)")
    columns = tuple(problem.system.unknowns) + (problem.options["free"],)
    x_axis, y_axis = _axes(namespace.axes, columns)
    diagram = run_curves(problem)
    document = {"branches": [branch.to_dict() for branch in diagram.branches], "diagram": diagram.to_dict()}
    if json_path is not None:
        json_text = json.dumps(document, indent=1) + "\n"
        outputs.add("--out", json_path, lambda target: fill_text(target, json_text))
        folder = json_path.parent
        for number, branch in enumerate(diagram.branches):
            target = csv_path if number == 0 else outputs.inside("--out", folder, f"{name}-{number}.csv")
            outputs.add("--out", target, lambda where, text=branch.to_csv(): fill_text(where, text))
    if plot_path is not None:
        from ..base._plot import _pyplot, save_figure

        _pyplot(headless=True)
        ax = diagram.plot(x_axis, y_axis)
        outputs.add("--plot", plot_path, lambda target: save_figure(ax.figure, target))
    outputs.commit()
    if namespace.json:
        print(json.dumps(document))
    else:
        for number, branch in enumerate(diagram.branches):
            heading = "the one-parameter branch" if number == 0 else (
                f"{branch.stats.get('curve', 'branch')} curve in {', '.join(branch.columns[len(columns) - 1:])}"
                if "curve" in branch.stats else f"branch {number}")
            print(f"-- branch {number}: {heading}")
            print(summary(branch, name))
    return 0 if all(branch.status.success for branch in diagram.branches) else 1


def _sweep(namespace: argparse.Namespace) -> int:
    """``contin sweep``: every combination of ``[sweep] over``, saved as it finishes; exit 1 if a run failed."""
    from ..base._output import read_input_text
    from ..systems._problem import MAX_FILE_BYTES, problem_from_text
    from ..studies._sweep import problem_task, run_sweep, sweep_report

    path = Path(namespace.problem)
    text = read_input_text(path, f"{path}:", MAX_FILE_BYTES, missing="no such problem file")
    problem = problem_from_text(text, path)
    if problem.sweep is None:
        raise InputError(f"{path}: has no [sweep] section; add one, e.g. [sweep] over = {{ B = [1.0, 2.0] }}")
    folder = namespace.out if namespace.out is not None else problem.sweep["output"]
    runs = run_sweep(problem_task(text, str(path), problem), problem.sweep["over"], folder, workers=namespace.workers,
                     scheduler=namespace.scheduler, timeout=namespace.timeout, warm=not namespace.cold)
    print(sweep_report(runs, path.name, folder))
    return 0 if all(run.success for run in runs) else 1


def _warning_printer(stderr):
    """Warnings as one ``contin: warning:`` line each, without the file and line of the code that warned,
    and each text once per run (the structure of a system is checked by more than one step)."""
    shown: set[tuple[type, str]] = set()

    def show(message, category, filename, lineno, file=None, line=None):
        text = _one_line(str(message))
        if (category, text) in shown:
            return
        shown.add((category, text))
        print(f"contin: warning: {text}", file=stderr)

    return show


def _one_line(message: str) -> str:
    return " ".join(message.split())


def _axes(text: str | None, columns: Sequence[str]) -> tuple[str | None, str | None]:
    if text is None:
        return None, None
    parts = [part.strip() for part in text.split(",")]
    if len(parts) != 2 or not all(parts):
        raise InputError(f"--axes {text!r} must name two columns as X,Y (columns: {', '.join(columns)})")
    for part in parts:
        if part not in columns:
            raise InputError(f"--axes: no column {part!r} (columns: {', '.join(columns)}){suggest(part, columns)}")
    return parts[0], parts[1]


def _check_options(namespace: argparse.Namespace) -> None:
    """Refuse options that do not go together, before any work is done."""
    if namespace.plot is not None and Path(namespace.plot).suffix.lower() not in (".png", ".svg", ".pdf"):
        raise InputError(f"--plot {namespace.plot!r} must end in .png, .svg or .pdf")
    if namespace.axes is not None and namespace.plot is None:
        raise InputError("--axes goes with --plot FILE")
    restart_only = [f"--{name.replace('_', '-')}" for name in ("restart_at", "free")
                    if getattr(namespace, name) is not None] + (["--direction"] if namespace.direction != 1 else [])
    if namespace.record_in is None and restart_only:
        raise InputError(f"{restart_only[0]} goes with --from RECORD")
    if namespace.record_in is not None and namespace.restart_at is None:
        raise InputError("--from RECORD needs --restart-at INDEX (the point to continue from)")


def _check_outputs(namespace: argparse.Namespace, name: str) -> tuple:
    """Every destination checked before any work: (Outputs, csv path, json path, plot path, record path)."""
    from ..base._output import Outputs

    outputs = Outputs()
    csv_path = json_path = None
    if namespace.out is not None:
        folder = outputs.folder("--out", namespace.out)
        csv_path = outputs.inside("--out", folder, f"{name}.csv")
        json_path = outputs.inside("--out", folder, f"{name}.json")
    plot = outputs.target("--plot", namespace.plot) if namespace.plot is not None else None
    record = outputs.target("--record", namespace.record) if namespace.record is not None else None
    return outputs, csv_path, json_path, plot, record


def _run(namespace: argparse.Namespace) -> int:
    from ..base._output import fill_text
    from ..studies._run import run_problem
    from ..systems._problem import load_problem, problem_from_text
    from ..base._progress import Progress
    from ..results._record import check_problem_record, check_record_matches, read_record, run_record
    from ..studies._restart import restart

    if namespace.list_examples:
        for name in example_names():
            print(f"{name:24s} {example_summary(name)}")
        return 0
    if namespace.example is None and namespace.problem is None and namespace.record_in is None:
        raise InputError("contin run needs a problem file, --example NAME, --from RECORD or --list-examples")
    _check_options(namespace)
    with contextlib.ExitStack() as stack:
        record_in = None
        if namespace.record_in is not None:
            record_in = read_record(namespace.record_in)
            given = check_problem_record(record_in, namespace.record_in)
            # The record's file name is a label only: nothing is ever written under it.
            file_name = given.get("name", "problem.toml")
            text = given["text"]
            name = f"{Path(file_name).stem}-restart"
            outputs, *targets = _check_outputs(namespace, name)
            problem = problem_from_text(text, file_name, backend=namespace.backend,
                                        label=f"run record {namespace.record_in!r}: input.text ({file_name})")
            check_record_matches(record_in, namespace.record_in, problem.system.unknowns, problem.system.parameters)
            if namespace.free is not None and namespace.free not in problem.system.parameters:
                raise InputError(f"--free {namespace.free!r} is not a parameter of the problem "
                                 f"({', '.join(problem.system.parameters)}){suggest(namespace.free, problem.system.parameters)}")
        else:
            if namespace.example is not None:
                path = stack.enter_context(example_path(namespace.example))
                name = namespace.example
            else:
                path = Path(namespace.problem)
                name = path.stem
            outputs, *targets = _check_outputs(namespace, name)
            problem = load_problem(path, backend=namespace.backend)
            text = _read_text(path)
            file_name = path.name
            if problem.curves is not None:
                return _run_curves(namespace, problem, name, outputs, targets)
        columns = tuple(problem.system.unknowns) + (problem.options.get("free", ""),)
        x_axis, y_axis = _axes(namespace.axes, columns)
        progress = Progress(columns, quiet=namespace.quiet or namespace.json, label=name)
        try:
            if record_in is not None:
                options = {k: v for k, v in problem.options.items() if k not in ("free", "direction")}
                branch = restart(record_in, namespace.restart_at, problem.system, free=namespace.free,
                                 direction=namespace.direction, events=list(problem.events), on_point=progress,
                                 **options)
            else:
                branch = run_problem(problem, on_point=progress)
        finally:
            progress.close()
    csv_path, json_path, plot_path, record_path = targets
    document = branch.to_dict()
    if csv_path is not None:
        csv_text = branch.to_csv()
        json_text = json.dumps(document, indent=1) + "\n"
        outputs.add("--out", csv_path, lambda target: fill_text(target, csv_text))
        outputs.add("--out", json_path, lambda target: fill_text(target, json_text))
    if record_path is not None:
        from dataclasses import asdict

        from ..tracing._options import TraceOptions

        effective = {**asdict(TraceOptions()), **{k: v for k, v in problem.options.items() if k != "at"}}
        record = run_record(branch, input={"kind": "problem_file", "name": file_name, "text": text},
                            command=getattr(namespace, "argv", None), options=effective)
        record_text = json.dumps(record, indent=1) + "\n"
        outputs.add("--record", record_path, lambda target: fill_text(target, record_text))
    if plot_path is not None:
        from ..base._plot import _pyplot, plot_branch, save_figure

        _pyplot(headless=True)
        ax = plot_branch(branch, x_axis, y_axis, caption=f"{name}: {branch.message}")
        outputs.add("--plot", plot_path, lambda target: save_figure(ax.figure, target))
    outputs.commit()
    if namespace.json:
        print(json.dumps(document))
    else:
        print(summary(branch, name))
    if isinstance(branch.cause, KeyboardInterrupt):
        # Ctrl-C mid-trace: what was traced is written; shells and scripts expect 130 and a note.
        print(f"contin: interrupted after {len(branch.points)} points; the partial results were written",
              file=sys.stderr)
        return 130
    return 0 if branch.status.success else 1


def _read_text(path: Path) -> str:
    try:
        return path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as error:
        raise InputError(f"{path}: cannot read the problem file: {error}") from None


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
        kind_width = max(len(point.kind) for point in branch.special_points)
        name_width = max(len(point.name) for point in branch.special_points)
        for point in branch.special_points:
            extra = ""
            if "angular_frequency" in point.info:
                extra = f", angular frequency {point.info['angular_frequency']:.10g}"
            if "first_lyapunov_coefficient" in point.info:
                extra += f", first Lyapunov coefficient {point.info['first_lyapunov_coefficient']:.4g}"
            lines.append(f"  {point.kind:{kind_width}s}  {point.name:{name_width}s}  {_format_values(point.values)}"
                         f"{extra}  (point {point.index})")
    else:
        lines.append("special points: none")
    if branch.at:
        lines.append("at requested values:")
        width = max(len(point.name) for point in branch.at)
        for point in branch.at:
            lines.append(f"  {point.name:{width}s}  {_format_values(point.values)}")
    for note in branch.stats.get("notes", ()):
        lines.append(f"note: {note}")
    stats = branch.stats
    lines.append(
        f"work: {stats.get('newton_iterations', 0)} Newton iterations, "
        f"{stats.get('jacobian_evaluations', 0)} Jacobian evaluations, "
        f"{stats.get('setup_seconds', 0.0) + stats.get('trace_seconds', 0.0):.3g} s"
    )
    return "\n".join(lines)
