"""Structural analysis: matching of equations with unknowns, refusal of singular structure, blocks."""

from __future__ import annotations

import warnings

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from contin.base._errors import InputError
from contin.systems._structure import StructureWarning, analyse_structure
from contin.systems._symbolic import SymbolicSystem


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


@settings(derandomize=True, max_examples=50, deadline=None)
@given(st.integers(1, 12).flatmap(lambda n: st.tuples(
    st.just(n), st.permutations(range(n)), st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)), max_size=3 * n))))
def test_any_system_with_a_perfect_matching_is_accepted_and_blocked(case):
    """For all incidences containing a permutation: a valid matching, and blocks partitioning the system."""
    n, permutation, extra = case
    equations, unknowns = [f"e{i}" for i in range(n)], [f"x{j}" for j in range(n)]
    incidence = {e: {unknowns[permutation[i]]} for i, e in enumerate(equations)}
    for i, j in extra:
        incidence[equations[i]].add(unknowns[j])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", StructureWarning)
        structure = analyse_structure(equations, unknowns, incidence)
    assert sorted(structure.matching) == sorted(equations)
    assert sorted(structure.matching.values()) == sorted(unknowns)
    assert all(v in incidence[e] for e, v in structure.matching.items())
    assert sorted(e for block, _ in structure.blocks for e in block) == sorted(equations)
    # Block lower-triangular order: an equation uses only unknowns of its own block or earlier blocks.
    solved: set[str] = set()
    for block_equations, block_unknowns in structure.blocks:
        solved |= set(block_unknowns)
        assert all(incidence[e] <= solved for e in block_equations)
