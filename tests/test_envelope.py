"""Strength envelopes, transitions, integrated strength, Te, point answers."""

import dataclasses

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, optimize

from rheology import analyse, compute_envelope, point_answer
from rheology.answers.integrated import elastic_thickness
from rheology.answers.transitions import BRITTLE_TO_DUCTILE, DUCTILE_TO_BRITTLE
from rheology.constants import GAS_CONSTANT, GRAVITY, ZERO_CELSIUS
from rheology.envelope import MECHANISMS, Envelope, depth_grid
from rheology.errors import RheologyError
from rheology.library import get_flow_law, get_rock
from rheology.library.flowlaw import FlowLaw, Rock
from rheology.model import Friction, Geotherm, Layer, PorePressure, Scenario
from rheology.physics.friction import friction_ratio

C = ZERO_CELSIUS
GT95 = FlowLaw("gt95", "wet quartzite", "dislocation", 1.1e-28, 4.0, 223e3)


def one_layer(
    law_or_rock,
    *,
    gradient=0.025,
    rate=1e-15,
    regime="thrust",
    ratio=0.0,
    friction=None,
    step=50.0,
    max_depth=40e3,
    density=2700.0,
):
    rock = law_or_rock if isinstance(law_or_rock, Rock) else Rock("t", "test", (law_or_rock,))
    return Scenario(
        "one layer",
        rate,
        regime,
        max_depth,
        Geotherm("linear", 10 + C, gradient=gradient),
        (Layer("rock", max_depth, density, rock),),
        PorePressure("ratio", ratio),
        friction or Friction(),
        depth_step=step,
    )


def three_layers(heat_flow=0.05, rate=1e-15, regime="normal", ratio=0.37, step=50.0):
    """Quartzite over felsic granulite over dry olivine (library rocks), 80 km."""
    layers = (
        Layer("upper crust", 15e3, 2750, get_rock("quartzite-wet"), 1.0e-6, 2.5),
        Layer("lower crust", 15e3, 2900, get_rock("felsic-granulite"), 0.4e-6, 2.2),
        Layer("mantle", 50e3, 3300, get_rock("olivine-dry"), 0.02e-6, 3.3),
    )
    return Scenario(
        "three layers",
        rate,
        regime,
        80e3,
        Geotherm("layered-steady", 10 + C, surface_heat_flow=heat_flow),
        layers,
        PorePressure("ratio", ratio),
        depth_step=step,
    )


def first_b2d(analysis):
    return next(t for t in analysis.transitions if t.kind == BRITTLE_TO_DUCTILE)


# ---------------------------------------------------------------- hand-worked cases


@pytest.mark.parametrize("regime", ["thrust", "strike-slip", "normal"])
@pytest.mark.parametrize("ratio", [0.0, 0.37])
def test_one_layer_crossing_matches_closed_form_root(regime, ratio):
    """One layer, linear geotherm T = T0 + G z, cohesionless friction mu = 0.6:
    beta (1 - lambda) rho g z = (edot/A)^(1/n) exp(Q / (n R (T0 + G z))) with beta from
    Sibson (1974) (R - 1, 2(R - 1)/(R + 1), 1 - 1/R). The root, found here with
    scipy.optimize.brentq, is the crossing depth; the envelope's root search must agree to
    1 cm (its tolerance is 1 mm) although its grid step is 50 m."""
    scenario = one_layer(GT95, regime=regime, ratio=ratio, friction=Friction(mu=0.6))
    R = friction_ratio(0.6)
    beta = {"thrust": R - 1, "strike-slip": 2 * (R - 1) / (R + 1), "normal": 1 - 1 / R}[regime]

    def gap(z):
        brittle = beta * (1 - ratio) * 2700 * GRAVITY * z
        ductile = (1e-15 / 1.1e-28) ** 0.25 * np.exp(
            223e3 / (4 * GAS_CONSTANT * (10 + C + 0.025 * z))
        )
        return brittle - ductile

    root = optimize.brentq(gap, 1e3, 39e3, xtol=1e-6)
    transitions = analyse(scenario).transitions
    assert len(transitions) == 1 and transitions[0].kind == BRITTLE_TO_DUCTILE
    assert transitions[0].depth == pytest.approx(root, abs=0.01)
    assert transitions[0].temperature == pytest.approx(10 + C + 0.025 * root, abs=1e-3)


def test_integrated_strength_matches_quadrature():
    """Integrated strength of the one-layer thrust column against scipy.integrate.quad of
    min(friction, creep) with the kink split at the crossing; the 10 m trapezoid grid agrees
    to 1e-4 (trapezoid error ~ dz^2 f''/12 over 40 km)."""
    scenario = one_layer(GT95, step=10.0)
    analysis = analyse(scenario)
    z_c = analysis.transitions[0].depth

    def brittle(z):
        return float(
            compute_envelope(
                dataclasses.replace(scenario, max_depth=max(z, 1.0), depth_step=max(z, 1.0))
            ).brittle[-1]
        )

    def ductile(z):
        return (1e-15 / 1.1e-28) ** 0.25 * np.exp(223e3 / (4 * GAS_CONSTANT * (10 + C + 0.025 * z)))

    upper = integrate.quad(brittle, 0, z_c, limit=200)[0]
    lower = integrate.quad(ductile, z_c, 40e3, limit=200)[0]
    assert analysis.integrated == pytest.approx(upper + lower, rel=1e-4)
    assert sum(analysis.integrated_by_layer.values()) == pytest.approx(analysis.integrated)


@pytest.mark.parametrize(
    ("regime", "ratio", "depth_km", "temp_c", "stress_mpa", "integrated_tn"),
    [
        ("thrust", 0.0, 9.44, 246, 706.5, 5.160),
        ("thrust", 0.37, 9.92, 258, 527.4, 3.968),
        ("strike-slip", 0.0, 10.57, 274, 362.6, None),
        ("strike-slip", 0.37, 11.30, 293, 244.2, None),
        ("normal", 0.0, 11.36, 294, 236.6, 1.902),
        ("normal", 0.37, 12.15, 314, 159.3, 1.372),
    ],
)
def test_gleason_tullis_crossovers_regression(
    regime, ratio, depth_km, temp_c, stress_mpa, integrated_tn
):
    """Gleason & Tullis (1995) wet quartzite (parameters from memory), 10 degC + 25 K/km,
    rho = 2700, 1e-15 1/s, cohesionless Byerlee with the minimum rule: crossover depth,
    temperature, stress and 0-40 km integrated strength: regression values of our own,
    computed outside this package by solving Byerlee (1978) friction = Gleason & Tullis
    (1995) creep on the Andersonian stress path and integrating by the trapezoid rule on a
    10 m grid (derived, not published numbers)."""
    analysis = analyse(
        one_layer(get_flow_law("qtz-wet-gt95"), regime=regime, ratio=ratio, step=10.0)
    )
    t = analysis.transitions[0]
    assert t.depth / 1e3 == pytest.approx(depth_km, abs=0.006)  # table gives 0.01 km
    assert t.temperature - C == pytest.approx(temp_c, abs=0.6)
    assert t.stress / 1e6 == pytest.approx(stress_mpa, abs=0.06)
    if integrated_tn is not None:
        assert analysis.integrated / 1e12 == pytest.approx(integrated_tn, abs=6e-4)


def test_three_layer_column_sequence_brittle_ductile_brittle_ductile():
    """Continental 'sandwich' (Chen & Molnar 1983; Burov & Diament 1995, common practice):
    faults in the crust, a ductile lower crust, a brittle mantle lid below the Moho, then
    ductile mantle. Expected kinds: B-D in the crust, D-B exactly at the Moho (30 km, a layer
    boundary), B-D in the mantle, shallow first and hotter downward."""
    analysis = analyse(three_layers())
    kinds = [t.kind for t in analysis.transitions]
    assert kinds == [BRITTLE_TO_DUCTILE, DUCTILE_TO_BRITTLE, BRITTLE_TO_DUCTILE]
    crust, moho, lid = analysis.transitions
    assert moho.at_boundary and moho.depth == 30e3
    assert (moho.layer_above, moho.layer_below) == ("lower crust", "mantle")
    assert crust.depth < moho.depth < lid.depth and lid.layer_below == "mantle"
    assert crust.temperature < moho.temperature < lid.temperature
    summary = analysis.summary()
    assert f"Faults expected down to about {crust.depth / 1e3:.1f} km" in summary
    assert "Faulting is possible again from 30.0 km" in summary


def test_layer_boundaries_appear_twice_with_both_layers():
    depth, layer = depth_grid(three_layers(step=1000.0))
    for boundary, upper in ((15e3, 0), (30e3, 1)):
        at = np.flatnonzero(depth == boundary)
        assert list(layer[at]) == [upper, upper + 1]
    assert np.all(np.diff(depth) >= 0) and depth[0] == 0 and depth[-1] == 80e3


# -------------------------------------------------- common-practice windows (issue checks)


@pytest.mark.parametrize("rate", [1e-14, 1e-15])
@pytest.mark.parametrize("gradient", [0.015, 0.025])
@pytest.mark.parametrize("regime", ["thrust", "strike-slip", "normal"])
@pytest.mark.parametrize("ratio", [0.0, 0.37])
@pytest.mark.parametrize(
    ("laws", "density", "window"),
    [
        (["qtz-wet-gt95"], 2700, (230, 350)),
        (["an-wet-disl-rd00"], 2800, (400, 520)),
        (["ol-dry-disl-hk03"], 3300, (600, 800)),
    ],
    ids=["wet quartzite GT95", "wet plagioclase RD00", "dry olivine HK03 dislocation"],
)
def test_creep_falls_below_friction_in_common_practice_window(
    laws, density, window, rate, gradient, regime, ratio
):
    """Common practice (Scholz 1988 ties ~300 degC to quartz plasticity and ~450 degC to
    feldspar's; ~600-800 degC for dry olivine, cf. McKenzie et al. 2005): at 1e-14 to 1e-15
    1/s and 15-25 K/km, cohesionless Byerlee friction with pore-pressure ratio 0 or 0.37 in
    each Andersonian regime, the laws named in the id (Gleason & Tullis 1995; Rybacki &
    Dresen 2000 wet dislocation creep; Hirth & Kohlstedt 2003 dry dislocation creep) cross
    below friction inside the window."""
    rock = Rock("t", "test", tuple(get_flow_law(i) for i in laws))
    scenario = one_layer(
        rock,
        gradient=gradient,
        rate=rate,
        regime=regime,
        ratio=ratio,
        step=100.0,
        max_depth=120e3,
        density=density,
    )
    t = first_b2d(analyse(scenario))
    assert window[0] <= t.temperature - C <= window[1]


# ------------------------------------------------------------ what practitioners rely on


def test_faster_colder_and_quicker_loading_favour_breaking_common_practice():
    """Common practice: a faster strain rate makes the ductile layer stronger and pushes the
    transition deeper; hotter rock is weaker; rock loaded quickly or cold is more likely to
    break."""
    slow, fast = analyse(three_layers(rate=1e-16)), analyse(three_layers(rate=1e-13))
    assert first_b2d(fast).depth > first_b2d(slow).depth
    ductile_region = slow.envelope.mechanism > 1
    assert np.all(fast.envelope.ductile[ductile_region] > slow.envelope.ductile[ductile_region])
    cold, hot = analyse(three_layers(heat_flow=0.045)), analyse(three_layers(heat_flow=0.065))
    assert first_b2d(hot).depth < first_b2d(cold).depth
    assert np.all(hot.envelope.ductile <= cold.envelope.ductile * (1 + 1e-12))


@settings(max_examples=20, deadline=None)
@given(
    log_rate=st.floats(-17, -12),
    factor=st.floats(1.5, 100),
    heat=st.floats(0.045, 0.07),
    extra=st.floats(0.001, 0.02),
)
def test_properties_rate_deepens_heat_shallows(log_rate, factor, heat, extra):
    """Properties (common practice): a faster strain rate never makes the first transition
    shallower; a hotter geotherm never makes it deeper."""
    base = analyse(three_layers(heat_flow=heat, rate=10**log_rate, step=250.0))
    faster = analyse(three_layers(heat_flow=heat, rate=10**log_rate * factor, step=250.0))
    hotter = analyse(three_layers(heat_flow=heat + extra, rate=10**log_rate, step=250.0))
    assert first_b2d(faster).depth >= first_b2d(base).depth - 1e-3
    assert first_b2d(hotter).depth <= first_b2d(base).depth + 1e-3


def test_point_answer_and_load_outcomes():
    """Point answers at depth: mechanism and margin; a load that is short against the Maxwell
    time stays elastic, one above the frictional strength breaks, a long one in hot rock flows
    (Maxwell time t_M = eta/G, Turcotte & Schubert 2002, from memory)."""
    scenario = three_layers()
    shallow = point_answer(scenario, 3e3)
    assert shallow.mechanism == MECHANISMS[0] and shallow.margin > 1
    deep = point_answer(scenario, 60e3)
    assert deep.mechanism in MECHANISMS[2:]
    year = 3.15576e7
    assert point_answer(scenario, 5e3, stress=10e6, duration=1.0).load.outcome.startswith("stays")
    assert point_answer(scenario, 5e3, stress=2e9, duration=1.0).load.outcome.startswith("breaks")
    assert point_answer(scenario, 70e3, stress=10e6, duration=1e6 * year).load.outcome.startswith(
        "flows"
    )
    with pytest.raises(RheologyError, match="outside the column"):
        point_answer(scenario, 90e3)
    with pytest.raises(RheologyError, match="give both"):
        point_answer(scenario, 5e3, stress=1e6)


# -------------------------------------------------------------------- Te and viscosity


def _synthetic(strength, depth, lithostatic=None):
    scenario = three_layers()
    n = depth.size
    zeros = np.zeros(n)
    return Envelope(
        scenario,
        depth,
        np.zeros(n, int),
        zeros + 300,
        zeros,
        zeros if lithostatic is None else lithostatic,
        zeros,
        strength,
        strength,
        strength,
        np.zeros(n, np.int8),
    )


def test_decoupled_elastic_thickness_burov_diament_1995():
    """Burov & Diament (1995; rule from memory): decoupled competent layers of 15, 20 and 25 km
    give Te = (15^3 + 20^3 + 25^3)^(1/3) = 30 km; coupled, their sum."""
    depth = np.linspace(0, 100e3, 100001)
    strength = np.full(depth.size, 1e6)
    for top, bottom in ((0, 15e3), (30e3, 50e3), (60e3, 85e3)):
        strength[(depth > top) & (depth < bottom)] = 300e6
    te = elastic_thickness(_synthetic(strength, depth))
    assert not te.coupled and te.te == pytest.approx(30e3, abs=5)  # 1 m grid, 3 layers
    coupled = elastic_thickness(_synthetic(np.where(depth < 60e3, 300e6, 1e6), depth))
    assert coupled.coupled and coupled.te == pytest.approx(60e3, abs=2)


def test_viscosity_convention_trouton():
    """eta = tau_II/(2 edot_II) = sigma_d/(3 edot_ax): a Newtonian law with A = 1e-20 Pa^-1 s^-1
    gives eta = 1/(3A) = 3.33e19 Pa s (the Trouton relation; standard result)."""
    law = FlowLaw("newt", "test", "diffusion", 1e-20, 1.0, 0.0)
    scenario = one_layer(law, max_depth=100e3, step=1000.0)
    env = compute_envelope(scenario)
    np.testing.assert_allclose(env.creep_viscosity, 1 / 3e-20, rtol=1e-12)


# ------------------------------------------------------------------------ bad input


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (dict(thickness=0.0), "thickness: got 0.0; expected a finite value > 0"),
        (dict(thickness=-5e3), "thickness: got -5000.0"),
        (dict(density=np.nan), "density: got nan"),
    ],
)
def test_bad_layer(change, message):
    base = dict(name="x", thickness=10e3, density=2700.0, rock=get_rock("quartzite-wet"))
    with pytest.raises(RheologyError, match=message):
        Layer(**(base | change))


def test_bad_scenario_values():
    good = one_layer(GT95)
    with pytest.raises(RheologyError, match="strain_rate: got 0.0; expected a finite value > 0"):
        dataclasses.replace(good, strain_rate=0.0)
    with pytest.raises(RheologyError, match="strain_rate: got -1e-15"):
        dataclasses.replace(good, strain_rate=-1e-15)
    with pytest.raises(RheologyError, match="surface_temperature: got -3.0"):
        Geotherm("linear", -3.0, gradient=0.025)
    with pytest.raises(RheologyError, match="'oblique' is not a faulting regime"):
        dataclasses.replace(good, faulting="oblique")
    with pytest.raises(
        RheologyError, match="unknown rock 'quartzit-wet'.*did you mean 'quartzite-wet'"
    ):
        get_rock("quartzit-wet")
    with pytest.raises(RheologyError, match="grain_size.*needed by rock 'olivine-dry-composite'"):
        Layer("mantle", 10e3, 3300.0, get_rock("olivine-dry-composite"))
    with pytest.raises(RheologyError, match="pore_pressure_ratio: got 1.2"):
        PorePressure("ratio", 1.2)


def test_answer_at_given_conditions_equals_answer_at_the_depth_with_them():
    """A point answer at (T, P) must equal the answer at the depth of a column where those
    conditions hold (consistency of the two entry points; no new physics)."""
    from rheology.answers.point import conditions_answer

    scenario = three_layers(regime="thrust")
    at_depth = point_answer(scenario, 12e3)
    given = conditions_answer(
        get_rock("quartzite-wet"),
        at_depth.temperature,
        at_depth.lithostatic,
        scenario.strain_rate,
        faulting="thrust",
        pore_pressure_ratio=0.37,
    )
    assert given.brittle == pytest.approx(at_depth.brittle, rel=1e-12)
    assert given.ductile == pytest.approx(at_depth.ductile, rel=1e-12)
    assert given.mechanism == at_depth.mechanism and given.depth is None
    assert "At " in given.sentence() and "MPa" in given.sentence()
