"""The trace limits BLAS to one thread while it runs and restores the caller's setting: the result
does not depend on how many BLAS threads the caller allows."""

from __future__ import annotations

import numpy as np
import pytest
from threadpoolctl import threadpool_info, threadpool_limits

import contin
from catalogue import bratu_system
from contin.tracing._tangent import one_blas_thread


def blas_threads() -> set[int]:
    return {entry["num_threads"] for entry in threadpool_info() if entry["user_api"] == "blas"}


def traced(interior: int, seen: list) -> contin.Branch:
    system = bratu_system(interior)
    return contin.trace(system, np.zeros(interior), free="lambda", step=0.1, max_step=0.5,
                        bounds={"lambda": (-0.1, 4.0), f"u{interior // 2}": (-1.0, 3.0)}, max_points=60,
                        on_point=lambda index, x, special: seen.append(blas_threads()))


@pytest.mark.skipif(not blas_threads(), reason="no BLAS library that threadpoolctl can control is loaded")
def test_the_trace_is_the_same_with_one_and_two_caller_threads_and_the_setting_is_restored():
    results = {}
    for threads in (1, 2):
        seen: list = []
        with threadpool_limits(limits=threads, user_api="blas"):
            before = blas_threads()
            results[threads] = traced(160, seen)
            assert blas_threads() == before  # restored on return
        assert seen and all(inside == {1} for inside in seen)  # one thread while the trace runs
    one, two = results[1], results[2]
    assert one.success and [sp.kind for sp in one.special_points] == ["fold", "bound"]
    assert np.array_equal(one.points, two.points)
    assert np.array_equal(one.newton_iterations, two.newton_iterations)
    assert one.stats["newton_iterations"] == two.stats["newton_iterations"]
    assert one.stats["rejections"] == two.stats["rejections"]


@pytest.mark.skipif(not blas_threads(), reason="no BLAS library that threadpoolctl can control is loaded")
def test_nested_limits_restore_the_first_setting_only_when_the_last_block_ends():
    with threadpool_limits(limits=2, user_api="blas"):
        with one_blas_thread():
            with one_blas_thread():
                assert blas_threads() == {1}
            assert blas_threads() == {1}
        assert blas_threads() == {2}


def test_a_failing_trace_restores_the_setting_too():
    def boom(u, p):
        raise ZeroDivisionError("bad")

    system = contin.CallableSystem(lambda u, p: u - p[0], ["u"], {"p": 0.0}, start=[0.0])
    before = blas_threads()
    branch = contin.trace(system, free="p", max_points=5, on_point=lambda *a: boom(None, None))
    assert branch.status.label == "interrupted" and "ZeroDivisionError" in branch.message
    assert blas_threads() == before
