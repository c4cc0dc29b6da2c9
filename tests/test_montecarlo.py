"""Monte Carlo uncertainty: sampling, batch answers, percentiles, sensitivity, CLI.

Checks against things outside the Monte Carlo code: the deterministic single-column path
(root-searched transitions, trapezoid integrated strength, Te), scipy.stats reference
distributions and rank correlation, first-order error propagation, the asymptotic
standard error of a sample median, published pre-factors, and the common-practice
direction of the strain-rate and heat-flow effects.
"""

import argparse
import io
import json
import math
import subprocess
import sys
import textwrap
from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

import rheology
from rheology.answers.transitions import DEPTH_TOLERANCE
from rheology.envelope import Variation, depth_grid, evaluate
from rheology.errors import RheologyError
from rheology.uncertainty import (
    SpreadSpec,
    column_answers,
    load_spread,
    montecarlo,
    run_monte_carlo,
    sample_inputs,
    spread_from_mapping,
    variation_from_columns,
)
from rheology.uncertainty.commands import register

MW = 1e-3  # W/m^2 per mW/m^2
KM = 1e3


@pytest.fixture(scope="module")
def demo():
    return rheology.load_scenario(rheology.bundled_example("demo"))


@pytest.fixture(scope="module")
def coarse(demo):
    """The demo column on a 200 m grid (401 nodes), to keep the statistical runs quick."""
    return replace(demo, depth_step=200.0)


def interpolation_bound(envelope, depth):
    """Error bound h^2 max|g''| / (8 |g'|) of linear interpolation of g = ln(b/d) at a root.

    g'' and g' are estimated by finite differences on the grid nodes around the root; the
    bound is doubled for the error of those estimates, and the root search's own
    tolerance (DEPTH_TOLERANCE) is added.
    """
    d = envelope.depth
    j = int(np.searchsorted(d, depth)) - 1
    near = slice(j - 1, j + 3)
    g = np.zeros(d.size)
    g[near] = np.log(envelope.brittle[near]) - np.log(envelope.ductile[near])
    h = d[j + 1] - d[j]
    second = max(abs(g[k + 1] - 2 * g[k] + g[k - 1]) for k in (j, j + 1)) / h**2
    slope = abs(g[j + 1] - g[j]) / h
    return 2.0 * h**2 * second / (8.0 * slope) + DEPTH_TOLERANCE


# ------------------------------------------------------------------ deterministic limit


def test_zero_spread_reproduces_the_deterministic_envelope(demo):
    """With every spread zero, each realisation is the single-column envelope: strength
    equal bit for bit to evaluate() on the same grid, transitions equal to the root-searched
    depths of rheology.find_transitions within the linear-interpolation bound, integrated
    strength and Te equal to rheology.integrated_strength / elastic_thickness (consistency
    with the deterministic path, which is itself checked against published values)."""
    analysis = rheology.analyse(demo)
    env = analysis.envelope
    result = run_monte_carlo(
        demo, SpreadSpec(heat_flow_sd=0.0, law_spread=False), samples=4, seed=3
    )
    for band in result.bands.values():
        assert np.array_equal(band, env.strength)
    depth, layer = depth_grid(demo)
    assert np.array_equal(result.nominal_strength, evaluate(demo, depth, layer)["strength"])
    c = result.answers.transitions
    for row in range(4):
        mine = c.depth[c.row == row]
        assert mine.size == len(analysis.transitions)
        for z, t in zip(mine, analysis.transitions):
            tolerance = 0.0 if t.at_boundary else interpolation_bound(env, t.depth)
            assert abs(z - t.depth) <= tolerance
        temperatures = c.temperature[c.row == row]
        for temp, t in zip(temperatures, analysis.transitions):
            # T is interpolated with the same weight: gradient (< 0.03 K/m) x depth error
            assert temp == pytest.approx(t.temperature, abs=0.03 * 1.0 + 1e-6)
    assert np.allclose(result.answers.integrated, analysis.integrated, rtol=1e-12)
    assert np.allclose(result.answers.elastic_thickness, analysis.elastic.te, rtol=1e-12)
    assert not result.answers.coupled.any() and not analysis.elastic.coupled
    base = next(z for z in analysis.goetze if z >= analysis.transitions[0].depth - 1.0)
    assert result.answers.semi_brittle_base == pytest.approx(np.full(4, base), abs=0.05)
    # 0.05 m: the Goetze crossing is interpolated in ln(P_eff / creep) the same way
    first = analysis.transitions[0]
    assert result.first_down_depth.p50 == pytest.approx(
        first.depth, abs=interpolation_bound(env, first.depth)
    )


def test_no_varied_input_still_gives_every_realisation(demo):
    """A variation that changes nothing (no spread, no law spread) broadcasts the single
    column to every realisation (consistency with the deterministic path)."""
    analysis = rheology.analyse(demo)
    result = run_monte_carlo(demo, SpreadSpec(law_spread=False), samples=3, seed=0)
    assert result.inputs == ()
    assert result.answers.size == 3
    assert np.array_equal(result.bands[50.0], analysis.envelope.strength)
    assert np.all(result.answers.count == len(analysis.transitions))
    assert result.sensitivity == ()


def test_batch_interpolation_is_second_order_in_the_grid_step(demo):
    """Linear interpolation between nodes has an error proportional to h^2 (e.g. Press et
    al. 2007, Numerical Recipes, 3rd ed., sec. 3.1, from memory): halving the step should
    cut the error against the root-searched depth by about four (2.5 to 6 allowed for the
    variation of g'' along the interval)."""
    errors = []
    for step in (400.0, 200.0):
        scenario = replace(demo, depth_step=step)
        analysis = rheology.analyse(scenario)
        depth, layer = depth_grid(scenario)
        answers = column_answers(scenario, depth, layer).answers
        errors.append(abs(answers.first_down_depth[0] - analysis.transitions[0].depth))
    assert 2.5 < errors[0] / errors[1] < 6.0


def test_batch_crossover_of_gleason_tullis_quartzite_matches_reference_table():
    """Brittle-ductile crossover of Gleason & Tullis (1995) wet quartzite (1.1e-4 MPa^-4
    s^-1, n = 4, Q = 223 kJ/mol, from memory) under Byerlee (1978) friction, thrust
    faulting, linear geotherm 10 degC + 25 K/km, rho = 2700 kg/m^3, 1e-15 1/s: 9.44 km
    (246 degC) dry and 9.92 km (258 degC) at lambda = 0.37. Regression values of our own,
    computed outside this package (derived, not published) and quoted to 0.01 km."""
    scenario = rheology.scenario_from_mapping(
        {
            "title": "crossover check",
            "strain_rate": "1e-15 1/s",
            "faulting": "thrust",
            "pore_pressure_ratio": 0.0,
            "max_depth": "40 km",
            "depth_step": "0.05 km",
            "geotherm": {"kind": "linear", "surface_temperature": "10 degC", "gradient": "25 K/km"},
            "layers": [
                {
                    "name": "crust",
                    "thickness": "40 km",
                    "density": "2700 kg/m^3",
                    "rock": "quartzite-wet",
                }
            ],
        }
    )
    depth, layer = depth_grid(scenario)
    variation = Variation(size=2, pore_pressure_ratio=np.array([0.0, 0.37]))
    answers = column_answers(scenario, depth, layer, variation).answers
    # 0.005 km: the table's rounding; 0.6 degC: its rounding to whole degrees plus the
    # depth rounding (0.005 km x 25 K/km)
    assert answers.first_down_depth / KM == pytest.approx([9.44, 9.92], abs=0.005)
    assert answers.first_down_temperature - 273.15 == pytest.approx([246, 258], abs=0.6)
    stress = answers.transitions.stress[answers.transitions.kind == 0] / 1e6
    assert stress == pytest.approx([706.5, 527.4], abs=0.5)  # MPa, quoted to 0.1 MPa


# ------------------------------------------------------------------------- sampling


def test_seeded_run_is_reproducible_and_independent_of_chunks(coarse):
    """A stated seed (numpy default_rng) repeats a run bit for bit, whatever the chunk size
    and number of threads; another seed gives other numbers."""
    spread = SpreadSpec(
        heat_flow_sd=4 * MW,
        strain_rate_range=(1e-16, 1e-14),
        friction_sd=0.05,
        pore_ratio_range=(0.3, 0.45),
    )
    a = run_monte_carlo(coarse, spread, samples=300, seed=11, chunk=64)
    b = run_monte_carlo(coarse, spread, samples=300, seed=11, chunk=300, workers=2)
    c = run_monte_carlo(coarse, spread, samples=300, seed=12)
    for x, y in zip(a.inputs, b.inputs):
        assert np.array_equal(x.values, y.values)
    for name in ("first_down_depth", "integrated", "elastic_thickness", "semi_brittle_base"):
        assert np.array_equal(getattr(a.answers, name), getattr(b.answers, name), equal_nan=True)
    assert np.array_equal(a.answers.transitions.depth, b.answers.transitions.depth)
    assert all(np.array_equal(a.bands[p], b.bands[p]) for p in a.bands)
    assert np.array_equal(a.frictional_probability, b.frictional_probability)
    assert not np.array_equal(a.answers.first_down_depth, c.answers.first_down_depth)
    assert a.first_down_depth != c.first_down_depth


def test_truncated_heat_flow_follows_scipy_truncnorm(demo):
    """Heat flow below the heat produced in the column is redrawn, so the draws follow a
    normal law truncated there: scipy.stats.truncnorm (Kolmogorov-Smirnov p > 0.01) and no
    pile-up at the limit, as clipping would give."""
    scenario = replace(demo, geotherm=replace(demo.geotherm, surface_heat_flow=30 * MW))
    floor = montecarlo.minimum_heat_flow(scenario)
    # the demo's heat production: 1.0 x 15 + 0.4 x 20 + 0.02 x 45 uW/m^3 km = 23.9 mW/m^2
    assert floor == pytest.approx(23.9 * MW, rel=1e-12)
    draws = sample_inputs(
        scenario,
        SpreadSpec(heat_flow_sd=10 * MW, law_spread=False),
        20_000,
        np.random.default_rng(5),
    )
    q = draws.inputs[0].values
    assert q.min() >= floor
    reference = stats.truncnorm((floor - 30 * MW) / (10 * MW), np.inf, loc=30 * MW, scale=10 * MW)
    assert stats.kstest(q, reference.cdf).pvalue > 0.01
    assert np.count_nonzero(q == floor) == 0


def test_strain_rate_is_log_uniform_like_scipy_loguniform(demo):
    """Strain rates low (high/low)^u follow scipy.stats.loguniform (KS p > 0.01)."""
    draws = sample_inputs(
        demo,
        SpreadSpec(strain_rate_range=(1e-16, 1e-14), law_spread=False),
        20_000,
        np.random.default_rng(6),
    )
    rate = draws.inputs[0].values
    assert rate.min() >= 1e-16 and rate.max() <= 1e-14
    assert stats.kstest(rate, stats.loguniform(1e-16, 1e-14).cdf).pvalue > 0.01


def test_normal_pore_ratio_is_clipped_to_its_range(demo):
    """A normal pore-pressure ratio (mean 0.37, sd 0.4) clipped to [0, 0.95] puts
    norm.cdf(-0.925) and norm.sf(1.45) of the draws on the two limits (scipy.stats.norm;
    tolerance 4 binomial standard errors)."""
    n = 20_000
    draws = sample_inputs(
        demo, SpreadSpec(pore_ratio_sd=0.4, law_spread=False), n, np.random.default_rng(7)
    )
    ratio = draws.inputs[0].values
    for share, expected in (
        (np.mean(ratio == 0.0), stats.norm.cdf(-0.37 / 0.4)),
        (np.mean(ratio == 0.95), stats.norm.sf(0.58 / 0.4)),
    ):
        assert share == pytest.approx(expected, abs=4 * math.sqrt(expected * (1 - expected) / n))


def test_law_draws_use_the_published_one_sigma(demo):
    """Gleason & Tullis (1995) wet quartzite: n = 4.0 +- 0.9 and Q = 223 +- 56 kJ/mol (one
    sigma, from memory): the sampled sd matches within 4 standard errors of a sample sd
    (sd / sqrt(2N)); truncation at n > 0 and Q >= 0 lies beyond 4 sigma and is negligible."""
    n_draws = 20_000
    draws = sample_inputs(demo, SpreadSpec(), n_draws, np.random.default_rng(8))
    by_key = {item.key: item.values for item in draws.inputs}
    for key, sd in (("law:qtz-wet-gt95:n", 0.9), ("law:qtz-wet-gt95:Q", 56e3)):
        assert np.std(by_key[key]) == pytest.approx(sd, rel=4 / math.sqrt(2 * n_draws))
    assert "law:qtz-wet-gt95:log10_A" not in by_key  # no published sigma of A for this law


def test_varying_n_keeps_the_published_prefactor_in_mpa():
    """Gleason & Tullis (1995) publish A = 1.1e-4 MPa^-4 s^-1 (from memory). When n is
    drawn, A stays 1.1e-4 in MPa^-n s^-1, i.e. the SI pre-factor times (1e6 Pa)^n equals
    1.1e-4 for every drawn n (the law keeps its strain rate at 1 MPa)."""
    scenario = rheology.scenario_from_mapping(
        {
            "title": "pivot",
            "strain_rate": "1e-15 1/s",
            "faulting": "thrust",
            "pore_pressure_ratio": 0.0,
            "max_depth": "10 km",
            "geotherm": {"kind": "linear", "surface_temperature": "10 degC", "gradient": "25 K/km"},
            "layers": [
                {
                    "name": "crust",
                    "thickness": "10 km",
                    "density": "2700 kg/m^3",
                    "rock": "quartzite-wet",
                }
            ],
        }
    )
    law = scenario.layers[0].rock.laws[0]
    assert montecarlo.published_stress_unit(law) == 1e6
    n = np.array([3.1, 4.0, 4.9])
    variation = variation_from_columns(scenario, {"law:qtz-wet-gt95:n": n}, 3)
    entry = variation.laws[(0, 0)]
    assert entry["A"] * (1e6) ** n == pytest.approx(1.1e-4, rel=1e-12)
    assert entry["A"][1] == law.A  # the published n gives back the table's A exactly


# ------------------------------------------------------------------- statistics


def test_median_converges_within_its_standard_error(coarse):
    """Doubling the samples moves P50 of the first brittle-to-ductile depth by less than
    three standard errors of a difference of two independent sample medians,
    3 x 1.2533 sd sqrt(1/N + 1/2N). 1.2533 = sqrt(pi/2) is the asymptotic ratio of the
    standard error of the median to sd/sqrt(N) for a normal population (Laplace; e.g.
    Kendall & Stuart, The Advanced Theory of Statistics, vol. 1, from memory); with only the
    heat flow varying, the depth responds smoothly and is close to normal."""
    spread = SpreadSpec(heat_flow_sd=4 * MW, law_spread=False)
    n = 1000
    small = run_monte_carlo(coarse, spread, samples=n, seed=21, sensitivity=False)
    large = run_monte_carlo(coarse, spread, samples=2 * n, seed=22, sensitivity=False)
    sd = np.std(large.answers.first_down_depth)
    bound = 3 * 1.2533 * sd * math.sqrt(1 / n + 1 / (2 * n))
    assert abs(small.first_down_depth.p50 - large.first_down_depth.p50) < bound
    assert large.first_down_depth.count == 2 * n


def test_transition_spread_follows_first_order_error_propagation(coarse):
    """For a small heat-flow spread (sd 1 mW/m^2) the sd of the transition depth is
    |dz/dq| x sd_q (first-order propagation; Taylor 1997, An Introduction to Error
    Analysis, eq. 3.23, from memory), with dz/dq from two deterministic envelopes at
    q0 +- 1 mW/m^2. Tolerance 10 %: the sample sd of 2000 draws has a relative standard
    error of 1/sqrt(2N) = 1.6 %, and the response is slightly non-linear."""
    q0 = coarse.geotherm.surface_heat_flow
    depths = []
    for q in (q0 - MW, q0 + MW):
        scenario = replace(coarse, geotherm=replace(coarse.geotherm, surface_heat_flow=q))
        depths.append(rheology.analyse(scenario).transitions[0].depth)
    slope = (depths[1] - depths[0]) / (2 * MW)
    result = run_monte_carlo(
        coarse,
        SpreadSpec(heat_flow_sd=MW, law_spread=False),
        samples=2000,
        seed=31,
        sensitivity=False,
    )
    assert np.std(result.answers.first_down_depth) == pytest.approx(abs(slope) * MW, rel=0.10)


def test_wider_heat_flow_spread_widens_the_transition_spread(coarse):
    """Tripling the heat-flow sd (2 -> 6 mW/m^2) widens P90 - P10 of the transition depth
    about threefold to first order (first-order propagation, the spread scales with sd_q;
    Taylor 1997, An Introduction to Error Analysis, eq. 3.23, from memory); more than
    twofold is required (non-linearity)."""
    narrow = run_monte_carlo(
        coarse,
        SpreadSpec(heat_flow_sd=2 * MW, law_spread=False),
        samples=800,
        seed=41,
        sensitivity=False,
    )
    wide = run_monte_carlo(
        coarse,
        SpreadSpec(heat_flow_sd=6 * MW, law_spread=False),
        samples=800,
        seed=41,
        sensitivity=False,
    )
    assert wide.first_down_depth.width > 2.0 * narrow.first_down_depth.width
    assert wide.integrated.width > narrow.integrated.width


def test_faster_strain_rate_lets_faults_reach_deeper(coarse):
    """Common practice: a faster strain rate strengthens creeping rock, so friction stays the
    weaker mechanism deeper down. Between the median transitions of a slow (1e-16 to 1e-15
    1/s) and a fast (1e-14 to 1e-13 1/s) log-uniform range, the chance of frictional
    sliding is higher in the fast run; within one range the rank correlation of strain rate
    with the transition depth is strongly positive."""
    slow = run_monte_carlo(
        coarse, SpreadSpec(strain_rate_range=(1e-16, 1e-15), law_spread=False), samples=400, seed=51
    )
    fast = run_monte_carlo(
        coarse, SpreadSpec(strain_rate_range=(1e-14, 1e-13), law_spread=False), samples=400, seed=51
    )
    top, bottom = slow.first_down_depth.p50, fast.first_down_depth.p50
    assert bottom > top
    between = (slow.depth > top) & (slow.depth < bottom)
    assert np.any(between)
    gain = fast.frictional_probability[between] - slow.frictional_probability[between]
    assert np.all(gain >= 0) and gain.max() > 0.5
    (rate,) = slow.sensitivity
    assert rate.key == "strain_rate" and rate.rho > 0.9
    assert rate.depth_at_high > rate.depth_at_low


def test_sensitivity_is_spearman_of_the_sampled_inputs(coarse):
    """The ranking's rho is scipy.stats.spearmanr of each sampled input with the first
    brittle-to-ductile depth; with a wide heat-flow spread and a narrow friction spread,
    heat flow ranks first with rho < 0 (hotter crust creeps at shallower depth: common
    practice)."""
    result = run_monte_carlo(
        coarse,
        SpreadSpec(heat_flow_sd=8 * MW, friction_sd=0.02, law_spread=False),
        samples=500,
        seed=61,
    )
    first = result.sensitivity[0]
    assert first.key == "surface_heat_flow" and first.rho < -0.9
    assert first.depth_at_high < first.depth_at_low
    y = result.answers.first_down_depth
    by_key = {item.key: item.values for item in result.inputs}
    for s in result.sensitivity:
        expected = stats.spearmanr(by_key[s.key], y).statistic
        assert s.rho == pytest.approx(expected, abs=1e-12)


def test_transitions_are_matched_by_kind_layer_and_occurrence(demo):
    """The demo's three transitions (brittle-to-ductile in the upper crust, ductile-to-
    brittle at the top of the lower crust, brittle-to-ductile in the lower crust) are
    matched into three groups found in every realisation; a realisation's transitions keep
    their order of occurrence (consistency with rheology.find_transitions)."""
    result = run_monte_carlo(
        replace(demo, depth_step=200.0),
        SpreadSpec(heat_flow_sd=1 * MW, law_spread=False),
        samples=50,
        seed=71,
    )
    deterministic = rheology.analyse(replace(demo, depth_step=200.0)).transitions
    assert [(t.kind, t.layer) for t in result.transitions] == [
        (t.kind, t.layer_below) for t in deterministic
    ]
    assert all(t.fraction == 1.0 and t.occurrence == 1 for t in result.transitions)
    assert result.transitions[1].at_boundary_fraction == 1.0
    assert result.transitions[1].depth.p10 == result.transitions[1].depth.p90 == 15e3


# ----------------------------------------------------------------------- errors


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"heat_flow_sd": -1.0}, "heat_flow_sd: got -1.0; expected a standard deviation >= 0"),
        ({"friction_sd": math.nan}, "friction_sd: got nan"),
        ({"strain_rate_range": (1e-14, 1e-16)}, "strain_rate_range: .* the lower first"),
        ({"strain_rate_range": (0.0, 1e-16)}, "strain_rate_range: .* two rates > 0"),
        ({"pore_ratio_range": (0.3, 0.99)}, r"pore_ratio_range: .* upper <= 0.95"),
        ({"pore_ratio_range": (0.3, 0.4), "pore_ratio_sd": 0.1}, "give either pore_ratio_range"),
        ({"law_spread": "yes"}, "law_spread: got 'yes'; expected true or false"),
    ],
)
def test_spread_spec_rejects_impossible_values(kwargs, match):
    with pytest.raises(RheologyError, match=match):
        SpreadSpec(**kwargs)


@pytest.mark.parametrize(
    "data, match",
    [
        ({"heat_flow_sd": 5}, r"uncertainty.heat_flow_sd: got 5; expected a string with units"),
        ({"heat_flow_sd": "5 km"}, "uncertainty.heat_flow_sd: .* wrong dimension"),
        ({"age_sd": "-5 Myr"}, "uncertainty.age_sd: .* zero or greater"),
        ({"heat_flux_sd": "5 mW/m^2"}, "uncertainty.heat_flux_sd: unknown key"),
        ({"strain_rate_range": ["1e-16 1/s"]}, "uncertainty.strain_rate_range: got"),
        ({"pore_ratio_range": [0.3, "0.4"]}, "uncertainty.pore_ratio_range: got"),
        ({"friction_sd": "0.05"}, "uncertainty.friction_sd: got '0.05'; expected a plain number"),
        ({"friction_sd": -0.05}, "uncertainty.friction_sd: got -0.05"),
    ],
)
def test_spread_mapping_errors_name_the_field(data, match):
    with pytest.raises(RheologyError, match=match):
        spread_from_mapping(data)


def test_spread_file_is_read_from_its_uncertainty_table(tmp_path):
    path = tmp_path / "spread.toml"
    path.write_text(
        textwrap.dedent("""
        [uncertainty]
        heat_flow_sd = "5 mW/m^2"
        strain_rate_range = ["1e-16 1/s", "1e-14 1/s"]
        friction_sd = 0.05
        pore_ratio_range = [0.3, 0.45]
        law_spread = false
    """),
        encoding="utf-8",
    )
    spread = load_spread(path)
    assert spread == SpreadSpec(
        heat_flow_sd=5e-3,
        strain_rate_range=(1e-16, 1e-14),
        friction_sd=0.05,
        pore_ratio_range=(0.3, 0.45),
        law_spread=False,
    )
    empty = tmp_path / "empty.toml"
    empty.write_text("title = 'x'\n", encoding="utf-8")
    with pytest.raises(RheologyError, match=r"no \[uncertainty\] table"):
        load_spread(empty)
    with pytest.raises(RheologyError, match="no such spread file"):
        load_spread(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("[uncertainty\n", encoding="utf-8")
    with pytest.raises(RheologyError, match="malformed TOML"):
        load_spread(bad)


def test_spreads_the_scenario_cannot_take_are_refused(demo):
    rng = np.random.default_rng(0)
    with pytest.raises(
        RheologyError, match="age_sd: the scenario's 'layered-steady' geotherm has no age"
    ):
        sample_inputs(demo, SpreadSpec(age_sd=1e13), 10, rng)
    ocean = rheology.load_scenario(rheology.bundled_example("oceanic_plate"))
    with pytest.raises(
        RheologyError, match="pore_ratio_sd: the scenario's pore pressure is 'hydrostatic'"
    ):
        sample_inputs(ocean, SpreadSpec(pore_ratio_sd=0.05), 10, rng)


def test_a_truncation_that_keeps_almost_nothing_is_an_error():
    rng = np.random.default_rng(0)
    with pytest.raises(RheologyError, match="puts almost no draws above the physical limit"):
        montecarlo._normal(rng, -10.0, 1.0, 100, "friction_sd", above=0.0)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"samples": 1}, "samples: got 1; expected a whole number >= 2"),
        ({"samples": 10.5}, "samples: got 10.5"),
        ({"seed": -3}, "seed: got -3; expected a whole number >= 0"),
        ({"chunk": 0}, "chunk: got 0; expected a whole number >= 1"),
        ({"workers": 0}, "workers: got 0; expected a whole number >= 1"),
    ],
)
def test_run_arguments_are_checked(coarse, kwargs, match):
    arguments = {"samples": 10, "seed": 1} | kwargs
    with pytest.raises(RheologyError, match=match):
        run_monte_carlo(coarse, SpreadSpec(law_spread=False), **arguments)


def test_unseeded_run_reports_its_seed_and_can_be_repeated(coarse):
    spread = SpreadSpec(heat_flow_sd=3 * MW, law_spread=False)
    first = run_monte_carlo(coarse, spread, samples=20, sensitivity=False)
    again = run_monte_carlo(coarse, spread, samples=20, seed=first.seed, sensitivity=False)
    assert np.array_equal(first.answers.first_down_depth, again.answers.first_down_depth)


# ------------------------------------------------------------------ outputs, CLI


def test_figure_has_depth_down_and_units_on_every_axis(coarse):
    from rheology.uncertainty.figures import uncertainty_figure

    result = run_monte_carlo(coarse, SpreadSpec(heat_flow_sd=4 * MW), samples=100, seed=81)
    figure = uncertainty_figure(result)
    strength_ax, chance_ax = figure.axes
    assert "[MPa]" in strength_ax.get_xlabel() and "[km]" in strength_ax.get_ylabel()
    assert "[%]" in chance_ax.get_xlabel()
    top, bottom = strength_ax.get_ylim()
    assert top > bottom == 0.0  # depth increases downwards
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png")
    assert buffer.getvalue()[:4] == b"\x89PNG"


def test_figure_module_does_not_load_pyplot():
    code = (
        "import sys, rheology.uncertainty.figures, rheology.uncertainty.commands; "
        "print('matplotlib.pyplot' in sys.modules)"
    )
    output = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout.strip()
    assert output == "False"


def _cli(argv):
    parser = argparse.ArgumentParser()
    register(parser.add_subparsers(dest="command", required=True))
    args = parser.parse_args(argv)
    out, err = io.StringIO(), io.StringIO()
    code = args.handler(args, out, err)
    return code, out.getvalue(), err.getvalue()


def test_cli_prints_percentiles_sensitivity_and_the_caution(tmp_path):
    demo_path = str(rheology.bundled_example("demo"))
    plot = tmp_path / "spread.png"
    code, out, _ = _cli(
        [
            "uncertainty",
            demo_path,
            "--samples",
            "60",
            "--seed",
            "5",
            "--heat-flow-sd",
            "5 mW/m^2",
            "--strain-rate-range",
            "1e-16 1/s",
            "1e-14 1/s",
            "--friction-sd",
            "0.05",
            "--pore-ratio-range",
            "0.3",
            "0.45",
            "--no-law-spread",
            "--plot",
            str(plot),
        ]
    )
    assert code == 0
    assert "first brittle-to-ductile depth [km]" in out
    assert "seed 5" in out and "Spearman" in out
    assert rheology.CAUTION in out
    assert plot.read_bytes()[:4] == b"\x89PNG"


def test_cli_with_only_the_default_law_spread_runs():
    """No spread option: the flow laws vary from their published one-sigma (the default),
    and the run succeeds with the laws as the only inputs."""
    code, out, err = _cli(
        ["uncertainty", str(rheology.bundled_example("demo")), "--samples", "30", "--seed", "2"]
    )
    assert code == 0, err
    assert "ol-dry-disl-hk03" in out and rheology.CAUTION in out


def test_cli_json_is_one_object_with_the_caution():
    code, out, _ = _cli(
        [
            "uncertainty",
            str(rheology.bundled_example("demo")),
            "--samples",
            "30",
            "--seed",
            "2",
            "--heat-flow-sd",
            "4 mW/m^2",
            "--json",
        ]
    )
    data = json.loads(out)
    assert code == 0 and data["samples"] == 30 and data["seed"] == 2
    assert data["caution"] == rheology.CAUTION
    assert len(data["profile"]["depth_km"]) == len(data["profile"]["strength_p50_MPa"])
    assert {"p10", "p50", "p90", "mean"} <= set(data["first_brittle_to_ductile_depth_km"])


@pytest.mark.parametrize(
    "option, value, match",
    [
        ("--heat-flow-sd", "5", r"--heat-flow-sd: '5' has no units; give e.g. '5 W/m\^2'"),
        ("--heat-flow-sd", "5 km", "--heat-flow-sd: .* wrong dimension"),
        ("--friction-sd", "-1", "friction_sd: got -1.0"),
    ],
)
def test_cli_option_errors_raise_for_the_main_cli(option, value, match):
    with pytest.raises(RheologyError, match=match):
        _cli(
            ["uncertainty", str(rheology.bundled_example("demo")), "--samples", "10", option, value]
        )


def test_cli_missing_scenario_is_an_error(tmp_path):
    with pytest.raises(RheologyError, match="none.toml: no such file"):
        _cli(["uncertainty", str(tmp_path / "none.toml"), "--samples", "10"])
