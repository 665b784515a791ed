"""Second and third derivatives of F(u, p) from its Jacobian, and the first Lyapunov coefficient.

The multilinear forms B(x, y) = F_uu[x, y] and C(x, y, z) = F_uuu[x, y, z] come from the system's
Jacobian dF/du: B(x, .) is the derivative of dF/du along x, exact for a symbolic system (its
``jacobian_along``), else a central difference; C(x, x, .), its second derivative, is always a
difference. A difference of an exact Jacobian
errs by O(h^2) in the truncation and eps / h in rounding, so the steps are eps^(1/3) (first
derivative, about 1e-10 relative, for Newton's Jacobians); the test functions whose zeros are located
(the Lyapunov coefficient, a cusp's coefficient) take Richardson's extrapolation of differences at h
and 2h, about 1e-12 (first) and 1e-10 (second derivatives) relative.
"""

from __future__ import annotations

import math

import numpy as np

from ..base._errors import InputError
from ..systems._system import System
from ._linear import dense

__all__ = ["JacobianCalculus", "first_lyapunov_coefficient", "hopf_eigenpair", "lyapunov_facts"]

_EPS = np.finfo(float).eps


class JacobianCalculus:
    """dF/du of one system at fixed parameters, and its directional derivatives in u.

    Args:
        system: the residual system.
        p: all parameter values, array (m,).
        columns: optional parameter indices whose dF/dp columns are appended to dF/du in
            :meth:`full` (for derivatives with respect to the parameters too).

    Attributes:
        evaluations: how many Jacobians of the system were evaluated (one per call of :meth:`full`).
    """

    def __init__(self, system: System, p: np.ndarray, columns: tuple[int, ...] = ()) -> None:
        self.system = system
        self.p = np.array(p, dtype=float)
        self.columns = tuple(columns)
        self.evaluations = 0

    def full(self, u: np.ndarray, p: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
        """(F, [dF/du | dF/dp[columns]]) at (u, p), one Jacobian evaluation of the system."""
        p = self.p if p is None else p
        self.evaluations += 1
        evaluate = getattr(self.system, "evaluate", None)
        if callable(evaluate) and self.columns:
            f, ju, jp = evaluate(u, p)
            return np.asarray(f, dtype=float), np.hstack([dense(ju), jp[:, list(self.columns)]])
        f, ju, jp = self.system.linearise(u, p, self.columns[0] if self.columns else 0)
        blocks = [np.asarray(dense(ju), dtype=float)]
        if self.columns:
            blocks.append(np.asarray(jp, dtype=float).reshape(-1, 1))
            if len(self.columns) > 1:  # the other columns without a second Jacobian of the unknowns
                blocks.append(np.asarray(self.system.parameter_jacobian(u, p), dtype=float)[:, list(self.columns[1:])])
        return np.asarray(f, dtype=float), np.hstack(blocks)

    def _step(self, u: np.ndarray, x: np.ndarray, power: float) -> float:
        size = float(np.abs(x).max())
        return _EPS ** power * max(1.0, float(np.abs(u).max())) / size

    def along(self, u: np.ndarray, x: np.ndarray, p: np.ndarray | None = None, accurate: bool = False) -> np.ndarray:
        """d/de [dF/du | dF/dp[columns]](u + e x) at e = 0 (x real): exact where the system has
        ``jacobian_along`` (symbolic systems), else by a central difference.

        ``accurate``: Richardson's extrapolation of central differences at h and 2h (error O(h^4),
        step eps^(1/5): about 1e-12 relative, twice the evaluations), for test functions whose zeros
        are located; Newton's Jacobians take the plain difference (eps^(1/3), about 1e-10).
        """
        exact = getattr(self.system, "jacobian_along", None)
        if callable(exact):  # a symbolic system: exact second derivatives, no differences
            whole = exact(u, self.p if p is None else p, x)
            return np.hstack([whole[:, : u.size], whole[:, [u.size + c for c in self.columns]]])
        if not np.any(x):
            return np.zeros_like(self.full(u, p)[1])
        if not accurate:
            h = self._step(u, x, 1.0 / 3.0)
            return (self.full(u + h * x, p)[1] - self.full(u - h * x, p)[1]) / (2.0 * h)
        h = self._step(u, x, 0.2)
        near = (self.full(u + h * x, p)[1] - self.full(u - h * x, p)[1]) / (2.0 * h)
        far = (self.full(u + 2.0 * h * x, p)[1] - self.full(u - 2.0 * h * x, p)[1]) / (4.0 * h)
        return (4.0 * near - far) / 3.0

    def twice_along(self, u: np.ndarray, x: np.ndarray, centre: np.ndarray,
                    p: np.ndarray | None = None) -> np.ndarray:
        """d^2/de^2 dF/du(u + e x) at e = 0 (x real), given ``centre`` = dF/du(u): Richardson's
        extrapolation of second differences at h and 2h (error O(h^4); step eps^(1/6), about 1e-10
        relative)."""
        if not np.any(x):
            return np.zeros_like(centre[:, : u.size])
        h = self._step(u, x, 1.0 / 6.0)
        n = u.size

        def second(step: float) -> np.ndarray:
            plus = self.full(u + step * x, p)[1][:, :n]
            minus = self.full(u - step * x, p)[1][:, :n]
            return (plus - 2.0 * centre[:, :n] + minus) / (step * step)

        return (4.0 * second(h) - second(2.0 * h)) / 3.0

    def bilinear(self, u: np.ndarray, x: np.ndarray) -> np.ndarray:
        """The matrix of B(x, .) = F_uu[x, .] for complex x (dF/du's derivative along x)."""
        n = u.size
        real = self.along(u, x.real, accurate=True)[:, :n]
        return real + 1j * self.along(u, x.imag, accurate=True)[:, :n] if np.iscomplexobj(x) else real

    def trilinear_square(self, u: np.ndarray, x: np.ndarray, centre: np.ndarray) -> np.ndarray:
        """The matrix of C(x, x, .) for complex x, by polarisation of second differences along real
        directions: C(a + ib, a + ib, .) = C(a, a) - C(b, b) + i (C(a + b, a + b) - C(a - b, a - b)) / 2."""
        a, b = x.real, x.imag
        first = self.twice_along(u, a, centre) - self.twice_along(u, b, centre)
        if not np.any(b):
            return first
        cross = 0.5 * (self.twice_along(u, a + b, centre) - self.twice_along(u, a - b, centre))
        return first + 1j * cross


def hopf_eigenpair(jacobian: np.ndarray) -> tuple[float, float, np.ndarray, np.ndarray]:
    """The eigenvalue pair of dF/du nearest the imaginary axis with positive imaginary part.

    Returns:
        (real part, omega > 0, q, p) with A q = lambda q, |q| = 1, A^T p = conj(lambda) p, conj(p) . q = 1.

    Raises:
        InputError: dF/du has no complex eigenvalue (no Hopf pair).
    """
    values, vectors = np.linalg.eig(jacobian)
    upper = np.flatnonzero(values.imag > 0.0)
    if upper.size == 0:
        raise InputError("dF/du has no complex pair of eigenvalues at the point, so it is not a Hopf point; "
                         "pass a Hopf point of an ODE system (kind='ode')")
    k = int(upper[np.argmin(np.abs(values.real[upper]))])
    lam = values[k]
    q = vectors[:, k] / np.linalg.norm(vectors[:, k])
    left_values, left_vectors = np.linalg.eig(jacobian.T)
    j = int(np.argmin(np.abs(left_values - np.conj(lam))))
    p = left_vectors[:, j]
    p = p / np.conj(np.vdot(p, q))  # conj(p) . q = 1
    return float(lam.real), float(lam.imag), q, p


def first_lyapunov_coefficient(system: System, u, p) -> float:
    """The first Lyapunov coefficient l1 of du/dt = F(u, p) at a Hopf point (u, p).

    The invariant formula for n dimensions (Kuznetsov, Elements of Applied Bifurcation Theory, 3rd
    ed., Springer 2004, section 3.5 and its n-dimensional form in section 5.4; the formula of the
    trade),

        l1 = Re[ <p, C(q, q, conj q)> - 2 <p, B(q, A^-1 B(q, conj q))>
                 + <p, B(conj q, (2 i w I - A)^-1 B(q, q))> ] / (2 w),

    with A = dF/du, A q = i w q, |q| = 1, A^T p = -i w p, <p, q> = conj(p) . q = 1, and B, C the
    second and third derivatives of F in u (B exact for symbolic systems, C by differences of
    the Jacobian, see :class:`JacobianCalculus`). With this normalisation the planar normal form
    x' = -w y + s x (x^2 + y^2), y' = w x + s y (x^2 + y^2) has l1 = 2 s / w, as eq. (3.20) there gives.
    Negative l1: the Hopf bifurcation is supercritical (stable cycles are born); positive: subcritical.
    With an exact Jacobian l1 is good to about 1e-10 relative to the size of its terms; with a
    finite-difference Jacobian (a CallableSystem without ``jacobian``) to about 1e-5, since the
    differences of the Jacobian then amplify its own error.

    Args:
        system: an ODE system.
        u: the equilibrium, array (n,).
        p: all parameter values, array (m,).

    Raises:
        InputError: dF/du has no complex pair of eigenvalues there.
    """
    u = np.asarray(u, dtype=float)
    calculus = JacobianCalculus(system, np.asarray(p, dtype=float))
    _, centre = calculus.full(u)
    a = centre
    _, omega, q, left = hopf_eigenpair(a)
    n = u.size
    b_q = calculus.bilinear(u, q)            # B(q, .)
    b_qbar = np.conj(b_q)                    # B(conj q, .)  (B is real)
    h11 = np.linalg.solve(a, b_q @ np.conj(q))                      # A^-1 B(q, conj q)
    h20 = np.linalg.solve(2j * omega * np.eye(n) - a, b_q @ q)      # (2 i w - A)^-1 B(q, q)
    c_qq = calculus.trilinear_square(u, q, centre)                  # C(q, q, .)
    total = np.vdot(left, c_qq @ np.conj(q)) - 2.0 * np.vdot(left, b_q @ h11) + np.vdot(left, b_qbar @ h20)
    return float(total.real / (2.0 * omega))


def lyapunov_facts(system: System, u: np.ndarray, p: np.ndarray) -> dict:
    """``{"first_lyapunov_coefficient": l1}`` for a Hopf point's info (NaN when it cannot be computed)."""
    try:
        value = first_lyapunov_coefficient(system, u, p)
    except Exception:  # noqa: BLE001 - a fact added to a located point: its failure must not end the trace
        value = math.nan
    return {"first_lyapunov_coefficient": value}
