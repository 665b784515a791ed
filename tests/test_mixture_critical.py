"""Mixture critical points (Heidemann & Khalil 1980) and binary critical loci."""

import math

import numpy as np
import pytest

from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture
from contin_thermo.curves._mixture_critical import binary_critical_locus, critical_point


def test_critical_conditions_hold_at_the_answer():
    mixture = Mixture((lookup("methane"), lookup("n-butane")), family("srk"))
    point = critical_point(mixture, [0.7, 0.3])
    assert abs(point.eigenvalue) < 1e-9 and abs(point.cubic) < 1e-7


def test_binary_locus_ends_at_pure_critical_points():
    # The EOS reproduces each component's Tc, Pc exactly (a, b from Omega_a, Omega_b); the locus must end there.
    ethane, propane = lookup("ethane"), lookup("propane")
    locus = binary_critical_locus(Mixture((ethane, propane), family("srk")))
    assert locus.status == "bound_reached"
    # one line saying how each half ended, in order
    down, up = locus.message.split("; x1 towards 1: ")
    assert down.startswith("x1 towards 0: completed: the branch reached a bound x1 = 1e-07 at lnT = ")
    assert up.startswith("completed: the branch reached a bound x1 = 0.9999999 at lnT = ") and "\n" not in locus.message
    assert locus.T[0] == pytest.approx(propane.Tc, rel=1e-5) and locus.P[0] == pytest.approx(propane.Pc, rel=1e-5)
    assert locus.T[-1] == pytest.approx(ethane.Tc, rel=1e-5) and locus.P[-1] == pytest.approx(ethane.Pc, rel=1e-5)


def _ln_fugacity_slopes(mixture, T, P, x1, h):
    """d ln f1 / d x1 and d^2 ln f1 / d x1^2 at fixed T and P, by central differences of the fugacity
    of component 1 (ln f1 = ln x1 + ln phi1 + ln P; the ln P term drops out)."""
    f = [math.log(x1 + k * h) + mixture.ln_phi(T, P, np.array([x1 + k * h, 1.0 - x1 - k * h]), "stable")[0]
         for k in (-1, 0, 1)]
    return (f[2] - f[0]) / (2 * h), (f[2] - 2 * f[1] + f[0]) / h**2


@pytest.mark.parametrize("names, eos, x1", [(("methane", "n-butane"), "srk", 0.7),
                                            (("methane", "propane"), "pr", 0.5)])
def test_a_binary_critical_point_meets_the_gibbs_criterion_in_temperature_and_pressure(names, eos, x1):
    # An independent criterion (Gibbs' conditions for a critical phase of a binary, common practice):
    # (d mu1/d x1) and (d^2 mu1/d x1^2) vanish at fixed T and P. The point itself comes from Heidemann & Khalil's Helmholtz-energy criterion in T
    # and V; this check uses only fugacity coefficients at T and P. 2 K away the slope is clearly not 0.
    mixture = Mixture(tuple(lookup(n) for n in names), family(eos))
    point = critical_point(mixture, [x1, 1.0 - x1])
    first, _ = _ln_fugacity_slopes(mixture, point.T, point.P, x1, 1e-4)
    _, second = _ln_fugacity_slopes(mixture, point.T, point.P, x1, 3e-4)
    assert abs(first) < 1e-5 and abs(second) < 1e-4
    for dT in (-2.0, 2.0):
        off, _ = _ln_fugacity_slopes(mixture, point.T + dT, point.P, x1, 1e-4)
        assert abs(off) > 1e-3
