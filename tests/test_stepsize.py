"""The step-size controller as a small object of its own."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from contin.tracing._stepsize import StepController


def test_easy_steps_grow_and_hard_ones_shrink():
    controller = StepController(min_step=1e-6, max_step=1.0, max_turn=0.5)
    assert controller.after_success(0.1, iterations=1, turn=0.01) == pytest.approx(0.16)
    assert controller.after_success(0.1, iterations=3, turn=0.01) == pytest.approx(0.124)  # gently
    assert controller.after_success(0.1, iterations=4, turn=0.01) == pytest.approx(0.1)
    assert controller.after_success(0.1, iterations=6, turn=0.01) == pytest.approx(0.07)
    assert controller.after_success(0.1, iterations=1, turn=0.4) == pytest.approx(0.07)  # turning hard


def test_failures_halve_until_min_step():
    controller = StepController(min_step=0.01, max_step=1.0)
    assert controller.after_failure(0.08) == pytest.approx(0.04)
    assert controller.after_failure(0.015) == pytest.approx(0.01)
    assert controller.after_failure(0.01) is None


def test_large_turns_are_refused():
    controller = StepController(min_step=0.01, max_step=1.0, max_turn=0.3)
    assert controller.accepts(0.29)
    assert not controller.accepts(0.31)


@settings(max_examples=100, derandomize=True)
@given(step=st.floats(1e-6, 1.0), iterations=st.integers(1, 10), turn=st.floats(0.0, 0.5))
def test_next_step_always_within_limits(step, iterations, turn):
    controller = StepController(min_step=1e-6, max_step=1.0, max_turn=0.5)
    assert 1e-6 <= controller.after_success(step, iterations, turn) <= 1.0
