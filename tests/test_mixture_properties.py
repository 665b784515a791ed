"""Mixture properties from the Helmholtz energy: derivatives, Gibbs-Duhem, pure limit, Wilson, Rachford-Rice."""


import numpy as np
import pytest

from contin import InputError
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture, rachford_rice

KIJ = np.array([[0, 0, 0.02], [0, 0, 0], [0.02, 0, 0]])  # invented values
MIX = Mixture((lookup("methane"), lookup("ethane"), lookup("n-butane")), family("pr"), KIJ)
X = np.array([0.5, 0.3, 0.2])
T, P = 250.0, 3e6


def test_roots_reproduce_the_pressure():
    for v in MIX.volume_roots(T, P, X):
        assert MIX.pressure(T, v, X) == pytest.approx(P, rel=1e-12)


def test_ln_phi_derivatives_match_central_differences():
    ln_phi, d_T, d_P, d_n = MIX.ln_phi_derivatives(T, P, X, "liquid")
    h = 1e-4
    numeric_T = (MIX.ln_phi(T + h, P, X, "liquid") - MIX.ln_phi(T - h, P, X, "liquid")) / (2 * h)
    numeric_P = (MIX.ln_phi(T, P * (1 + 1e-6), X, "liquid") - MIX.ln_phi(T, P * (1 - 1e-6), X, "liquid")) / (2e-6 * P)
    assert np.allclose(d_T, numeric_T, rtol=1e-6, atol=1e-9)
    assert np.allclose(d_P, numeric_P, rtol=1e-6, atol=1e-14)
    e = 1e-6
    numeric_n = np.column_stack([(MIX.ln_phi(T, P, X + e * u, "liquid") - MIX.ln_phi(T, P, X - e * u, "liquid")) / (2 * e)
                                 for u in np.eye(3)])
    assert np.allclose(d_n, numeric_n, rtol=1e-6, atol=1e-8)


def test_gibbs_duhem():
    # sum_i x_i d ln phi_i / d n_j = 0 at fixed T, P (Gibbs-Duhem; Michelsen & Mollerup 2007, ch. 2)
    _, _, _, d_n = MIX.ln_phi_derivatives(T, P, X, "vapour")
    assert np.max(np.abs(X @ d_n)) < 1e-12


def test_pure_limit_of_ln_phi():
    # Two components with identical constants: each ln phi equals the pure fluid's (common practice).
    propane = lookup("propane")
    twin = type(propane)("propane twin", propane.Tc, propane.Pc, propane.omega)
    mixture = Mixture((propane, twin), family("srk"))
    a = mixture.ln_phi(300.0, 5e5, np.array([0.3, 0.7]), "vapour")
    b = mixture.ln_phi(300.0, 5e5, np.array([0.9, 0.1]), "vapour")
    assert a[0] == pytest.approx(a[1], rel=1e-13) and a[0] == pytest.approx(b[0], rel=1e-12)


def test_wilson_k_at_critical_point_is_one():
    # Wilson (1969): K_i = (Pc_i/P) exp(5.373 (1 + w_i)(1 - Tc_i/T)) equals 1 at (Tc_i, Pc_i).
    K = MIX.wilson(MIX.Tc[1], MIX.Pc[1])
    assert K[1] == pytest.approx(1.0, rel=1e-14)


def test_rachford_rice_root():
    z, K = np.array([0.5, 0.3, 0.2]), np.array([3.0, 0.8, 0.1])
    beta = rachford_rice(z, K)
    assert np.sum(z * (K - 1) / (1 + beta * (K - 1))) == pytest.approx(0.0, abs=1e-12)


def test_rachford_rice_without_root():
    with pytest.raises(InputError, match="every K-value lies on the same side of 1"):
        rachford_rice(np.array([0.5, 0.5]), np.array([2.0, 3.0]))


@pytest.mark.parametrize(
    "kij, message",
    [
        (np.full((3, 3), 0.1), "zero diagonal"),
        (np.array([[0, 0.1, 0], [0.2, 0, 0], [0, 0, 0]]), "symmetric"),
        (np.array([[0, 1.0, 0], [1.0, 0, 0], [0, 0, 0]]), "strictly between -1 and 1"),
        (np.zeros((2, 2)), "3 x 3 matrix"),
    ],
)
def test_bad_kij(kij, message):
    with pytest.raises(InputError, match=message):
        Mixture((lookup("methane"), lookup("ethane"), lookup("n-butane")), family("pr"), kij)


def test_one_component_points_to_saturation():
    with pytest.raises(InputError, match="contin thermo saturation"):
        Mixture((lookup("methane"),), family("pr"))


def test_duplicate_component():
    with pytest.raises(InputError, match="appears twice"):
        Mixture((lookup("methane"), lookup("methane")), family("pr"))
