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
    # Requested values on both sides of the fold: the inside-step examination splits steps at turns.
    dense_branch, dense_fold = bratu_fold(bratu_system(39), at={"lambda": [1.0, 3.5]})
    sparse_branch, sparse_fold = bratu_fold(sparse_bratu(39), at={"lambda": [1.0, 3.5]})
    assert [p.values["lambda"] for p in sparse_branch.at] == [1.0, 3.5, 3.5]  # up, then down past the fold
    for ours, theirs in zip(sparse_branch.at, dense_branch.at, strict=True):
        assert ours.point == pytest.approx(theirs.point, abs=1e-9)
    assert sparse_branch.stats["linear_solver"] == "sparse_lu"
    assert dense_branch.stats["linear_solver"] == "dense_lu"
    assert sparse_fold.values["lambda"] == pytest.approx(dense_fold.values["lambda"], abs=1e-10)
    assert sparse_fold.point == pytest.approx(dense_fold.point, abs=1e-8)
    # Without chord steps, the same steps and points: the two factorisations differ only by rounding.
    newton_branch, _ = bratu_fold(sparse_bratu(39), at={"lambda": [1.0, 3.5]}, linear_solver=contin.SparseLU(chord=False))
    assert len(newton_branch.points) == len(dense_branch.points)
    assert newton_branch.points == pytest.approx(dense_branch.points, abs=1e-9)
    # Chord steps re-use factors: fewer Jacobians than Newton's method for the same branch.
    assert sparse_branch.stats["jacobian_evaluations"] < newton_branch.stats["jacobian_evaluations"]
    # h = 1/40: the O(h^2) discretisation error of the fold (Boundary Value Problems 2013:142 for λc).
    assert abs(sparse_fold.values["lambda"] - BRATU_CRITICAL_LAMBDA) < 2e-3
    for row in sparse_branch.points:  # the driver's residual test holds on the sparse path
        assert np.max(np.abs(sparse_bratu(39).residual(row[:-1], row[-1:]))) <= 1e-10


# -- symbolic systems and problem files with indexed families ----------------------------------------
BRATU_FILE = """\
# The 1D Bratu problem as an indexed family, scaled by h^2 (h = 1/40)
[unknowns]
u = {{ count = 41, start = 0.0 }}
[parameters]
lambda_ = 0.0
[constants]
h = 0.025
[equations]
left = "u[0]"
row = {{ for = "{range}", expression = "{row}" }}
right = "u[40]"
[trace]
free = "lambda_"
step = 0.1
max_step = 0.5
bounds = {{ lambda_ = [-0.1, 4.0], "u[20]" = [-1.0, 3.0] }}
max_points = 400
linear_solver = "{solver}"
"""
ROW = "u[i-1] - 2*u[i] + u[i+1] + h**2*lambda_*exp(u[i])"


def write_bratu(tmp_path, range_="i in 1..40", row=ROW, solver="sparse") -> pathlib.Path:
    path = tmp_path / "bratu.toml"
    path.write_text(BRATU_FILE.format(range=range_, row=row, solver=solver), encoding="utf-8")
    return path


def test_an_indexed_problem_file_gives_the_fold_of_the_python_callable(tmp_path):
    problem = contin.load_problem(write_bratu(tmp_path))
    system = problem.system
    assert system.unknowns[:2] == ("u[0]", "u[1]") and system.equations[:3] == ("left", "row[1]", "row[2]")
    branch = contin.trace(system, dict(problem.start), **dict(problem.options))
    assert branch.stats["linear_solver"] == "sparse_lu"
    (fold,) = branch.special("fold")
    _, callable_fold = bratu_fold(bratu_system(39))  # the same grid: 39 interior points, h = 1/40
    assert fold.values["lambda_"] == pytest.approx(callable_fold.values["lambda"], abs=1e-10)
    assert fold.point[1:40] == pytest.approx(callable_fold.point[:-1], abs=1e-8)


def test_the_inclusive_range_gives_the_same_equations(tmp_path):
    one = contin.load_problem(write_bratu(tmp_path, "i in 1..40")).system
    other = contin.load_problem(write_bratu(tmp_path, "i in 1..=39")).system
    assert one.equations == other.equations
    u = np.linspace(0.0, 1.0, 41)
    assert np.array_equal(one.residual(u, np.array([2.0])), other.residual(u, np.array([2.0])))


@pytest.mark.parametrize("range_, row, message", [
    ("i in 1..41", ROW, r"line 10: equations\.row, column 19: u\[i\+1\] is u\[41\] at i = 40, outside u\[0\.\.40\]; "
                        r"change the index or the range$"),
    ("i in 0..40", ROW, r"line 10: equations\.row, column 1: u\[i-1\] is u\[-1\] at i = 0, outside u\[0\.\.40\]"),
    ("i from 1 to 40", ROW, r"line 10: equations\.row: for = 'i from 1 to 40' is not a range; write for = \"i in 1\.\.99\""),
    ("i in 40..1", ROW, r"line 10: equations\.row: for = 'i in 40\.\.1' is empty \(40 to 0\)"),
    ("u in 1..40", ROW, r"line 10: equations\.row: the index 'u' is also a family of unknowns"),
    ("i in 1..40", "u[i/2] - u[i]", r"line 10: equations\.row, column 3: an index is whole numbers and index variables "
                                    r"with \+ - \* only"),
    ("i in 1..40", "u[j] - u[i]", r"column 3: 'j' is not an index variable \(index variables: i\)"),
    ("i in 1..40", "v[i] - u[i]", r"equation 'row\[1\]', column 1: 'v' is not an indexed family \(families: u\)"),
    ("i in 1..40", "u - 1", r"equation 'row\[1\]', column 1: 'u' is an indexed family: name one entry, e.g\. u\[0\]"),
])
def test_a_bad_family_is_named_with_file_key_and_line(tmp_path, range_, row, message):
    path = write_bratu(tmp_path, range_, row)
    with pytest.raises(contin.InputError, match=message) as caught:
        contin.load_problem(path)
    assert str(caught.value).startswith(str(path)) and "\n" not in str(caught.value)


@pytest.mark.parametrize("family, message", [
    ("{ count = 0 }", r"line 3: unknowns\.u: count = 0; give the number of entries as a whole number from 1"),
    ("{ count = 3, start = [0.0, 1.0] }", r"line 3: unknowns\.u: start has 2 values but count = 3"),
    ("{ count = 3, begin = 0.0 }", r"line 3: unknown key 'begin' in unknowns\.u \(allowed: count, start\)"),
])
def test_a_bad_family_of_unknowns_is_named(tmp_path, family, message):
    path = write_bratu(tmp_path)
    path.write_text(path.read_text().replace("{ count = 41, start = 0.0 }", family))
    with pytest.raises(contin.InputError, match=message):
        contin.load_problem(path)


def test_a_large_symbolic_system_returns_only_its_non_zeros():
    size = 450  # above SPARSE_SIZE: sparse by default
    equations = {f"e{i}": f"x{i - 1 if i else size - 1} - 2*x{i} + p*exp(x{i})" for i in range(size)}
    system = contin.SymbolicSystem(equations, {f"x{i}": 0.0 for i in range(size)}, {"p": 0.5}, cache=False)
    dense_twin = contin.SymbolicSystem(equations, {f"x{i}": 0.0 for i in range(size)}, {"p": 0.5}, cache=False,
                                       sparse=False)
    u = np.sin(np.arange(size))
    _, jacobian, column = system.linearise(u, np.array([0.5]), 0)
    _, expected, expected_column = dense_twin.linearise(u, np.array([0.5]), 0)
    assert sparse.issparse(jacobian) and jacobian.nnz == 2 * size
    assert np.array_equal(jacobian.toarray(), expected) and np.array_equal(column, expected_column)
    assert system.symbolic_summary()["jacobian_format"] == "sparse"
    assert dense_twin.symbolic_summary()["jacobian_format"] == "dense"


# -- Hopf points on the sparse path -------------------------------------------------------------------
def oscillator_chain(cells: int, diffusion: float = 0.1, frequency: float = 1.0) -> contin.CallableSystem:
    """An invented ring-free chain of diffusively coupled oscillators, zero at both ends:

        du_i/dt = D (u_{i-1} - 2 u_i + u_{i+1}) / h^2 + p u_i - w v_i - u_i (u_i^2 + v_i^2)
        dv_i/dt = D (v_{i-1} - 2 v_i + v_{i+1}) / h^2 + w u_i + p v_i - v_i (u_i^2 + v_i^2)

    u = v = 0 solves it for every p; there dF/du has the eigenvalues p - D m_k +- i w, with
    m_k = (2 - 2 cos(k pi h)) / h^2 (k = 1 .. N) the eigenvalues of the discrete -d2/dx2 (common
    practice), so the Hopf points of the zero branch are exactly p = D m_k, each with frequency w.
    """
    h = 1.0 / (cells + 1)
    line = sparse.diags_array([np.ones(cells - 1), -2.0 * np.ones(cells), np.ones(cells - 1)],
                              offsets=[-1, 0, 1]) * (diffusion / h**2)
    eye = sparse.identity(cells)
    rotation = sparse.csr_array(np.array([[0.0, -frequency], [frequency, 0.0]]))
    linear = (sparse.kron(sparse.identity(2), line) + sparse.kron(rotation, eye)).tocsr()

    def residual(z, p):
        u, v = z[:cells], z[cells:]
        size = u * u + v * v
        return linear @ z + p[0] * z - np.concatenate([u * size, v * size])

    def jacobian(z, p):
        u, v = z[:cells], z[cells:]
        size = u * u + v * v
        cubic = sparse.block_array([[sparse.diags_array(size + 2 * u * u), sparse.diags_array(2 * u * v)],
                                    [sparse.diags_array(2 * u * v), sparse.diags_array(size + 2 * v * v)]])
        return (linear + p[0] * sparse.identity(2 * cells) - cubic).tocsr()

    return contin.CallableSystem(residual, 2 * cells, {"p": -0.5}, jacobian=jacobian,
                                 parameter_jacobian=lambda z, p: z[:, None], start=np.zeros(2 * cells), kind="ode")


def test_hopf_points_of_a_sparse_ode_by_the_eigenvalues_nearest_zero():
    cells, diffusion = 60, 0.1
    h = 1.0 / (cells + 1)
    expected = [diffusion * (2 - 2 * math.cos(k * math.pi * h)) / h**2 for k in (1, 2)]
    branch = contin.trace(oscillator_chain(cells, diffusion), free="p", step=0.1, max_step=0.5,
                          bounds={"p": (-0.5, 0.5 * (expected[1] + diffusion * (2 - 2 * math.cos(3 * math.pi * h)) / h**2))})
    assert branch.stats["linear_solver"] == "sparse_lu"
    hopf = branch.special("hopf")
    assert [point.values["p"] for point in hopf] == pytest.approx(expected, abs=1e-9)
    assert [point.info["angular_frequency"] for point in hopf] == pytest.approx([1.0, 1.0], abs=1e-9)
    assert not branch.special("fold") and not branch.special("branch_point")


# -- memory in proportion to the non-zeros ----------------------------------------------------------
MEMORY_SCRIPT = """
import json, resource, sys
import numpy as np
sys.path.insert(0, {benchmarks!r})
import bratu2d
import contin
import scipy.sparse.linalg  # loaded before the limit, like everything the trace needs

def virtual_bytes():
    with open("/proc/self/status") as status:
        return next(int(line.split()[1]) * 1024 for line in status if line.startswith("VmSize:"))

grid = 100
size = grid * grid
limit = virtual_bytes() + 300 * 2**20  # 300 MiB more than now; one dense n x n array is 763 MiB
resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
try:
    np.ones((size, size))
    dense = "fits"
except MemoryError:
    dense = "MemoryError"
branch = contin.trace(bratu2d.bratu2d_system(grid), free="lam", step=0.5, max_points=4)
print(json.dumps({{"dense": dense, "success": branch.success, "points": len(branch.points),
                  "solver": branch.stats["linear_solver"], "lam": float(branch.points[-1, -1])}}))
"""


@pytest.mark.skipif(not pathlib.Path("/proc/self/status").exists(), reason="reads VmSize from /proc")
def test_ten_thousand_unknowns_trace_where_one_dense_matrix_would_not_fit():
    script = MEMORY_SCRIPT.format(benchmarks=str(ROOT / "benchmarks"))
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120, check=False)
    assert done.returncode == 0, done.stderr[-2000:]
    result = json.loads(done.stdout)
    assert result["dense"] == "MemoryError"  # the limit is real: the dense path could not even hold dF/du
    assert (result["success"], result["points"], result["solver"]) == (True, 4, "sparse_lu")  # max_points reached
    assert 0.0 < result["lam"] < 6.81  # climbing the lower branch, below the fold


def test_a_branch_point_by_the_sign_of_the_sparse_determinant():
    # u0 (p - u0^2) = 0 (the pitchfork normal form; Kuznetsov 2004, ch. 7) with a chain u_k = u_{k-1} / 2
    # behind it: the zero branch meets u0^2 = p at the branch point p = 0, u = 0.
    size = 50
    chain = (sparse.eye_array(size) - 0.5 * sparse.eye_array(size, k=-1)).tolil()
    chain[0, 0] = 0.0

    def residual(u, p):
        f = chain @ u
        f[0] = u[0] * (p[0] - u[0] ** 2)
        return f

    def jacobian(u, p):
        j = chain.copy()
        j[0, 0] = p[0] - 3 * u[0] ** 2
        return j.tocsr()

    system = contin.CallableSystem(residual, size, {"p": -1.0}, jacobian=jacobian,
                                   parameter_jacobian=lambda u, p: np.eye(size, 1) * u[0], start=np.zeros(size))
    branch = contin.trace(system, free="p", step=0.1, bounds={"p": (-1.0, 1.0)})
    assert branch.stats["linear_solver"] == "sparse_lu"
    (point,) = branch.special("branch_point")
    assert point.values["p"] == pytest.approx(0.0, abs=1e-9)
    assert np.max(np.abs(point.point[:-1])) <= 1e-9


# -- the two-dimensional Bratu problem ----------------------------------------------------------------
# lambda* = 6.808124 for the continuum problem on the unit square (the value reported in the literature
# on the Bratu problem, from memory); the tests confirm it from their own grid sequence.
BRATU_2D_CRITICAL = 6.808124


def bratu2d_fold(grid: int, solver: str = "auto") -> contin.SpecialPoint:
    branch = bratu2d.trace_bratu2d(grid, down_to=6.0, solver=solver)  # through the fold, a little way down
    assert branch.success, branch.message
    assert branch.stats["linear_solver"] == ("dense_lu" if solver == "dense" else "sparse_lu")
    (fold,) = branch.special("fold")
    return fold


def test_the_2d_bratu_fold_converges_at_second_order_to_the_reported_value():
    # Interior grids 7, 15, 31: h = 1/8, 1/16, 1/32 halves exactly, so the O(h^2) error of the
    # 5-point Laplacian shrinks by 4 per grid and Richardson extrapolation removes it.
    folds = [bratu2d_fold(grid).values["lam"] for grid in (7, 15, 31)]
    differences = [coarse - fine for coarse, fine in zip(folds, folds[1:])]
    assert all(difference < 0.0 for difference in differences)  # the discrete fold rises towards lambda*
    assert 3.9 < differences[0] / differences[1] < 4.3  # measured 4.21 (h = 1/8 is not yet asymptotic)
    once = [fine + (fine - coarse) / 3.0 for coarse, fine in zip(folds, folds[1:])]  # O(h^2) removed
    twice = once[1] + (once[1] - once[0]) / 15.0  # and O(h^4) (Romberg)
    assert once[1] == pytest.approx(BRATU_2D_CRITICAL, abs=1e-4)
    assert twice == pytest.approx(BRATU_2D_CRITICAL, abs=1e-5)


def test_dense_and_sparse_paths_agree_on_the_2d_bratu_fold():
    grid = 31  # 961 unknowns: the dense path is still quick
    dense_fold, sparse_fold = bratu2d_fold(grid, "dense"), bratu2d_fold(grid, "sparse")
    assert sparse_fold.values["lam"] == pytest.approx(dense_fold.values["lam"], abs=1e-8)
    assert sparse_fold.point == pytest.approx(dense_fold.point, abs=1e-8)


def test_the_benchmark_prints_the_branch_with_lam_u_max_the_fold_and_stats(capsys):
    assert bratu2d.main(["--grid", "6", "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["columns"][:2] == ["lam", "u_max"]
    lam = [row[0] for row in document["points"]]
    assert lam[0] == 0.0 and document["points"][0][1] == 0.0 and lam[-1] == pytest.approx(1.0, abs=1e-9)
    (fold,) = [point for point in document["special_points"] if point["kind"] == "fold"]
    assert fold["values"]["lam"] == pytest.approx(max(lam), abs=1e-12)  # the fold is the largest lambda
    assert document["stats"]["linear_solver"] == "sparse_lu" and document["stats"]["points"] == len(lam)
    assert document["case"]["unknowns"] == 36


def test_the_benchmark_refuses_a_grid_too_small(capsys):
    with pytest.raises(SystemExit) as stopped:
        bratu2d.main(["--grid", "1"])
    assert stopped.value.code == 2
    assert capsys.readouterr().err.strip().splitlines()[-1].endswith("--grid 1: give at least 2 interior points per side")


def test_a_large_point_is_described_by_a_few_coordinates():
    branch = bratu2d.trace_bratu2d(8)
    assert branch.message.startswith("completed: stopped by a terminal event 'lam = 1 on the upper branch' at "
                                     "u0 = 0.313832, u1 = 0.619215, u2 = 0.893837, ... of 64 unknowns, the largest ")
    assert branch.message.endswith(", lam = 1")


def test_a_used_sparse_solver_still_pickles_for_a_process_pool():
    import pickle

    solver = contin.SparseLU()
    contin.trace(sparse_bratu(9), free="lambda", max_points=5, linear_solver=solver)
    copy = pickle.loads(pickle.dumps(solver))
    assert (copy.ordering, copy.block, copy.chord) == (None, True, True)


def test_bad_sparse_choices_are_named(tmp_path):
    with pytest.raises(contin.InputError, match=r"^sparse='yes' must be True, False or None \(decide by size\)$"):
        contin.SymbolicSystem({"e": "x - p"}, {"x": 0.0}, {"p": 0.0}, sparse="yes")
    path = write_bratu(tmp_path, solver="sparce")
    with pytest.raises(contin.InputError, match=r"line 18: linear_solver = 'sparce'; use \"auto\", \"dense\" or "
                                                r"\"sparse\"; did you mean 'sparse'\?$"):
        contin.load_problem(path)
