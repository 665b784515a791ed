"""kij from pair names in the model layer: scripts and the command line read pairs the same way."""

from __future__ import annotations


import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import contin_thermo
from contin import InputError
from contin_thermo.commands._cli_mixture import parse_kij
from contin_thermo.models._kij import kij_matrix

NAMES = ["methane", "carbon dioxide", "n-butane"]


def test_hyphenated_and_spaced_names_and_aliases():
    kij = kij_matrix({"methane-carbon dioxide": 0.1, "n-butane-CO2": 0.13, "C1-nC4": 0.02}, NAMES)
    expected = np.array([[0.0, 0.1, 0.02], [0.1, 0.0, 0.13], [0.02, 0.13, 0.0]])
    assert np.array_equal(kij, expected)


@pytest.mark.parametrize("pairs, message", [
    ({"methane-ethane": 0.1}, r"^kij pair 'methane-ethane' is not a pair of components of the mixture "
                              r"\(methane, carbon dioxide, n-butane\)$"),
    ({"methane-C1": 0.1}, r"^kij pair 'methane-C1' pairs a component with itself; kij is zero on the diagonal$"),
    ({"methane-n-butane": 1.0}, r"^kij 'methane-n-butane' = 1 lies outside \(-1, 1\)$"),
    ({"methane-n-butane": float("nan")}, r"^kij 'methane-n-butane' is nan; give a finite number$"),
    ({"methane-n-butane": 0.01, "n-butane-methane": 0.02},
     r"^kij gives the pair methane-n-butane twice \('methane-n-butane' and 'n-butane-methane'\); give each pair once$"),
    ({("methane", "n-butane"): 0.01}, r"^kij: the pair \('methane', 'n-butane'\) must be text 'a-b'"),
])
def test_bad_pairs_in_scripts(pairs, message):
    with pytest.raises(InputError, match=message):
        contin_thermo.mixture(NAMES, "pr", kij=pairs)


def test_command_line_text_gives_the_same_matrix_and_names_its_option():
    text = "methane-carbon dioxide=0.1, n-butane-CO2=0.13"
    assert np.array_equal(parse_kij(text, NAMES), kij_matrix({"methane-carbon dioxide": 0.1, "n-butane-CO2": 0.13},
                                                              NAMES))
    with pytest.raises(InputError, match=r"^--kij pair 'methane-ethane' is not a pair of components"):
        parse_kij("methane-ethane=0.1", NAMES)
    with pytest.raises(InputError, match=r"^--kij entry 'methane-n-butane=nan': 'nan' is not finite"):
        parse_kij("methane-n-butane=nan", NAMES)


@settings(max_examples=50, derandomize=True)
@given(values=st.lists(st.floats(-0.99, 0.99), min_size=3, max_size=3))
def test_the_matrix_is_symmetric_with_a_zero_diagonal(values):
    pairs = {"methane-carbon dioxide": values[0], "methane-n-butane": values[1], "carbon dioxide-n-butane": values[2]}
    kij = kij_matrix(pairs, NAMES)
    assert np.array_equal(kij, kij.T) and not np.any(np.diag(kij))
    assert (kij[0, 1], kij[0, 2], kij[1, 2]) == tuple(values)
