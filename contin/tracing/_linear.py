"""The linear-solver part: the bordered matrix [dG/dx; row] factorised once, solved with, and its sign.

Every Newton step of a trace, every tangent and the branch-point test function need only four things
of the bordered matrix B = [dG/dx; row] (n + 1 rows, dG/dx = [dF/du, dF/dp_free]):

- ``assemble(ju, jp)``: dG/dx in the solver's own format (a dense array, or a CSR matrix);
- ``factorise(jacobian, row)``: the factors of B, or :class:`SingularMatrix` when a pivot is below
  1e-13 of the largest (the same test for every solver);
- ``factors.solve(rhs)``: B^-1 rhs; the tangent is ``solve([0, ..., 0, 1])`` with the same factors;
- ``factors.sign()``: the sign of det B, exact from the factors (the signs of the pivots and the
  parity of the permutations, counted in integers), and ``log_determinant(jacobian, row)`` for the
  scaled determinant that locates a branch point.

Two solvers ship. :class:`DenseLU` (LAPACK getrf/getrs, what the engine always used) for small dense
systems, and :class:`SparseLU` (SuperLU through ``scipy.sparse.linalg.splu``, column ordering COLAMD) for
systems whose Jacobian comes as a ``scipy.sparse`` matrix: it factorises B itself, so it stays regular
at a fold, where dF/du alone is singular (Keller, Numerical solution of bifurcation and nonlinear
eigenvalue problems, 1977), and its memory grows with the non-zeros of the factors, never n^2.
docs/linear-solvers.md says how another solver (e.g. a distributed one) plugs in.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.linalg.lapack import dgetrf, dgetrs

from ..systems._system import is_sparse

__all__ = ["DenseLU", "LinearSolver", "SOLVER_NAMES", "SingularMatrix", "SparseLU", "all_finite", "choose_solver", "dense",
           "is_sparse", "permutation_parity", "solver_for"]

# A pivot at or below this fraction of the largest makes the bordered matrix singular for the trace.
_PIVOT_RATIO = 1e-13


class SingularMatrix(Exception):
    """The bordered matrix is (numerically) singular."""


def _check_pivots(pivots: np.ndarray) -> None:
    """:class:`SingularMatrix` unless every |pivot| is above 1e-13 of the largest (NaN and inf fail too)."""
    if pivots.size and not float(pivots.min()) > _PIVOT_RATIO * max(1.0, float(pivots.max())):
        raise SingularMatrix("the bordered Jacobian is singular")


def permutation_parity(permutation: np.ndarray) -> int:
    """0 for an even permutation of 0..n-1, 1 for an odd one: (n - number of cycles) mod 2, exactly.

    The cycles are the connected components of the graph i -> permutation[i] (scipy.sparse.csgraph),
    so this is integer counting, never a product of floating-point signs.
    """
    from scipy.sparse import csr_array
    from scipy.sparse.csgraph import connected_components

    n = permutation.size
    if n == 0:
        return 0
    graph = csr_array((np.ones(n, dtype=np.int8), (np.arange(n), permutation)), shape=(n, n))
    cycles, _ = connected_components(graph, directed=True, connection="weak")
    return (n - int(cycles)) & 1


class LinearSolver:
    """The interface of a linear solver for the bordered system (see the module docs).

    Attributes:
        name: how ``stats["linear_solver"]`` names it.
        sparse: whether it takes Jacobians as scipy.sparse matrices (else dense arrays).
    """

    name = "abstract"
    sparse = False

    def assemble(self, ju, jp: np.ndarray):
        """dG/dx = [dF/du, dF/dp_free], shape (n, n + 1), in this solver's format."""
        raise NotImplementedError

    def factorise(self, jacobian, row: np.ndarray):
        """Factors of [jacobian; row] with ``solve(rhs)`` and ``sign()``; raises :class:`SingularMatrix`."""
        raise NotImplementedError

    def log_determinant(self, jacobian, row: np.ndarray) -> tuple[float, float]:
        """(sign, log |det|) of [jacobian; row], sign 0.0 when exactly singular (no pivot test)."""
        raise NotImplementedError


class DenseFactors:
    """LAPACK LU factors ``(lu, piv)`` of a dense bordered matrix, with the row they were made with."""

    __slots__ = ("row", "lu", "piv")

    def __init__(self, lu: np.ndarray, piv: np.ndarray, row: np.ndarray) -> None:
        self.lu, self.piv, self.row = lu, piv, row

    def solve(self, rhs: np.ndarray) -> np.ndarray:
        solution, _ = dgetrs(self.lu, self.piv, rhs)
        return solution

    def sign(self) -> int:
        """Sign of det: (-1) to the number of negative pivots plus row swaps (one integer count)."""
        odd = np.count_nonzero(np.signbit(self.lu.diagonal()) ^ (self.piv != np.arange(self.piv.size))) & 1
        return -1 if odd else 1

    def log_abs_determinant(self) -> float:
        with np.errstate(divide="ignore"):
            return float(np.log(np.abs(self.lu.diagonal())).sum())


class DenseLU(LinearSolver):
    """Dense LU with partial pivoting (LAPACK getrf/getrs called directly: the scipy.linalg wrappers
    cost more than the factorisation at the sizes this is for, a few hundred unknowns at most)."""

    name = "dense_lu"
    chord = False

    def assemble(self, ju, jp: np.ndarray) -> np.ndarray:
        n = jp.size
        jacobian = np.empty((n, n + 1))
        jacobian[:, :n] = ju.toarray() if is_sparse(ju) else ju
        jacobian[:, n] = jp
        return jacobian

    def factorise(self, jacobian: np.ndarray, row: np.ndarray) -> DenseFactors:
        size = row.size
        matrix = np.empty((size, size))
        matrix[:-1] = jacobian
        matrix[-1] = row
        lu, piv, info = dgetrf(matrix, overwrite_a=True)
        if info != 0:
            raise SingularMatrix("the bordered Jacobian is singular")
        _check_pivots(np.abs(lu.diagonal()))
        return DenseFactors(lu, piv, row)

    def log_determinant(self, jacobian: np.ndarray, row: np.ndarray) -> tuple[float, float]:
        sign, logarithm = np.linalg.slogdet(np.vstack([jacobian, row]))
        return float(sign), float(logarithm)


def _superlu_sign(lu) -> int:
    """Sign of det of a matrix from its SuperLU factors Pr M Pc = L U (det L = 1): the signs of diag U and
    the parities of both permutations, counted in integers."""
    odd = np.count_nonzero(np.signbit(lu.U.diagonal()))
    odd += permutation_parity(lu.perm_r) + permutation_parity(lu.perm_c)
    return -1 if odd & 1 else 1


class SparseFactors:
    """SuperLU factors of the whole sparse bordered matrix: Pr B Pc = L U with L unit lower triangular."""

    __slots__ = ("row", "lu")

    def __init__(self, lu, row: np.ndarray) -> None:
        self.lu, self.row = lu, row

    def solve(self, rhs: np.ndarray) -> np.ndarray:
        return self.lu.solve(np.asarray(rhs, dtype=float))

    def sign(self) -> int:
        return _superlu_sign(self.lu)

    def log_abs_determinant(self) -> float:
        return float(np.log(np.abs(self.lu.U.diagonal())).sum())


class BlockFactors:
    """The bordered matrix B = [[A, b], [c, d]] (A = dF/du) solved by block elimination with the SuperLU
    factors of A: w = A^-1 b and the Schur complement s = d - c . w, made once; then
    B^-1 [f; g] = [v - w y; y] with v = A^-1 f, y = (g - c . v) / s, followed by one step of iterative
    refinement with B itself (its product costs one pass over the non-zeros), which restores the accuracy
    that elimination loses when A is ill-conditioned (Govaerts, Numerical Methods for Bifurcations of
    Dynamical Equilibria, SIAM 2000, ch. 3). det B = det A * s.
    """

    __slots__ = ("row", "lu", "w", "schur", "jacobian")

    def __init__(self, lu, w: np.ndarray, schur: float, jacobian, row: np.ndarray) -> None:
        self.lu, self.w, self.schur, self.jacobian, self.row = lu, w, schur, jacobian, row

    def _eliminate(self, rhs: np.ndarray) -> np.ndarray:
        n = self.w.size
        v = self.lu.solve(rhs[:n])
        y = (rhs[n] - float(self.row[:n] @ v)) / self.schur
        return np.append(v - self.w * y, y)

    def solve(self, rhs: np.ndarray) -> np.ndarray:
        rhs = np.asarray(rhs, dtype=float)
        z = self._eliminate(rhs)
        residual = rhs - np.append(self.jacobian @ z, self.row @ z)
        return z + self._eliminate(residual)

    def sign(self) -> int:
        return _superlu_sign(self.lu) * (1 if self.schur > 0.0 else -1)

    def log_abs_determinant(self) -> float:
        return float(np.log(np.abs(self.lu.U.diagonal())).sum()) + math.log(abs(self.schur))


class SparseLU(LinearSolver):
    """Sparse LU by SuperLU (``scipy.sparse.linalg.splu``, CSC): block elimination with the factors of
    dF/du, or the whole bordered matrix where dF/du is nearly singular.

    Block elimination (:class:`BlockFactors`) factorises only dF/du, whose pattern the column ordering
    keeps sparse; the bordered matrix's dense row (the tangent) and dense column (dF/dp) cost 3 to 5
    times as much to factorise on 5-point grids (measured, benchmarks/bratu2d.py). At a fold dF/du is
    singular while the bordered matrix is not, so when a pivot of dF/du falls below ``1e-8`` of the
    largest, or the Schur complement cancels to below ``1e-8`` of its terms, the whole bordered matrix
    is factorised instead (:class:`SparseFactors`), with the same singularity test as the dense LU.

    Args:
        ordering: SuperLU's column ordering; None picks ``"MMD_AT_PLUS_A"`` for a structurally
            symmetric dF/du and ``"COLAMD"`` otherwise.
        block: use block elimination where it is safe (True), or always the whole bordered matrix.
        chord: let Newton's method re-use the factors across iterations while they converge fast
            (chord steps, see :func:`contin.tracing._corrector.correct`).
    """

    name = "sparse_lu"
    sparse = True

    def __init__(self, ordering: str | None = None, block: bool = True, chord: bool = True) -> None:
        self.ordering = ordering
        self.block = block
        self.chord = chord
        # (dG/dx, factors of dF/du or None when too near singular, w = (dF/du)^-1 dF/dp) of the last
        # block elimination: a new row with the same Jacobian costs one dot product, not a factorisation.
        self._last: tuple | None = None

    def assemble(self, ju, jp: np.ndarray):
        from scipy import sparse

        n = jp.size
        block = sparse.csr_array(ju) if is_sparse(ju) else sparse.csr_array(np.asarray(ju, dtype=float))
        column = sparse.csr_array(np.asarray(jp, dtype=float).reshape(n, 1))
        return sparse.hstack([block, column], format="csr")

    def __getstate__(self) -> dict:
        # The kept factors are SuperLU objects, which do not pickle (and are only a cache).
        return {**self.__dict__, "_last": None}

    def _bordered(self, jacobian, row: np.ndarray):
        from scipy import sparse

        return sparse.vstack([jacobian, sparse.csr_array(np.asarray(row, dtype=float)[None, :])], format="csc")

    def _splu(self, matrix):
        from scipy.sparse.linalg import splu

        if not np.all(np.isfinite(matrix.data)):
            raise SingularMatrix("the bordered Jacobian has entries that are not finite")
        ordering = self.ordering
        if ordering is None:
            pattern = matrix.copy()
            pattern.data[:] = 1.0
            ordering = "MMD_AT_PLUS_A" if (pattern != pattern.T).nnz == 0 else "COLAMD"
        try:
            return splu(matrix, permc_spec=ordering)
        except RuntimeError as error:  # SuperLU: "Factor is exactly singular"
            raise SingularMatrix(f"the bordered Jacobian is singular ({error})") from None

    def _block(self, jacobian, row: np.ndarray) -> BlockFactors | None:
        """Block elimination, or None where dF/du is too near singular for it."""
        n = row.size - 1
        if self._last is None or self._last[0] is not jacobian:
            self._last = (jacobian, *self._eliminated(jacobian, n))
        _, lu, w = self._last
        if lu is None:
            return None
        schur = float(row[n] - row[:n] @ w)
        if not abs(schur) > 1e-8 * (abs(float(row[n])) + float(np.abs(row[:n]) @ np.abs(w))):
            return None
        return BlockFactors(lu, w, schur, jacobian, np.asarray(row, dtype=float))

    def _eliminated(self, jacobian, n: int) -> tuple:
        """(factors of dF/du, (dF/du)^-1 dF/dp), or (None, None) where a pivot is below 1e-8 of the largest."""
        try:
            lu = self._splu(jacobian[:, :n].tocsc())
        except SingularMatrix:
            return None, None
        pivots = np.abs(lu.U.diagonal())
        if not float(pivots.min()) > 1e-8 * float(pivots.max()):
            return None, None
        return lu, lu.solve(jacobian[:, [n]].toarray().reshape(-1))

    def factorise(self, jacobian, row: np.ndarray, check: bool = True):
        """The factors (see the class); ``check=False`` skips the pivot test of the whole bordered matrix."""
        if not is_sparse(jacobian):
            from scipy import sparse

            jacobian = sparse.csr_array(np.asarray(jacobian, dtype=float))
        factors = self._block(jacobian, row) if self.block else None
        if factors is not None:
            return factors
        lu = self._splu(self._bordered(jacobian, row))
        if check:
            _check_pivots(np.abs(lu.U.diagonal()))
        return SparseFactors(lu, row)

    def log_determinant(self, jacobian, row: np.ndarray) -> tuple[float, float]:
        try:
            factors = self.factorise(jacobian, row, check=False)
        except SingularMatrix:
            return 0.0, -math.inf
        with np.errstate(divide="ignore"):
            logarithm = factors.log_abs_determinant()
        return (0.0, -math.inf) if not math.isfinite(logarithm) else (float(factors.sign()), logarithm)


#: The names ``linear_solver=`` accepts besides a :class:`LinearSolver` object.
SOLVER_NAMES = ("auto", "dense", "sparse")


def solver_for(matrix) -> LinearSolver:
    """The default solver for a Jacobian's format: SparseLU for a scipy.sparse matrix, else DenseLU."""
    return SparseLU() if is_sparse(matrix) else DenseLU()


def choose_solver(choice, first_block) -> LinearSolver:
    """The solver for a trace: ``choice`` ("auto", "dense", "sparse" or a LinearSolver object); "auto"
    takes the default for the format of the system's first dF/du (``first_block``)."""
    if isinstance(choice, LinearSolver):
        return choice
    if choice == "auto":
        return solver_for(first_block)
    return SparseLU() if choice == "sparse" else DenseLU()


def dense(matrix) -> np.ndarray:
    """A Jacobian as a dense array (for the parts that need one: small systems only)."""
    return matrix.toarray() if is_sparse(matrix) else matrix


def all_finite(matrix) -> bool:
    """Whether every stored entry of a dense or sparse matrix is finite."""
    return bool(np.all(np.isfinite(matrix.data if is_sparse(matrix) else matrix)))
