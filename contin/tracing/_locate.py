"""Locating a special point between two accepted points of a branch to a tolerance."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from ._corrector import Correction, correct
from ._extended import Extended
from ._tangent import SingularMatrix, factorise_bordered, tangent

__all__ = ["IllinoisBracket", "Located", "locate_zero", "locate_level"]


@dataclass(frozen=True)
class Located:
    """A point on the branch where a test function vanishes.

    Attributes:
        fraction: position between the two bracketing points, 0 (first) to 1 (second), along the chord.
        x: the point (coordinates), converged to the Newton tolerance.
        tangent: unit tangent there.
        residual_norm: largest residual there.
        iterations: Newton iterations of the last correction.
        located_to: distance along the branch to which the position is known.
    """

    fraction: float
    x: np.ndarray
    tangent: np.ndarray
    residual_norm: float
    iterations: int
    located_to: float
    info: dict = field(default_factory=dict)


def _point_at(extended: Extended, xa: np.ndarray, chord: np.ndarray, fraction: float, options) -> Correction:
    unit = chord / np.linalg.norm(chord)
    guess = xa + fraction * chord
    return correct(
        extended,
        guess,
        unit,
        float(unit @ guess),
        tolerance=options.tolerance,
        max_iterations=2 * options.max_iterations,
        max_distance=np.linalg.norm(chord),
    )


def _tangent_at(correction: Correction, row: np.ndarray, reference: np.ndarray) -> np.ndarray:
    try:
        return tangent(factorise_bordered(correction.jacobian, row), reference)
    except SingularMatrix:
        return reference.copy()


class IllinoisBracket:
    """The bracket of the Illinois method on the chord fraction [0, 1] (Dowell & Jarratt, BIT 11, 1971).

    Regula falsi whose stale end has its value halved when the same end is kept twice, so the bracket
    shrinks from both sides. ``trial()`` gives the next fraction to try, ``update(trial, value)``
    takes the test value there and says whether the zero is located to ``tolerance`` (a distance
    along a chord of ``length``); ``located_to`` is how well it is known.
    """

    __slots__ = ("low", "high", "f_low", "f_high", "side", "previous", "moved", "length", "tolerance")

    def __init__(self, f_low: float, f_high: float, length: float, tolerance: float) -> None:
        self.low, self.high, self.f_low, self.f_high = 0.0, 1.0, f_low, f_high
        self.side, self.previous, self.moved = 0, -1.0, np.inf
        self.length, self.tolerance = length, tolerance

    def trial(self) -> float:
        low, high, f_low, f_high = self.low, self.high, self.f_low, self.f_high
        trial = (low * f_high - high * f_low) / (f_high - f_low) if f_high != f_low else 0.5 * (low + high)
        return trial if low < trial < high else 0.5 * (low + high)

    @property
    def width(self) -> float:
        return (self.high - self.low) * self.length

    def update(self, trial: float, value: float) -> bool:
        if (value < 0.0) == (self.f_low < 0.0):
            self.low, self.f_low = trial, value
            if self.side == -1:
                self.f_high *= 0.5
            self.side = -1
        else:
            self.high, self.f_high = trial, value
            if self.side == 1:
                self.f_low *= 0.5
            self.side = 1
        self.moved = abs(trial - self.previous) * self.length
        self.previous = trial
        return self.width <= self.tolerance or self.moved <= self.tolerance

    @property
    def located_to(self) -> float:
        return min(self.width, self.moved)


def locate_zero(
    extended: Extended,
    a: tuple[np.ndarray, np.ndarray, float],
    b: tuple[np.ndarray, np.ndarray, float],
    test: Callable[[np.ndarray, np.ndarray], float],
    options,
) -> Located | None:
    """Zero of ``test(x, tangent)`` between accepted points ``a`` and ``b`` by the Illinois method.

    Each trial position along the chord from ``a`` to ``b`` is corrected back onto the branch (Newton
    on the hyperplane orthogonal to the chord), so every iterate is a genuine solution point; the
    Illinois variant of regula falsi (Dowell & Jarratt, BIT 11, 1971) keeps the bracket shrinking from
    both sides.

    Args:
        extended: the system.
        a, b: (x, tangent, test value) at the two bracketing points; the values differ in sign.
        test: the test function of a point and its tangent.
        options: the trace options (tolerances).

    Returns:
        The located point, or None if a correction failed (the caller then reports the crossing at
        the nearer bracketing point).
    """
    xa, ta, fa = a
    xb, tb, fb = b
    chord = xb - xa
    length = float(np.linalg.norm(chord))
    if length == 0.0:
        return None
    unit = chord / length
    bracket = IllinoisBracket(fa, fb, length, options.location_tolerance)
    best: Located | None = None
    for _ in range(100):
        trial = bracket.trial()
        correction = _point_at(extended, xa, chord, trial, options)
        if not correction.converged:
            return best
        t = _tangent_at(correction, unit, ta)
        value = float(test(correction.x, t))
        best = Located(trial, correction.x, t, correction.residual_norm, correction.iterations,
                       0.0 if value == 0.0 else bracket.width)
        if value == 0.0:  # an exact zero of the test function: located exactly
            return best
        if bracket.update(trial, value):
            break
    if best is None:
        return None
    return Located(best.fraction, best.x, best.tangent, best.residual_norm, best.iterations, bracket.located_to)


def locate_level(
    extended: Extended,
    a: tuple[np.ndarray, np.ndarray],
    b: tuple[np.ndarray, np.ndarray],
    coordinate: int,
    level: float,
    options,
) -> Located | None:
    """The point between ``a`` and ``b`` where coordinate ``coordinate`` equals ``level`` exactly.

    Newton on G(x) = 0, x[coordinate] = level from the linear interpolate; if that lands outside the
    bracket (the coordinate turns between ``a`` and ``b``), fall back to :func:`locate_zero`.
    """
    xa, ta = a
    xb, tb = b
    span = xb[coordinate] - xa[coordinate]
    fraction = 0.0 if span == 0.0 else (level - xa[coordinate]) / span
    row = np.zeros(xa.size)
    row[coordinate] = 1.0
    guess = xa + fraction * (xb - xa)
    length = float(np.linalg.norm(xb - xa))
    correction = correct(extended, guess, row, level, tolerance=options.tolerance,
                         max_iterations=2 * options.max_iterations, max_distance=length)
    if correction.converged:
        offset = correction.x - xa
        along = float(offset @ (xb - xa)) / max(length**2, 1e-300)
        if -1e-9 <= along <= 1 + 1e-9:
            t = _tangent_at(correction, row, ta)
            return Located(min(max(along, 0.0), 1.0), correction.x, t, correction.residual_norm,
                           correction.iterations, 0.0)
    return locate_zero(
        extended,
        (xa, ta, xa[coordinate] - level),
        (xb, tb, xb[coordinate] - level),
        lambda x, t: x[coordinate] - level,
        options,
    )
