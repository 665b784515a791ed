"""Mixture critical points (Heidemann & Khalil 1980) and binary critical loci."""

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
    assert locus.T[0] == pytest.approx(propane.Tc, rel=1e-5) and locus.P[0] == pytest.approx(propane.Pc, rel=1e-5)
    assert locus.T[-1] == pytest.approx(ethane.Tc, rel=1e-5) and locus.P[-1] == pytest.approx(ethane.Pc, rel=1e-5)
