"""Tests of rheology.outputs: the JSON dict, the profile table and the CSV file.

External references used here:

* unit conversions by pint (a general-purpose units library), which follows the SI
  Brochure (BIPM 2019): 1 km = 1e3 m, 1 MPa = 1e6 Pa, T[degC] = T[K] - 273.15,
  1 mW = 1e-3 W;
* JSON, RFC 8259 (2017), section 6: NaN and Infinity are not permitted number values;
* CSV, RFC 4180 (2005), section 2: fields in double quotes may contain any character;
* the triaxial viscosity convention eta = sigma_d / (3 edot_ax), the standard conversion
  of a triaxial law to second invariants (Gerya 2019, *Introduction to Numerical
  Geodynamic Modelling*, ch. 6, and Ranalli 1995, both from memory), worked by hand:
  with tau_II = sigma_d/sqrt(3) and edot_II = (sqrt(3)/2) edot_ax,
  eta = tau_II / (2 edot_II) = sigma_d / (3 edot_ax); the law edot_ax = A sigma_d^n
  becomes edot_II = 0.5 * 3^((n+1)/2) A tau_II^n = A_II tau_II^n, so
  eta = 0.5 A_II^(-1/n) edot_II^((1-n)/n) = F2 A^(-1/n) edot_II^((1-n)/n) with
  F2 = 2^((1-n)/n) / 3^((n+1)/(2n)) (0.3029 for n = 3, 1/3 for n = 1).
"""

import dataclasses
import json
import math

import numpy as np
import pandas as pd
import pytest

import rheology
from rheology import outputs
from rheology.units import Q_

# Each conversion is one floating-point multiplication or division (or pint's, which may
# multiply by a factor such as 1e-3 instead of dividing by 1e3): allow a few ulp.
CONVERSION_RTOL = 1e-12


@pytest.fixture(scope="module")
def demo():
    return rheology.analyse(rheology.load_scenario(rheology.bundled_example("demo")))


@pytest.fixture(scope="module")
def demo_dict(demo):
    return outputs.analysis_to_dict(demo)


def _raise_on_constant(name):
    raise AssertionError(f"JSON contains the non-standard constant {name}")


def test_profile_numbers_are_the_analysis_numbers_in_display_units(demo, demo_dict):
    """Profile arrays equal the envelope converted with pint (SI Brochure, BIPM 2019)."""
    env = demo.envelope
    profile = demo_dict["profile"]
    expected = {
        "depth_km": Q_(env.depth, "m").to("km").magnitude,
        "temperature_C": Q_(env.temperature, "K").to("degC").magnitude,
        "pressure_MPa": Q_(env.lithostatic, "Pa").to("MPa").magnitude,
        "pore_pressure_MPa": Q_(env.pore_pressure, "Pa").to("MPa").magnitude,
        "heat_flow_mW_per_m2": Q_(env.heat_flow, "W/m^2").to("mW/m^2").magnitude,
        "brittle_MPa": Q_(env.brittle, "Pa").to("MPa").magnitude,
        "ductile_MPa": Q_(env.ductile, "Pa").to("MPa").magnitude,
        "strength_MPa": Q_(env.strength, "Pa").to("MPa").magnitude,
    }
    for key, values in expected.items():
        # temperatures near 0 degC: compare with an absolute floor of 1e-9 degC
        np.testing.assert_allclose(
            np.array(profile[key], float), values, rtol=CONVERSION_RTOL, atol=1e-9, err_msg=key
        )
    assert profile["mechanism"] == env.mechanism_names
    names = [layer.name for layer in demo.scenario.layers]
    assert profile["layer"] == [names[i] for i in env.layer]


def test_scalar_answers_are_converted_to_km_degc_mpa_tn_per_m(demo, demo_dict):
    """Transitions, Goetze depths, integrated strength and Te converted with pint."""
    assert demo_dict["title"] == demo.scenario.title
    assert demo_dict["faulting"] == demo.scenario.faulting
    assert demo_dict["strain_rate_per_s"] == demo.scenario.strain_rate
    assert len(demo_dict["transitions"]) == len(demo.transitions)
    for got, t in zip(demo_dict["transitions"], sorted(demo.transitions, key=lambda t: t.depth)):
        assert got["depth_km"] == pytest.approx(
            Q_(t.depth, "m").to("km").magnitude, rel=CONVERSION_RTOL
        )
        assert got["temperature_C"] == pytest.approx(
            Q_(t.temperature, "K").to("degC").magnitude, rel=CONVERSION_RTOL
        )
        assert got["stress_MPa"] == pytest.approx(
            Q_(t.stress, "Pa").to("MPa").magnitude, rel=CONVERSION_RTOL
        )
        assert (got["kind"], got["layer_above"], got["layer_below"], got["at_boundary"]) == (
            t.kind,
            t.layer_above,
            t.layer_below,
            t.at_boundary,
        )
    assert demo_dict["semi_brittle_base_km"] == pytest.approx(
        [Q_(z, "m").to("km").magnitude for z in demo.goetze], rel=CONVERSION_RTOL
    )
    tn_per_m = Q_(demo.integrated, "N/m").to("TN/m").magnitude
    assert demo_dict["integrated_strength_TN_per_m"] == pytest.approx(tn_per_m, rel=CONVERSION_RTOL)
    by_layer = demo_dict["integrated_strength_by_layer_TN_per_m"]
    assert set(by_layer) == set(demo.integrated_by_layer)
    for name, value in demo.integrated_by_layer.items():
        assert by_layer[name] == pytest.approx(
            Q_(value, "N/m").to("TN/m").magnitude, rel=CONVERSION_RTOL
        )
    assert demo_dict["elastic_thickness_km"] == pytest.approx(
        Q_(demo.elastic.te, "m").to("km").magnitude, rel=CONVERSION_RTOL
    )
    assert demo_dict["elastic_thickness_coupled"] is demo.elastic.coupled
    got = [(c["top_km"], c["bottom_km"]) for c in demo_dict["competent_layers"]]
    expected = [
        tuple(Q_(np.array(pair), "m").to("km").magnitude) for pair in demo.elastic.competent
    ]
    np.testing.assert_allclose(got, expected, rtol=CONVERSION_RTOL)


def test_viscosity_follows_the_triaxial_convention(demo, demo_dict):
    """eta = sigma_d / (3 edot_ax) with the envelope strength (Gerya 2019 ch. 6, from memory;
    the tau_II = sigma_d/sqrt(3), edot_II = sqrt(3)/2 edot_ax conversion)."""
    strength_pa = np.array(demo_dict["profile"]["strength_MPa"]) * 1e6
    rate = demo_dict["strain_rate_per_s"]
    tau_ii = strength_pa / math.sqrt(3.0)
    edot_ii = math.sqrt(3.0) / 2.0 * rate
    viscosity = demo_dict["profile"]["viscosity_Pa_s"]
    strong = strength_pa > 0
    # the MPa round trip (x 1e-6 then x 1e6) costs a few ulp
    np.testing.assert_allclose(
        np.array(viscosity, dtype=object)[strong].astype(float),
        (tau_ii / (2 * edot_ii))[strong],
        rtol=1e-12,
    )
    text = demo_dict["conventions"]["viscosity"]
    assert "tau_II / (2 edot_II)" in text and "sigma_d / (3 edot_ax)" in text


def test_viscosity_is_null_where_the_strength_is_zero(demo, demo_dict, tmp_path):
    """A zero viscosity (zero strength at the surface of a cohesionless column, Byerlee
    1978 with no cohesion) would be taken at face value by a numerical model: it is
    written as null in JSON and left empty in CSV, and the conventions say so."""
    strength = demo_dict["profile"]["strength_MPa"]
    viscosity = demo_dict["profile"]["viscosity_Pa_s"]
    weak = [i for i, value in enumerate(strength) if value == 0.0]
    assert weak and weak[0] == 0  # the demo's surface node
    assert all(viscosity[i] is None for i in weak)
    assert all(v is None or v > 0 for v in viscosity)
    assert (
        "null (JSON) or empty (CSV) where the envelope strength is zero"
        in (demo_dict["conventions"]["viscosity"])
    )
    assert demo_dict["notes"][0].endswith("This object has 0 such value(s).")
    path = tmp_path / "profile.csv"
    outputs.write_profile_csv(demo, path)
    frame = pd.read_csv(path, comment="#")
    column = frame["effective viscosity [Pa s]"]
    assert column.isna().tolist() == [value is None for value in viscosity]
    assert "empty where the strength is zero" in path.read_text(encoding="utf-8").splitlines()[0]


def test_json_is_standard_json_without_nan_or_infinity(demo):
    """RFC 8259 sec. 6: NaN/Infinity are not JSON; parse_constant fails on them."""
    text = outputs.analysis_to_json(demo)
    data = json.loads(text, parse_constant=_raise_on_constant)
    assert data["profile"]["depth_km"][0] == 0.0


def test_infinite_strength_becomes_null_and_is_noted(demo):
    """An infinite creep strength (our own edge case) is written null, and counted."""
    env = demo.envelope
    ductile = env.ductile.copy()
    ductile[:3] = np.inf
    patched = dataclasses.replace(demo, envelope=dataclasses.replace(env, ductile=ductile))
    data = json.loads(outputs.analysis_to_json(patched), parse_constant=_raise_on_constant)
    assert data["profile"]["ductile_MPa"][:3] == [None, None, None]
    assert data["profile"]["ductile_MPa"][3] is not None
    assert any("null" in note and "3 such value" in note for note in data["notes"])


def test_contract_keys_and_equal_array_lengths(demo_dict):
    for key in (
        "transitions",
        "integrated_strength_TN_per_m",
        "profile",
        "title",
        "faulting",
        "strain_rate_per_s",
        "integrated_strength_by_layer_TN_per_m",
        "elastic_thickness_km",
        "semi_brittle_base_km",
        "regime_bands",
        "summary",
        "caution",
        "conventions",
        "notes",
    ):
        assert key in demo_dict, key
    profile = demo_dict["profile"]
    lengths = {key: len(values) for key, values in profile.items()}
    assert len(set(lengths.values())) == 1, lengths
    assert set(profile["mechanism"]) <= set(rheology.MECHANISMS)
    assert "twice" in demo_dict["conventions"]["depth_grid"]
    assert demo_dict["caution"] == rheology.CAUTION


def test_layer_boundaries_appear_twice_in_the_profile(demo, demo_dict):
    """Each inner layer boundary is a node of both layers (as stated in `conventions`)."""
    depth = np.array(demo_dict["profile"]["depth_km"])
    layer = demo_dict["profile"]["layer"]
    for top, current in zip(demo.scenario.layer_tops[1:], demo.scenario.layers[1:]):
        at = np.flatnonzero(np.isclose(depth, top / 1e3, rtol=0, atol=1e-9))
        assert at.size == 2
        assert layer[at[1]] == current.name and layer[at[0]] != current.name


def test_profile_frame_columns_carry_units(demo):
    frame = outputs.profile_frame(demo)
    assert list(frame.columns) == list(outputs.PROFILE_COLUMNS)
    assert len(frame) == demo.envelope.depth.size
    assert "depth [km]" in frame.columns and "strength [MPa]" in frame.columns


def test_csv_reads_back_with_pandas_and_matches_the_json(demo, demo_dict, tmp_path):
    """pandas.read_csv(comment='#') returns the same numbers as the JSON object."""
    path = tmp_path / "profile.csv"
    outputs.write_profile_csv(demo, path)
    first = path.read_text(encoding="utf-8").splitlines()[0]
    assert first.startswith("# ") and demo.scenario.title in first and "Screening" in first
    frame = pd.read_csv(path, comment="#")
    profile = demo_dict["profile"]
    pairs = {
        "depth [km]": "depth_km",
        "temperature [degC]": "temperature_C",
        "lithostatic pressure [MPa]": "pressure_MPa",
        "strength [MPa]": "strength_MPa",
        "brittle strength [MPa]": "brittle_MPa",
        "ductile strength [MPa]": "ductile_MPa",
        "effective viscosity [Pa s]": "viscosity_Pa_s",
    }
    for column, key in pairs.items():
        expected = [math.nan if value is None else value for value in profile[key]]
        # pandas writes repr() of each float and its default parser reads it back
        # correctly rounded: allow one ulp (a JSON null is an empty CSV cell, NaN here)
        np.testing.assert_allclose(frame[column].to_numpy(), expected, rtol=2e-16, err_msg=column)
    assert frame["mechanism"].tolist() == profile["mechanism"]


def test_csv_quotes_text_so_a_hash_in_a_layer_name_survives(demo, tmp_path):
    """RFC 4180 sec. 2: quoted fields may contain any character (here '#')."""
    scenario = demo.scenario
    layers = (dataclasses.replace(scenario.layers[0], name="unit #1"),) + scenario.layers[1:]
    analysis = rheology.analyse(dataclasses.replace(scenario, layers=layers))
    path = tmp_path / "hash.csv"
    outputs.write_profile_csv(analysis, path)
    frame = pd.read_csv(path, comment="#")
    assert frame["layer"].iloc[0] == "unit #1"
    assert len(frame) == analysis.envelope.depth.size


def test_semi_brittle_intervals_start_at_transitions_and_end_at_goetze_depths(demo):
    """Band edges are the refined depths of the analysis (Kohlstedt et al. 1995 sense)."""
    bands = outputs.semi_brittle_intervals(demo)
    assert bands, "the demo has semi-brittle bands"
    tops = {t.depth for t in demo.transitions if t.kind == "brittle-to-ductile"}
    for band in bands:
        assert band["top"] in tops
        assert band["bottom"] in demo.goetze
        assert band["bottom"] > band["top"]


def test_point_to_dict_is_json_safe_and_converted(demo):
    answer = rheology.point_answer(demo.scenario, 12e3, stress=150e6, duration=3.15576e10)
    data = outputs.point_to_dict(answer)
    json.dumps(data, allow_nan=False)
    assert data["depth_km"] == pytest.approx(12.0, rel=CONVERSION_RTOL)
    assert data["temperature_C"] == pytest.approx(
        Q_(answer.temperature, "K").to("degC").magnitude, rel=CONVERSION_RTOL
    )
    assert data["load"]["duration_yr"] == pytest.approx(
        Q_(3.15576e10, "s").to("year").magnitude, rel=CONVERSION_RTOL
    )
    assert data["load"]["outcome"] == answer.load.outcome


@pytest.mark.parametrize(
    "law_id, n, f2",
    [
        ("an-wet-disl-rd00", 3.0, 0.3029),
        ("ol-dry-disl-hk03", 3.5, 0.3008),
        ("qtz-wet-gt95", 4.0, 0.2992),
        ("an-wet-diff-rd00", 1.0, 1.0 / 3.0),
    ],
)
def test_law_invariant_form_matches_the_second_invariant_conversion(law_id, n, f2):
    """A_II = 0.5 * 3^((n+1)/2) * A and F2 = 0.3029 (n = 3), 0.3008 (3.5), 0.2992 (4),
    1/3 (n = 1, Trouton): standard triaxial-to-invariant conversion (Gerya 2019 ch. 6 and
    Ranalli 1995, both from memory), worked by hand in the module docstring."""
    law = rheology.get_flow_law(law_id)
    assert law.n == n
    data = outputs.law_to_dict(law)
    assert data["invariant"]["A_II"] == pytest.approx(
        0.5 * 3 ** ((n + 1) / 2) * law.A, rel=1e-12
    )  # float rounding only
    # F2 is quoted to 4 decimals
    assert data["invariant"]["viscosity_factor_F2"] == pytest.approx(f2, abs=5e-5)
    assert data["si"]["A"] == law.A
    assert data["published"]["A"] == law.A_published


def test_law_to_dict_invariant_form_gives_the_same_viscosity_both_ways():
    """eta = tau_II / (2 edot_II) with edot_II = A_II tau_II^n equals
    F2 A^(-1/n) edot_II^((1-n)/n) (same conversion, Gerya 2019 ch. 6, from memory)."""
    law = rheology.get_flow_law("an-wet-disl-rd00")
    data = outputs.law_to_dict(law)
    tau_ii = 30e6
    edot_ii = data["invariant"]["A_II"] * tau_ii**law.n  # Arrhenius term set to 1
    eta_direct = tau_ii / (2 * edot_ii)
    f2 = data["invariant"]["viscosity_factor_F2"]
    eta_f2 = f2 * law.A ** (-1 / law.n) * edot_ii ** ((1 - law.n) / law.n)
    assert eta_f2 == pytest.approx(eta_direct, rel=1e-12)  # float rounding only
