"""Branch points and Hopf points along a branch: test functions, their location, and branch switching.

Simple branch points are where the n x (n + 1) Jacobian dG/dx of G(x) = F(u, p) loses rank, so two
solution curves cross. Along a branch the determinant of the bordered matrix [dG/dx; t] (t the unit
tangent) changes sign there, and does not at a fold when the tangent is oriented consistently
(Keller 1977; Seydel, Practical Bifurcation and Stability Analysis, 3rd ed., Springer 2010, ch. 5).

Hopf points are equilibria of du/dt = F(u, p) where a complex-conjugate pair of eigenvalues of dF/du
crosses the imaginary axis. On the sparse path (dF/du a scipy.sparse matrix) no full eigen-decomposition
is made: see :func:`nearest_eigenvalues` and :func:`sparse_hopf_value` for what is computed instead
and its limits. The test function is the product over eigenvalue pairs i < j of
(lambda_i + lambda_j) — the determinant of the bialternate product 2 dF/du (.) I, a polynomial in the
entries of dF/du, so it is smooth where the eigenvalues are not. It also vanishes at neutral saddles
(real lambda_i = -lambda_j), which are told apart by the eigenvalues at the located zero
(Guckenheimer, Myers & Sturmfels, SIAM J. Numer. Anal. 34, 1997; Kuznetsov, Elements of Applied
Bifurcation Theory, 3rd ed., Springer 2004, ch. 10).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from ._corrector import Correction, correct, residual_converged
from ..base._errors import InputError
from ._extended import Extended
from ._locate import IllinoisBracket, Located, locate_zero
from ..base._names import suggest
from ..systems._system import finite_difference_step
from ._linear import LinearSolver, is_sparse, solver_for
from ._tangent import SingularMatrix, factorise_bordered, tangent

__all__ = [
    "DETECTABLE",
    "bordered_sign",
    "check_detect",
    "classify_pair_zero",
    "determinant_sign",
    "hopf_sign",
    "hopf_signature",
    "locate_branch_point",
    "locate_hopf",
    "nearest_eigenvalues",
    "sparse_hopf_value",
]

# The special points a trace can look for by test functions (user events and requested values aside).
DETECTABLE = ("branch_point", "fold", "hopf")


def check_detect(detect, system, folds: Sequence[str]) -> frozenset[str]:
    """The validated set of special-point kinds to look for.

    Args:
        detect: a sequence of names from :data:`DETECTABLE`, or None for the default: folds and branch
            points always, Hopf points too when the system is an ODE (``kind == "ode"``).
        system: the system being traced (its ``kind`` decides the default and whether ``hopf`` is allowed).
        folds: the trace's extra fold coordinates (they need ``fold`` among the kinds).

    Returns:
        The kinds, as a frozen set.

    Raises:
        InputError: ``detect`` is a bare string or not a sequence, names an unknown kind (with a
            suggestion), asks for ``hopf`` on an algebraic system, or leaves out ``fold`` while
            ``folds`` names coordinates.
    """
    kind = getattr(system, "kind", "algebraic")
    if detect is None:
        return frozenset(("fold", "branch_point", "hopf") if kind == "ode" else ("fold", "branch_point"))
    if isinstance(detect, str):
        raise InputError(f"detect={detect!r} must be a sequence of names, e.g. detect=({detect!r},); "
                         f"known names: {', '.join(DETECTABLE)}")
    try:
        names = list(detect)
    except TypeError:
        raise InputError(f"detect must be a sequence of names from {', '.join(DETECTABLE)}, "
                         f"got {type(detect).__name__}") from None
    for name in names:
        if not isinstance(name, str) or name not in DETECTABLE:
            hint = suggest(name, DETECTABLE) if isinstance(name, str) else ""
            raise InputError(f"detect names {name!r}, which is not a special point the trace can look for "
                             f"(use any of {', '.join(DETECTABLE)}){hint}")
    chosen = frozenset(names)
    if "hopf" in chosen and kind != "ode":
        raise InputError(f"detect asks for 'hopf', but Hopf points belong to ODE systems (du/dt = F(u, p), "
                         f"kind='ode') and this system is {kind!r}; leave 'hopf' out or build the system "
                         "with kind='ode'")
    if folds and "fold" not in chosen:
        raise InputError(f"folds names {', '.join(map(repr, folds))} but detect leaves out 'fold'; "
                         "add 'fold' to detect or drop folds")
    return chosen


# -- branch points ---------------------------------------------------------------------------------
def bordered_sign(factors, along: float) -> int:
    """Sign of det [dG/dx; t] from the linear solver's factors of [dG/dx; row].

    The determinant is linear in the last row and vanishes for rows orthogonal to the tangent, so
    det [dG/dx; row] = det [dG/dx; t] (row . t): the sign needs only the sign of the factors'
    determinant (the signs of the pivots and the parity of the permutations, counted exactly in
    integers) and the sign of row . t — microseconds on top of the corrector's factorisation for a
    dense LU, one pass over the pivots for a sparse one, which is why it can run at every step.

    Args:
        factors: the solver's factors of [dG/dx; row] (their ``sign()``).
        along: row . t (for the pseudo-arclength row, the cosine of the turn between the tangents).

    Returns:
        +1 or -1; 0 when ``row`` is orthogonal to ``t`` (then the caller computes the determinant).
    """
    if along == 0.0:
        return 0
    return factors.sign() * (1 if along > 0.0 else -1)


def determinant_sign(jacobian, t: np.ndarray, solver: LinearSolver | None = None) -> int:
    """Sign of det [dG/dx; t] computed directly (the rare path: no usable factors)."""
    sign, _ = (solver or solver_for(jacobian)).log_determinant(jacobian, t)
    return int(sign)


def _log_scale(jacobian) -> float:
    """log of the product of the Jacobian's row lengths (Hadamard's bound on the bordered determinant)."""
    if is_sparse(jacobian):
        lengths = np.sqrt(np.asarray(jacobian.multiply(jacobian).sum(axis=1)).reshape(-1))
    else:
        lengths = np.sqrt(np.einsum("ij,ij->i", jacobian, jacobian))
    lengths = lengths[lengths > 0.0]
    return float(np.log(lengths).sum())


def _scaled_determinant(jacobian, row: np.ndarray, log_scale: float) -> float:
    """det [dG/dx; row] divided by a scale fixed over the bracket, so it is smooth (and of order one)."""
    sign, logarithm = solver_for(jacobian).log_determinant(jacobian, row)
    if sign == 0.0:
        return 0.0
    return float(sign) * math.exp(min(logarithm - log_scale, 700.0))


def _settle(extended: Extended, guess: np.ndarray, unit: np.ndarray, options) -> tuple[Correction | None, np.ndarray | None]:
    """Correct ``guess`` onto the branch on the hyperplane through it orthogonal to ``unit``.

    Unlike a plain correction this accepts a point where [dG/dx; unit] is singular, which is what a
    branch point is: if the guess already solves G = 0 it is returned as it is; otherwise one
    minimum-norm (least-squares) Newton step leaves the singular spot before Newton proper.

    Returns:
        (correction, jacobian at the point), or (None, None) if it fails.
    """
    length = float(np.linalg.norm(guess)) + 1.0
    keywords = dict(tolerance=options.tolerance, max_iterations=2 * options.max_iterations, max_distance=length)
    correction = correct(extended, guess, unit, float(unit @ guess), **keywords)
    if correction.converged:
        return correction, correction.jacobian
    if "singular" not in correction.reason:
        return None, None
    residual, jacobian = extended.linearise(guess)
    norm = float(abs(residual).max()) if residual.size else 0.0
    if residual_converged(residual, jacobian, guess, options.tolerance, extended.relative_tolerance, False):
        return Correction(True, guess.copy(), residual, jacobian, 0, norm), jacobian
    rhs = np.append(-residual, 0.0)
    if is_sparse(jacobian):
        from scipy.sparse import csr_array, vstack
        from scipy.sparse.linalg import lsqr

        step = lsqr(vstack([jacobian, csr_array(unit[None, :])]), rhs, atol=1e-14, btol=1e-14)[0]
    else:
        step = np.linalg.lstsq(np.vstack([jacobian, unit]), rhs, rcond=None)[0]
    nudged = guess + step
    correction = correct(extended, nudged, unit, float(unit @ guess), **keywords)
    if correction.converged:
        return correction, correction.jacobian
    return None, None


def _tangent_or(jacobian: np.ndarray, row: np.ndarray, reference: np.ndarray) -> np.ndarray:
    try:
        return tangent(factorise_bordered(jacobian, row), reference)
    except SingularMatrix:
        return reference.copy()


def _hessian_of_combination(extended: Extended, x: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """Hessian of phi . G at x by central differences of its gradient dG/dx^T phi (symmetrised)."""
    size = x.size
    steps = finite_difference_step(x)
    hessian = np.empty((size, size))
    for k in range(size):
        shift = np.zeros(size)
        shift[k] = steps[k]
        _, forward = extended.linearise(x + shift)
        _, backward = extended.linearise(x - shift)
        hessian[:, k] = (forward.T @ phi - backward.T @ phi) / (2.0 * steps[k])
    return 0.5 * (hessian + hessian.T)


def _refine_branch_point(extended: Extended, x: np.ndarray, options, radius: float) -> tuple[Located | None, float]:
    """Newton's method on the defining system of a simple branch point of G(x) = 0.

    Unknowns x (n + 1), phi (n) and an unfolding scalar mu; equations

        G(x) + mu phi = 0,   dG/dx(x)^T phi = 0,   (phi . phi - 1) / 2 = 0,

    2n + 2 equations in 2n + 2 unknowns. At a simple branch point (the null space of dG/dx is
    two-dimensional and phi . G'' restricted to it is non-degenerate) the solution has mu = 0 and the
    Jacobian of this system is regular, so Newton converges quadratically from the located bracket
    (Moore, The numerical treatment of non-trivial bifurcation points, Numer. Funct. Anal. Optim. 2,
    1980; Seydel, Practical Bifurcation and Stability Analysis, 3rd ed., Springer 2010, section 5.5).
    The Hessian of phi . G is taken by central differences of the exact Jacobian. On the sparse path
    (a Jacobian given as a scipy.sparse matrix) there is no refinement: that Hessian costs 2 (n + 1)
    Jacobians and a dense system of 2n + 2 rows, so the bracket's point stands, known to the reach of
    the residual test there, sqrt(tolerance) (1 + max |x|).

    Returns:
        (the refined point with ``located_to`` the length of the last Newton correction of x, or None
        if Newton fails, leaves the ball of ``radius`` round x, or ends off the branch, or the Jacobian is
        sparse), and the length of the first correction of x: an estimate of how far x itself is from
        the branch point (inf when not known; on the sparse path that reach of the residual test).
    """
    n = extended.n
    residual, jacobian = extended.linearise(x)
    if is_sparse(jacobian):
        # What the bracket's residual test allows: |G| grows quadratically away from a crossing.
        return None, math.sqrt(options.tolerance) * (1.0 + float(np.abs(x).max()))
    if not (np.all(np.isfinite(residual)) and np.all(np.isfinite(jacobian))):
        return None, math.inf
    try:
        left = np.linalg.svd(jacobian)[0]
    except np.linalg.LinAlgError:
        return None, math.inf
    phi = left[:, -1].copy()
    mu = -float(phi @ residual)
    z = x.copy()
    first = math.inf
    previous = math.inf
    size = 2 * n + 2
    for iteration in range(1, 16):
        matrix = np.zeros((size, size))
        matrix[:n, : n + 1] = jacobian
        matrix[:n, n + 1: 2 * n + 1] = mu * np.eye(n)
        matrix[:n, -1] = phi
        matrix[n: 2 * n + 1, : n + 1] = _hessian_of_combination(extended, z, phi)
        matrix[n: 2 * n + 1, n + 1: 2 * n + 1] = jacobian.T
        matrix[-1, n + 1: 2 * n + 1] = phi
        rhs = -np.concatenate([residual + mu * phi, jacobian.T @ phi, [0.5 * (phi @ phi - 1.0)]])
        try:
            step = np.linalg.solve(matrix, rhs)
        except np.linalg.LinAlgError:
            return None, first
        if not np.all(np.isfinite(step)):
            return None, first
        moved = float(np.linalg.norm(step[: n + 1]))
        if iteration == 1:
            first = moved
        if iteration > 2 and moved > previous:
            break  # rounding noise: the previous iterate is as good as it gets
        z = z + step[: n + 1]
        phi = phi + step[n + 1: 2 * n + 1]
        mu = mu + float(step[-1])
        residual, jacobian = extended.linearise(z)
        if not (np.all(np.isfinite(residual)) and np.all(np.isfinite(jacobian))):
            return None, first
        previous = moved
        if moved <= 4.0 * np.finfo(float).eps * (1.0 + float(np.linalg.norm(z))):
            break
    if not float(np.linalg.norm(z - x)) <= radius:
        return None, first
    if not residual_converged(residual, jacobian, z, options.tolerance, extended.relative_tolerance, True):
        return None, first
    norm = float(abs(residual).max()) if residual.size else 0.0
    located_to = max(previous, 4.0 * np.finfo(float).eps * (1.0 + float(np.linalg.norm(z))))
    return Located(0.0, z, np.zeros(n + 1), norm, iteration, located_to), first


def locate_branch_point(extended: Extended, a: tuple[np.ndarray, np.ndarray], b: tuple[np.ndarray, np.ndarray],
                        options, *, strict: bool = False) -> Located | None:
    """The simple branch point between accepted points ``a`` and ``b`` = (x, tangent).

    Two stages. First the bracket: the test function is det [dG/dx; e] / c with e the unit chord
    from a to b and c the product of the row lengths of dG/dx at a: it has the sign of
    det [dG/dx; t] inside the bracket (e . t > 0 for a short step), is smooth, and of order one. Its
    zero is found by the Illinois method (Dowell & Jarratt, BIT 11, 1971), every trial corrected
    back onto the branch on the hyperplane orthogonal to the chord; unlike
    :func:`contin.tracing._locate.locate_zero` a trial that lands exactly on the singular point (common on
    trivial branches, where the chord lies on the branch) is kept. On a curved branch these trials
    cannot place the point closer than the residual test allows: near a crossing of two branches
    |G| grows only quadratically with the distance, so every point within about sqrt(tolerance) of
    it passes. Then the point is refined by Newton's method on the defining system of a simple branch
    point (:func:`_refine_branch_point`; Moore 1980, Seydel 2010), which is regular there.

    ``located_to`` is measured: after the refinement, the length of its last Newton correction; if
    the refinement fails, the bracket's point is kept with ``located_to`` the larger of the bracket
    width and the first Newton correction of the defining system (its distance from the branch point,
    to first order), or the chord length when even that is not available.

    ``strict``: return None when the refinement fails. The driver asks for this until the step is at
    its smallest: a sign change with no branch point to refine onto is, as a rule, a step that
    hopped to a second branch lying close beside the first (two branches crossing at a shallow
    angle), and a shorter step stays on the branch and brackets the true crossing.

    Returns:
        The located point, or None when the bracket does not show a sign change once the Jacobians
        are evaluated exactly at a and b, or a correction fails.
    """
    (xa, ta), (xb, tb) = a, b
    chord = xb - xa
    length = float(np.linalg.norm(chord))
    if length == 0.0:
        return None
    unit = chord / length
    _, jacobian_a = extended.linearise(xa)
    _, jacobian_b = extended.linearise(xb)
    log_scale = _log_scale(jacobian_a)
    f_low = _scaled_determinant(jacobian_a, unit, log_scale)
    f_high = _scaled_determinant(jacobian_b, unit, log_scale)
    if not (f_low * f_high < 0.0):
        return None
    bracket = IllinoisBracket(f_low, f_high, length, options.location_tolerance)
    best: Located | None = None
    for _ in range(100):
        trial = bracket.trial()
        correction, jacobian = _settle(extended, xa + trial * chord, unit, options)
        if correction is None:
            break
        value = _scaled_determinant(jacobian, unit, log_scale)
        t = _tangent_or(jacobian, unit, ta)
        best = Located(trial, correction.x, t, correction.residual_norm, correction.iterations, bracket.width)
        if value == 0.0 or bracket.update(trial, value):
            break
    if best is None:
        return None
    refined, first = _refine_branch_point(extended, best.x, options, length)
    if refined is None and strict and not is_sparse(jacobian_a):  # (the sparse path never refines)
        return None
    if refined is None:
        located_to = max(bracket.located_to, first if math.isfinite(first) else length)
        return Located(best.fraction, best.x, best.tangent, best.residual_norm, best.iterations, located_to)
    fraction = min(1.0, max(0.0, float((refined.x - xa) @ chord) / (length * length)))
    return Located(fraction, refined.x, best.tangent, refined.residual_norm, refined.iterations,
                   refined.located_to)


# -- Hopf points -----------------------------------------------------------------------------------
#: How many eigenvalues of dF/du the sparse Hopf test computes (those nearest 0).
SPARSE_EIGENVALUES = 6


def nearest_eigenvalues(state_jacobian, count: int = SPARSE_EIGENVALUES) -> np.ndarray:
    """The ``count`` eigenvalues of a sparse dF/du nearest 0, by shift-invert Arnoldi (ARPACK through
    ``scipy.sparse.linalg.eigs`` with sigma = 0: the eigenvalues of largest modulus of (dF/du)^-1, from
    one sparse LU of dF/du; Lehoucq, Sorensen & Yang, ARPACK Users' Guide, SIAM 1998).

    The start vector is fixed (seeded), so the answer does not change from run to run. Where dF/du is
    exactly singular (sigma = 0 cannot be factorised) the shift moves to 1e-8 of the largest entry.

    Limits: these are the eigenvalues nearest 0, which are those nearest the imaginary axis only when
    the critical pair's frequency is small next to the distance of the other eigenvalues from 0. A pair
    crossing the axis far from 0 (|Im| large) is not among them and its Hopf point is missed; a pair
    entering or leaving the computed set makes the test jump, which the location catches (see
    :func:`classify_sparse_zero`).
    """
    from scipy.sparse.linalg import ArpackError, ArpackNoConvergence, eigs

    matrix = state_jacobian.tocsc()
    n = matrix.shape[0]
    k = min(count, n - 2)
    if k < 1:
        return np.linalg.eigvals(matrix.toarray())
    start = np.random.default_rng(16).standard_normal(n)
    largest = float(abs(matrix).max()) if matrix.nnz else 1.0
    for shift in (0.0, 1e-8 * max(1.0, largest)):
        try:
            return eigs(matrix, k=k, sigma=shift, which="LM", v0=start, return_eigenvectors=False, tol=1e-13)
        except (RuntimeError, ArpackError, ArpackNoConvergence):
            continue
    raise np.linalg.LinAlgError("the eigenvalues of dF/du nearest 0 could not be computed (shift-invert Arnoldi failed)")


def _nearest_pair(eigenvalues: np.ndarray) -> complex | None:
    """Of the complex pairs among ``eigenvalues``, the member with Im > 0 nearest the imaginary axis."""
    scale = max(1.0, float(np.abs(eigenvalues).max())) if eigenvalues.size else 1.0
    upper = eigenvalues[eigenvalues.imag > 1e-8 * scale]
    if upper.size == 0:
        return None
    return complex(upper[int(np.argmin(np.abs(upper.real)))])


def sparse_hopf_value(state_jacobian) -> float:
    """The sparse Hopf test function: Re(lambda) of the complex pair nearest the imaginary axis among the
    eigenvalues of dF/du nearest 0 (:func:`nearest_eigenvalues`); 0.0 when there is no complex pair
    among them (no sign, so nothing is detected). It changes sign where that pair crosses the axis."""
    pair = _nearest_pair(nearest_eigenvalues(state_jacobian))
    return 0.0 if pair is None else float(pair.real)


def classify_sparse_zero(state_jacobian) -> dict:
    """A located zero of :func:`sparse_hopf_value`: a Hopf point when a complex pair lies on the
    imaginary axis (|Re| <= 1e-6 |lambda|), else the test jumped because the pair nearest the axis
    changed (``{"kind": "jump", ...}``), which is not a Hopf point."""
    pair = _nearest_pair(nearest_eigenvalues(state_jacobian))
    if pair is not None and abs(pair.real) <= 1e-6 * abs(pair):
        return {"kind": "hopf", "angular_frequency": float(pair.imag), "period": float(2.0 * math.pi / pair.imag)}
    return {"kind": "jump", "eigenvalue": None if pair is None else (float(pair.real), float(pair.imag))}


def hopf_sign(state_jacobian: np.ndarray) -> int:
    """Sign of the product over eigenvalue pairs i < j of (lambda_i + lambda_j) of dF/du.

    A complex-conjugate pair contributes its own factor 2 Re(lambda); every other complex factor comes
    with its conjugate (a positive product); so the sign is (-1) to the number of complex pairs in the
    left half-plane plus the number of real pairs with a negative sum. It changes only where the
    product passes through zero: at Hopf points and neutral saddles, not where eigenvalues collide.

    Returns:
        +1, -1, or 0 (a pair sums to zero exactly).
    """
    return _pair_product_sign(np.linalg.eigvals(state_jacobian))


def hopf_signature(state_jacobian: np.ndarray) -> tuple[int, int]:
    """(:func:`hopf_sign`, the number of eigenvalues of dF/du with positive real part), from one
    eigen-decomposition. The count changes by two at a Hopf point and by one at a fold or a branch
    point, so comparing it between two points tells whether every crossing between them was found.

    For a sparse dF/du: (the sign of :func:`sparse_hopf_value`, -1): the count is not known (only a few
    eigenvalues are computed), so that check is off."""
    if is_sparse(state_jacobian):
        value = sparse_hopf_value(state_jacobian)
        return (0 if value == 0.0 else 1 if value > 0.0 else -1), -1
    eigenvalues = np.linalg.eigvals(state_jacobian)
    return _pair_product_sign(eigenvalues), int(np.count_nonzero(eigenvalues.real > 0.0))


def _pair_product_sign(eigenvalues: np.ndarray) -> int:
    upper = eigenvalues.imag > 0.0
    real = eigenvalues.real[eigenvalues.imag == 0.0]
    pair_real = eigenvalues.real[upper]
    if np.any(pair_real == 0.0):
        return 0
    negative = int(np.count_nonzero(pair_real < 0.0))
    if real.size > 1:
        sums = real[:, None] + real[None, :]
        upper_sums = sums[np.triu_indices(real.size, 1)]
        if np.any(upper_sums == 0.0):
            return 0
        negative += int(np.count_nonzero(upper_sums < 0.0))
    return -1 if negative & 1 else 1


def _pair_sums(state_jacobian: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(eigenvalues, pair indices (i, j) with i < j, lambda_i + lambda_j)."""
    eigenvalues = np.linalg.eigvals(state_jacobian)
    i, j = np.triu_indices(eigenvalues.size, 1)
    return eigenvalues, np.stack([i, j]), eigenvalues[i] + eigenvalues[j]


def _hopf_test(state_jacobian: np.ndarray, log_scale: float | None) -> tuple[float, float]:
    """(the scaled pair product, its log magnitude): sign * exp(sum log|lambda_i + lambda_j| - log_scale)."""
    _, _, sums = _pair_sums(state_jacobian)
    magnitudes = np.abs(sums)
    if np.any(magnitudes == 0.0):
        return 0.0, -math.inf
    logarithm = float(np.log(magnitudes).sum())
    # The product is real: its phase is a multiple of pi.
    sign = 1.0 if math.cos(float(np.angle(sums).sum())) > 0.0 else -1.0
    scale = logarithm if log_scale is None else log_scale
    return sign * math.exp(min(logarithm - scale, 700.0)), logarithm


def classify_pair_zero(state_jacobian: np.ndarray) -> dict:
    """What makes the pair product vanish at a located point: a Hopf pair or a neutral saddle.

    Returns:
        ``{"kind": "hopf", "angular_frequency": w, "period": 2 pi / w}`` for a complex pair
        lambda = +-i w (to rounding), else ``{"kind": "neutral_saddle", "eigenvalues": (a, b)}``
        for the real pair whose sum is nearest zero.
    """
    eigenvalues, pairs, sums = _pair_sums(state_jacobian)
    k = int(np.argmin(np.abs(sums)))
    first, second = eigenvalues[pairs[0, k]], eigenvalues[pairs[1, k]]
    frequency = 0.5 * abs(first.imag - second.imag)
    scale = max(1.0, float(np.abs(eigenvalues).max()))
    if frequency > 1e-8 * scale and abs(first.imag + second.imag) <= 1e-8 * scale:
        return {"kind": "hopf", "angular_frequency": float(frequency), "period": float(2.0 * math.pi / frequency)}
    pair = sorted((float(first.real), float(second.real)))
    return {"kind": "neutral_saddle", "eigenvalues": (pair[0], pair[1])}


def locate_hopf(extended: Extended, a: tuple[np.ndarray, np.ndarray], b: tuple[np.ndarray, np.ndarray],
                options) -> tuple[Located, dict] | None:
    """The zero of the eigenvalue-pair product between accepted points ``a`` and ``b`` = (x, tangent).

    Located by :func:`contin.tracing._locate.locate_zero` (Illinois method, every trial on the branch) on the
    product of (lambda_i + lambda_j) of dF/du evaluated exactly at each trial, scaled by its
    magnitude at ``a``; the eigenvalues at the zero then tell a Hopf point from a neutral saddle. On
    the sparse path the test is :func:`sparse_hopf_value` and the zero is told apart from a jump of
    that test by :func:`classify_sparse_zero`.

    Returns:
        (located point, :func:`classify_pair_zero` of it), or None if the exact Jacobians at a and b
        show no sign change or a correction fails.
    """
    (xa, ta), (xb, tb) = a, b
    n = extended.n
    _, jacobian_a = extended.linearise(xa)
    _, jacobian_b = extended.linearise(xb)
    if is_sparse(jacobian_a):
        value, classify = sparse_hopf_value, classify_sparse_zero
    else:
        log_scale = _hopf_test(jacobian_a[:, :n], None)[1]

        def value(matrix: np.ndarray) -> float:
            return _hopf_test(matrix, log_scale)[0]

        classify = classify_pair_zero
    f_a, f_b = value(jacobian_a[:, :n]), value(jacobian_b[:, :n])
    if not (f_a * f_b < 0.0):
        return None

    def test(x: np.ndarray, t: np.ndarray) -> float:
        _, jacobian = extended.linearise(x)
        return value(jacobian[:, :n])

    located = locate_zero(extended, (xa, ta, f_a), (xb, tb, f_b), test, options)
    if located is None:
        return None
    _, jacobian = extended.linearise(located.x)
    return located, classify(jacobian[:, :n])
