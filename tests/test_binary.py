"""Binary Pxy and Txy diagrams by continuation in composition."""

import numpy as np
import pytest

from contin import InputError
from contin_thermo._binary import pxy, txy
from contin_thermo._components import lookup
from contin_thermo._eos import family
from contin_thermo._mixture import Mixture

PB = Mixture((lookup("propane"), lookup("n-butane")), family("pr"))


def test_pxy_runs_from_pure_to_pure():
    diagram = pxy(PB, 330.0)
    assert diagram.success
    x1, y1, P = (np.array([r[k] for r in diagram.rows]) for k in range(3))
    assert x1[0] == 0.0 and x1[-1] == pytest.approx(1.0)
    assert np.all(y1 >= x1 - 1e-12)  # propane is the lighter component (common practice)
    assert np.all(np.diff(P) >= 0)  # ideal-like blend: bubble pressure rises with x1


def test_txy_bubble_temperature_falls_with_light_fraction():
    diagram = txy(PB, 1e6)
    T = np.array([r[2] for r in diagram.rows])
    assert diagram.success and np.all(np.diff(T) <= 0)


def test_azeotrope_reported():
    # A large positive kij (invented value, 0.25) gives a maximum-pressure azeotrope, where x1 = y1.
    mixture = Mixture((lookup("ethane"), lookup("carbon dioxide")), family("pr"), np.array([[0, 0.25], [0.25, 0]]))
    diagram = pxy(mixture, 250.0)
    kinds = [sp["kind"] for sp in diagram.special_points]
    assert "azeotrope" in kinds
    row = diagram.rows[[sp for sp in diagram.special_points if sp["kind"] == "azeotrope"][0]["index"]]
    assert abs(row[0] - row[1]) < 0.05


def test_not_a_binary():
    mixture = Mixture((lookup("methane"), lookup("ethane"), lookup("propane")), family("pr"))
    with pytest.raises(InputError, match="exactly two components"):
        pxy(mixture, 200.0)


def test_temperature_above_critical_of_second():
    with pytest.raises(InputError, match="at or above the critical temperature of n-butane"):
        pxy(PB, 450.0)
