"""Component table, look-up by name and alias, user components from arguments and files."""

import warnings

import pytest

from contin import InputError
from contin_thermo.models._components import (
    all_components,
    custom_component,
    load_components,
    lookup,
    parse_component,
)


def test_table_has_at_least_twenty_fluids_each_with_a_source():
    table = all_components()
    assert len(table) >= 20
    assert all(c.source.strip() for c in table)
    assert [c.name for c in table] == sorted(c.name for c in table)


@pytest.mark.parametrize(
    "name, Tc, Pc, omega",
    [
        # Poling, Prausnitz & O'Connell, The Properties of Gases and Liquids, 5th ed., Appendix A (memory).
        ("methane", 190.56, 45.99e5, 0.011),
        ("propane", 369.83, 42.48e5, 0.152),
        ("n-decane", 617.70, 21.10e5, 0.490),
        ("carbon dioxide", 304.12, 73.74e5, 0.225),
        ("water", 647.14, 220.64e5, 0.344),
        ("argon", 150.86, 48.98e5, -0.002),
    ],
)
def test_table_values_match_the_reference_table(name, Tc, Pc, omega):
    c = lookup(name)
    assert (c.Tc, c.Pc, c.omega) == (pytest.approx(Tc), pytest.approx(Pc), pytest.approx(omega))


@pytest.mark.parametrize(
    "alias, name",
    [("CO2", "carbon dioxide"), ("h2s", "hydrogen sulfide"), ("N2", "nitrogen"), ("C1", "methane"),
     ("C2", "ethane"), ("C3", "propane"), ("nC4", "n-butane"), ("iC4", "isobutane"), ("nC5", "n-pentane"),
     ("Carbon_Dioxide", "carbon dioxide"), ("  Methane ", "methane"), ("H2O", "water")],
)
def test_aliases_and_case_are_accepted(alias, name):
    assert lookup(alias).name == name


@pytest.mark.parametrize("alias, name", [("nC6", "n-hexane"), ("n-C7", "n-heptane"), ("nc8", "n-octane"),
                                         ("nC10", "n-decane"), ("n-C12", "n-dodecane"), ("heptane", "n-heptane")])
def test_n_alkanes_keep_their_n_prefixed_names(alias, name):
    assert lookup(alias).name == name


@pytest.mark.parametrize("bare, alkane", [("C6", "n-hexane"), ("C7", "n-heptane"), ("c8", "n-octane"),
                                          ("C9", "n-nonane"), ("C10", "n-decane"), ("C12", "n-dodecane")])
def test_bare_carbon_numbers_are_fractions_not_components(bare, alkane):
    # in gas and oil analyses C6, C7, ... are carbon-number fractions, not n-alkanes (common practice)
    count = bare[1:]
    with pytest.raises(InputError, match=rf"^--fluid: 'C{count}' is a carbon-number fraction in gas analyses, not a "
                                         rf"component here; for {alkane} write 'nC{count}' or '{alkane}'$"):
        lookup(bare)


def test_carbon_number_without_a_table_alkane_and_plus_fractions():
    with pytest.raises(InputError, match=r"^--mixture: 'C11' is a carbon-number fraction in gas analyses, not a "
                                         r"component here; describe the fraction as a component of your own with "
                                         r"its Tc, Pc and omega$"):
        lookup("C11", argument="--mixture")
    with pytest.raises(InputError, match=r"^--fluid: 'C7\+' is a plus fraction in gas analyses \(all of carbon "
                                         r"number 7 and above\), not a component here"):
        lookup("C7+")
    mine = custom_component("C7", 540.0, 2.7e6, 0.35)
    assert lookup("C7", extra=[mine]) is mine  # a component of the user's own may take the name


def test_unknown_fluid_suggests_the_closest_name():
    with pytest.raises(InputError, match=r"unknown component 'metane' in --fluid; did you mean 'methane'\?"):
        lookup("metane")


def test_unknown_fluid_without_close_name_points_to_the_list():
    with pytest.raises(InputError, match=r"unknown component 'zzzz' in --fluid; run `contin thermo components`"):
        lookup("zzzz")


def test_custom_component_and_shadowing():
    mine = custom_component("my-oil", 620.5, 2.1e6, 0.52, aliases=["C1"])
    assert lookup("my-oil", extra=[mine]) == mine
    assert lookup("c1", extra=[mine]) is mine  # user components are searched first
    assert lookup("c1").name == "methane"


@pytest.mark.parametrize("Tc, Pc, message", [
    (-10.0, 1e6, r"Tc of 'x' is -10 K; it must be positive"),
    (0.0, 1e6, r"Tc of 'x' is 0 K; it must be positive"),
    (300.0, -1.0, r"Pc of 'x' is -1 Pa; it must be positive"),
])
def test_custom_component_refuses_non_positive_constants(Tc, Pc, message):
    with pytest.raises(InputError, match=message):
        custom_component("x", Tc, Pc, 0.1)


def test_custom_component_refuses_text_and_nan():
    with pytest.raises(InputError, match=r"Tc of 'x' is 'hot', not a number"):
        custom_component("x", "hot", 1e6, 0.1)
    with pytest.raises(InputError, match=r"omega of 'x' is nan; give a finite number"):
        custom_component("x", 300.0, 1e6, float("nan"))


def test_custom_component_refuses_an_empty_name():
    with pytest.raises(InputError, match="the component name is empty"):
        custom_component("  ", 300.0, 1e6, 0.1)


def test_unusual_omega_warns_and_implausible_omega_is_refused():
    with pytest.warns(UserWarning, match=r"omega=1.8 of 'x' is outside the usual range -0.5..1.5"):
        custom_component("x", 300.0, 1e6, 1.8)
    with pytest.raises(InputError, match=r"omega=5 of 'x' is outside the plausible range -1..3"):
        custom_component("x", 300.0, 1e6, 5.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        custom_component("x", 300.0, 1e6, 0.3)  # no warning in the usual range


def test_parse_component_option():
    c = parse_component("my-oil,620.5,2.1e6,0.52")
    assert (c.name, c.Tc, c.Pc, c.omega) == ("my-oil", 620.5, 2.1e6, 0.52)
    with pytest.raises(InputError, match=r"--component 'my-oil,620.5' must be NAME,Tc,Pc,omega"):
        parse_component("my-oil,620.5")


def test_load_components_from_csv(tmp_path):
    path = tmp_path / "mine.csv"
    path.write_text("# my fluids\nname,Tc,Pc,omega,aliases\nheavy cut,700,1.5e6,0.9,HC1;cut-1\n")
    (c,) = load_components(path)
    assert (c.name, c.Tc, c.Pc, c.omega, c.aliases) == ("heavy cut", 700.0, 1.5e6, 0.9, ("HC1", "cut-1"))
    assert lookup("hc1", extra=[c]) is c


def test_load_components_from_toml(tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text('[[component]]\nname = "heavy cut"\nTc = 700.0\nPc = 1.5e6\nomega = 0.9\naliases = ["HC1"]\n')
    (c,) = load_components(path)
    assert (c.name, c.Tc, c.aliases) == ("heavy cut", 700.0, ("HC1",))


def test_load_components_bad_files(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        load_components(tmp_path / "none.csv")
    odd = tmp_path / "mine.txt"
    odd.write_text("x")
    with pytest.raises(InputError, match=r"must end in .csv or .toml"):
        load_components(odd)
    bad = tmp_path / "bad.csv"
    bad.write_text("name,Tc,omega\nx,1,2\n")
    with pytest.raises(InputError, match=r"bad.csv: the header lacks column\(s\) Pc"):
        load_components(bad)
    row = tmp_path / "row.csv"
    row.write_text("name,Tc,Pc,omega\nx,300,1e6,0.1\ny,-3,1e6,0.1\n")
    with pytest.raises(InputError, match=r"row.csv, data row 2: Tc of 'y' is -3 K"):
        load_components(row)
    typo = tmp_path / "typo.toml"
    typo.write_text('[[component]]\nname = "x"\nTc = 300.0\nPc = 1e6\nomega = 0.1\nomgea = 2\n')
    with pytest.raises(InputError, match=r"unknown key 'omgea'; did you mean 'omega'\?"):
        load_components(typo)
    empty = tmp_path / "empty.toml"
    empty.write_text("title = 'x'\n")
    with pytest.raises(InputError, match=r"no \[\[component\]\] tables found"):
        load_components(empty)
    clash = tmp_path / "clash.csv"
    clash.write_text("name,Tc,Pc,omega,aliases\nx,300,1e6,0.1,A\ny,310,1e6,0.1,a\n")
    with pytest.raises(InputError, match=r"the name 'a' is used by both 'x' and 'y'"):
        load_components(clash)
