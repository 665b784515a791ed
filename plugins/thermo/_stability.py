"""Michelsen's tangent-plane-distance test of phase stability.

A phase of composition z at (T, P) is stable when the tangent-plane distance

    tm(W) = 1 + sum_i W_i (ln W_i + ln phi_i(w) - d_i - 1),   d_i = ln z_i + ln phi_i(z),  w = W / sum W

is non-negative for every trial phase W; a stationary point with tm < 0 shows a more stable phase
split. Each trial phase is iterated by successive substitution (ln W_i = d_i - ln phi_i(w)) and then by
Newton's method in the variables alpha_i = 2 sqrt(W_i), whose Hessian is well scaled
(Michelsen, The isothermal flash problem. Part I. Stability, Fluid Phase Equilibria 9 (1982) 1;
Michelsen & Mollerup, Thermodynamic Models, 2nd ed. (2007), ch. 10). Trial phases start from
Wilson's K-values (vapour-like W = K z and liquid-like W = z / K) and from each pure component.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._mixture import Mixture

__all__ = ["StabilityResult", "tangent_plane_test", "check_points"]

# Below this tm a trial phase counts as more stable (well above round-off of converged values).
_UNSTABLE = -1e-7


@dataclass(frozen=True)
class StabilityResult:
    """Outcome of the tangent-plane test.

    Attributes:
        stable: True when no trial phase reached a negative tangent-plane distance.
        tm: the smallest tangent-plane distance found (0 when every trial fell back to the feed).
        trial: mole fractions of the trial phase with that distance.
        iterations: total iterations over all trial phases.
    """

    stable: bool
    tm: float
    trial: np.ndarray
    iterations: int


def _ln_phi(mixture: Mixture, T: float, P: float, w: np.ndarray, with_derivatives: bool):
    if with_derivatives:
        ln_phi, _, _, d_n = mixture.ln_phi_derivatives(T, P, w, "stable")
        return ln_phi, d_n
    return mixture.ln_phi(T, P, w, "stable"), None


def _minimise(mixture: Mixture, T: float, P: float, d: np.ndarray, W: np.ndarray,
              successive: int = 6, newton: int = 20, tolerance: float = 1e-10):
    """Stationary point of tm from trial amounts W: (tm, w, iterations)."""
    iterations = 0
    ln_W = np.log(W)
    for _ in range(successive):
        iterations += 1
        w = np.exp(ln_W - np.max(ln_W))
        ln_phi, _ = _ln_phi(mixture, T, P, w / w.sum(), False)
        new = d - ln_phi
        change = float(np.max(np.abs(new - ln_W)))
        ln_W = new
        if change < 1e-8:
            break
    for _ in range(newton):
        iterations += 1
        W = np.exp(ln_W)
        total = float(W.sum())
        w = W / total
        ln_phi, d_n = _ln_phi(mixture, T, P, w, True)
        h = ln_W + ln_phi - d
        root = np.sqrt(W)
        gradient = root * h
        if float(np.max(np.abs(gradient))) < tolerance:
            break
        # Exact Hessian in alpha = 2 sqrt(W): delta_ij (1 + h_i / 2) + sqrt(W_i W_j) d ln phi_i / d W_j.
        hessian = np.diag(1.0 + 0.5 * h) + np.outer(root, root) * d_n / total
        try:
            step = np.linalg.solve(hessian, -gradient)
        except np.linalg.LinAlgError:
            break
        alpha = 2.0 * root + step
        if np.any(alpha <= 0):  # Newton left the domain: fall back to a substitution step
            ln_W = d - ln_phi
            continue
        ln_W = 2.0 * np.log(0.5 * alpha)
    W = np.exp(ln_W)
    w = W / W.sum()
    ln_phi, _ = _ln_phi(mixture, T, P, w, False)
    tm = 1.0 + float(np.sum(W * (ln_W + ln_phi - d - 1.0)))
    return tm, w, iterations


def tangent_plane_test(mixture: Mixture, T: float, P: float, z: np.ndarray, *,
                       known: tuple[np.ndarray, ...] = (), pure_trials: bool = True) -> StabilityResult:
    """Michelsen's (1982) tangent-plane-distance test of feed ``z`` at (T, P).

    Args:
        mixture: the mixture model.
        T, P: temperature (K) and pressure (Pa).
        z: feed mole fractions (N,).
        known: compositions of phases already known to be in equilibrium with z (e.g. the incipient
            phase of an envelope point); trial phases that converge onto them are not counted.
        pure_trials: also start a trial from each (nearly) pure component.

    Returns:
        A :class:`StabilityResult`.

    Reference: Michelsen, Fluid Phase Equilibria 9 (1982) 1.
    """
    z = np.asarray(z, dtype=float)
    z = z / z.sum()
    d = np.log(z) + mixture.ln_phi(T, P, z, "stable")
    K = mixture.wilson(T, P)
    trials = [z * K, z / K]
    if pure_trials:
        n = mixture.size
        for i in range(n):
            W = np.full(n, 1e-3 / max(1, n - 1))
            W[i] = 1.0 - 1e-3
            trials.append(W)
    best_tm, best_w, total = 0.0, z.copy(), 0
    for W in trials:
        tm, w, iterations = _minimise(mixture, T, P, d, np.maximum(W, 1e-300))
        total += iterations
        if not math.isfinite(tm):
            continue
        if np.max(np.abs(w - z)) < 1e-5:  # fell back to the feed itself (the trivial stationary point)
            continue
        if any(np.max(np.abs(w - k / np.sum(k))) < 1e-4 for k in known):
            continue
        if tm < best_tm:
            best_tm, best_w = tm, w
        if best_tm < _UNSTABLE:
            break
    return StabilityResult(best_tm >= _UNSTABLE, best_tm, best_w, total)


def check_points(mixture: Mixture, z: np.ndarray, T: np.ndarray, P: np.ndarray, incipient: np.ndarray) -> list:
    """Stability of the feed at every traced envelope point: a list of bools, one per point.

    Args:
        mixture, z: the mixture and feed.
        T, P: arrays (M,) of the points.
        incipient: array (M, N) of the incipient phases there (excluded as trial answers).
    """
    flags = []
    for i in range(len(T)):
        result = tangent_plane_test(mixture, float(T[i]), float(P[i]), z, known=(incipient[i],))
        flags.append(bool(result.stable))
    return flags
