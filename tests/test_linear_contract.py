"""The linear solvers' contract, checked against numpy's own dense algebra.

Every solver must give, for the bordered matrix B = [dG/dx; row]: B^-1 rhs, the sign of det B and
log |det B| (all three compared with numpy.linalg on the same matrix), refuse a singular B with
SingularMatrix, and fall back from block elimination to the whole bordered matrix where dF/du is
singular (a fold). The matrices are random with fixed seeds, or chosen so the answer is exact.
"""

from __future__ import annotations

import itertools
import math
import pickle

import numpy as np
import pytest
from scipy import sparse

from contin.tracing import _linear
from contin.tracing._linear import (BlockFactors, DenseLU, SingularMatrix, SparseFactors, SparseLU, _check_pivots,
                                    all_finite, choose_solver, dense, permutation_parity, solver_for)

SOLVERS = {"dense": DenseLU, "sparse-block": lambda: SparseLU(block=True), "sparse-whole": lambda: SparseLU(block=False)}


def bordered(seed: int, n: int):
    rng = np.random.default_rng(seed)
    ju = rng.normal(size=(n, n)) + 3.0 * np.eye(n)  # well away from singular
    jp = rng.normal(size=n)
    row = rng.normal(size=n + 1)
    return ju, jp, row


@pytest.mark.parametrize("name", sorted(SOLVERS))
@pytest.mark.parametrize(("seed", "n"), [(1, 1), (2, 2), (3, 5), (4, 12)])
def test_solve_sign_and_log_determinant_agree_with_numpy(name, seed, n):
    solver = SOLVERS[name]()
    ju, jp, row = bordered(seed, n)
    jacobian = solver.assemble(sparse.csr_array(ju) if solver.sparse else ju, jp)
    matrix = np.vstack([np.column_stack([ju, jp]), row])
    factors = solver.factorise(jacobian, row)
    rhs = np.random.default_rng(seed + 100).normal(size=n + 1)
    assert factors.solve(rhs) == pytest.approx(np.linalg.solve(matrix, rhs), rel=1e-10, abs=1e-12)
    sign, logarithm = np.linalg.slogdet(matrix)
    assert factors.sign() == sign
    assert factors.log_abs_determinant() == pytest.approx(logarithm, rel=1e-12, abs=1e-12)
    assert solver.log_determinant(jacobian, row) == (pytest.approx(sign), pytest.approx(logarithm, rel=1e-12, abs=1e-12))
    # the row given back is the one factorised with
    assert np.array_equal(factors.row, row)


@pytest.mark.parametrize("name", sorted(SOLVERS))
def test_the_sign_follows_a_row_swap_and_a_negated_row_exactly(name):
    # det [[1, 0], [0, 1]] = 1; swapping to [[0, 1], [1, 0]] gives -1; [[1, 0], [0, -1]] gives -1
    solver = SOLVERS[name]()
    for ju, jp, row, sign in (([[1.0]], [0.0], [0.0, 1.0], 1), ([[0.0]], [1.0], [1.0, 0.0], -1),
                              ([[1.0]], [0.0], [0.0, -1.0], -1), ([[-2.0]], [0.0], [0.0, -3.0], 1)):
        ju = np.array(ju)
        jacobian = solver.assemble(sparse.csr_array(ju) if solver.sparse else ju, np.array(jp))
        assert solver.factorise(jacobian, np.array(row)).sign() == sign, (ju, jp, row)


@pytest.mark.parametrize("name", sorted(SOLVERS))
def test_a_singular_bordered_matrix_is_refused_and_its_determinant_is_zero(name):
    solver = SOLVERS[name]()
    ju, jp = np.array([[1.0, 2.0], [2.0, 4.0]]), np.array([1.0, 2.0])  # rows 1 and 2 proportional
    row = np.array([0.0, 0.0, 1.0])
    jacobian = solver.assemble(sparse.csr_array(ju) if solver.sparse else ju, jp)
    with pytest.raises(SingularMatrix, match="^the bordered Jacobian is singular"):
        solver.factorise(jacobian, row)
    sign, logarithm = solver.log_determinant(jacobian, row)
    assert sign == 0.0 and logarithm == -math.inf


def test_a_pivot_is_too_small_at_or_below_1e_13_of_the_largest_or_of_one():
    _check_pivots(np.array([1.0, 1.01e-13]))
    _check_pivots(np.array([10.0, 1.01e-12]))
    _check_pivots(np.array([]))
    for pivots in ([1.0, 1e-13], [10.0, 1e-12], [1e-3, 1e-13], [1.0, math.nan], [math.inf, 1.0]):
        with pytest.raises(SingularMatrix, match="^the bordered Jacobian is singular$"):
            _check_pivots(np.array(pivots))


def test_a_nearly_singular_bordered_matrix_passes_the_dense_test_only_above_the_ratio():
    # diag(1, eps) bordered by (0, 0, 1): the smallest pivot is eps exactly
    for eps, singular in ((2e-13, False), (5e-14, True)):
        ju, jp, row = np.diag([1.0, eps]), np.zeros(2), np.array([0.0, 0.0, 1.0])
        for solver in (DenseLU(), SparseLU(block=False)):
            jacobian = solver.assemble(sparse.csr_array(ju) if solver.sparse else ju, jp)
            if singular:
                with pytest.raises(SingularMatrix):
                    solver.factorise(jacobian, row)
            else:
                assert solver.factorise(jacobian, row).solve(np.array([0.0, eps, 0.0])) == pytest.approx([0.0, 1.0, 0.0])


def test_block_elimination_is_used_away_from_a_fold_and_reuses_its_factors_for_a_new_row():
    solver = SparseLU()
    ju, jp, row = bordered(7, 6)
    jacobian = solver.assemble(sparse.csr_array(ju), jp)
    first = solver.factorise(jacobian, row)
    assert isinstance(first, BlockFactors)
    other_row = row[::-1].copy()
    second = solver.factorise(jacobian, other_row)
    assert second.lu is first.lu  # one factorisation of dF/du for both rows (the same Jacobian)
    matrix = np.vstack([np.column_stack([ju, jp]), other_row])
    rhs = np.arange(7.0)
    assert second.solve(rhs) == pytest.approx(np.linalg.solve(matrix, rhs), rel=1e-12)
    assert second.log_abs_determinant() == pytest.approx(np.linalg.slogdet(matrix)[1], rel=1e-12)
    # a new Jacobian (another object) is factorised afresh
    third = solver.factorise(solver.assemble(sparse.csr_array(ju), jp), row)
    assert third.lu is not first.lu


def test_at_a_fold_the_whole_bordered_matrix_is_factorised_instead():
    # dF/du = [[1, 0], [0, 0]] is singular (a fold), the bordered matrix with dF/dp = (0, 1) and the
    # tangent row (0, 1, 0) is not: det = -1 (exact)
    solver = SparseLU()
    ju, jp, row = np.array([[1.0, 0.0], [0.0, 0.0]]), np.array([0.0, 1.0]), np.array([0.0, 1.0, 0.0])
    factors = solver.factorise(solver.assemble(sparse.csr_array(ju), jp), row)
    assert isinstance(factors, SparseFactors)
    assert factors.sign() == -1 and factors.log_abs_determinant() == pytest.approx(0.0, abs=1e-15)
    assert factors.solve(np.array([1.0, 2.0, 3.0])) == pytest.approx([1.0, 3.0, 2.0])


def test_a_pivot_of_df_du_below_1e_8_of_the_largest_falls_back_but_not_above_it():
    # relative to the largest pivot, whatever its size (here 1 and 100)
    for largest, eps, kind in ((1.0, 2e-8, BlockFactors), (1.0, 5e-9, SparseFactors),
                               (100.0, 2e-6, BlockFactors), (100.0, 5e-7, SparseFactors)):
        solver = SparseLU()
        ju, jp, row = np.diag([largest, eps]), np.array([0.0, 1.0]), np.array([0.0, 1.0, 1.0])
        factors = solver.factorise(solver.assemble(sparse.csr_array(ju), jp), row)
        assert isinstance(factors, kind), (largest, eps)
        matrix = np.vstack([np.column_stack([ju, jp]), row])
        assert factors.solve(np.array([1.0, 1.0, 1.0])) == pytest.approx(np.linalg.solve(matrix, [1.0, 1.0, 1.0]), rel=1e-9)


def test_a_schur_complement_that_cancels_falls_back_to_the_whole_matrix():
    # A = I, b = (1, 1), row = (1, 1, d): s = d - 2, cancelling to 0 at d = 2 (1e-9 or 1e-8 away: below
    # 1e-8 of the terms |d| + |c| |w| = 4), so the whole bordered matrix is factorised; 1e-6 away it is not.
    ju, jp = np.eye(2), np.array([1.0, 1.0])
    for d, kind in ((2.0 + 1e-9, SparseFactors), (2.0 + 1e-8, SparseFactors), (2.0 + 1e-6, BlockFactors)):
        solver = SparseLU()
        row = np.array([1.0, 1.0, d])
        factors = solver.factorise(solver.assemble(sparse.csr_array(ju), jp), row, check=False)
        assert isinstance(factors, kind), d
        assert factors.sign() == 1  # det = d - 2 > 0


def test_block_solves_keep_the_accuracy_of_the_whole_matrix_when_df_du_is_ill_conditioned():
    # An ill-conditioned dF/du (condition about 1e7, a pivot ratio above the fallback's 1e-8) is still
    # eliminated by blocks (with one step of refinement).
    solver = SparseLU()
    rng = np.random.default_rng(11)
    q, _ = np.linalg.qr(rng.normal(size=(8, 8)))
    ju = q @ np.diag(np.logspace(0, -7, 8)) @ q.T
    jp, row = rng.normal(size=8), rng.normal(size=9)
    factors = solver.factorise(solver.assemble(sparse.csr_array(ju), jp), row)
    assert isinstance(factors, BlockFactors)
    matrix = np.vstack([np.column_stack([ju, jp]), row])
    rhs = rng.normal(size=9)
    solution = factors.solve(rhs)
    # backward stable like LAPACK's solve of the whole matrix: a residual of the order of
    # eps |B| |x| (the solution is about 1e6 here), not of cond(A) eps |B| |x|
    scale = np.finfo(float).eps * np.abs(matrix).max() * np.abs(solution).max() * matrix.shape[0]
    assert np.abs(matrix @ solution - rhs).max() <= 10.0 * scale
    assert solution == pytest.approx(np.linalg.solve(matrix, rhs), rel=1e-6)


def test_entries_that_are_not_finite_are_refused_by_the_sparse_solver_in_words():
    solver = SparseLU(block=False)
    jacobian = solver.assemble(sparse.csr_array(np.array([[math.nan]])), np.array([1.0]))
    with pytest.raises(SingularMatrix, match="^the bordered Jacobian has entries that are not finite$"):
        solver.factorise(jacobian, np.array([0.0, 1.0]))
    assert not all_finite(jacobian) and all_finite(solver.assemble(sparse.csr_array(np.eye(1)), np.array([1.0])))
    assert not all_finite(np.array([[1.0, math.inf]])) and all_finite(np.eye(2))


def test_the_column_ordering_follows_the_pattern_unless_one_is_given(monkeypatch):
    seen = []
    real = _linear.SparseLU._splu

    def spy(self, matrix):
        from scipy.sparse import linalg

        original = linalg.splu
        monkeypatch.setattr(linalg, "splu", lambda m, permc_spec: seen.append(permc_spec) or original(m, permc_spec=permc_spec))
        try:
            return real(self, matrix)
        finally:
            monkeypatch.setattr(linalg, "splu", original)

    monkeypatch.setattr(_linear.SparseLU, "_splu", spy)
    symmetric = np.array([[2.0, 1.0], [1.0, 2.0]])
    unsymmetric = np.array([[2.0, 1.0], [0.0, 2.0]])
    for ju, ordering, expected in ((symmetric, None, "MMD_AT_PLUS_A"), (unsymmetric, None, "COLAMD"),
                                   (symmetric, "NATURAL", "NATURAL")):
        solver = SparseLU(ordering=ordering, block=True)
        solver.factorise(solver.assemble(sparse.csr_array(ju), np.zeros(2)), np.array([0.0, 0.0, 1.0]))
        assert seen[-1] == expected


def test_the_permutation_parity_is_that_of_the_permutation_matrix_for_every_small_permutation():
    assert permutation_parity(np.array([], dtype=int)) == 0
    for size in range(1, 6):
        for permutation in itertools.permutations(range(size)):
            matrix = np.eye(size)[list(permutation)]
            expected = 0 if round(np.linalg.det(matrix)) == 1 else 1
            assert permutation_parity(np.array(permutation)) == expected, permutation


def test_a_used_sparse_solver_pickles_without_its_cached_factors():
    solver = SparseLU(ordering="COLAMD", block=True, chord=False)
    ju, jp, row = bordered(3, 4)
    solver.factorise(solver.assemble(sparse.csr_array(ju), jp), row)
    copy = pickle.loads(pickle.dumps(solver))
    assert (copy.ordering, copy.block, copy.chord, copy._last) == ("COLAMD", True, False, None)
    assert solver._last is not None  # the original keeps its cache


def test_the_solver_for_each_choice_and_format():
    assert isinstance(solver_for(np.eye(2)), DenseLU) and isinstance(solver_for(sparse.csr_array(np.eye(2))), SparseLU)
    assert isinstance(choose_solver("auto", np.eye(2)), DenseLU)
    assert isinstance(choose_solver("auto", sparse.csr_array(np.eye(2))), SparseLU)
    assert isinstance(choose_solver("dense", sparse.csr_array(np.eye(2))), DenseLU)
    assert isinstance(choose_solver("sparse", np.eye(2)), SparseLU)
    mine = SparseLU(block=False)
    assert choose_solver(mine, np.eye(2)) is mine
    assert (DenseLU.name, DenseLU.sparse, DenseLU.chord) == ("dense_lu", False, False)
    assert (_linear.LinearSolver.name, _linear.LinearSolver.sparse) == ("abstract", False)  # a solver's defaults
    assert (SparseLU.name, SparseLU.sparse, SparseLU().chord, SparseLU().block, SparseLU().ordering) == (
        "sparse_lu", True, True, True, None)


def test_each_solver_assembles_dg_dx_in_its_own_format_from_either_format():
    ju, jp = np.array([[1.0, 2.0], [3.0, 4.0]]), np.array([5.0, 6.0])
    expected = np.array([[1.0, 2.0, 5.0], [3.0, 4.0, 6.0]])
    for given in (ju, sparse.csr_array(ju)):
        made = DenseLU().assemble(given, jp)
        assert isinstance(made, np.ndarray) and np.array_equal(made, expected)
        made = SparseLU().assemble(given, jp)
        assert sparse.issparse(made) and made.format == "csr" and np.array_equal(made.toarray(), expected)
        assert np.array_equal(dense(made), expected)
    assert dense(expected) is expected


def test_the_sparse_solver_takes_a_dense_jacobian_too():
    ju, jp, row = bordered(5, 4)
    matrix = np.vstack([np.column_stack([ju, jp]), row])
    for block in (True, False):
        factors = SparseLU(block=block).factorise(np.column_stack([ju, jp]), row)
        assert factors.solve(np.ones(5)) == pytest.approx(np.linalg.solve(matrix, np.ones(5)), rel=1e-10)


def test_the_log_determinant_of_a_nearly_singular_matrix_is_measured_not_refused():
    # diag(1, 5e-14) bordered by (0, 0, 1): below the pivot ratio for factorise, yet its determinant,
    # 5e-14, is what locating a branch point needs
    ju, jp, row = np.diag([1.0, 5e-14]), np.zeros(2), np.array([0.0, 0.0, 1.0])
    for solver in (DenseLU(), SparseLU(block=False), SparseLU()):
        jacobian = solver.assemble(sparse.csr_array(ju) if solver.sparse else ju, jp)
        sign, logarithm = solver.log_determinant(jacobian, row)
        assert sign == 1.0 and logarithm == pytest.approx(math.log(5e-14), rel=1e-12)


def test_one_step_of_refinement_with_the_whole_matrix_repairs_an_inexact_elimination():
    # Block elimination with w = A^-1 b wrong by 1e-6 (as an inexact inner solve would leave it) solves
    # a neighbouring matrix; the refinement step's residual is taken with B itself, so its error
    # shrinks by about that factor again: from about 1e-6 to about 1e-12.
    from scipy.sparse.linalg import splu

    rng = np.random.default_rng(5)
    n = 6
    ju = np.eye(n) * 3.0 + rng.normal(size=(n, n))
    jp, row, rhs = rng.normal(size=n), rng.normal(size=n + 1), rng.normal(size=n + 1)
    lu = splu(sparse.csc_array(ju))
    w = lu.solve(jp) * (1.0 + 1e-6 * rng.normal(size=n))
    schur = float(row[n] - row[:n] @ w)
    jacobian = sparse.csr_array(np.column_stack([ju, jp]))
    factors = BlockFactors(lu, w, schur, jacobian, row)
    exact = np.linalg.solve(np.vstack([np.column_stack([ju, jp]), row]), rhs)
    scale = np.abs(exact).max()
    assert np.abs(factors._eliminate(rhs) - exact).max() > 1e-8 * scale  # the elimination alone is off
    assert np.abs(factors.solve(rhs) - exact).max() < 1e-10 * scale


def test_a_factorisation_whose_determinant_is_zero_without_refusing_has_sign_zero():
    # Should a sparse factorisation return a zero pivot instead of refusing (SuperLU raises today), the
    # log-determinant is -inf and its sign 0.0, as for a matrix refused as singular.
    class ZeroPivot:
        def sign(self):
            return 1

        def log_abs_determinant(self):
            return -math.inf

    class Lenient(SparseLU):
        def factorise(self, jacobian, row, check=True):
            return ZeroPivot()

    assert Lenient().log_determinant(sparse.csr_array(np.zeros((1, 2))), np.array([0.0, 1.0])) == (0.0, -math.inf)
