"""The public names are re-exported lazily: each resolves, and the command line's parser is built
without the heavy libraries (sympy, scipy, matplotlib), which a command imports when it needs them."""

from __future__ import annotations

import importlib
import json
import subprocess
import sys

import pytest

import contin
import contin.base
import contin_thermo

HEAVY = ("sympy", "scipy", "matplotlib", "symengine", "networkx")


@pytest.mark.parametrize("package", [contin, contin.base, contin_thermo], ids=["contin", "contin.base", "contin_thermo"])
def test_every_public_name_resolves_and_dir_lists_it(package):
    assert package.__all__ == sorted(set(package.__all__))
    for name in package.__all__:
        namespace: dict = {}
        exec(f"from {package.__name__} import {name}", namespace)  # the form users write
        assert namespace[name] is getattr(package, name)
        assert getattr(namespace[name], "__module__", package.__name__).startswith(package.__name__) or name in (
            "GAS_CONSTANT", "CAUTION", "FAMILIES", "__version__")
    assert set(package.__all__) <= set(dir(package))


def test_renamed_exports_point_at_their_definitions():
    from contin_thermo.curves._mixture_critical import critical_point

    assert contin_thermo.mixture_critical_point is critical_point
    assert contin.InputError is importlib.import_module("contin.base._errors").InputError


@pytest.mark.parametrize("package", ["contin", "contin_thermo"])
def test_an_unknown_name_is_an_attribute_error_naming_it(package):
    module = importlib.import_module(package)
    with pytest.raises(AttributeError, match=rf"module '{package}' has no attribute 'PureFluid'"):
        module.PureFluid
    with pytest.raises(ImportError, match="cannot import name 'PureFluid'"):
        exec(f"from {package} import PureFluid", {})


def _modules_after(code: str) -> list[str]:
    script = code + "\nimport json, sys\nprint(json.dumps(sorted(sys.modules)))"
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, check=True)
    return json.loads(done.stdout.splitlines()[-1])


def test_import_and_parser_building_import_no_heavy_library():
    loaded = _modules_after("import contin, contin_thermo\nfrom contin.commands._cli import build_parser\n"
                            "build_parser().format_help()")
    heavy = sorted({name.split(".")[0] for name in loaded} & set(HEAVY))
    assert heavy == []


def test_help_of_every_command_imports_no_heavy_library():
    code = ("import contextlib, io\nfrom contin.commands._cli import main\n"
            "for words in (['--help'], ['run', '--help'], ['demo', '--help'], ['thermo', 'envelope', '--help'],"
            " ['thermo', 'saturation', '--help']):\n"
            "    with contextlib.redirect_stdout(io.StringIO()):\n"
            "        assert main(words) == 0\n")
    heavy = sorted({name.split(".")[0] for name in _modules_after(code)} & set(HEAVY))
    assert heavy == []
