"""Generated hostile and careless input for the command line, and the law every run must obey.

Used by tests/test_fuzz.py (few examples, fixed seed) and benchmarks/fuzz.py (many). Three kinds of
input: problem files, ``contin thermo`` command lines, and edited run records. The law:

- the exit status is 0, 1 (a trace that did not succeed) or 2; never an exception (a traceback);
- with status 2, stderr holds exactly one line besides warnings, starting ``contin: error:``;
- nothing is written outside the named targets, no temporary file is left, and a run that ends in
  status 2 writes none of its targets.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import signal
import traceback
from pathlib import Path

from hypothesis import strategies as st

#: Problem used for records and as the base of problem-file edits (an invented latch balance).
BASE_PROBLEM = {
    "unknowns": {"u": 1.3247},
    "parameters": {"p": -1.0, "q": 2.0},
    "constants": {"c": 1.0},
    "equations": {"balance": "u**3 - c*u + p"},
    "trace": {"free": "p", "bounds": {"p": [-1.0, 1.0]}, "step": 0.1, "max_step": 0.2, "max_points": 60},
}

# -- values --------------------------------------------------------------------------------------------
_TEXT = st.sampled_from([
    "", " ", ".", "..", "../../x.toml", "/tmp/contin-fuzz-abs.toml", "sub/x", "a\0b", "x" * 300, "p", "u", "q",
    "k", "\uff4b", "\u0663\u0660\u0660", "nan", "inf", "-inf", "1e400", "1e-300", "-0.9", "true", "[1]", "{}",
    "\n", "\u202e", "\ud7ff", "C:\\x", "~", "$HOME", "%s", "{0}", "1" * 4300,
])
_NUMBER = st.one_of(st.sampled_from([0, 1, -1, 2, 10**30, -(10**30), 2**63, 1e308, -1e308, 1e-300, 0.5, -0.9]),
                    st.floats(allow_nan=True, allow_infinity=True), st.integers(-10, 10))
_SCALAR = st.one_of(_NUMBER, _TEXT, st.booleans(), st.none())
VALUE = st.recursive(_SCALAR, lambda inner: st.one_of(st.lists(inner, max_size=3),
                                                       st.dictionaries(_TEXT, inner, max_size=2)), max_leaves=6)

# -- expressions -----------------------------------------------------------------------------------------
_ATOMS = st.sampled_from(["u", "p", "q", "c", "k", "\uff4b", "pi", "E", "1", "0", "-1", "2.5", "1e308", "1e-320",
                          "10**400", "9**9**9", "True", "'a'", "__import__", "u.real", "u[0]", "x", "0x10", "1_0",
                          "\u0663", "sqrt(-1)", "log(-1)", "(-2)**0.5", "acos(2)", "log(0)", "1/0", "lambda: 1"])
_FUNCTIONS = ["exp", "log", "sqrt", "sin", "acos", "atanh", "abs", "min", "max", "atan2", "eval", "open"]


def _combine(children):
    binary = st.tuples(children, st.sampled_from(["+", "-", "*", "/", "**", "//", "%", "<", " and ", "@"]),
                       children).map(lambda t: f"({t[0]} {t[1]} {t[2]})")
    call = st.tuples(st.sampled_from(_FUNCTIONS), st.lists(children, min_size=0, max_size=4)).map(
        lambda t: f"{t[0]}({', '.join(t[1])})")
    return st.one_of(binary, call, children.map(lambda c: f"-{c}"))


_BENIGN_ATOMS = st.sampled_from(["u", "p", "q", "c", "1", "2.5", "0.5", "pi", "E"])


def _benign(children):
    binary = st.tuples(children, st.sampled_from(["+", "-", "*"]), children).map(lambda t: f"({t[0]} {t[1]} {t[2]})")
    call = st.tuples(st.sampled_from(["exp", "sin", "cos", "tanh", "abs", "atan"]), children).map(
        lambda t: f"{t[0]}({t[1]})")
    return st.one_of(binary, call)


#: Expressions of declared names that parse; the equation then is u**3 - c*u + p + 0.01*(this).
BENIGN = st.recursive(_BENIGN_ATOMS, _benign, max_leaves=5).map(lambda e: f"u**3 - c*u + p + 0.01*({e})")

_COMPLEX = st.sampled_from(["sqrt(-1)", "log(-1)", "(-2)**0.5", "acos(2)", "asin(-3)", "acosh(0)", "atanh(2)",
                            "log(-2)**2", "sqrt(-4)*0", "exp(1000)", "atanh(1)", "(-8)**(1/3)"])

EXPRESSION = st.one_of(
    BENIGN,
    _COMPLEX.map(lambda constant: f"u**3 - c*u + p + 0.01*max(u, {constant})"),
    _COMPLEX.map(lambda constant: f"u**3 - c*u + p - {constant}"),
    st.recursive(_ATOMS, _combine, max_leaves=8),
    st.integers(2, 120).map(lambda n: "max(" + ", ".join(f"u*{k} + p" for k in range(n)) + ")"),
    st.integers(2, 300).map(lambda n: "*".join(f"(u + {k}*p)" for k in range(n))),
    st.integers(2, 20).map(lambda n: "u - " + "**".join(["(u + p)"] * n)),
)


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if value is None:
        return '"null"'
    if isinstance(value, float):
        return "nan" if value != value else ("inf" if value == float("inf") else "-inf" if value == float("-inf")
                                             else repr(value))
    if isinstance(value, int):
        return str(value)
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return "{ " + ", ".join(f"{json.dumps(str(k))} = {_toml_value(v)}" for k, v in value.items()) + " }"


def toml_text(problem: dict) -> str:
    """TOML text of a problem dict (tables of scalars, inline tables; ``events`` as [[events]])."""
    lines = []
    for key, value in problem.items():
        if key != "events" and not isinstance(value, dict):
            lines.append(f"{json.dumps(key)} = {_toml_value(value)}")
    for key, value in problem.items():
        if isinstance(value, dict):
            lines.append(f"[{json.dumps(key)}]")
            lines += [f"{json.dumps(str(k))} = {_toml_value(v)}" for k, v in value.items()]
    events = problem.get("events")
    if isinstance(events, list):
        for event in events:
            lines.append("[[events]]")
            if isinstance(event, dict):
                lines += [f"{json.dumps(str(k))} = {_toml_value(v)}" for k, v in event.items()]
    return "\n".join(lines) + "\n"


def _edited(**changes):
    """The base problem with ``changes`` applied: section -> {key: value} (merged) or a top-level value."""
    problem = json.loads(json.dumps(BASE_PROBLEM))
    for key, value in changes.items():
        if isinstance(value, dict) and isinstance(problem.get(key), dict):
            problem[key].update(value)
        else:
            problem[key] = value
    return problem


_EQUATION = "u**3 - c*u + p"
_NAMES = st.sampled_from(["k", "\uff4b", "\u212a", "x\u0301", "exp", "pi", "lambda", "_", "k2", "u", "p"])
_SECTIONS = st.sampled_from(["unknowns", "parameters", "constants"])
_TRACE_KEYS = st.sampled_from(["free", "direction", "bounds", "max_points", "step", "min_step", "max_step",
                               "tolerance", "at", "folds", "detect", "corrector", "stepp"])


def _short(value):
    """Keep generated runs short: a whole max_points is capped (its type is what is under test)."""
    return min(value, 200) if isinstance(value, int) and not isinstance(value, bool) else value


def _garble(text_and_cut):
    text, cut, piece = text_and_cut
    cut = cut % (len(text) + 1)
    return text[:cut] + piece + text[cut:]


#: One kind of mistake per problem file, each kind equally likely, so that every check is reached.
PROBLEM_EDITS = [
    BENIGN.map(lambda e: _edited(equations={"balance": e})),  # valid
    _COMPLEX.map(lambda c: _edited(equations={"balance": f"{_EQUATION} + 0.01*max(u, {c})"})),
    _COMPLEX.map(lambda c: _edited(events=[{"name": "e", "expression": f"u - {c}"}])),
    st.integers(2, 120).map(lambda n: _edited(equations={"balance": _EQUATION + " + 0.01*max(" + ", ".join(
        f"u*{k} + p" for k in range(n)) + ")"})),
    st.integers(2, 400).map(lambda n: _edited(equations={"balance": _EQUATION + " + 1e-9*" + "*".join(
        f"(u + {k}*p)" for k in range(n))})),
    st.integers(2, 30).map(lambda n: _edited(equations={"balance": _EQUATION + " - 1e-9*" + "**".join(
        ["(u + p)"] * n)})),
    st.recursive(_ATOMS, _combine, max_leaves=8).map(lambda e: _edited(equations={"balance": f"{_EQUATION} + {e}"})),
    st.tuples(_NAMES, _SECTIONS, _NUMBER, st.booleans()).map(lambda t: _edited(
        **{t[1]: {t[0]: t[2]}}, equations={"balance": f"{_EQUATION} + 0.01*{t[0] if t[3] else 'k'}"})),
    st.tuples(_SECTIONS, st.sampled_from(["u", "p", "q", "c"]), VALUE).map(lambda t: _edited(**{t[0]: {t[1]: t[2]}})),
    st.tuples(_TRACE_KEYS, st.one_of(VALUE, st.sampled_from([{"p": [-1.0, 1.0]}, {"u": [0.1]}, ["fold"], ["u"],
                                                             {"q": [0, 1]}, {"p": [1.0, -1.0]}]))).map(
        lambda t: _edited(trace={t[0]: _short(t[1])})),
    st.tuples(st.sampled_from(["name", "expression", "terminal", "direction", "extra"]), VALUE).map(
        lambda t: _edited(events=[{"name": "e", "expression": "u", **{t[0]: t[1]}}])),
    st.tuples(st.sampled_from(["kind", "events", "unknowns", "equations", "trace", "extra"]), VALUE).map(
        lambda t: _edited(**{t[0]: t[1]})),
]


@st.composite
def problem_files(draw) -> str:
    """TOML text: the base problem with one kind of edit (or, now and then, garbled text)."""
    text = toml_text(draw(st.one_of(*PROBLEM_EDITS)))
    if draw(st.integers(0, 11)) == 0:
        text = _garble((text, draw(st.integers(0, 10**6)), draw(st.sampled_from(
            ["\0", "\ufeff", "[", "\"", "\udcff", "= =", "\r", "\n[[events]]\n"]))))
    return text


# -- thermo command lines ---------------------------------------------------------------------------------
_FLUIDS = st.sampled_from(["propane", "CO2", "nC4", "water", "methane", "propan", "", "1", "\u0663"])
_QUANTITY = st.sampled_from(["300", "26.85 degC", "5 bar", "1e-300", "1e400", "nan", "inf", "-5", "0", "300 K",
                             "5 bra", "\u0663\u0660\u0660", "1" * 4300, "", "1e308", "3e2", "-2 barg", "5 psig",
                             "-101.325 kPag", "500 degR", "80 degF"])
_FRACTION = st.sampled_from(["0.7", "0.3", "nan", "inf", "1e400", "-0.1", "0", "1e308", "\u0660.5", "a", ""])
_MIXTURE = st.one_of(
    st.sampled_from(["methane=0.7,ethane=0.3", "propane,n-butane", "propane=0.5,n-butane=0.5", "methane", "",
                     "methane=0.7,methane=0.3", "C1=0.9,blend-X=0.1", "propane=1e308,n-butane=1e308"]),
    st.tuples(_FRACTION, _FRACTION).map(lambda t: f"propane={t[0]},n-butane={t[1]}"),
)
_OPTIONS = {
    "--fluid": _FLUIDS, "--tc": _QUANTITY, "--pc": _QUANTITY, "--omega": _FRACTION, "--eos": st.sampled_from(
        ["pr", "srk", "rk", "vdw", "PR", "x"]), "--from-temperature": _QUANTITY, "--at-temperatures": _QUANTITY,
    "--at-pressures": _QUANTITY, "--mixture": _MIXTURE, "--kij": st.sampled_from(
        ["propane-n-butane=0.01", "methane-ethane=0.01,ethane-methane=0.02", "a-b=1", "propane-propane=0.1", "x",
         "methane-ethane=nan", "methane-ethane=1e400", "defaults", "none,propane-n-butane=0.01", "defaults,none",
         "nonee"]),
    "--atmosphere": _QUANTITY, "--volume-translation": st.sampled_from(["peneloux", "jhaveri-youngren", "x", ""]),
    "--component": st.sampled_from(["blend-X,520,2.9e6,0.31", "blend-X,520,2.9e6", "blend-X,nan,1,1",
                                    "blend-X,520,2.9e6,-0.9"]),
    "--temperature": _QUANTITY, "--pressure": _QUANTITY, "--from-pressure": _QUANTITY,
    "--quality": st.sampled_from(["0.5", "0.1,0.9", "2", "nan", "a", ""]), "--units": st.sampled_from(
        ["si", "degC-bar", "degF-psia", "engineering", "imperial"]), "--name": _TEXT,
}
_FLAGS = ["--json", "--quiet", "--normalise"]
_COMMANDS = ["saturation", "spinodal", "critical", "components", "envelope", "pxy", "txy", ""]


_VALID = {
    "saturation": ["--fluid", "propane", "--eos", "pr"],
    "spinodal": ["--fluid", "n-butane", "--eos", "srk"],
    "critical": ["--fluid", "ethane", "--eos", "pr"],
    "critical-mixture": ["--mixture", "methane=0.7,ethane=0.3", "--eos", "srk"],
    "components": [],
    "envelope": ["--mixture", "methane=0.8,ethane=0.2", "--eos", "pr"],
    "pxy": ["--mixture", "propane,n-butane", "--temperature", "300", "--eos", "pr"],
    "txy": ["--mixture", "propane,n-butane", "--pressure", "5 bar", "--eos", "pr"],
}


_PURE_OPTIONS = ["--fluid", "--tc", "--pc", "--omega", "--name", "--eos", "--from-temperature", "--at-temperatures",
                 "--units", "--atmosphere", "--volume-translation"]
_BINARY_OPTIONS = ["--mixture", "--kij", "--component", "--eos", "--units", "--atmosphere", "--volume-translation"]
_ACCEPTED = {
    "saturation": [*_PURE_OPTIONS, "--at-pressures"], "spinodal": _PURE_OPTIONS,
    "critical": [*_PURE_OPTIONS, "--mixture", "--kij", "--component"], "components": ["--units"],
    "envelope": [*_BINARY_OPTIONS, "--from-pressure", "--quality"],
    "pxy": [*_BINARY_OPTIONS, "--temperature"], "txy": [*_BINARY_OPTIONS, "--pressure"],
}


@st.composite
def thermo_words(draw) -> list[str]:
    """A ``contin thermo ...`` command line (outputs are added by :func:`try_thermo`)."""
    if draw(st.integers(0, 3)) > 0:  # a valid command line with a value replaced or an option added
        name = draw(st.sampled_from(sorted(_VALID)))
        words = ["thermo", name.split("-")[0], *_VALID[name]]
        accepted = _ACCEPTED[name.split("-")[0]]
        for _ in range(draw(st.sampled_from([0, 1, 1, 2]))):
            option = draw(st.sampled_from(accepted))
            value = draw(_OPTIONS[option])
            if option in words:
                words[words.index(option) + 1] = value
            else:
                words += [option, value]
        return words
    command = draw(st.sampled_from(_COMMANDS))
    words = ["thermo"] + ([command] if command else [])
    for option in draw(st.lists(st.sampled_from(sorted(_OPTIONS)), max_size=5)):
        words += [option, draw(_OPTIONS[option])]
    words += draw(st.lists(st.sampled_from(_FLAGS), max_size=2, unique=True))
    return words


# -- records ---------------------------------------------------------------------------------------------
_RECORD_FIELDS = [("input",), ("input", "name"), ("input", "text"), ("input", "kind"), ("result",),
                  ("result", "columns"), ("result", "points"), ("result", "tangents"), ("result", "free"),
                  ("result", "parameters"), ("result", "parameters", "p"), ("result", "points", 0),
                  ("result", "points", 0, 0), ("result", "tangents", 1), ("record_version",), ("command",),
                  ("options",), ("dependencies",)]


_MILD = st.sampled_from([0.5, -0.5, 1, 0, 1e-8, 2.0, "latch.toml", "b.toml", ["u", "p"], [0.1, 0.2], None])


@st.composite
def record_edits(draw) -> list[tuple[tuple, object]]:
    """A few (field path, new value) edits of a good run record (none, mild or hostile)."""
    if draw(st.booleans()):
        return draw(st.lists(st.tuples(st.sampled_from(_RECORD_FIELDS[1:]), _MILD), max_size=1))
    return draw(st.lists(st.tuples(st.sampled_from(_RECORD_FIELDS), st.one_of(VALUE, _TEXT, st.sampled_from(
        [["u", "p"], ["p"], [[1.0, 2.0]], [[1.0, True]], [[1.0]], "problem.toml"]))), min_size=1, max_size=3))


def edit_record(record: dict, edits) -> dict:
    record = json.loads(json.dumps(record))
    for path, value in edits:
        target = record
        try:
            for key in path[:-1]:
                target = target[key]
            target[path[-1]] = value
        except (KeyError, IndexError, TypeError):
            continue
    return record


# -- running and the law -----------------------------------------------------------------------------------
class Hang(Exception):
    """A run went past the harness's own time limit."""


def _alarm(signum, frame):
    raise Hang


def run_cli(words: list[str], seconds: float | None = None) -> tuple[int | None, str, str, str | None]:
    """(status, stdout, stderr, traceback text or None) of ``contin WORDS`` run in this process.

    A run taking more than ``seconds`` (default: CONTIN_FUZZ_SECONDS, else 60) counts as a hang.
    """
    from contin.commands._cli import main

    if seconds is None:
        seconds = float(os.environ.get("CONTIN_FUZZ_SECONDS", "60"))
    out, err = io.StringIO(), io.StringIO()
    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = main(words)
        return code, out.getvalue(), err.getvalue(), None
    except Hang:
        return None, out.getvalue(), err.getvalue(), f"no answer within {seconds:g} s"
    except BaseException as error:  # noqa: BLE001 - the law says: never; report it
        text = "".join(traceback.format_exception_only(type(error), error)).strip()
        return None, out.getvalue(), err.getvalue(), text
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0.0)
        signal.signal(signal.SIGALRM, previous)
        import matplotlib.pyplot as plt

        plt.close("all")


def files_under(root: Path) -> set[str]:
    return {str(p.relative_to(root)) for p in root.rglob("*")}


#: Exit status of the last run judged by :func:`law` (for the figures of benchmarks/fuzz.py).
last_status: list = [None]


def law(outcome, root: Path, before: set[str], targets: set[str], folders: set[str] = frozenset()) -> str | None:
    """None if the run obeyed the law, else what went wrong (one line)."""
    code, out, err, crash = outcome
    last_status[0] = code
    if crash is not None:
        return f"crash: {crash.splitlines()[-1][:200]}"
    if "Traceback" in err or "Traceback" in out:
        return "a traceback was printed"
    if code not in (0, 1, 2):
        return f"exit status {code}"
    lines = [line for line in err.splitlines() if line.strip() and not line.startswith("contin: warning:")]
    if code == 2 and (len(lines) != 1 or not lines[0].startswith("contin: error:")):
        return f"status 2 with {len(lines)} lines on stderr: {err[:200]!r}"
    after = files_under(root)
    new = after - before
    allowed = set(targets) | {p for p in new if any(p == f or p.startswith(f + os.sep) for f in folders)}
    stray = sorted(p for p in new if p not in allowed)
    if stray:
        return f"wrote outside its targets: {stray[:3]}"
    if code == 2 and new:
        return f"status 2 but left {sorted(new)[:3]}"
    if os.path.exists("/tmp/contin-fuzz-abs.toml"):
        return "wrote /tmp/contin-fuzz-abs.toml, a path taken from the input"
    return None


def good_record(folder: Path) -> dict:
    """A good run record of BASE_PROBLEM (made by the command line itself)."""
    problem = folder / "base.toml"
    problem.write_text(toml_text(BASE_PROBLEM), encoding="utf-8")
    code, _, err, crash = run_cli(["run", str(problem), "--quiet", "--record", str(folder / "base-record.json")])
    if code != 0:
        raise RuntimeError(f"the base problem does not run: {crash or err}")
    return json.loads((folder / "base-record.json").read_text())


def try_problem(text: str, root: Path, *, plot: bool = False) -> str | None:
    """Run a generated problem file with --out, --record (and --plot); the law's verdict."""
    case = root / "case"
    case.mkdir()
    path = case / "problem.toml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    before = files_under(root)
    words = ["run", str(path), "--quiet", "--out", str(case / "o"), "--record", str(case / "r.json")]
    if plot:
        words += ["--plot", str(case / "p.png")]
    verdict = law(run_cli(words), root, before, {"case/r.json", "case/p.png", "case/o"}, {"case/o"})
    _clear(case)
    return verdict


def try_thermo(words: list[str], root: Path) -> str | None:
    case = root / "case"
    case.mkdir()
    before = files_under(root)
    full = list(words)
    if words[1:2] != ["components"]:  # the one command with no outputs
        full += ["--csv", str(case / "c.csv"), "--record", str(case / "r.json")]
        if "--quiet" not in full:
            full.append("--quiet")
    verdict = law(run_cli(full), root, before, {"case/c.csv", "case/r.json"})
    _clear(case)
    return verdict


def try_record(record: dict, edits, root: Path, index: int) -> str | None:
    case = root / "case"
    case.mkdir()
    path = case / "in.json"
    path.write_text(json.dumps(edit_record(record, edits)), encoding="utf-8", errors="surrogatepass")
    before = files_under(root)
    words = ["run", "--from", str(path), "--restart-at", str(index), "--quiet", "--out", str(case / "o"),
             "--record", str(case / "r.json")]
    verdict = law(run_cli(words), root, before, {"case/r.json", "case/o"}, {"case/o"})
    _clear(case)
    return verdict


def _clear(folder: Path) -> None:
    import shutil

    shutil.rmtree(folder, ignore_errors=True)
    with contextlib.suppress(OSError):
        os.unlink("/tmp/contin-fuzz-abs.toml")
