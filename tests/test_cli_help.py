"""Every command's help: an example that itself parses, option examples of the right kind, and the same
options for the same input (--normalise wherever --mixture takes mole fractions)."""

from __future__ import annotations

import argparse
import json
import re
import shlex

import pytest

from contin import InputError
from contin.commands._cli import build_parser
from contin_thermo.models._units import parse_pressure, parse_temperature


def _commands():
    """(words, parser) of every command that does something (has a handler), sorted by name."""
    found = []

    def walk(parser, words):
        subs = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
        if parser.get_default("handler") is not None and words:
            found.append((tuple(words), parser))
        for action in subs:
            for name, sub in sorted(action.choices.items()):
                walk(sub, [*words, name])

    walk(build_parser(), [])
    return found


COMMANDS = _commands()


def test_the_walk_finds_every_command():
    names = {" ".join(words) for words, _ in COMMANDS}
    assert {"run", "demo", "thermo saturation", "thermo spinodal", "thermo critical", "thermo components",
            "thermo envelope", "thermo pxy", "thermo txy"} <= names


def _examples(parser, words):
    prefix = "contin " + " ".join(words)
    return [line.strip() for line in (parser.epilog or "").splitlines()
            if (line.strip() == prefix or line.strip().startswith(prefix + " ")) and not line.strip().endswith(" --help")
            and "COMMAND" not in line]


@pytest.mark.parametrize("words, parser", COMMANDS, ids=[" ".join(w) for w, _ in COMMANDS])
def test_each_command_has_an_example_that_parses(words, parser):
    examples = _examples(parser, words)
    assert examples, f"'contin {' '.join(words)} --help' shows no example of itself"
    for line in examples:
        argv = shlex.split(line.split(" > ")[0])[1:]  # a shell redirection is not an argument
        namespace = build_parser().parse_args(argv)  # a usage error would raise SystemExit
        assert namespace.handler is not None


@pytest.mark.parametrize("command, option, parse", [("pxy", "--temperature", parse_temperature),
                                                    ("txy", "--pressure", parse_pressure)])
def test_fixed_quantity_help_gives_examples_of_its_own_kind(command, option, parse):
    parser = dict(COMMANDS)[("thermo", command)]
    text = next(a.help for a in parser._actions if option in a.option_strings)
    examples = re.findall(r"'([^']+)'", text)
    assert examples
    for example in examples:
        assert parse(example, option) > 0  # an example of the other kind would raise InputError
    other = parse_pressure if parse is parse_temperature else parse_temperature
    with pytest.raises(InputError):
        other(examples[0], option)


def _options(parser):
    return {o for a in parser._actions for o in a.option_strings}


@pytest.mark.parametrize("words, parser", [(w, p) for w, p in COMMANDS if "--mixture" in _options(p)],
                         ids=[" ".join(w) for w, p in COMMANDS if "--mixture" in _options(p)])
def test_every_mixture_with_mole_fractions_takes_normalise(words, parser):
    mixture = next(a for a in parser._actions if "--mixture" in a.option_strings)
    takes_fractions = "=" in (mixture.help or "") + (mixture.metavar or "")
    if not takes_fractions:  # pxy and txy take the two components, without fractions
        assert words[-1] in ("pxy", "txy")
        return
    assert "--normalise" in _options(parser)


def test_critical_mixture_takes_normalise_as_its_own_message_says(capsys):
    from contin.commands._cli import main

    code = main(["thermo", "critical", "--mixture", "methane=0.7,ethane=0.2", "--eos", "pr"])
    err = capsys.readouterr().err
    assert code == 2 and "not 1; fix them or pass --normalise" in err
    code = main(["thermo", "critical", "--mixture", "methane=0.7,ethane=0.2", "--eos", "pr", "--normalise", "--json"])
    scaled = json.loads(capsys.readouterr().out)["special_points"][0]["values"]
    assert code == 0
    # 0.7 : 0.2 scaled to sum to 1 is 7/9 : 2/9: the same critical point as that feed given outright
    code = main(["thermo", "critical", "--mixture", f"methane={7 / 9!r},ethane={2 / 9!r}", "--eos", "pr", "--json"])
    exact = json.loads(capsys.readouterr().out)["special_points"][0]["values"]
    assert code == 0 and scaled["T"] == pytest.approx(exact["T"], rel=1e-9)
    assert scaled["P"] == pytest.approx(exact["P"], rel=1e-9)
    code = main(["thermo", "critical", "--fluid", "ethane", "--eos", "pr", "--normalise"])
    assert code == 2 and capsys.readouterr().err.strip() == (
        "contin: error: --kij, --component and --normalise apply to mixtures only; add --mixture or --feed, "
        "or drop them")
