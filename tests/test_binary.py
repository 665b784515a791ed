"""Binary Pxy and Txy diagrams by continuation in composition."""

import numpy as np
import pytest

from contin import InputError
from contin_thermo.curves._binary import pxy, txy
from contin_thermo.models._components import lookup
from contin_thermo.models._eos import family
from contin_thermo.models._mixture import Mixture

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
    assert abs(row[0] - row[1]) <= 1e-8 * row[0]  # x1 = y1 at the located point, not only near it


def test_not_a_binary():
    mixture = Mixture((lookup("methane"), lookup("ethane"), lookup("propane")), family("pr"))
    with pytest.raises(InputError, match="exactly two components"):
        pxy(mixture, 200.0)


def test_temperature_above_critical_of_second():
    with pytest.raises(InputError, match="at or above the critical temperature of n-butane"):
        pxy(PB, 450.0)


def test_a_temperature_far_below_the_second_critical_temperature_is_refused_in_one_line():
    # At 20 K n-butane's vapour pressure (Wilson's estimate) is far below any pressure worth tracing.
    with pytest.raises(InputError, match=r"^--temperature 20 K is too far below the critical temperature of n-butane "
                                         r"\(\S+ K\): its vapour pressure there is below \S+ Pa \(Wilson's estimate\); "
                                         r"give a higher temperature$"):
        pxy(PB, 20.0)


def test_the_summary_gives_each_special_point_with_its_units():
    mixture = Mixture((lookup("ethane"), lookup("carbon dioxide")), family("pr"), np.array([[0, 0.25], [0.25, 0]]))
    diagram = pxy(mixture, 250.0)
    (azeotrope,) = [sp for sp in diagram.special_points if sp["kind"] == "azeotrope"]
    x1, P = azeotrope["values"]["x1"], azeotrope["values"]["P"]
    lines = diagram.summary()
    assert any(line.strip().endswith(f"x1 = {x1:.6g}, P = {P:.6g} Pa") for line in lines), lines
    shown = diagram.summary(units="degC-bar")
    assert any(line.strip().endswith(f"x1 = {x1:.6g}, P = {P / 1e5:.6g} bar") for line in shown), shown


def _hk_at(mixture, x1):
    from contin_thermo.curves._mixture_critical import critical_point

    return critical_point(mixture, [x1, 1.0 - x1])


def test_pxy_above_the_lighter_critical_temperature_stops_at_the_critical_point():
    # 250 K lies above methane's Tc (190.56 K, Poling et al. 5th ed.; memory) and below propane's, so
    # the two-phase region closes at a critical point before x1 = 1 (common practice).
    mixture = Mixture((lookup("methane"), lookup("propane")), family("pr"))
    diagram = pxy(mixture, 250.0)
    assert diagram.success
    critical = [sp for sp in diagram.special_points if sp["kind"] == "critical"]
    assert len(critical) == 1 and critical[0]["index"] == len(diagram.rows) - 1
    last = diagram.rows[-1]
    assert last[0] == last[1] and last[3] == last[4]  # x1 = y1 and one volume at the critical point
    # never past the critical point and back down the dew side: the vapour stays the lighter phase
    assert all(r[4] > r[3] for r in diagram.rows[:-1]) and all(r[1] > r[0] for r in diagram.rows[1:-1])
    # Independent check: Heidemann & Khalil (AIChE J. 26 (1980) 769) at that composition gives T = 250 K.
    hk = _hk_at(mixture, critical[0]["values"]["x1"])
    assert hk.T == pytest.approx(250.0, rel=1e-9)
    assert hk.P == pytest.approx(critical[0]["values"]["P"], rel=1e-6)


def test_txy_above_the_lighter_critical_pressure_stops_at_the_critical_point():
    # 6 MPa lies above methane's Pc (4.599 MPa) and below that of carbon dioxide (7.374 MPa)
    # (Poling et al. 5th ed.; memory), so the Txy region closes at a critical point.
    mixture = Mixture((lookup("methane"), lookup("carbon dioxide")), family("pr"))
    diagram = txy(mixture, 6e6)
    assert diagram.success and diagram.rows[-1][0] < 1.0
    sp = [s for s in diagram.special_points if s["kind"] == "critical"][0]
    hk = _hk_at(mixture, sp["values"]["x1"])
    assert hk.P == pytest.approx(6e6, rel=1e-9)
    assert hk.T == pytest.approx(sp["values"]["T"], rel=1e-6)
    assert all(r[4] > r[3] for r in diagram.rows[:-1])


def test_pxy_below_both_critical_temperatures_has_no_critical_point():
    diagram = pxy(PB, 330.0)
    assert [sp["kind"] for sp in diagram.special_points] == []
    assert diagram.rows[-1][0] == pytest.approx(1.0)


def test_the_pure_ends_are_the_saturation_pressures_of_the_same_model(tmp_path):
    # The model is exact at x1 = 0 and 1: the pure fluids' own coexistence pressures under PR (computed
    # here by the pure-fluid code, an independent path), to 1e-8.
    from contin_thermo.curves._pure import CubicFluid

    diagram = pxy(PB, 330.0)
    assert diagram.columns == ("x1", "y1", "P", "v_liquid", "v_vapour")
    assert (diagram.status, diagram.success) == ("bound_reached", True)
    assert diagram.message == "completed: from pure n-butane (x1 = 0) to pure propane (x1 = 1)"
    for row, name in ((diagram.rows[0], "n-butane"), (diagram.rows[-1], "propane")):
        fluid = CubicFluid(lookup(name), family("pr"))
        x_liquid, x_vapour, p = fluid.saturation_at(330.0 / fluid.component.Tc)
        assert row[2] == pytest.approx(p * fluid.pressure_unit, rel=1e-8), name
        assert row[1] == pytest.approx(row[0], abs=1e-12)  # a pure fluid: both phases have its composition
    assert all(r[3] < r[4] for r in diagram.rows)  # the liquid is the denser phase on every row
    path = diagram.to_csv(tmp_path / "pxy.csv")
    header = [l for l in path.read_text().splitlines() if l.startswith("#")]
    assert "# model: Peng-Robinson; components: propane, n-butane" in header
    assert "# units: x1 [-], y1 [-], P [Pa], v_liquid [m3/mol], v_vapour [m3/mol]" in header
    assert repr(diagram) == (f"<pxy diagram of propane + n-butane at T = 330 K (Peng-Robinson): "
                             f"{len(diagram.rows)} points; no special points; status bound_reached>")


def test_the_csv_of_each_kind_names_its_fixed_value_and_units(tmp_path):
    mixture = Mixture((lookup("methane"), lookup("carbon dioxide")), family("pr"))
    for diagram, title, units in ((pxy(mixture, 250.0), "# pxy diagram at T = 250.0 K", "P [Pa]"),
                                  (txy(mixture, 6e6), "# txy diagram at P = 6000000.0 Pa", "T [K]")):
        path = tmp_path / f"{diagram.kind}.csv"
        diagram.to_csv(path)
        lines = path.read_text().splitlines()
        assert lines[0] == title
        assert lines[1] == "# model: Peng-Robinson; components: methane, carbon dioxide"
        (header,) = [line for line in lines if line.startswith("# units:")]
        assert header == f"# units: x1 [-], y1 [-], {units}, v_liquid [m3/mol], v_vapour [m3/mol]"


def test_special_points_of_a_diagram_have_the_contract_keys_and_say_what_they_are():
    keys = {"kind", "name", "index", "values", "located_to", "info"}
    azeotropic = Mixture((lookup("ethane"), lookup("carbon dioxide")), family("pr"), np.array([[0, 0.25], [0.25, 0]]))
    (azeotrope,) = pxy(azeotropic, 250.0).special_points
    assert set(azeotrope) == keys and azeotrope["info"] == {} and azeotrope["located_to"] < 1e-10
    closing = pxy(Mixture((lookup("methane"), lookup("propane")), family("pr")), 250.0)
    (critical,) = closing.special_points
    assert set(critical) == keys
    assert critical["info"] == {"note": "Heidemann-Khalil critical point of the binary at the fixed temperature"}
    assert closing.message == ("completed: the two-phase region closes at the critical point "
                               f"x1 = {critical['values']['x1']:.6g}, P = {critical['values']['P']:.6g} Pa")
    (critical,) = txy(Mixture((lookup("methane"), lookup("carbon dioxide")), family("pr")), 6e6).special_points
    assert critical["info"] == {"note": "Heidemann-Khalil critical point of the binary at the fixed pressure"}


def test_a_pressure_above_the_second_critical_pressure_is_refused_naming_that_component():
    mixture = Mixture((lookup("methane"), lookup("propane")), family("pr"))
    with pytest.raises(InputError, match=r"^--pressure 5e\+06 Pa is at or above the critical pressure of propane "
                                         r"\(4\.248e\+06 Pa\); give the component that is subcritical second$"):
        txy(mixture, 5e6)
