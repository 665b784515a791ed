"""Large sparse systems: the linear-solver part, sparse Jacobians, and the folds they trace through."""

from __future__ import annotations

import importlib.util
import itertools
import json
import math
import pathlib
import subprocess
import sys

import numpy as np
import pytest
import scipy.sparse as sparse
from hypothesis import given, settings, strategies as st

import contin
from catalogue import BRATU_CRITICAL_LAMBDA, bratu_system
from contin.tracing._linear import DenseLU, SingularMatrix, SparseLU, permutation_parity

ROOT = pathlib.Path(__file__).resolve().parents[1]


def _benchmark():
    spec = importlib.util.spec_from_file_location("bratu2d", ROOT / "benchmarks" / "bratu2d.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


bratu2d = _benchmark()


# -- the solver part -------------------------------------------------------------------------------
def _inversions(permutation) -> int:
    return sum(1 for i, j in itertools.combinations(range(len(permutation)), 2) if permutation[i] > permutation[j])


def test_permutation_parity_counts_inversions_exactly():
    for size in range(0, 6):
        for permutation in itertools.permutations(range(size)):
            assert permutation_parity(np.array(permutation, dtype=np.intp)) == _inversions(permutation) % 2


@settings(max_examples=40, deadline=None)
@given(st.integers(min_value=1, max_value=400), st.integers(min_value=0, max_value=2**32 - 1))
def test_parity_of_a_composition_is_the_sum_of_parities(size, seed):
    rng = np.random.default_rng(seed)
    first, second = rng.permutation(size), rng.permutation(size)
    assert permutation_parity(first[second]) == (permutation_parity(first) + permutation_parity(second)) % 2


def _random_bordered(size: int, seed: int):
    rng = np.random.default_rng(seed)
    block = sparse.random_array((size, size + 1), density=min(1.0, 4.0 / size), random_state=rng, format="csr")
    block = block + sparse.eye_array(size, size + 1) * rng.choice([-3.0, 3.0], size)
    row = rng.standard_normal(size + 1)
    return block.tocsr(), row


@pytest.mark.parametrize("seed", range(12))
def test_sparse_and_dense_factors_agree_on_solve_and_determinant_sign(seed):
    block, row = _random_bordered(30 + seed, seed)
    matrix = np.vstack([block.toarray(), row])
    rhs = np.arange(matrix.shape[0], dtype=float)
    sparse_factors = SparseLU().factorise(block, row)
    dense_factors = DenseLU().factorise(block.toarray(), row)
    exact = np.linalg.solve(matrix, rhs)
    assert sparse_factors.solve(rhs) == pytest.approx(exact, rel=1e-9, abs=1e-12)
    assert dense_factors.solve(rhs) == pytest.approx(exact, rel=1e-9, abs=1e-12)
    sign, logarithm = np.linalg.slogdet(matrix)
    assert sparse_factors.sign() == dense_factors.sign() == int(sign)
    assert SparseLU().log_determinant(block, row) == pytest.approx((sign, logarithm), rel=1e-10)


def test_a_singular_bordered_matrix_is_refused_by_both_solvers():
    block = sparse.csr_array(np.array([[1.0, 2.0, 0.0], [2.0, 4.0, 0.0]]))  # rank one: [block; row] singular
    row = np.array([0.0, 0.0, 1.0])
    for solver, jacobian in ((SparseLU(), block), (DenseLU(), block.toarray())):
        with pytest.raises(SingularMatrix):
            solver.factorise(jacobian, row)
        assert solver.log_determinant(jacobian, row)[0] == 0.0


def test_an_unknown_linear_solver_is_refused_with_the_choices():
    with pytest.raises(contin.InputError, match=r"^linear_solver='lu' is not known; use one of auto, dense, sparse"):
        contin.TraceOptions(linear_solver="lu")


def test_a_sparse_jacobian_of_the_wrong_shape_is_named():
    system = contin.CallableSystem(lambda u, p: u - p[0], 2, {"p": 0.0},
                                   jacobian=lambda u, p: sparse.eye_array(3, format="csr"), start=[0.0, 0.0])
    with pytest.raises(contin.InputError, match=r"^jacobian returned a sparse matrix of shape \(3, 3\); it must "
                                                r"have shape \(2, 2\)"):
        contin.trace(system, free="p", max_points=3)


# -- the one-dimensional Bratu problem on both paths -------------------------------------------------
def sparse_bratu(interior: int) -> contin.CallableSystem:
    """The catalogue's 1D Bratu problem with its Jacobian as a scipy.sparse matrix."""
    dense_system = bratu_system(interior)
    h = 1.0 / (interior + 1)
    line = sparse.diags_array([np.ones(interior - 1), -2.0 * np.ones(interior), np.ones(interior - 1)],
                              offsets=[-1, 0, 1]) / h**2
    return contin.CallableSystem(dense_system.residual_function, dense_system.unknowns, {"lambda": 0.0},
                                 jacobian=lambda u, p: (line + sparse.diags_array(p[0] * np.exp(u))).tocsr(),
                                 parameter_jacobian=dense_system.parameter_jacobian_function,
                                 start=np.zeros(interior))


def bratu_fold(system, **keywords) -> tuple[contin.Branch, contin.SpecialPoint]:
    n = system.size
    branch = contin.trace(system, np.zeros(n), free="lambda", step=0.1, max_step=0.5,
                          bounds={"lambda": (-0.1, 4.0), system.unknowns[n // 2]: (-1.0, 3.0)}, max_points=400,
                          **keywords)
    assert branch.success, branch.message
    (fold,) = branch.special("fold")
    return branch, fold


def test_the_sparse_path_reproduces_the_one_dimensional_bratu_fold():
    dense_branch, dense_fold = bratu_fold(bratu_system(39))
    sparse_branch, sparse_fold = bratu_fold(sparse_bratu(39))
    assert sparse_branch.stats["linear_solver"] == "sparse_lu"
    assert dense_branch.stats["linear_solver"] == "dense_lu"
    assert sparse_fold.values["lambda"] == pytest.approx(dense_fold.values["lambda"], abs=1e-10)
    assert sparse_fold.point == pytest.approx(dense_fold.point, abs=1e-8)
    # Same steps, same points: the two factorisations differ only by rounding.
    assert len(sparse_branch.points) == len(dense_branch.points)
    # h = 1/40: the O(h^2) discretisation error of the fold (Boundary Value Problems 2013:142 for λc).
    assert abs(sparse_fold.values["lambda"] - BRATU_CRITICAL_LAMBDA) < 2e-3
    for row in sparse_branch.points:  # the driver's residual test holds on the sparse path
        assert np.max(np.abs(sparse_bratu(39).residual(row[:-1], row[-1:]))) <= 1e-10
