"""Michelsen's tangent-plane-distance test of phase stability, vectorised over trial phases.

A phase of composition z at (T, P) is stable when the tangent-plane distance

    tm(W) = 1 + sum_i W_i (ln W_i + ln phi_i(w) - d_i - 1),   d_i = ln z_i + ln phi_i(z),  w = W / sum W

is non-negative for every trial phase W; a stationary point with tm < 0 shows a more stable phase
split. All trial phases are iterated together by successive substitution (ln W_i = d_i - ln phi_i(w)),
one batched fugacity evaluation per sweep, stopping as soon as one trial reaches tm < 0; the best
trial is then polished by Newton's method in the variables alpha_i = 2 sqrt(W_i), whose Hessian is
well scaled (Michelsen, The isothermal flash problem. Part I. Stability, Fluid Phase Equilibria 9
(1982) 1; Michelsen & Mollerup, Thermodynamic Models, 2nd ed. (2007), ch. 10). Trial phases start from
Wilson's K-values (vapour-like W = K z and liquid-like W = z / K), from each pure component, and,
along a traced envelope, from the stationary points found at the previous point.

The fugacity coefficients come from the same residual Helmholtz energy as everything else
(``_helmholtz``), evaluated for all trials at once; the volume roots of the cubic for all trials come
from one batched eigenvalue call on the companion matrices.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..models._helmholtz import GAS_CONSTANT, derivatives
from ..models._mixture import Mixture

__all__ = ["StabilityResult", "tangent_plane_test", "check_points", "ln_phi_batch"]

R = GAS_CONSTANT

# Below this tm a trial phase counts as more stable (well above round-off of converged values).
_UNSTABLE = -1e-7
# Successive-substitution sweeps of all trials together, and the change in ln W that counts as converged.
_SWEEPS = 15
_CONVERGED = 1e-8
# Unconverged trials with tm below this after the sweeps are settled by Newton's method.
_DOUBTFUL = 1e-2
# Pure-component trials are re-run along an envelope every this many points (a safety net; the
# stationary points of the previous point start the others).
_PURE_EVERY = 1


@dataclass(frozen=True)
class StabilityResult:
    """Outcome of the tangent-plane test.

    Attributes:
        stable: True when no trial phase reached a negative tangent-plane distance.
        tm: the smallest tangent-plane distance found (0 when every trial fell back to the feed).
        trial: mole fractions of the trial phase with that distance.
        iterations: total iterations over all trial phases (a batched sweep counts once per trial).
        stationary: mole fractions (K, N) of the distinct non-trivial stationary points found, to start
            the next point's trials from.
    """

    stable: bool
    tm: float
    trial: np.ndarray
    iterations: int
    stationary: np.ndarray = None


def ln_phi_batch(mixture: Mixture, T: float, P: float, w: np.ndarray, A: np.ndarray | None = None,
                 which: np.ndarray | None = None) -> np.ndarray:
    """ln phi of each row of ``w`` (M, N) at (T, P), each on its root of lower Gibbs energy.

    The cubic in Z for every row is solved at once (eigenvalues of the companion matrices); of the
    real roots above B, the one with the lower sum x_i ln phi_i is kept, as for a single phase.

    Args:
        which: optional per-row choice of root (M,): 0 the root of lower Gibbs energy, 1 the smallest
            (liquid-like), 2 the largest (vapour-like).

    Returns:
        array (M, N).
    """
    w = np.atleast_2d(np.asarray(w, dtype=float))
    w = w / w.sum(axis=1, keepdims=True)
    if A is None:
        A = mixture.attraction_roots(T)[0]
    family = mixture.family
    RT = R * T
    Aw = w @ A  # (M, N)
    a = np.einsum("ij,ij->i", w, Aw)
    bm = w @ mixture.b
    big_a = a * P / RT**2
    big_b = bm * P / RT
    u = family.delta1 + family.delta2
    v = family.delta1 * family.delta2
    c2 = (u - 1.0) * big_b - 1.0
    c1 = big_a + v * big_b**2 - u * big_b * (big_b + 1.0)
    c0 = -(big_a * big_b + v * big_b**2 * (big_b + 1.0))
    m = w.shape[0]
    companion = np.zeros((m, 3, 3))
    companion[:, 0, :] = -np.column_stack([c2, c1, c0])
    companion[:, 1, 0] = 1.0
    companion[:, 2, 1] = 1.0
    roots = np.linalg.eigvals(companion)
    real = np.abs(roots.imag) <= 1e-7 * np.maximum(1.0, np.abs(roots.real))
    z_roots = np.where(real & (roots.real > big_b[:, None]), roots.real, np.nan)
    # Newton polish of each candidate root on the cubic itself
    for _ in range(3):
        f = ((z_roots + c2[:, None]) * z_roots + c1[:, None]) * z_roots + c0[:, None]
        df = (3.0 * z_roots + 2.0 * c2[:, None]) * z_roots + c1[:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            z_roots = np.where(df != 0, z_roots - f / df, z_roots)
    low = np.nanmin(np.where(np.isfinite(z_roots), z_roots, np.nan), axis=1)
    high = np.nanmax(np.where(np.isfinite(z_roots), z_roots, np.nan), axis=1)
    bad = ~np.isfinite(low)
    if np.any(bad):  # no root above B (should not happen for a cubic at P > 0): take the largest real part
        fallback = np.maximum(roots.real.max(axis=1), big_b * (1 + 1e-6))
        low = np.where(bad, fallback, low)
        high = np.where(bad, fallback, high)
    candidates = np.stack([low, high])  # (2, M)
    compiled = derivatives(family.delta1, family.delta2, order=1)
    at = [compiled.names.index(k) for k in ("F_n", "F_B", "F_D")]
    out = []
    ones = np.ones(m)
    for Z in candidates:
        V = Z * RT / P  # total volume of one mole
        values = compiled._vector(ones, T, V, bm, a)
        F_n, F_B, F_D = (np.asarray(values[k], dtype=float).reshape(-1, 1) for k in at)
        out.append(F_n + F_B * mixture.b[None, :] + 2.0 * F_D * Aw - np.log(Z)[:, None])
    gibbs = [np.einsum("ij,ij->i", w, lp) for lp in out]
    choose_low = gibbs[0] < gibbs[1]
    if which is not None:
        choose_low = np.where(which == 1, True, np.where(which == 2, False, choose_low))
    return np.where(choose_low[:, None], out[0], out[1])


def _tm(W: np.ndarray, ln_phi: np.ndarray, d: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return 1.0 + np.sum(W * (np.log(W) + ln_phi - d - 1.0), axis=1)


def _newton(mixture: Mixture, T: float, P: float, d: np.ndarray, ln_W: np.ndarray, iterations: int = 10,
            tolerance: float = 1e-10):
    """Newton's method in alpha = 2 sqrt(W) from ln W (Michelsen 1982); returns (tm, w, ln W, iterations,
    root), root 1 for the liquid and 2 for the vapour.

    The trial keeps the root (liquid or vapour) that is the more stable one at its start.
    """
    count = 0
    W = np.exp(ln_W)
    w = W / W.sum()
    liquid, vapour = mixture.volume_roots(T, P, w)
    phase = "liquid" if mixture.volume(T, P, w, "stable") == liquid else "vapour"
    for _ in range(iterations):
        count += 1
        W = np.exp(ln_W)
        total = float(W.sum())
        w = W / total
        ln_phi, _, _, d_n = mixture.ln_phi_derivatives(T, P, w, phase)
        h = ln_W + ln_phi - d
        root = np.sqrt(W)
        gradient = root * h
        if float(np.max(np.abs(gradient))) < tolerance:
            break
        # Exact Hessian in alpha: delta_ij (1 + h_i / 2) + sqrt(W_i W_j) d ln phi_i / d W_j.
        hessian = np.diag(1.0 + 0.5 * h) + np.outer(root, root) * d_n / total
        try:
            step = np.linalg.solve(hessian, -gradient)
        except np.linalg.LinAlgError:
            break
        alpha = 2.0 * root + step
        if np.any(alpha <= 0):  # Newton left the domain: a substitution step instead
            ln_W = d - ln_phi
            continue
        ln_W = 2.0 * np.log(0.5 * alpha)
    W = np.exp(ln_W)
    ln_phi = ln_phi_batch(mixture, T, P, W[None, :])[0]
    root = 1 if phase == "liquid" else 2
    return float(_tm(W[None, :], ln_phi[None, :], d)[0]), W / W.sum(), ln_W, count, root


def _roots_used(mixture: Mixture, T: float, P: float, w: np.ndarray, A: np.ndarray, which: np.ndarray) -> np.ndarray:
    """The volume root each row of ``w`` is on with the choice ``which`` (as in :func:`ln_phi_batch`):
    1 the liquid, 2 the vapour, 0 when the cubic has one root there (it is both)."""
    m = len(w)
    liquid = ln_phi_batch(mixture, T, P, w, A, np.ones(m, dtype=int))
    vapour = ln_phi_batch(mixture, T, P, w, A, np.full(m, 2))
    one_root = np.all(liquid == vapour, axis=1)
    w = w / w.sum(axis=1, keepdims=True)
    lower = np.where(np.einsum("ij,ij->i", w, liquid) < np.einsum("ij,ij->i", w, vapour), 1, 2)
    return np.where(one_root, 0, np.where(which == 0, lower, which))


def _known_phases(mixture: Mixture, T: float, P: float, known, d: np.ndarray, A: np.ndarray) -> list:
    """Each known phase as (composition, root). A phase in equilibrium with the feed touches the
    tangent plane, so it is on the root where its tangent-plane distance is nearer zero; the same
    composition on the other root is another phase (below the plane it is a more stable one: a liquid
    of nearly the incipient vapour's composition at a metastable bubble point)."""
    phases = []
    for k in known:
        k = np.asarray(k, dtype=float)
        k = k / k.sum()
        pair = np.vstack([k, k])
        tm = _tm(pair, ln_phi_batch(mixture, T, P, pair, A, np.array([1, 2])), d)
        root = 1 if abs(tm[0]) <= abs(tm[1]) else 2
        phases.append((k, int(_roots_used(mixture, T, P, k[None, :], A, np.array([root]))[0])))
    return phases


def _on_known(mixture: Mixture, T: float, P: float, w: np.ndarray, which: np.ndarray, phases, A: np.ndarray) -> np.ndarray:
    """Mask of the rows of ``w`` that are one of the known ``phases``: the same composition (to 1e-3 in
    every mole fraction) on the same volume root."""
    hit = np.zeros(len(w), dtype=bool)
    for k, root in phases:
        near = np.max(np.abs(w - k), axis=1) < 1e-3
        if root and np.any(near):
            used = _roots_used(mixture, T, P, w[near], A, which[near])
            near[near] = (used == 0) | (used == root)
        hit |= near
    return hit


def _pure_trials(n: int) -> np.ndarray:
    trials = np.full((n, n), 1e-3 / max(1, n - 1))
    np.fill_diagonal(trials, 1.0 - 1e-3)
    return trials


def _test(mixture: Mixture, T: float, P: float, z: np.ndarray, trials: np.ndarray, roots: np.ndarray, known,
          polish: bool):
    z = np.asarray(z, dtype=float)
    z = z / z.sum()
    A = mixture.attraction_roots(T)[0]
    d = np.log(z) + ln_phi_batch(mixture, T, P, z[None, :], A)[0]
    ln_W = np.log(np.maximum(trials, 1e-300))
    active = np.ones(len(ln_W), dtype=bool)
    converged = np.zeros(len(ln_W), dtype=bool)
    phases = _known_phases(mixture, T, P, known, d, A)
    iterations = 0
    tm = np.full(len(ln_W), np.inf)
    fall = np.full(len(ln_W), np.nan)  # the last decrease of tm of each trial
    for sweep in range(_SWEEPS):
        rows = np.flatnonzero(active)
        if rows.size == 0:
            break
        iterations += rows.size
        W = np.exp(ln_W[rows])
        ln_phi = ln_phi_batch(mixture, T, P, W, A, roots[rows])
        before, before_fall = tm[rows], fall[rows]
        tm[rows] = _tm(W, ln_phi, d)
        if np.any(tm[rows] < _UNSTABLE):  # one more stable phase is enough: stop early
            break
        # Successive substitution lowers tm at a nearly constant ratio per sweep; a trial whose
        # extrapolated limit stays clearly above zero cannot show instability and is dropped.
        with np.errstate(invalid="ignore", divide="ignore"):
            now_fall = before - tm[rows]
            ratio = np.clip(now_fall / before_fall, 0.0, 0.95)
            limit = tm[rows] - now_fall * ratio / (1.0 - ratio)
        fall[rows] = now_fall
        hopeless = (sweep >= 3) & np.isfinite(limit) & (limit > 1e-3) & (now_fall >= 0)
        new = d - ln_phi
        change = np.max(np.abs(new - ln_W[rows]), axis=1)
        ln_W[rows] = new
        done = change < _CONVERGED
        converged[rows[done]] = True
        if sweep >= 2:
            # A trial closing in on the feed or a known phase (both stationary with tm = 0) would only
            # creep there: it is given up as that answer.
            w = W / W.sum(axis=1, keepdims=True)
            done |= np.max(np.abs(w - z), axis=1) < 1e-3
            done |= _on_known(mixture, T, P, w, roots[rows], phases, A)
        active[rows[done | hopeless]] = False
    W = np.exp(ln_W)
    # A negative tm on a forced root is a negative tm on the root of lower Gibbs energy too.
    ln_phi = ln_phi_batch(mixture, T, P, W, A, roots)
    tm = _tm(W, ln_phi, d)
    w = W / W.sum(axis=1, keepdims=True)
    trivial = np.max(np.abs(w - z), axis=1) < 1e-3
    trivial |= _on_known(mixture, T, P, w, roots, phases, A)
    valid = np.isfinite(tm) & ~trivial
    # The two lowest non-trivial stationary points start the next point's trials.
    lowest = np.flatnonzero(valid)[np.argsort(tm[valid])]
    stationary = _distinct(w[lowest])[:2]
    if not np.any(valid):
        return StabilityResult(True, 0.0, z.copy(), iterations, stationary)
    best = int(np.flatnonzero(valid)[np.argmin(tm[valid])])
    best_tm, best_w = float(tm[best]), w[best]
    if polish and best_tm > _UNSTABLE:
        # Near tm = 0 successive substitution is slow: settle the sign by Newton on the (at most
        # three) lowest trials that have not converged.
        doubtful = [k for k in lowest if not converged[k] and tm[k] < _DOUBTFUL][:3]
        for k in doubtful:
            tm_n, w_n, _, count, root = _newton(mixture, T, P, d, ln_W[k])
            iterations += count
            far = np.max(np.abs(w_n - z)) >= 1e-3 and not _on_known(mixture, T, P, w_n[None, :], np.array([root]),
                                                                     phases, A)[0]
            if math.isfinite(tm_n) and far and tm_n < best_tm:
                best_tm, best_w = tm_n, w_n
            if best_tm < _UNSTABLE:
                break
    if best_tm >= 0.0:  # as in the attributes: 0 and the feed itself when nothing lies below the plane
        return StabilityResult(True, 0.0, z.copy(), iterations, stationary)
    return StabilityResult(best_tm >= _UNSTABLE, best_tm, best_w, iterations, stationary)


def _distinct(w: np.ndarray) -> np.ndarray:
    """Rows of w that differ from each other by more than 1e-4 in some mole fraction, in order."""
    kept: list[np.ndarray] = []
    for row in w:
        if all(np.max(np.abs(row - other)) > 1e-4 for other in kept):
            kept.append(row)
    return np.array(kept).reshape(-1, w.shape[1] if w.ndim == 2 else 0)


def tangent_plane_test(mixture: Mixture, T: float, P: float, z: np.ndarray, *,
                       known: tuple[np.ndarray, ...] = (), pure_trials: bool = True,
                       start: np.ndarray | None = None) -> StabilityResult:
    """Michelsen's (1982) tangent-plane-distance test of feed ``z`` at (T, P).

    Args:
        mixture: the mixture model.
        T, P: temperature (K) and pressure (Pa).
        z: feed mole fractions (N,).
        known: compositions of phases already known to be in equilibrium with z (e.g. the incipient
            phase of an envelope point); trial phases that converge onto them are not counted.
        pure_trials: also start a trial from each (nearly) pure component.
        start: further trial compositions (K, N), e.g. the stationary points of a nearby point.

    Returns:
        A :class:`StabilityResult`.

    Reference: Michelsen, Fluid Phase Equilibria 9 (1982) 1.
    """
    z = np.asarray(z, dtype=float)
    z = z / z.sum()
    K = mixture.wilson(T, P)
    # Wilson's vapour-like trial on the vapour root and its liquid-like one on the liquid root; the
    # nearly pure components on the liquid root, where a second liquid would be found (on the root of
    # lower Gibbs energy a light one runs onto the incipient vapour instead).
    trials = [z * K, z / K]
    roots = [2, 1]
    if start is not None and len(start):
        trials.extend(np.atleast_2d(start))
        roots.extend([0] * len(np.atleast_2d(start)))
    trials = np.array(trials)
    if pure_trials:
        trials = np.vstack([trials, _pure_trials(mixture.size)])
        roots.extend([1] * mixture.size)
    return _test(mixture, T, P, z, trials, np.array(roots), known, polish=True)


def check_points(mixture: Mixture, z: np.ndarray, T: np.ndarray, P: np.ndarray, incipient: np.ndarray) -> list:
    """Stability of the feed at every traced envelope point: a list of bools, one per point.

    Trials at each point: Wilson's two, the stationary points found at the previous point (the
    solution moves little from point to point), and every _PURE_EVERY points, and after any point
    found unstable, each pure component as well.

    Args:
        mixture, z: the mixture and feed.
        T, P: arrays (M,) of the points.
        incipient: array (M, N) of the incipient phases there (excluded as trial answers).
    """
    flags = []
    previous = None
    unstable_before = False
    for i in range(len(T)):
        pure = i % _PURE_EVERY == 0 or unstable_before
        result = tangent_plane_test(mixture, float(T[i]), float(P[i]), z, known=(incipient[i],), pure_trials=pure,
                                    start=previous)
        flags.append(bool(result.stable))
        previous = result.stationary if result.stationary is not None and len(result.stationary) else None
        if not result.stable:
            previous = np.atleast_2d(result.trial) if previous is None else np.vstack([result.trial, previous])
        unstable_before = not result.stable
    return flags
