"""Sensitivities: how the points of a branch, and its folds, move when a fixed parameter changes."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..results._branch import Branch
from ..base._errors import InputError
from ..systems._system import System
from ..tracing._linear import dense

__all__ = ["Sensitivities", "sensitivities"]


@dataclass(frozen=True)
class Sensitivities:
    """Derivatives of a branch with respect to its fixed parameters.

    Attributes:
        parameters: names of the parameters differentiated against (every parameter but the free one).
        unknowns: names of the unknowns.
        points: array (N, n, m): d u / d q at each point of the branch with the free parameter held
            fixed; NaN where dF/du is singular there (at folds and branch points).
        folds: one dict per fold of the free parameter: ``index``, ``name`` and ``free`` — parameter
            name -> d(free)/dq, how far the fold's free-parameter value moves per unit of q.
    """

    parameters: tuple[str, ...]
    unknowns: tuple[str, ...]
    points: np.ndarray
    folds: tuple[dict, ...]

    def at(self, index: int) -> dict:
        """The sensitivities of point ``index`` as {unknown: {parameter: value}}."""
        rows = self.points[index]
        return {u: {q: float(rows[i, k]) for k, q in enumerate(self.parameters)} for i, u in enumerate(self.unknowns)}


def sensitivities(branch: Branch, system: System) -> Sensitivities:
    """Derivatives of every point, and of every fold, of ``branch`` with respect to each fixed parameter.

    At a regular point, F(u, p) = 0 with the free parameter held gives dF/du du/dq = -dF/dq: one LU
    factorisation of dF/du per point serves every parameter. At a fold of the free parameter λ, dF/du
    is singular with left null vector ψ; the fold moves along the branch's family as
    dλ*/dq = -(ψ · dF/dq) / (ψ · dF/dλ) (first-order perturbation of the fold; see Seydel, Practical
    Bifurcation and Stability Analysis, 3rd ed., 2010, ch. 2 for the bordered systems behind it).

    Args:
        branch: a branch traced on ``system``.
        system: the system (with its parameter_jacobian: exact for symbolic systems, finite
            differences otherwise).

    Returns:
        :class:`Sensitivities`.

    Raises:
        InputError: the branch's columns do not match the system, or there is no fixed parameter.
    """
    unknowns = tuple(system.unknowns)
    if tuple(branch.columns[:-1]) != unknowns or branch.free not in system.parameters:
        raise InputError("the branch was not traced on this system (its columns and free parameter differ)")
    free = system.parameters.index(branch.free)
    fixed = [k for k in range(len(system.parameters)) if k != free]
    if not fixed:
        raise InputError(f"the system has no parameter other than the free one ({branch.free!r}) to differentiate by")
    base = system.parameter_vector(branch.parameters)
    n, m = len(unknowns), len(fixed)
    result = np.full((len(branch.points), n, m), np.nan)
    for i, row in enumerate(branch.points):
        p = base.copy()
        p[free] = row[-1]
        u = row[:-1]
        _, ju, jf = system.linearise(u, p, free)
        ju = dense(ju)
        jp = system.parameter_jacobian(u, p)[:, fixed]
        # Singular relative to the whole Jacobian [dF/du, dF/dλ] (a 1 x 1 dF/du has condition number 1).
        smallest = np.linalg.svd(ju, compute_uv=False)[-1]
        if smallest > 1e-8 * max(np.linalg.norm(np.column_stack([ju, jf]), 2), 1e-300):
            result[i] = np.linalg.solve(ju, -jp)
    folds = []
    for point in branch.special_points:
        if point.kind != "fold" or point.info.get("coordinate") != branch.free:
            continue
        p = base.copy()
        p[free] = point.point[-1]
        u = point.point[:-1]
        _, ju, jf = system.linearise(u, p, free)
        ju = dense(ju)
        jp = system.parameter_jacobian(u, p)[:, fixed]
        psi = np.linalg.svd(ju)[0][:, -1]  # left singular vector of the smallest singular value
        denominator = float(psi @ jf)
        moves = {system.parameters[k]: (float(-(psi @ jp[:, j]) / denominator) if denominator else np.nan)
                 for j, k in enumerate(fixed)}
        folds.append({"index": point.index, "name": point.name, "free": moves})
    return Sensitivities(tuple(system.parameters[k] for k in fixed), unknowns, result, tuple(folds))
