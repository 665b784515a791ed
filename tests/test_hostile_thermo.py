"""contin thermo with hostile and careless input: components files, extreme numbers, conflicting options,
and messages that name the real cause."""

from __future__ import annotations

import os

import pytest
from hypothesis import given, settings, strategies as st

from contin import InputError
from contin_thermo.models._components import load_components
from contin_thermo.models._units import parse_number
from hostile import run, snapshot

SATURATION = ["thermo", "saturation", "--eos", "pr", "--quiet"]
ENVELOPE = ["thermo", "envelope", "--eos", "pr", "--quiet"]


def refused(capsys, words, message, folder=None):
    before = snapshot(folder) if folder is not None else None
    code, out, err = run(capsys, *words)
    assert code == 2, (out, err)
    lines = [line for line in err.splitlines() if not line.startswith("contin: warning:")]
    assert len(lines) == 1 and lines[0].startswith("contin: error:") and "Traceback" not in err
    assert message in lines[0]
    if folder is not None:
        assert snapshot(folder) == before
    return lines[0]


# -- components files (item 7) --------------------------------------------------------------------------
@pytest.mark.parametrize("text, message", [
    ("component = [1, 2]\n", "[[component]] number 1: is int, not a table"),
    ('[[component]]\nname = "oil-A"\nTc = 600.0\nPc = 2e6\nomega = 0.4\naliases = 5\n',
     "aliases = 5; give a list of names"),
    ('[[component]]\nname = "oil-A"\nTc = true\nPc = 2e6\nomega = 0.4\n', "Tc of 'oil-A' is True, not a number"),
    ('[[component]]\nname = ["oil-A"]\nTc = 600.0\nPc = 2e6\nomega = 0.4\n', "the component name is list"),
    ('[[component]]\nname = "oil-A"\nTc = "\u0666\u0660\u0660"\nPc = 2e6\nomega = 0.4\n',
     "write it with the digits 0-9"),
    ('[[component]]\nname = "oil-A"\nTc = 600.0\nPc = 2e6\nomega = 0.4\n'
     '[[component]]\nname = "oil-A"\nTc = 610.0\nPc = 2e6\nomega = 0.4\n', "the component 'oil-A' is given twice"),
    ('[[component]]\nname = "oil-A"\nTc = ' + "1" * 4400 + '\nPc = 2e6\nomega = 0.4\n',
     "a number has more than 4300 digits"),
])
def test_a_bad_components_file_is_one_line_naming_the_entry(tmp_path, text, message):
    path = tmp_path / "extra.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError, match="extra.toml") as caught:
        load_components(path)
    assert message in str(caught.value) and "\n" not in str(caught.value)


def test_a_components_file_that_is_binary_a_folder_or_a_device_says_so(tmp_path, capsys):
    (tmp_path / "blob.csv").write_bytes(b"\x89PNG\r\n\x1a\n\x00\xff")
    refused(capsys, [*SATURATION, "--fluid", "x", "--components-file", str(tmp_path / "blob.csv")],
            "is not UTF-8 text")
    (tmp_path / "folder.csv").mkdir()
    refused(capsys, [*SATURATION, "--fluid", "x", "--components-file", str(tmp_path / "folder.csv")],
            "is a folder, not a file")
    if os.path.exists(os.devnull):
        refused(capsys, [*SATURATION, "--fluid", "x", "--components-file", os.devnull],
                "is not a regular file (a device, pipe or socket)")
    os.mkfifo(tmp_path / "pipe.csv")
    refused(capsys, [*SATURATION, "--fluid", "x", "--components-file", str(tmp_path / "pipe.csv")],
            "is not a regular file (a device, pipe or socket)")


def test_a_components_file_is_never_silently_ignored(tmp_path, capsys):
    path = tmp_path / "extra.csv"
    path.write_text("name,Tc,Pc,omega\nblend-Q,520.0,2.9e6,0.31\n")
    refused(capsys, [*SATURATION, "--tc", "400", "--pc", "4e6", "--omega", "0.2", "--components-file", str(path)],
            "--components-file and --tc cannot be combined")
    code, out, err = run(capsys, "thermo", "critical", "--mixture", "methane=0.9,blend-Q=0.1", "--eos", "pr",
                         "--components-file", str(path), "--json")
    assert code == 0, err
    assert '"critical"' in out  # blend-Q came from the file


# -- extreme valid numbers (item 8) --------------------------------------------------------------------
def test_extreme_temperatures_and_pressures_of_diagrams_give_a_message(capsys):
    binary = ["--mixture", "propane,n-butane", "--eos", "pr", "--quiet"]
    refused(capsys, ["thermo", "pxy", *binary, "--temperature", "1e-300"],
            "--temperature 1e-300 K is too far below the critical temperature of n-butane")
    refused(capsys, ["thermo", "txy", *binary, "--pressure", "1e-300"], "--pressure 1e-300 Pa is below 1e-06 Pa")


# -- messages that say the real cause (item 9) ------------------------------------------------------------
@pytest.mark.parametrize("fraction", ["nan", "inf", "1e400"])
def test_non_finite_fractions_are_called_not_finite(capsys, fraction):
    line = refused(capsys, [*ENVELOPE, "--mixture", f"propane={fraction},n-butane=0.5"], "is not finite")
    assert "negative" not in line


def test_normalise_of_huge_fractions_works(capsys):
    code, out, err = run(capsys, *ENVELOPE, "--mixture", "propane=1e308,n-butane=1e308", "--normalise", "--json")
    assert code in (0, 1) and "must be positive" not in err
    import json

    assert json.loads(out)["status"]


def test_an_acentric_factor_without_a_two_phase_region_says_so(capsys):
    line = refused(capsys, [*SATURATION, "--tc", "400", "--pc", "4e6", "--omega", "-0.9"],
                   "--omega -0.9: with this acentric factor the Peng-Robinson attraction term alpha(T)")
    assert "critical" not in line.split("--omega", 1)[0]


def test_huge_integers_and_thermo_alone_and_warnings_are_one_line(capsys, tmp_path):
    refused(capsys, [*SATURATION, "--tc", "1" * 4400, "--pc", "4e6", "--omega", "0.1"], "is not finite")
    problem = tmp_path / "big.toml"
    problem.write_text('[unknowns]\nu = ' + "1" * 4400 + '\n[parameters]\np = 1.0\n[equations]\nf = "u - p"\n'
                       '[trace]\nfree = "p"\n')
    line = refused(capsys, ["run", str(problem)], "a number has more than 4300 digits")
    assert "set_int_max_str_digits" not in line
    refused(capsys, ["thermo"], "contin thermo needs a subcommand (saturation, spinodal, critical, components")
    code, _, err = run(capsys, *SATURATION, "--tc", "400", "--pc", "4e6", "--omega", "1.8")
    assert err.splitlines()[0].startswith("contin: warning: --tc/--pc/--omega: acentric factor omega=1.8")
    assert ".py" not in err


@pytest.mark.parametrize("words, message", [
    (["thermo", "critical", "--mixture", "methane=0.7,ethane=0.3", "--fluid", "propane", "--eos", "pr"],
     "--fluid and --mixture cannot be combined"),
    (["thermo", "pxy", "--mixture", "propane=0.5,n-butane=0.5", "--temperature", "300", "--eos", "pr"],
     "takes the two components without mole fractions"),
    ([*ENVELOPE, "--mixture", "propane=0.5,n-butane=0.5", "--kij", "propane-n-butane=0.1,n-butane-propane=0.2"],
     "--kij gives the pair propane-n-butane twice"),
    ([*ENVELOPE, "--mixture", "propane=0.5,blend-X=0.5", "--component", "blend-X,520,2.9e6,0.31",
      "--component", "blend-X,530,2.9e6,0.31"], "--component 'blend-X' is given twice"),
    ([*SATURATION, "--tc", "\u0664\u0660\u0660", "--pc", "4e6", "--omega", "0.1"], "is not a number"),
    ([*SATURATION, "--tc", "400", "--pc", "4e6", "--omega", "\u0660.1"], "write it with the digits 0-9"),
    ([*ENVELOPE, "--mixture", "propane=\u0660.5,n-butane=0.5"], "write it with the digits 0-9"),
    (["thermo", "saturation", "--fluid", "propane"], "the following arguments are required: --eos"),
])
def test_conflicting_options_and_non_ascii_digits_are_refused(capsys, words, message):
    refused(capsys, words, message)


_DIGITS = st.text(st.characters(categories=("Nd",)), min_size=1, max_size=4)


@settings(max_examples=50, derandomize=True, deadline=None)
@given(_DIGITS)
def test_only_ascii_digits_are_numbers(text):
    if all("0" <= c <= "9" for c in text):
        assert parse_number(text, "--x") == float(text)
    else:
        with pytest.raises(InputError, match="is not a number"):
            parse_number(text, "--x")
