"""Round-off must never decide an answer: a few envelopes traced again under other BLAS / CPU kernels.

Each setting runs in a fresh Python (``envelope_checks.run_in_subprocess``), because OpenBLAS picks
its kernels and numpy its SIMD targets when they load: the OpenBLAS core types Haswell and Prescott
(``OPENBLAS_CORETYPE``), every numpy dispatch target off (``NPY_DISABLE_CPU_FEATURES`` with the names
this numpy build accepts), and the default kernels with the start pressure times (1 + 1e-9). Every
run must give the same status and the same critical point, cricondenbar and cricondentherm (T and P
to 1e-7 relative) as the default run. The whole set (150 feeds, more settings) is
``benchmarks/robustness.py --kernels --perturb 1e-9``.
"""

import pytest
from envelope_checks import SAME, differences, dispatch_targets, kernel_settings, run_in_subprocess

# r43: the 13-component SRK gas condensate nitrogen..n-decane, kij = 0, of the robustness set (issue 9,
# finding 6); r00: an 11-component PR natural gas; from the benchmark set, four feeds whose outcome
# changed with the kernel or the start on the code of this commit: m005 (SRK, methane, ethane,
# isopentane, n-decane), m066 and m086 (nitrogen-rich PR with heavy ends), m127 (nitrogen-rich SRK,
# 13 components).
SUBSET = ("r43", "r00", "m005", "m066", "m086", "m127")
PERTURB = 1e-9
_EVERY_TARGET_OFF = {"NPY_DISABLE_CPU_FEATURES": ",".join(dispatch_targets())}
SETTINGS = {name: (environment, 0.0) for name, environment in kernel_settings()
            if name in ("OPENBLAS_CORETYPE=Haswell", "OPENBLAS_CORETYPE=Prescott") or environment == _EVERY_TARGET_OFF}
SETTINGS[f"start pressure x (1 + {PERTURB:g})"] = ({}, PERTURB)


@pytest.fixture(scope="module")
def runs():
    out = {"default": run_in_subprocess("benchmark", {}, idents=SUBSET, residuals=False)}
    for name, (environment, perturb) in SETTINGS.items():
        out[name] = run_in_subprocess("benchmark", environment, idents=SUBSET, perturb=perturb, residuals=False)
    return out


def test_the_settings_cover_two_blas_cores_numpy_targets_and_a_perturbed_start():
    assert "OPENBLAS_CORETYPE=Prescott" in SETTINGS
    assert any(name.startswith("NPY_DISABLE_CPU_FEATURES=") for name in SETTINGS)
    assert SETTINGS[f"start pressure x (1 + {PERTURB:g})"] == ({}, PERTURB)
    assert SAME == 1e-7 and len(SUBSET) == 6


def test_the_children_really_run_under_the_kernels_asked_for(runs):
    # The child reports the core OpenBLAS loaded (threadpoolctl, or OpenBLAS's own corename call) and
    # the numpy dispatch targets still active; a setting that changed nothing would prove nothing.
    default_cores = runs["default"][0]["blas_cores"]
    for name, (info, records) in runs.items():
        assert [r["case"] for r in records] == list(SUBSET), name
        print(name, info["blas_cores"], info["numpy_dispatch_active"])
    if "OPENBLAS_CORETYPE=Haswell" in runs:
        assert all(core.lower().endswith("haswell") for core in runs["OPENBLAS_CORETYPE=Haswell"][0]["blas_cores"])
    prescott = runs["OPENBLAS_CORETYPE=Prescott"][0]["blas_cores"]
    assert prescott != default_cores and "unknown" not in prescott
    for name, (info, _) in runs.items():
        if name.startswith("NPY_DISABLE_CPU_FEATURES="):
            assert info["numpy_dispatch_active"] == [], name
            assert runs["default"][0]["numpy_dispatch_active"] != []


@pytest.mark.parametrize("setting", list(SETTINGS))
def test_same_statuses_and_special_points_as_the_default_kernels(runs, setting):
    _, reference = runs["default"]
    _, records = runs[setting]
    found = {}
    for expected, got in zip(reference, records, strict=True):
        difference = differences(expected["outcome"], got["outcome"], rel=SAME)
        if difference:
            found[expected["case"]] = difference
    assert not found, "\n".join([f"{setting}: {len(found)} of {len(reference)} feeds differ from the default run"]
                                 + [f"{ident}: {'; '.join(found[ident])}" for ident in found])
