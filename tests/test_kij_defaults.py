"""Default interaction parameters: the table, Chueh-Prausnitz for methane with heavy ends, and the sources."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from contin import InputError
from contin_thermo import CAUTION, custom_component, lookup, trace_envelope
from contin_thermo.models._characterise import characterise
from contin_thermo.models._kij import chueh_prausnitz, critical_volume, default_kij, kij_table

FEED = [("nitrogen", 0.01), ("carbon dioxide", 0.02), ("hydrogen sulfide", 0.01), ("methane", 0.80),
        ("ethane", 0.06), ("propane", 0.04), ("n-butane", 0.02), ("C7+", 0.04, 160.0, 0.79)]


def test_every_row_of_the_table_has_a_source_and_a_plausible_value():
    rows = kij_table()
    assert rows and all(r["source"].strip() and r["eos"] in ("pr", "srk") for r in rows)
    assert all(-0.1 < r["kij"] < 0.25 for r in rows)
    keys = [(frozenset((r["component_1"], r["component_2"])), r["eos"]) for r in rows]
    assert len(keys) == len(set(keys))  # each pair once per equation of state
    names = {c.name for c in (lookup(r[k]) for r in rows for k in ("component_1", "component_2") if r[k] != "heavy")}
    assert {"carbon dioxide", "nitrogen", "hydrogen sulfide"} <= names


@pytest.mark.parametrize(
    "pair, eos, value",
    [
        # Knapp et al., DECHEMA Chemistry Data Series VI (1982) (memory), as in the data file.
        (("methane", "carbon dioxide"), "pr", 0.0919),
        (("carbon dioxide", "ethane"), "pr", 0.1322),
        (("nitrogen", "methane"), "pr", 0.0311),
        (("nitrogen", "carbon dioxide"), "pr", -0.0170),
        (("methane", "carbon dioxide"), "srk", 0.0933),
    ],
)
def test_table_pairs_in_either_order(pair, eos, value):
    result = default_kij([lookup(n) for n in pair], eos)
    assert result.matrix[0, 1] == result.matrix[1, 0] == value
    assert "Knapp" in result.sources[pair]


def test_chueh_prausnitz_formula():
    # Chueh & Prausnitz (1967): 1 - (2 (Vi Vj)^(1/6) / (Vi^(1/3) + Vj^(1/3)))^3; Vc 1 and 8 give
    # cube roots 1 and 2: 1 - (2 sqrt(2) / 3)^3.
    assert chueh_prausnitz(1.0, 8.0) == pytest.approx(1.0 - (2.0 * 2.0**0.5 / 3.0) ** 3, rel=1e-15)
    assert chueh_prausnitz(2.5e-4, 2.5e-4) == 0.0


@settings(max_examples=50, deadline=None, derandomize=True)
@given(a=st.floats(5e-5, 2e-3), ratio=st.floats(1.0, 20.0), step=st.floats(1.01, 2.0))
def test_chueh_prausnitz_is_symmetric_and_grows_with_the_size_ratio(a, ratio, step):
    b = a * ratio
    assert chueh_prausnitz(a, b) == pytest.approx(chueh_prausnitz(b, a), rel=1e-12, abs=1e-16)
    assert 0.0 <= chueh_prausnitz(a, b) < chueh_prausnitz(a, b * step) < 1.0


def test_characterised_feed_gets_every_default_with_its_source():
    result = characterise(FEED)
    kij = default_kij(result.components, "pr")
    names = kij.names
    assert np.array_equal(kij.matrix, kij.matrix.T) and np.all(np.diag(kij.matrix) == 0)
    pairs = {(p["component_1"], p["component_2"]): p for p in kij.pairs()}
    assert len(pairs) == len(names) * (len(names) - 1) // 2
    methane = lookup("methane")
    for pseudo in result.components[-3:]:
        entry = pairs[("methane", pseudo.name)]
        assert entry["kij"] == pytest.approx(chueh_prausnitz(critical_volume(methane), critical_volume(pseudo)), rel=1e-15)
        assert "Chueh & Prausnitz" in entry["source"]
        assert pairs[("carbon dioxide", pseudo.name)]["kij"] == 0.10  # common practice (memory), as in the file
    heavy = [pairs[("methane", p.name)]["kij"] for p in result.components[-3:]]
    assert heavy == sorted(heavy) and 0.0 < heavy[0]  # heavier lumps: larger size ratio to methane
    assert pairs[("methane", "ethane")]["kij"] == 0.0 and "common practice" in pairs[("methane", "ethane")]["source"]
    assert pairs[("hydrogen sulfide", "methane")]["kij"] == 0.0850
    unknown = pairs[("hydrogen sulfide", result.components[-1].name)]  # H2S with heavy ends: not in the file
    assert unknown["kij"] == 0.0 and "no default for this pair in the table" in unknown["source"]
    assert kij.caution == CAUTION
    # The matrix is one the mixture accepts, and the envelope traces with it.
    envelope = trace_envelope(result.mixture("pr", kij="defaults"), result.z, check_stability=False)
    assert envelope.special("cricondentherm") is not None
    assert np.array_equal(envelope.mixture.kij, kij.matrix)


def test_methane_heavy_can_be_switched_off_and_pairs_overridden():
    components = [lookup("methane"), lookup("n-decane"), lookup("carbon dioxide")]
    none = default_kij(components, "pr", methane_heavy="none", overrides={("n-decane", "methane"): 0.04})
    assert none.matrix[0, 1] == 0.04 and none.sources[("methane", "n-decane")] == "user"
    assert none.matrix[1, 2] == 0.10  # n-decane counts with the heavy class
    softer = default_kij(components, "pr", exponent=1.0).matrix[0, 1]
    assert 0.0 < softer < default_kij(components, "pr").matrix[0, 1]


def test_a_user_fluid_sharing_a_table_name_gets_no_table_value():
    impostor = custom_component("carbon dioxide", 300.0, 7.0e6, 0.2)
    assert default_kij([lookup("methane"), impostor], "pr").matrix[0, 1] == 0.0


@pytest.mark.parametrize(
    "options, message",
    [
        ({"eos": "vdw"}, "eos='vdw': default kij exist for 'pr' and 'srk' only"),
        ({"methane_heavy": "cp"}, "methane_heavy='cp': choose 'chueh-prausnitz' or 'none'"),
        ({"exponent": 0.0}, "exponent=0.0: the Chueh-Prausnitz exponent must be positive"),
        ({"overrides": {("methane", "water"): 0.1}}, "kij override ('methane', 'water'): unknown component 'water'"),
        ({"overrides": {("methane", "ethane"): 1.5}}, "kij override ('methane', 'ethane') = 1.5: must lie strictly"),
    ],
)
def test_bad_requests_are_refused_with_a_message(options, message):
    with pytest.raises(InputError) as error:
        default_kij([lookup("methane"), lookup("ethane")], **options)
    assert message in str(error.value)
