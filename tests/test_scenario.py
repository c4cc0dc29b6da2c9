"""Tests of rheology.scenario: reading, validating and writing scenario files.

Unit facts used as external references:

* BIPM (2019). *The International System of Units (SI)*, 9th edition (SI Brochure),
  sec. 2.3.1 (Celsius temperature: t/degC = T/K - 273.15) and Table 7 (prefixes:
  k = 1e3, m = 1e-3, u = 1e-6, M = 1e6, G = 1e9, c = 1e-2).
* The Julian year of the IAU: 1 a = 365.25 d = 31 557 600 s (IAU 1976 system of
  astronomical constants; Wilkins, G. A. 1989, IAU Style Manual, Trans. IAU XXB, sec. 5.15).

Rock ids and their grain-size / water needs come from the reference tables
(reference_tables/rocks.toml and flow_laws.toml).
"""

from __future__ import annotations

import copy
import dataclasses
import math
import warnings

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rheology import model
from rheology.errors import RheologyError, RheologyWarning, ScenarioError
from rheology.library.flowlaw import FlowLaw, Rock
from rheology.library.tables import get_flow_law, get_rock, get_rock_properties
from rheology.scenario import (
    bundled_example,
    dump_scenario,
    list_examples,
    load_scenario,
    parse_scenario,
    save_scenario,
    scenario_from_mapping,
    scenario_to_mapping,
)

#: Relative tolerance of the round-trip contract ("exactly or to 1e-12 relative"); the
#: writer searches for a decimal that reads back exactly, so any real slip is far larger.
ROUND_TRIP_RTOL = 1e-12
#: Relative tolerance when the same value is written in two units: each unit factor
#: (1e-3, 1e-6...) is not exact in binary, so the two SI floats may differ by a few ulp
#: (about 1e-16 relative); 1e-12 leaves room for that and nothing else.
UNITS_RTOL = 1e-12

#: Julian year [s] (IAU): 365.25 days of 86 400 s.
JULIAN_YEAR = 365.25 * 86400.0

EXAMPLES = ("collision_belt", "demo", "oceanic_plate", "rifted_margin")


def base_mapping() -> dict:
    """A valid three-layer scenario mapping (test fixture of our own)."""
    return copy.deepcopy(
        {
            "title": "Test column",
            "strain_rate": "1e-15 1/s",
            "faulting": "thrust",
            "pore_pressure_ratio": 0.37,
            "max_depth": "80 km",
            "geotherm": {
                "kind": "layered-steady",
                "surface_temperature": "10 degC",
                "surface_heat_flow": "65 mW/m^2",
            },
            "layers": [
                {
                    "name": "upper crust",
                    "thickness": "15 km",
                    "density": "2700 kg/m^3",
                    "heat_production": "1.0 uW/m^3",
                    "conductivity": "2.5 W/m/K",
                    "rock": "quartzite-wet",
                },
                {
                    "name": "lower crust",
                    "thickness": "20 km",
                    "density": "2900 kg/m^3",
                    "heat_production": "0.4 uW/m^3",
                    "conductivity": "2.5 W/m/K",
                    "rock": "plagioclase-wet",
                },
                {
                    "name": "mantle",
                    "thickness": "45 km",
                    "density": "3300 kg/m^3",
                    "heat_production": "0.02 uW/m^3",
                    "conductivity": "3.3 W/m/K",
                    "rock": "olivine-dry",
                },
            ],
        }
    )


BASE_TOML = """
title = "Test column"
strain_rate = "1e-15 1/s"
faulting = "thrust"
pore_pressure_ratio = 0.37
max_depth = "80 km"

[geotherm]
kind = "layered-steady"
surface_temperature = "10 degC"
surface_heat_flow = "65 mW/m^2"

[[layers]]
name = "upper crust"
thickness = "15 km"
density = "2700 kg/m^3"
heat_production = "1.0 uW/m^3"
conductivity = "2.5 W/m/K"
rock = "quartzite-wet"
"""


def assert_same(a, b, path="scenario"):
    """Field-by-field comparison; floats to ROUND_TRIP_RTOL relative."""
    if dataclasses.is_dataclass(a):
        assert type(a) is type(b), path
        for f in dataclasses.fields(a):
            assert_same(getattr(a, f.name), getattr(b, f.name), f"{path}.{f.name}")
    elif isinstance(a, tuple | list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_same(x, y, f"{path}[{i}]")
    elif isinstance(a, dict):
        assert a.keys() == b.keys(), path
        for key in a:
            assert_same(a[key], b[key], f"{path}.{key}")
    elif isinstance(a, float) and not isinstance(b, str):
        if math.isinf(a):
            assert a == b, path
        else:
            assert b == pytest.approx(a, rel=ROUND_TRIP_RTOL, abs=0.0), path
    else:
        assert a == b, path


# ------------------------------------------------------------------ bundled examples


def test_list_examples_names_the_four_bundled_files():
    assert list_examples() == list(EXAMPLES)


@pytest.mark.parametrize("name", EXAMPLES)
def test_each_bundled_example_loads(name):
    scenario = load_scenario(bundled_example(name))
    assert isinstance(scenario, model.Scenario)
    assert scenario.title
    assert scenario.layers


def test_demo_values_land_in_si_bipm_2019():
    """Demo values in SI: km -> 1e3 m, degC -> +273.15 K, mW -> 1e-3 W, uW -> 1e-6 W.

    BIPM (2019) SI Brochure, sec. 2.3.1 and Table 7.
    """
    s = load_scenario(bundled_example("demo"))
    assert s.layers[0].thickness == 15000.0
    assert s.geotherm.surface_temperature == pytest.approx(283.15, rel=1e-15)
    assert s.geotherm.surface_heat_flow == pytest.approx(0.065, rel=UNITS_RTOL)
    assert s.layers[0].heat_production == pytest.approx(1.0e-6, rel=UNITS_RTOL)
    assert s.max_depth == 80000.0
    assert s.depth_step == pytest.approx(50.0, rel=UNITS_RTOL)
    assert s.strain_rate == 1e-15
    assert s.faulting == "thrust"
    assert s.pore_pressure == model.PorePressure(kind="ratio", ratio=0.37)
    assert [layer.rock_id for layer in s.layers] == [
        "quartzite-wet",
        "plagioclase-wet",
        "olivine-dry",
    ]
    assert s.geotherm.kind == "layered-steady"
    assert s.friction == model.Friction()  # absent [friction] = Byerlee (mu None)


def test_oceanic_example_age_in_julian_years_iau():
    """'40 Myr' -> 40e6 Julian years of 31 557 600 s (IAU); '125 km' plate (BIPM 2019)."""
    s = load_scenario(bundled_example("oceanic_plate"))
    assert s.geotherm.kind == "plate"
    assert s.geotherm.age == pytest.approx(40e6 * JULIAN_YEAR, rel=UNITS_RTOL)
    assert s.geotherm.plate_thickness == 125000.0
    assert s.geotherm.mantle_temperature == pytest.approx(1350 + 273.15, rel=1e-15)
    assert s.geotherm.diffusivity == pytest.approx(1e-6, rel=UNITS_RTOL)
    assert s.friction == model.Friction(mu=0.6, cohesion=0.0)
    assert s.layers[1].grain_size == pytest.approx(5e-3, rel=UNITS_RTOL)  # 5 mm


def test_rifted_margin_overpressure_and_wet_olivine_inputs():
    """'4 km' top depth, '300 MPa' fugacity -> 3e8 Pa, '3 mm' -> 3e-3 m (BIPM 2019)."""
    s = load_scenario(bundled_example("rifted_margin"))
    assert s.faulting == "normal"
    assert s.pore_pressure == model.PorePressure(
        kind="overpressured", top_depth=4000.0, ratio_below=0.8
    )
    mantle = s.layers[2]
    assert mantle.water == pytest.approx(3e8, rel=UNITS_RTOL)
    assert mantle.grain_size == pytest.approx(3e-3, rel=UNITS_RTOL)
    assert s.geotherm.gradient == pytest.approx(0.03, rel=UNITS_RTOL)  # 30 K/km
    assert s.geotherm.potential_temperature == pytest.approx(1330 + 273.15, rel=1e-15)


def test_collision_belt_takes_omitted_properties_from_the_table():
    """Omitted density etc. are handed on from the rock's properties row unchanged."""
    s = load_scenario(bundled_example("collision_belt"))
    for layer in s.layers:
        row = get_rock_properties(get_rock(layer.rock_id).properties)
        assert layer.density == row.density
        assert layer.conductivity == row.conductivity
        assert layer.heat_production == row.heat_production
        assert layer.shear_modulus == row.shear_modulus
    assert s.pore_pressure.kind == "hydrostatic"


def test_bundled_example_accepts_the_toml_suffix():
    assert bundled_example("demo.toml") == bundled_example("demo")


def test_bundled_example_unknown_name_lists_the_available_ones():
    with pytest.raises(
        ScenarioError,
        match=r"^name: 'demmo' is not a bundled example; "
        r"available: collision_belt, demo, oceanic",
    ):
        bundled_example("demmo")


# ------------------------------------------------------------------------ round trip


@pytest.mark.parametrize("name", EXAMPLES)
def test_round_trip_of_each_example(name):
    original = load_scenario(bundled_example(name))
    again = parse_scenario(dump_scenario(original))
    assert_same(original, again)


def test_round_trip_through_a_file(tmp_path):
    original = load_scenario(bundled_example("rifted_margin"))
    target = tmp_path / "copy.toml"
    save_scenario(original, target)
    assert_same(original, load_scenario(target))


def inline_mapping() -> dict:
    data = base_mapping()
    data["layers"][0] = {
        "name": "upper crust",
        "thickness": "15 km",
        "density": "2700 kg/m^3",
        "heat_production": "1.0 uW/m^3",
        "conductivity": "2.5 W/m/K",
        "dislocation": {"A": "1.1e-4 MPa^-4 s^-1", "n": 4.0, "Q": "223 kJ/mol"},
    }
    data["layers"][2] = {
        "name": "mantle",
        "thickness": "45 km",
        "density": "3300 kg/m^3",
        "heat_production": "0.02 uW/m^3",
        "conductivity": "3.3 W/m/K",
        "grain_size": "1 mm",
        "dislocation": {
            "log10_A": math.log10(1.1e5),
            "A_units": "MPa^-3.5 s^-1",
            "n": 3.5,
            "Q": "530 kJ/mol",
            "V": "18 cm^3/mol",
            "citation": "Hirth & Kohlstedt (2003), Table 1 (from memory)",
        },
        "diffusion": {
            "A": "1.5e9 MPa^-1 um^3 s^-1",
            "n": 1.0,
            "Q": "375 kJ/mol",
            "V": "6 cm^3/mol",
            "grain_size_exponent": 3.0,
        },
    }
    return data


def test_round_trip_of_inline_law_layers():
    original = scenario_from_mapping(inline_mapping())
    again = parse_scenario(dump_scenario(original))
    assert_same(original, again)
    text = dump_scenario(original)
    assert "[layers.dislocation]" in text and "[layers.diffusion]" in text


def test_inline_law_matches_the_table_law_gleason_tullis_1995():
    """The inline Gleason & Tullis (1995) law (1.1e-4 MPa^-4 s^-1, n 4, Q 223 kJ/mol;
    values from memory) converts to the same SI numbers as the reference-table row;
    MPa^-4 = 1e-24 Pa^-4 (BIPM 2019 prefixes)."""
    rock = scenario_from_mapping(inline_mapping()).layers[0].rock
    law = rock.laws[0]
    table_law = get_flow_law("qtz-wet-gt95")
    assert law.A == pytest.approx(1.1e-4 * 1e-24, rel=UNITS_RTOL)
    assert law.A == pytest.approx(table_law.A, rel=UNITS_RTOL)
    assert (law.n, law.Q, law.V) == (table_law.n, table_law.Q, table_law.V)
    assert law.id == "inline:upper crust:dislocation"
    assert law.status == "from memory"
    assert law.mechanism == "dislocation"
    assert law.A_published == "1.1e-4 MPa^-4 s^-1"
    assert isinstance(rock, Rock) and rock.id == "inline:upper crust"


def test_inline_diffusion_law_units_with_grain_size_hirth_kohlstedt_2003():
    """1.5e9 MPa^-1 um^3 s^-1 (Hirth & Kohlstedt 2003 dry diffusion, from memory)
    = 1.5e9 * 1e-6 * 1e-18 Pa^-1 m^3 s^-1 (BIPM 2019 prefixes)."""
    layer = scenario_from_mapping(inline_mapping()).layers[2]
    laws = {law.mechanism: law for law in layer.rock.laws}
    assert laws["diffusion"].A == pytest.approx(1.5e9 * 1e-6 * 1e-18, rel=UNITS_RTOL)
    assert laws["diffusion"].grain_size_exponent == 3.0
    assert laws["dislocation"].A == pytest.approx(1.1e5 * 1e-6**3.5, rel=UNITS_RTOL)
    assert laws["dislocation"].V == pytest.approx(18e-6, rel=UNITS_RTOL)
    assert layer.rock_id is None
    assert layer.grain_size == pytest.approx(1e-3, rel=UNITS_RTOL)
    assert all(isinstance(law, FlowLaw) for law in layer.rock.laws)


def test_mapping_writes_human_units_as_strings():
    mapping = scenario_to_mapping(load_scenario(bundled_example("demo")))
    assert mapping["max_depth"] == "80 km"
    assert mapping["strain_rate"] == "1e-15 1/s"
    assert mapping["geotherm"]["surface_temperature"] == "10 degC"
    assert mapping["geotherm"]["surface_heat_flow"] == "65 mW/m^2"
    assert mapping["layers"][0]["thickness"] == "15 km"
    assert mapping["layers"][0]["heat_production"] == "1 uW/m^3"


def _positive_floats(low, high):
    return st.floats(min_value=low, max_value=high, allow_nan=False, allow_infinity=False)


# the drawn values run far outside plausible ranges on purpose (a surface at 1 K...):
# the plausibility warnings are expected there and are tested below
@pytest.mark.filterwarnings("ignore::rheology.errors.RheologyWarning")
@settings(max_examples=60, deadline=None)
@given(
    thickness=_positive_floats(1.0, 1e6),
    heat_flow=_positive_floats(1e-4, 0.5),
    temperature=_positive_floats(1.0, 2000.0),
    strain_rate=_positive_floats(1e-20, 1e-5),
    ratio=st.floats(min_value=0.0, max_value=0.999),
)
def test_round_trip_of_arbitrary_values(thickness, heat_flow, temperature, strain_rate, ratio):
    """Invariant (ours): any representable SI value written and read back is unchanged to
    ROUND_TRIP_RTOL, whatever its number of significant digits."""
    original = scenario_from_mapping(base_mapping())
    layers = (dataclasses.replace(original.layers[0], thickness=thickness),) + original.layers[1:]
    geotherm = dataclasses.replace(
        original.geotherm, surface_temperature=temperature, surface_heat_flow=heat_flow
    )
    varied = dataclasses.replace(
        original,
        layers=layers,
        geotherm=geotherm,
        strain_rate=strain_rate,
        pore_pressure=model.PorePressure(kind="ratio", ratio=ratio),
    )
    assert_same(varied, parse_scenario(dump_scenario(varied)))


# ------------------------------------------------------- plausibility warnings


IMPLAUSIBLE = {
    # field path, value typed, message expected (ranges: common practice, see
    # rheology/plausibility.py)
    "density in g/cm^3 typed as kg/m^3": (
        ("layers", 0, "density"),
        "2.7 kg/m^3",
        r"layers\[0\]\.density: 2\.7 kg/m\^3 is far below rock densities "
        r"\(1000-4500 kg/m\^3\); was it g/cm\^3\?",
    ),
    "strain rate far too fast": (
        ("strain_rate",),
        "1e300 1/s",
        r"strain_rate: 1e300 1/s is far above geological and laboratory strain rates",
    ),
    "strain rate far too slow": (
        ("strain_rate",),
        "1e-40 1/s",
        r"strain_rate: 1e-40 1/s is far below",
    ),
    "grain size in metres": (
        ("layers", 2, "grain_size"),
        "5 m",
        r"layers\[2\]\.grain_size: 5 m is far above rock grain sizes \(1 um to 100 mm\); "
        r"was it mm or um\?",
    ),
    "grain size far too small": (
        ("layers", 2, "grain_size"),
        "5e-9 mm",
        r"layers\[2\]\.grain_size: 5e-9 mm is far below rock grain sizes",
    ),
    "surface in a furnace": (
        ("geotherm", "surface_temperature"),
        "5000 degC",
        r"geotherm\.surface_temperature: 5000 degC is far above surface temperatures "
        r"\(-60 to 100 degC\); was it K rather than degC\?",
    ),
    "surface near absolute zero": (
        ("geotherm", "surface_temperature"),
        "10 K",
        r"geotherm\.surface_temperature: 10 K is far below surface temperatures "
        r"\(-60 to 100 degC\); was it degC rather than K\?",
    ),
}


def _set(mapping, path, value):
    target = mapping
    for key in path[:-1]:
        target = target[key]
    target[path[-1]] = value


@pytest.mark.parametrize("case", sorted(IMPLAUSIBLE))
def test_implausible_value_warns_with_the_field_value_and_range(case):
    path, value, expected = IMPLAUSIBLE[case]
    mapping = base_mapping()
    if path[-1] == "grain_size":
        mapping["layers"][2]["rock"] = "olivine-dry-composite"  # has diffusion creep
    _set(mapping, path, value)
    with pytest.warns(RheologyWarning, match=expected):
        scenario_from_mapping(mapping)


def test_plausible_values_do_not_warn():
    """The edges of each range (common practice) and every bundled example stay quiet."""
    mapping = base_mapping()
    mapping["layers"][0]["density"] = "1000 kg/m^3"
    mapping["layers"][1]["density"] = "4.5 g/cm^3"
    mapping["strain_rate"] = "1e-20 1/s"
    mapping["geotherm"]["surface_temperature"] = "-60 degC"
    mapping["layers"][2]["rock"] = "olivine-dry-composite"
    mapping["layers"][2]["grain_size"] = "0.1 m"
    with warnings.catch_warnings():
        warnings.simplefilter("error", RheologyWarning)
        scenario_from_mapping(mapping)
        for name in EXAMPLES:
            load_scenario(bundled_example(name))


def test_rheology_warning_is_not_a_runtime_warning():
    """The test run turns RuntimeWarning into errors (numerical trouble); these warnings
    are about the input and must stay warnings."""
    assert issubclass(RheologyWarning, UserWarning)
    assert not issubclass(RheologyWarning, RuntimeWarning)


# ---------------------------------------------------------------------- other units


def test_same_scenario_in_other_units_loads_to_the_same_values_bipm_2019():
    """15 km = 15000 m; 10 degC = 283.15 K; 65 mW/m^2 = 0.065 W/m^2; 1/s = s^-1;
    2700 kg/m^3 = 2.7 g/cm^3; 1 uW/m^3 = 1e-6 W/m^3 (BIPM 2019, sec. 2.3.1, Table 7)."""
    reference = scenario_from_mapping(base_mapping())
    other = base_mapping()
    other["strain_rate"] = "1e-15 s^-1"
    other["max_depth"] = "80000 m"
    other["geotherm"]["surface_temperature"] = "283.15 K"
    other["geotherm"]["surface_heat_flow"] = "0.065 W/m^2"
    other["layers"][0]["thickness"] = "15000 m"
    other["layers"][0]["density"] = "2.7 g/cm^3"
    other["layers"][0]["heat_production"] = "1e-6 W/m^3"
    converted = scenario_from_mapping(other)
    assert converted.strain_rate == pytest.approx(reference.strain_rate, rel=UNITS_RTOL)
    assert converted.max_depth == pytest.approx(reference.max_depth, rel=UNITS_RTOL)
    assert converted.geotherm.surface_temperature == pytest.approx(
        reference.geotherm.surface_temperature, rel=UNITS_RTOL
    )
    assert converted.geotherm.surface_heat_flow == pytest.approx(
        reference.geotherm.surface_heat_flow, rel=UNITS_RTOL
    )
    for field in ("thickness", "density", "heat_production"):
        assert getattr(converted.layers[0], field) == pytest.approx(
            getattr(reference.layers[0], field), rel=UNITS_RTOL
        )


def test_gradient_in_degc_per_km_equals_kelvin_per_km_bipm_2019():
    """A Celsius degree and a kelvin are equal intervals (BIPM 2019, sec. 2.3.1)."""
    data = base_mapping()
    data["geotherm"] = {
        "kind": "linear",
        "surface_temperature": "10 degC",
        "gradient": "25 degC/km",
    }
    assert scenario_from_mapping(data).geotherm.gradient == pytest.approx(0.025, rel=UNITS_RTOL)


# --------------------------------------------------------------- additional options


def test_hydrostatic_pore_pressure_and_friction_table():
    data = base_mapping()
    del data["pore_pressure_ratio"]
    data["pore_pressure"] = "hydrostatic"
    data["friction"] = {"mu": 0.6, "cohesion": "10 MPa"}
    s = scenario_from_mapping(data)
    assert s.pore_pressure.kind == "hydrostatic"
    assert s.friction == model.Friction(mu=0.6, cohesion=1e7)


def test_half_space_geotherm_with_optional_conductivity_and_adiabat():
    data = base_mapping()
    data["geotherm"] = {
        "kind": "half-space",
        "surface_temperature": "0 degC",
        "age": "60 Myr",
        "mantle_temperature": "1350 degC",
        "diffusivity": "1e-6 m^2/s",
        "conductivity": "3.3 W/m/K",
        "potential_temperature": "1350 degC",
        "adiabatic_gradient": "0.3 K/km",
    }
    g = scenario_from_mapping(data).geotherm
    assert g.age == pytest.approx(60e6 * JULIAN_YEAR, rel=UNITS_RTOL)
    assert g.conductivity == 3.3
    assert g.adiabatic_gradient == pytest.approx(3e-4, rel=UNITS_RTOL)
    assert_same(
        scenario_from_mapping(data), parse_scenario(dump_scenario(scenario_from_mapping(data)))
    )


def test_layers_may_sum_to_more_or_less_than_max_depth():
    data = base_mapping()
    data["max_depth"] = "50 km"  # layers sum to 80 km: the column is cut at 50 km
    assert scenario_from_mapping(data).max_depth == 50000.0
    data["max_depth"] = "120 km"  # the last layer extends to 120 km
    assert scenario_from_mapping(data).max_depth == 120000.0


def test_water_content_for_an_oh_form_rock():
    data = base_mapping()
    data["layers"][2].update(rock="olivine-wet-coh", grain_size="1 mm", water_content=1000)
    layer = scenario_from_mapping(data).layers[2]
    assert layer.water == 1000.0
    s = scenario_from_mapping(data)
    assert_same(s, parse_scenario(dump_scenario(s)))


def test_pint_quantities_are_accepted_in_a_mapping():
    from rheology.units import Q_

    data = base_mapping()
    data["max_depth"] = Q_(80, "km")
    assert scenario_from_mapping(data).max_depth == 80000.0


# ----------------------------------------------------------------------- error paths


def test_scenario_error_is_a_rheology_error_and_value_error():
    assert issubclass(ScenarioError, RheologyError)
    assert issubclass(ScenarioError, ValueError)


def test_missing_required_geotherm_key():
    data = base_mapping()
    del data["geotherm"]["surface_heat_flow"]
    with pytest.raises(
        ScenarioError,
        match=r"^geotherm\.surface_heat_flow: missing; required "
        r"for kind 'layered-steady' \(e\.g\. \"65 mW/m\^2\"\)",
    ):
        scenario_from_mapping(data)


def test_missing_top_level_key():
    data = base_mapping()
    del data["max_depth"]
    with pytest.raises(ScenarioError, match=r'^max_depth: missing; required \(e\.g\. "80 km"\)'):
        scenario_from_mapping(data)


def test_unknown_geotherm_kind_lists_the_kinds():
    data = base_mapping()
    data["geotherm"]["kind"] = "parabolic"
    with pytest.raises(
        ScenarioError,
        match=r"^geotherm\.kind: 'parabolic' is not a geotherm "
        r"kind; expected one of linear, layered-steady, "
        r"exponential-heat, half-space, plate",
    ):
        scenario_from_mapping(data)


def test_geotherm_key_of_another_kind_is_refused():
    data = base_mapping()
    data["geotherm"]["gradient"] = "25 K/km"
    with pytest.raises(
        ScenarioError,
        match=r"^geotherm\.gradient: not used by kind "
        r"'layered-steady' \(it belongs to linear\)",
    ):
        scenario_from_mapping(data)


def test_adiabatic_gradient_without_potential_temperature():
    data = base_mapping()
    data["geotherm"]["adiabatic_gradient"] = "0.4 K/km"
    with pytest.raises(
        ScenarioError,
        match=r"^geotherm\.adiabatic_gradient: only used with "
        r"potential_temperature",
    ):
        scenario_from_mapping(data)


def test_unknown_key_suggests_the_close_one():
    data = base_mapping()
    data["layers"][1]["thicknes"] = data["layers"][1].pop("thickness")
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[1\]\.thicknes: unknown key; "
        r"did you mean 'thickness'\?",
    ):
        scenario_from_mapping(data)


def test_unknown_top_level_key():
    data = base_mapping()
    data["strainrate"] = "1e-15 1/s"
    with pytest.raises(
        ScenarioError,
        match=r"^strainrate: unknown key; did you mean "
        r"'strain_rate'\?",
    ):
        scenario_from_mapping(data)


def test_wrong_units_name_the_expected_dimension():
    data = base_mapping()
    data["max_depth"] = "80 kg"
    with pytest.raises(
        ScenarioError,
        match=r"^max_depth: '80 kg' has the wrong dimension; "
        r"expected a length such as '80 km'",
    ):
        scenario_from_mapping(data)


def test_wrong_temperature_units():
    data = base_mapping()
    data["geotherm"]["surface_temperature"] = "10 km"
    with pytest.raises(
        ScenarioError,
        match=r"^geotherm\.surface_temperature: '10 km' has the "
        r"wrong dimension; expected a temperature",
    ):
        scenario_from_mapping(data)


def test_unknown_unit_is_named():
    data = base_mapping()
    data["layers"][0]["thickness"] = "15 kmz"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.thickness: unknown unit in "
        r"'15 kmz'",
    ):
        scenario_from_mapping(data)


def test_bare_number_asks_for_units():
    data = base_mapping()
    data["max_depth"] = 80
    with pytest.raises(
        ScenarioError,
        match=r"^max_depth: got the bare number 80; give a "
        r'string with units, e\.g\. max_depth = "80 km"',
    ):
        scenario_from_mapping(data)


def test_number_without_units_in_a_string():
    data = base_mapping()
    data["strain_rate"] = "1e-15"
    with pytest.raises(
        ScenarioError,
        match=r"^strain_rate: '1e-15' has no units; expected a strain rate such as '1e-15 1/s'",
    ):
        scenario_from_mapping(data)


def test_negative_thickness():
    data = base_mapping()
    data["layers"][2]["thickness"] = "-5 km"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[2\]\.thickness: '-5 km' must be greater "
        r"than zero",
    ):
        scenario_from_mapping(data)


def test_zero_thickness():
    data = base_mapping()
    data["layers"][0]["thickness"] = "0 km"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.thickness: '0 km' must be greater "
        r"than zero",
    ):
        scenario_from_mapping(data)


def test_nan_in_a_string_with_units():
    data = base_mapping()
    data["max_depth"] = "nan km"
    with pytest.raises(ScenarioError, match=r"^max_depth: 'nan km' is not a finite number"):
        scenario_from_mapping(data)


def test_nan_toml_literal_for_a_plain_number():
    text = BASE_TOML.replace("pore_pressure_ratio = 0.37", "pore_pressure_ratio = nan")
    with pytest.raises(ScenarioError, match=r"^pore_pressure_ratio: nan is not a finite number"):
        parse_scenario(text)


def test_pore_pressure_ratio_out_of_range():
    data = base_mapping()
    data["pore_pressure_ratio"] = 1.0
    with pytest.raises(ScenarioError, match=r"^pore_pressure_ratio: 1\.0 must be less than 1"):
        scenario_from_mapping(data)


def test_malformed_toml_gives_file_line_and_column(tmp_path):
    path = tmp_path / "broken.toml"
    path.write_text('title = "x"\nmax_depth = \n', encoding="utf-8")
    with pytest.raises(ScenarioError, match=r"broken\.toml: malformed TOML at line 2, column 13"):
        load_scenario(path)


def test_malformed_toml_in_text_names_the_source():
    # the bare key 'strain' is followed by a second word at line 2, column 8 (1-based)
    with pytest.raises(
        ScenarioError,
        match=r"^scenario\.toml: malformed TOML at line 2, "
        r"column 8: Expected '='",
    ):
        parse_scenario('title = "x"\nstrain rate = 1\n', source="scenario.toml")


def test_malformed_toml_at_end_of_document():
    with pytest.raises(ScenarioError, match=r"^<string>: malformed TOML at end of document: "):
        parse_scenario("title = ")


def test_missing_file():
    with pytest.raises(ScenarioError, match=r"no_such\.toml: no such scenario file"):
        load_scenario("no_such.toml")


def test_field_error_from_a_file_starts_with_the_path_and_names_the_file(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(BASE_TOML.replace('"15 km"', '"-15 km"'), encoding="utf-8")
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.thickness: '-15 km' must be "
        r"greater than zero \(in .*bad\.toml\)$",
    ):
        load_scenario(path)


def test_unknown_rock_id_suggests_the_close_one():
    data = base_mapping()
    data["layers"][0]["rock"] = "quartzit-wet"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.rock: unknown rock 'quartzit-wet'; "
        r"did you mean 'quartzite-wet'",
    ):
        scenario_from_mapping(data)


def test_both_pore_pressure_and_pore_pressure_ratio():
    data = base_mapping()
    data["pore_pressure"] = "hydrostatic"
    with pytest.raises(
        ScenarioError,
        match=r"^pore_pressure: give either pore_pressure or "
        r"pore_pressure_ratio, not both",
    ):
        scenario_from_mapping(data)


def test_unknown_pore_pressure_model():
    data = base_mapping()
    del data["pore_pressure_ratio"]
    data["pore_pressure"] = "lithostatic"
    with pytest.raises(
        ScenarioError,
        match=r"^pore_pressure: 'lithostatic' is not a "
        r"pore-pressure model; expected 'hydrostatic'",
    ):
        scenario_from_mapping(data)


def test_missing_pore_pressure():
    data = base_mapping()
    del data["pore_pressure_ratio"]
    with pytest.raises(
        ScenarioError,
        match=r"^pore_pressure_ratio: missing; give "
        r"pore_pressure_ratio \(0 = dry\)",
    ):
        scenario_from_mapping(data)


def test_overpressure_with_a_ratio_is_refused():
    data = base_mapping()
    data["overpressure"] = {"top_depth": "3 km", "ratio_below": 0.8}
    with pytest.raises(
        ScenarioError,
        match=r"^overpressure: cannot be combined with "
        r"pore_pressure_ratio",
    ):
        scenario_from_mapping(data)


def test_overpressure_ratio_below_out_of_range():
    data = base_mapping()
    del data["pore_pressure_ratio"]
    data["overpressure"] = {"top_depth": "3 km", "ratio_below": 1.5}
    with pytest.raises(
        ScenarioError,
        match=r"^overpressure\.ratio_below: 1\.5 must be less "
        r"than 1",
    ):
        scenario_from_mapping(data)


def test_faulting_accepts_only_the_three_exact_names():
    data = base_mapping()
    data["faulting"] = "strike_slip"
    with pytest.raises(
        ScenarioError,
        match=r"^faulting: 'strike_slip' is not a faulting regime; "
        r"expected one of thrust, strike-slip, normal",
    ):
        scenario_from_mapping(data)


def test_friction_needs_mu():
    data = base_mapping()
    data["friction"] = {"cohesion": "10 MPa"}
    with pytest.raises(ScenarioError, match=r"^friction\.mu: missing; required \(e\.g\. 0\.6\)"):
        scenario_from_mapping(data)


def test_inline_law_with_a_units_inconsistent_with_n():
    data = inline_mapping()
    data["layers"][0]["dislocation"]["A"] = "1.1e-4 MPa^-3 s^-1"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.dislocation\.A: '1\.1e-4 MPa\^-3 s\^-1': units of A are "
        r"\[pressure\]\^-3 \[length\]\^0 \[time\]\^-1, but n = 4, p = 0 and r = 0 "
        r"need \[pressure\]\^-4 \[length\]\^0 \[time\]\^-1",
    ):
        scenario_from_mapping(data)


def test_inline_diffusion_law_needs_its_grain_size_exponent():
    data = inline_mapping()
    del data["layers"][2]["diffusion"]["grain_size_exponent"]
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[2\]\.diffusion\.grain_size_exponent: "
        r"missing",
    ):
        scenario_from_mapping(data)


def test_inline_rock_needs_a_density():
    data = inline_mapping()
    del data["layers"][0]["density"]
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.density: missing; an inline law has "
        r"no rock-properties row",
    ):
        scenario_from_mapping(data)


def test_inline_rock_needs_heat_production_for_the_layered_steady_geotherm():
    data = inline_mapping()
    del data["layers"][0]["heat_production"]
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.heat_production: missing; an inline "
        r"law has no rock-properties row and the "
        r"layered-steady geotherm uses it",
    ):
        scenario_from_mapping(data)


def test_rock_and_inline_law_together():
    data = inline_mapping()
    data["layers"][0]["rock"] = "quartzite-wet"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.dislocation: give either rock or an "
        r"inline law, not both",
    ):
        scenario_from_mapping(data)


def test_layer_without_rock_or_law():
    data = base_mapping()
    del data["layers"][1]["rock"]
    with pytest.raises(ScenarioError, match=r"^layers\[1\]\.rock: missing; give rock"):
        scenario_from_mapping(data)


def test_rock_that_needs_grain_size_but_none_given():
    data = base_mapping()
    data["layers"][2]["rock"] = "olivine-dry-composite"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[2\]\.grain_size: missing; rock "
        r"'olivine-dry-composite' has grain-size-sensitive "
        r"creep \(ol-dry-diff-hk03\)",
    ):
        scenario_from_mapping(data)


def test_grain_size_given_to_a_rock_without_grain_size_sensitive_law():
    data = base_mapping()
    data["layers"][0]["grain_size"] = "1 mm"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.grain_size: rock 'quartzite-wet' "
        r"has no grain-size-sensitive law",
    ):
        scenario_from_mapping(data)


def test_rock_that_needs_water_fugacity_but_none_given():
    data = base_mapping()
    data["layers"][2].update(rock="olivine-wet", grain_size="1 mm")
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[2\]\.water_fugacity: missing; rock "
        r"'olivine-wet' has a water term \(fugacity\)",
    ):
        scenario_from_mapping(data)


def test_water_content_given_to_a_fugacity_rock():
    data = base_mapping()
    data["layers"][2].update(rock="olivine-wet", grain_size="1 mm", water_content=1000)
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[2\]\.water_content: rock 'olivine-wet' "
        r"takes water as a fugacity; give water_fugacity",
    ):
        scenario_from_mapping(data)


def test_water_given_to_a_rock_with_water_folded_into_a():
    data = base_mapping()
    data["layers"][0]["water_fugacity"] = "500 MPa"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.water_fugacity: rock "
        r"'quartzite-wet' has no explicit water term",
    ):
        scenario_from_mapping(data)


def test_duplicate_layer_names():
    data = base_mapping()
    data["layers"][1]["name"] = "upper crust"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[1\]\.name: 'upper crust' is already the "
        r"name of layers\[0\]",
    ):
        scenario_from_mapping(data)


def test_no_layers():
    data = base_mapping()
    data["layers"] = []
    with pytest.raises(
        ScenarioError,
        match=r"^layers: expected one or more \[\[layers\]\] "
        r"tables",
    ):
        scenario_from_mapping(data)


def test_model_check_is_wrapped_as_a_scenario_error():
    """Scenario.__post_init__ refuses a step larger than the column; it comes back as a
    ScenarioError that still starts with the field path."""
    data = base_mapping()
    data["depth_step"] = "100 km"
    with pytest.raises(
        ScenarioError,
        match=r"^depth_step: got 100000\.0; expected a step no "
        r"larger than max_depth",
    ):
        scenario_from_mapping(data)


def test_geotherm_must_be_a_table():
    data = base_mapping()
    data["geotherm"] = "layered-steady"
    with pytest.raises(ScenarioError, match=r"^geotherm: expected a table \(\[geotherm\]\)"):
        scenario_from_mapping(data)


def test_plain_number_where_a_number_is_expected_not_a_string():
    data = inline_mapping()
    data["layers"][0]["dislocation"]["n"] = "4"
    with pytest.raises(
        ScenarioError,
        match=r"^layers\[0\]\.dislocation\.n: expected a plain "
        r"number such as 4\.0, got '4'",
    ):
        scenario_from_mapping(data)


def test_dump_refuses_cohesion_without_mu():
    s = scenario_from_mapping(base_mapping())
    odd = dataclasses.replace(s, friction=model.Friction(mu=None, cohesion=1e6))
    with pytest.raises(
        ScenarioError,
        match=r"^friction\.cohesion: a cohesion is used only with "
        r"a constant mu",
    ):
        dump_scenario(odd)
