"""Structural analysis: matching of equations with unknowns, refusal of singular structure, blocks."""

from __future__ import annotations

import warnings

import pytest

from contin._errors import InputError
from contin._structure import StructureWarning, analyse_structure
from contin._symbolic import SymbolicSystem


def test_sound_chain_is_one_block():
    structure = analyse_structure(["a", "b", "c"], ["x", "y", "z"], {"a": ["x", "y"], "b": ["x", "y", "z"], "c": ["y", "z"]})
    assert structure.blocks == ((("a", "b", "c"), ("x", "y", "z")),)
    assert structure.nonzeros == 7
    assert structure.summary()["largest_block"] == 3


def test_triangular_system_splits_into_blocks_in_solve_order():
    # c needs only z, b then gives y, a then gives x: a lower-triangular order (exact, by hand).
    structure = analyse_structure(["a", "b", "c"], ["x", "y", "z"], {"a": ["x", "y"], "b": ["y", "z"], "c": ["z"]})
    assert structure.blocks == ((("c",), ("z",)), (("b",), ("y",)), (("a",), ("x",)))
    assert set(structure.matching.items()) == {("a", "x"), ("b", "y"), ("c", "z")}
    summary = structure.summary()
    assert summary["blocks"] == 3 and summary["block_sizes"] == [1, 1, 1]
    assert summary["independent_subsystems"] == 1


def test_refuses_over_and_under_determined_parts_by_name():
    with pytest.raises(InputError) as caught:
        analyse_structure(["a", "b"], ["x", "y"], {"a": ["x"], "b": ["x"]})
    assert "equations a and b involve only unknown x; unknown y appears in no equation" in str(caught.value)


def test_refuses_equation_without_unknowns():
    with pytest.raises(InputError, match="equation b involves no unknown; unknowns x and y appear only in equation a"):
        analyse_structure(["a", "b"], ["x", "y"], {"a": ["x", "y"], "b": []})


def test_refuses_unknown_confined_to_too_few_equations():
    # y and z appear only in c: two unknowns for one equation.
    incidence = {"a": ["x"], "b": ["x"], "c": ["y", "z"]}
    with pytest.raises(InputError) as caught:
        analyse_structure(["a", "b", "c"], ["x", "y", "z"], incidence)
    message = str(caught.value)
    assert "equations a and b involve only unknown x" in message
    assert "unknowns y and z appear only in equation c" in message


def test_decoupled_subsystems_are_warned_about():
    with pytest.warns(StructureWarning, match="splits into 2 independent subsystems"):
        structure = analyse_structure(["a", "b"], ["x", "y"], {"a": ["x"], "b": ["y"]})
    assert structure.subsystems == 2


def test_no_warning_for_a_connected_system():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        analyse_structure(["a", "b"], ["x", "y"], {"a": ["x", "y"], "b": ["y"]})


def test_symbolic_system_is_refused_before_compiling():
    with pytest.raises(InputError, match="equations first and second involve only unknown x; unknown y appears in no equation"):
        SymbolicSystem({"first": "x - p", "second": "x**2 - 1"}, {"x": 1.0, "y": 0.0}, {"p": 1.0}, cache=False)


def test_summary_is_reported_by_symbolic_system():
    system = SymbolicSystem({"a": "x + y - p", "b": "y - 2"}, {"x": 0.0, "y": 0.0}, {"p": 1.0}, cache=False)
    summary = system.structure_summary()
    assert summary == {
        "equations": 2, "unknowns": 2, "jacobian_nonzeros": 3, "jacobian_density": 0.75, "blocks": 2,
        "largest_block": 1, "block_sizes": [1, 1], "independent_subsystems": 1,
    }
