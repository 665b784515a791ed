"""Passing a singular point where a second solution family meets the branch, on the same branch.

At a critical point of phase equilibrium the traced branch (two distinct phases) meets the trivial
family (two equal phases: K = 1, equal volumes), which solves the same equations for every
temperature and pressure. There the Jacobian loses rank by more than one, and near it the equations
are ill-conditioned: a step of ordinary continuation may jump the point, or a corrector may slide onto
the trivial family. The engine passes such a point along one chosen coordinate c that vanishes on the
second family and changes sign along the branch (for an envelope, the ln K of an outer component):

* when |c| falls to ``near`` (located exactly, like a bound, so no step can jump it), every further
  step fixes c in the corrector (natural parametrisation in c: Rheinboldt, Numerical Analysis of
  Parametrized Nonlinear Equations, Wiley 1986, ch. 4) and approaches c = 0 no closer than ``gap``;
  with c fixed away from zero the trivial family is not a solution, so Newton cannot land on it;
* one step then jumps from c = +gap to c = -gap (a fixed-coordinate constraint through the singular
  value; Michelsen, Fluid Phase Equilibria 4 (1980) 1, steps the specified ln K across zero the same
  way). If a fold's test function changes sign across the jump, the gap is halved (down to
  ``smallest_gap``) so the fold falls on one side, where it is located on Newton-converged points like
  any other;
* the singular point itself is not a regular solution of the branch's equations. If the caller gives
  ``land``, it solves the point's own defining system (for a mixture critical point, Heidemann &
  Khalil, AIChE J. 26 (1980) 769) from the two bracketing points; the engine inserts it as a row
  between them, with its residual measured in the branch's equations. Without ``land`` the row is the
  midpoint of the two bracketing points, reported as an estimate with ``located_to`` the jump's length;
* the steps then leave at fixed c until |c| = ``near`` on the far side, and ordinary continuation
  resumes.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np

from ..base._errors import InputError

__all__ = ["Crossing", "Landing"]


@dataclass(frozen=True)
class Landing:
    """The singular point where a second family meets the branch, from its own defining system.

    Attributes:
        x: its coordinates (unknowns, then the free parameter).
        located_to: how well its position is known (e.g. the last Newton step of its defining system).
        info: facts to report with it (e.g. the residuals of its defining system).
    """

    x: np.ndarray
    located_to: float
    info: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Crossing:
    """Where a second solution family crosses the branch, passed along one coordinate (see the module).

    Args:
        coordinates: names of coordinates that all vanish on the second family; the passage runs
            along the one largest in size at the start of the trace (an outer component's ln K).
        near: |c| at which the passage begins and, on the far side, ends.
        gap: closest |c| of a passage point to the singular point before the jump across it.
        smallest_gap: the gap is halved no further than this when a fold straddles the jump.
        kind: kind of the special point reported at the singular point (e.g. ``"critical"``).
        name: its name.
        land: optional ``land(before, after) -> Landing | None``: the singular point from the two
            points that bracket it (coordinates at c = +gap and c = -gap).

    Raises:
        InputError: no coordinates, gaps not 0 < smallest_gap <= gap < near, a land that is not callable.
    """

    coordinates: Sequence[str]
    near: float = 0.1
    gap: float = 0.02
    smallest_gap: float = 0.0025
    kind: str = "crossing"
    name: str = "singular crossing"
    land: Callable[[np.ndarray, np.ndarray], Landing | None] | None = None

    def __post_init__(self) -> None:
        if isinstance(self.coordinates, str) or not self.coordinates:
            raise InputError("crossing coordinates must be a non-empty sequence of coordinate names")
        object.__setattr__(self, "coordinates", tuple(self.coordinates))
        for name in ("near", "gap", "smallest_gap"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
                raise InputError(f"crossing {name}={value!r} must be a finite number")
        if not 0.0 < self.smallest_gap <= self.gap < self.near:
            raise InputError(f"crossing gaps must satisfy 0 < smallest_gap ({self.smallest_gap}) <= gap "
                             f"({self.gap}) < near ({self.near})")
        if self.land is not None and not callable(self.land):
            raise InputError("crossing land must be callable as land(before, after)")
        if not isinstance(self.kind, str) or not self.kind:
            raise InputError("crossing kind must be a non-empty string")


class Passage:
    """The state of one passage along coordinate ``key`` (private to the driver)."""

    def __init__(self, crossing: Crossing, candidates: Sequence[int]) -> None:
        self.crossing = crossing
        self.candidates = tuple(candidates)
        self.key = self.candidates[0]  # chosen when the passage begins
        self.gap = crossing.gap
        self.active = False
        self.done = False
        self.side = 0.0  # sign of c on the approach
        self.crossed = False
        self.history: list[np.ndarray] = []  # the accepted passage points (both sides), for the predictor
        self.ratio = 0.6

    def distance(self, x: np.ndarray) -> float:
        """Distance of x from the second family: the largest |c| over the candidate coordinates."""
        return float(np.max(np.abs(x[list(self.candidates)])))

    def entries(self, x0: np.ndarray, x1: np.ndarray) -> list[tuple[int, float]]:
        """(coordinate, level) whose crossing inside the piece from x0 to x1 may begin the passage.

        The passage begins where the last candidate enters [-near, near]: each candidate that enters in
        this piece is a possible start (the caller takes the last along the branch). A piece that
        crosses the whole region (every candidate changes sign at once, as at a critical point) begins
        it where the candidate that changes most reaches ``near`` on the near side.
        """
        near = self.crossing.near
        entering = [(c, math.copysign(near, x0[c])) for c in self.candidates if abs(x0[c]) > near >= abs(x1[c])]
        if entering and self.distance(x1) <= near:
            return entering
        if all(x0[c] * x1[c] < 0.0 for c in self.candidates):
            c = max(self.candidates, key=lambda k: (abs(x1[k] - x0[k]), -k))
            if abs(x0[c]) > near:
                return [(c, math.copysign(near, x0[c]))]
        return []

    def begin(self, x: np.ndarray, key: int) -> None:
        """Begin the passage at x along coordinate ``key``."""
        self.key = key
        self.active = True
        self.side = 1.0 if x[self.key] > 0.0 else -1.0
        self.history = [np.array(x, dtype=float)]

    def begin_at_start(self, x: np.ndarray, t: np.ndarray) -> None:
        """Begin the passage at a start within ``near`` of the second family, when the tangent heads
        towards it; heading away, ordinary continuation leaves the region (a later return enters it
        through ``entries`` like any other)."""
        key = max(self.candidates, key=lambda k: (abs(x[k]), -k))
        if x[key] * t[key] < 0.0:
            self.begin(x, key)

    def predict(self, level: float) -> np.ndarray | None:
        """Predictor of a passage step: each coordinate extrapolated to c = ``level`` by the quadratic
        through the last three passage points in c (the branch is smooth in c through the crossing,
        where the tangent is ill-conditioned). None with fewer than three points."""
        if len(self.history) < 3:
            return None
        points = np.array(self.history[-3:])
        c = points[:, self.key]
        weights = np.empty(3)
        for i in range(3):
            others = [c[j] for j in range(3) if j != i]
            weights[i] = (level - others[0]) * (level - others[1]) / ((c[i] - others[0]) * (c[i] - others[1]))
        predicted = weights @ points
        predicted[self.key] = level
        return predicted

    def jumping(self, x: np.ndarray) -> bool:
        return not self.crossed and abs(x[self.key]) <= self.gap * (1.0 + 1e-9)

    def plan(self, x: np.ndarray, t: np.ndarray) -> tuple[float, np.ndarray, float]:
        """(predictor step length, corrector row, target value of c) of the next passage step.

        The levels of c shrink (approach) or grow (departure) geometrically by ``ratio``, which a
        failed step brings closer to one; the jump goes from +gap to -gap."""
        here = float(x[self.key])
        rate = float(t[self.key])
        if not self.crossed:
            if self.jumping(x):
                level = -self.side * self.gap
            else:
                level = self.side * max(self.gap, abs(here) * self.ratio)
        else:
            level = -self.side * min(self.crossing.near, abs(here) / self.ratio)
        row = np.zeros(x.size)
        row[self.key] = 1.0
        step = abs((level - here) / rate) if rate != 0.0 else abs(level - here)
        return step, row, level

    def failed(self) -> bool:
        """After a failed passage step: bring the levels closer; False when they cannot come closer."""
        if self.ratio >= 0.95:
            return False
        self.ratio = 1.0 - 0.5 * (1.0 - self.ratio)
        return True

    def succeeded(self) -> None:
        self.ratio = max(0.5, 1.0 - 1.25 * (1.0 - self.ratio))

    def shrink(self) -> bool:
        """Halve the gap (a fold straddles the jump); False when it is already the smallest."""
        if self.gap <= self.crossing.smallest_gap * (1.0 + 1e-9):
            return False
        self.gap = max(self.crossing.smallest_gap, 0.5 * self.gap)
        return True

    def advance(self, x: np.ndarray) -> None:
        """After an accepted passage step to x: note the crossing, and end the passage past ``near``."""
        if not self.crossed and x[self.key] * self.side < 0.0:
            self.crossed = True
        self.history.append(np.array(x, dtype=float))
        if self.crossed and abs(x[self.key]) >= self.crossing.near * (1.0 - 1e-9):
            self.active = False
            self.done = True

    def rearm(self, x: np.ndarray) -> None:
        """After a passage, allow the next one once the branch is well away from the second family
        (a branch may meet it again, e.g. at a second critical point)."""
        if self.done and self.distance(x) > 1.5 * self.crossing.near:
            self.done = False
            self.crossed = False
            self.gap = self.crossing.gap
            self.ratio = 0.6
            self.history = []
