"""Tests of rheology.physics.geotherm against published relations and worked examples.

Units: depths in m, temperatures in K (degC values are converted with 273.15), heat flow
in W m^-2 (mW m^-2 values are multiplied by 1e-3).
"""

import math

import numpy as np
import pytest
from scipy.special import erf, erfc

from rheology.constants import SECONDS_PER_MYR, ZERO_CELSIUS
from rheology.errors import RheologyError, RheologyWarning
from rheology.physics import geotherm
from rheology.physics.geotherm import (
    PLATE_DEFAULTS,
    GeothermProfile,
    adiabat,
    cap_at_adiabat,
    exponential_heat,
    half_space,
    layered_steady,
    linear,
    plate,
)

MYR = SECONDS_PER_MYR
KM = 1e3
MW = 1e-3  # mW m^-2 -> W m^-2
UW = 1e-6  # uW m^-3 -> W m^-3

# Check values quoted to 0.1 degC or 0.1 mW m^-2 are matched to half their last digit.
HALF_LAST_DIGIT_T = 0.05  # K
HALF_LAST_DIGIT_Q = 0.05 * MW  # W m^-2
# Our own hand arithmetic below is carried to 1e-3 K / 1e-3 mW m^-2.
HAND_T = 1e-3  # K
HAND_Q = 1e-3 * MW  # W m^-2
# Double-precision rounding of sums of a few O(1000 K) terms.
ROUNDING_T = 1e-9  # K


# ----------------------------------------------------------------- half-space cooling


@pytest.mark.parametrize(("age_myr", "expected_mw"), [(100.0, 43.1), (60.0, 55.6)])
def test_half_space_surface_heat_flow_turcotte_schubert_2002(age_myr, expected_mw):
    """q0 = k dT / sqrt(pi kappa t), Turcotte & Schubert (2002) sec. 4.16 (formula checked,
    secondary); k = 3.3 W/m/K, dT = 1300 K, kappa = 1e-6 m^2/s give 43.1 mW/m^2 at 100 Myr
    and 55.6 at 60 Myr (worked from that formula; 1 Myr = 3.15576e13 s)."""
    profile = half_space(
        np.array([0.0]), age_myr * MYR, ZERO_CELSIUS, ZERO_CELSIUS + 1300.0, 1e-6, 3.3
    )
    assert profile.heat_flow[0] == pytest.approx(expected_mw * MW, abs=HALF_LAST_DIGIT_Q)


def test_half_space_heat_flow_scales_as_inverse_root_age_turcotte_schubert_2002():
    """q0 t^(1/2) is constant: 430.9 mW m^-2 Myr^(1/2) for k = 3.3, dT = 1300 K, kappa = 1e-6
    (Turcotte & Schubert 2002 sec. 4.16; coefficient worked from the formula to 0.1)."""
    ages = np.array([[1.0], [4.0], [25.0], [100.0]]) * MYR
    q0 = half_space(np.array([0.0]), ages, 273.15, 1573.15, 1e-6, 3.3).heat_flow[:, 0]
    coefficient = q0 / MW * np.sqrt(ages[:, 0] / MYR)
    np.testing.assert_allclose(coefficient, 430.9, atol=0.05)  # quoted to 0.1


def test_half_space_temperature_matches_scipy_erf():
    """T = T0 + (Tm - T0) erf(z / 2 sqrt(kappa t)) (Wangen 2010 eq. 6.205, checked), with the
    error function from scipy.special evaluated here directly."""
    z = np.linspace(0.0, 200.0 * KM, 41)
    t, t0, tm, kappa = 30.0 * MYR, 275.0, 1600.0, 8e-7
    profile = half_space(z, t, t0, tm, diffusivity=kappa)
    expected = t0 + (tm - t0) * erf(z / (2.0 * math.sqrt(kappa * t)))
    np.testing.assert_allclose(profile.temperature, expected, rtol=0, atol=ROUNDING_T)


def test_half_space_solves_the_diffusion_equation():
    """dT/dt = kappa d2T/dz2 (Fourier's heat equation without sources), by central
    differences; truncation error of both differences is below 1e-6 of the terms here."""
    z = np.linspace(5.0 * KM, 60.0 * KM, 12)
    t, dt, dz, kappa = 20.0 * MYR, 1e-3 * MYR, 10.0, 1e-6

    def temperature(depth, age):
        return half_space(depth, age, 273.0, 1600.0, kappa).temperature

    dT_dt = (temperature(z, t + dt) - temperature(z, t - dt)) / (2 * dt)
    d2T_dz2 = (temperature(z + dz, t) - 2 * temperature(z, t) + temperature(z - dz, t)) / dz**2
    # relative truncation (dt/t)^2 ~ 2e-9 and (dz/25 km)^2 ~ 2e-7; rounding of d2T/dz2
    # about 1e-16 * 1600 K / dz^2 ~ 2e-15 K/m^2 against terms of ~1e-12 K/m^2: 1e-3 rtol
    np.testing.assert_allclose(dT_dt, kappa * d2T_dz2, rtol=1e-3)


# --------------------------------------------------------------------------- plate


def test_plate_defaults_match_published_values():
    """Parsons & Sclater (1977) abstract: 125 km, 1350 degC (checked); Stein & Stein (1992)
    GDH1: 95 km, 1450 degC (checked, secondary: Honda & Yuen 2004 abstract)."""
    ps, gdh = PLATE_DEFAULTS["parsons_sclater_1977"], PLATE_DEFAULTS["stein_stein_1992"]
    assert ps["plate_thickness"] == 125e3
    assert ps["mantle_temperature"] == pytest.approx(1350.0 + 273.15)
    assert gdh["plate_thickness"] == 95e3
    assert gdh["mantle_temperature"] == pytest.approx(1450.0 + 273.15)
    for entry in (ps, gdh):
        assert entry["citation"] and entry["status"].startswith("checked")


@pytest.mark.parametrize("age_myr", [0.5, 3.0, 3.5, 5.0, 10.0, 20.0, 30.0])
def test_plate_matches_half_space_at_young_ages(age_myr):
    """A plate of thickness L differs from the half-space (Turcotte & Schubert 2002 sec.
    4.16) only through image terms: by at most (Tm - T0) erfc(L / 2 sqrt(kappa t)) in
    temperature and a relative 2.01 exp(-L^2 / kappa t) in surface flux (method of images
    for the plate's fixed basal temperature). Ages above 3.44 Myr use the series branch."""
    thickness, kappa, t0, tm = 125.0 * KM, 1e-6, 273.15, 1623.15  # Parsons & Sclater L, Tm
    t = age_myr * MYR
    z = np.linspace(0.0, 150.0 * KM, 301)
    p = plate(z, t, t0, tm, thickness, kappa)
    h = half_space(z, t, t0, tm, kappa)
    scale_sq = kappa * t
    t_bound = (tm - t0) * erfc(thickness / (2 * math.sqrt(scale_sq))) + ROUNDING_T
    np.testing.assert_allclose(p.temperature, h.temperature, rtol=0, atol=t_bound)
    q_bound = 2.01 * math.exp(-(thickness**2) / scale_sq) + 1e-12  # plus rounding
    assert p.heat_flow[0] == pytest.approx(h.heat_flow[0], rel=q_bound)


@pytest.mark.parametrize("age_myr", [500.0, 1000.0, 10000.0])
def test_plate_tends_to_linear_steady_state_at_old_ages(age_myr):
    """Old plates approach T = T0 + (Tm - T0) z / L and q = k (Tm - T0) / L (steady
    conduction, Turcotte & Schubert 2002 ch. 4). The transient is bounded by its leading
    term: (2/pi) e1/(1 - e1) of (Tm - T0) in T and 2 e1/(1 - e1) relative in q, where
    e1 = exp(-pi^2 kappa t / L^2)."""
    thickness, kappa, k, t0, tm = 95.0 * KM, 1e-6, 3.3, 273.15, 1723.15  # GDH1 L, Tm
    t = age_myr * MYR
    z = np.linspace(0.0, thickness, 96)
    p = plate(z, t, t0, tm, thickness, kappa, k)
    e1 = math.exp(-(math.pi**2) * kappa * t / thickness**2)
    tail = e1 / (1 - e1)
    steady_t = t0 + (tm - t0) * z / thickness
    steady_q = k * (tm - t0) / thickness
    np.testing.assert_allclose(
        p.temperature, steady_t, rtol=0, atol=(tm - t0) * 2 / math.pi * tail + ROUNDING_T
    )
    np.testing.assert_allclose(p.heat_flow, steady_q, rtol=2 * tail + 1e-12)


def test_plate_below_its_base_is_at_mantle_temperature_with_no_conductive_flux():
    """Model definition (Parsons & Sclater 1977): T = Tm for z >= L; the flux there is zero."""
    p = plate(np.array([100.0, 125.0, 130.0, 200.0]) * KM, 50 * MYR, 273.0, 1623.0, 125 * KM)
    assert np.all(p.temperature[1:] == 1623.0)
    assert p.heat_flow[0] > 0 and np.all(p.heat_flow[2:] == 0.0)


def test_plate_series_at_the_half_space_switch_matches_half_space():
    """Just above the switch (sqrt(kappa t) slightly above L/12) the series is summed; its
    distance from the half-space must be below the image bound (Tm - T0) erfc(6) ~ 3e-14 K,
    so this checks that the summed terms are enough where convergence is slowest."""
    thickness, kappa = 100.0 * KM, 1e-6
    t = 1.001 * (thickness / 12.0) ** 2 / kappa
    z = np.linspace(0.0, thickness, 401)
    p = plate(z, t, 273.0, 1623.0, thickness, kappa)
    h = half_space(z, t, 273.0, 1623.0, kappa)
    # image bound 1350 * erfc(6 / 1.0005) ~ 3e-14 K, plus ~30 terms of rounding on 1350 K
    np.testing.assert_allclose(p.temperature, h.temperature, rtol=0, atol=1e-10)
    # flux: same relative bound; deep down, where q -> 0, rounding of the ~30 summed terms
    # (1e-16 of the surface flux each) sets an absolute floor of 1e-12 of the surface flux
    np.testing.assert_allclose(p.heat_flow, h.heat_flow, rtol=1e-10, atol=1e-12 * h.heat_flow[0])


def test_plate_warns_when_terms_truncate_the_series():
    with pytest.warns(RheologyWarning, match=r"plate: terms=3 truncates the series"):
        plate(np.array([0.0, 10e3]), 10 * MYR, 273.0, 1623.0, 125e3, terms=3)


# ------------------------------------------------------- continental steady geotherms


def test_exponential_heat_worked_example_turcotte_schubert_2002():
    """Turcotte & Schubert (2002) eqs. 4.30-4.31 (equation numbers from memory; formula
    checked against Wangen 2010 eqs. 6.85-6.87). q0 = 65 mW/m^2, H0 = 2.5 uW/m^3,
    h_r = 10 km, k = 2.5 W/m/K, T0 = 10 degC; worked by hand step by step."""
    z = np.array([0.0, 10.0, 30.0, 1000.0]) * KM
    t0 = 10.0 + ZERO_CELSIUS
    p = exponential_heat(z, t0, 65 * MW, 2.5 * UW, 10 * KM, 2.5)

    # step 1: q_m = q0 - H0 h_r = 65 - 2.5e-6 * 1e4 * 1e3 = 40 mW/m^2, the flux deep down
    # (at 1000 km the crustal part 25 e^-100 mW/m^2 has vanished)
    assert p.heat_flow[3] == pytest.approx(40.0 * MW, abs=HAND_Q)
    # step 2: the linear term q_m z / k = 0.040 * 1e4 / 2.5 = 160 K at 10 km, 480 K at 30 km
    # step 3: the radiogenic term H0 h_r^2 / k (1 - e^(-z/h_r)) = 100 K (1 - e^-1) = 63.212 K
    #         at 10 km and 100 K (1 - e^-3) = 95.021 K at 30 km
    radiogenic = p.temperature[1:3] - t0 - np.array([160.0, 480.0])
    np.testing.assert_allclose(radiogenic, [63.212, 95.021], atol=HAND_T)
    # step 4: the totals, T(10 km) = 233.2 degC and T(30 km) = 585.0 degC
    assert p.temperature[1] - ZERO_CELSIUS == pytest.approx(233.2, abs=HALF_LAST_DIGIT_T)
    assert p.temperature[2] - ZERO_CELSIUS == pytest.approx(585.0, abs=HALF_LAST_DIGIT_T)
    # heat flow at depth q_m + H0 h_r e^(-z/h_r): 65, 40 + 25 e^-1 = 49.197, 40 + 25 e^-3 = 41.245
    np.testing.assert_allclose(p.heat_flow[:3] / MW, [65.0, 49.197, 41.245], atol=HAND_Q / MW)


def test_layered_steady_three_layer_example_worked_by_hand():
    """A three-layer example of our own, worked by hand: q0 = 46 mW/m^2, T0 = 0 degC;
    0-10 km H = 2.1 uW/m^3, k = 2.51; 10-40 km H = 0.26, k = 2.51; 40-100 km H = 0, k = 3.35.
    Within each layer T = T_i + q_i dz/k - H dz^2/(2k) and q = q_i - H dz, step by step."""
    z = np.array([0.0, 10.0, 40.0, 100.0]) * KM
    p = layered_steady(
        z,
        ZERO_CELSIUS,
        46 * MW,
        [10 * KM, 30 * KM, 60 * KM],
        [2.1 * UW, 0.26 * UW, 0.0],
        [2.51, 2.51, 3.35],
    )
    celsius = p.temperature - ZERO_CELSIUS
    # layer 1: q(10 km) = 46 - 2.1 * 10 = 25.0 mW/m^2;
    #          T = 46e-3 * 1e4 / 2.51 - 2.1e-6 * 1e8 / 5.02 = 183.267 - 41.833 = 141.434 degC
    assert p.heat_flow[1] == pytest.approx(25.0 * MW, abs=HAND_Q)
    assert celsius[1] == pytest.approx(141.434, abs=HAND_T)
    # layer 2: q(40 km) = 25 - 0.26 * 30 = 17.2 mW/m^2;
    #          T = 141.434 + 25e-3 * 3e4 / 2.51 - 0.26e-6 * 9e8 / 5.02 = 141.434 + 298.805 - 46.614
    assert p.heat_flow[2] == pytest.approx(17.2 * MW, abs=HAND_Q)
    assert celsius[2] == pytest.approx(393.625, abs=HAND_T)
    # layer 3: T = 393.625 + 17.2e-3 * 6e4 / 3.35 = 393.625 + 308.060 = 701.685 degC
    assert celsius[3] == pytest.approx(701.685, abs=HAND_T)
    # the same hand values rounded to 0.1: 141.4 / 393.6 / 701.7 degC, 25.0 / 17.2 mW/m^2
    np.testing.assert_allclose(celsius[1:], [141.4, 393.6, 701.7], atol=HALF_LAST_DIGIT_T)
    np.testing.assert_allclose(p.heat_flow[1:3], [25.0 * MW, 17.2 * MW], atol=HALF_LAST_DIGIT_Q)


def test_layered_steady_last_layer_extends_downwards():
    """Below the nominal base the last layer continues: with H = 0 there the gradient stays
    q_base / k (17.2e-3 / 3.35 K/m from the example above; hand arithmetic)."""
    z = np.array([100.0, 150.0]) * KM
    p = layered_steady(
        z,
        ZERO_CELSIUS,
        46 * MW,
        [10 * KM, 30 * KM, 60 * KM],
        [2.1 * UW, 0.26 * UW, 0.0],
        [2.51, 2.51, 3.35],
    )
    assert p.temperature[1] - p.temperature[0] == pytest.approx(17.2e-3 / 3.35 * 50e3, abs=HAND_T)


def test_layered_steady_without_heat_production_is_linear():
    """Limiting case: H = 0 everywhere gives a linear geotherm of gradient q0/k (Fourier's law)."""
    z = np.linspace(0.0, 80.0 * KM, 81)
    p = layered_steady(z, 283.0, 60 * MW, [15e3, 20e3, 10e3], [0.0, 0.0, 0.0], [2.4, 2.4, 2.4])
    expected = linear(z, 283.0, 60 * MW / 2.4, 2.4)
    np.testing.assert_allclose(p.temperature, expected.temperature, rtol=0, atol=ROUNDING_T)
    np.testing.assert_allclose(p.heat_flow, expected.heat_flow, rtol=1e-12)


def test_layered_steady_one_uniform_layer_matches_closed_form():
    """Uniform heat production: T = T0 + q0 z / k - H z^2 / (2 k), q = q0 - H z
    (Turcotte & Schubert 2002 ch. 4, steady conduction with uniform sources)."""
    z = np.linspace(0.0, 35.0 * KM, 36)
    t0, q0, heat, k = 288.0, 70 * MW, 1.2 * UW, 2.7
    p = layered_steady(z, t0, q0, [35 * KM], [heat], [k])
    np.testing.assert_allclose(
        p.temperature, t0 + q0 * z / k - heat * z**2 / (2 * k), rtol=0, atol=ROUNDING_T
    )
    np.testing.assert_allclose(p.heat_flow, q0 - heat * z, rtol=0, atol=1e-15)


def test_layered_steady_converges_to_exponential_heat():
    """Many thin layers holding each layer's mean of H0 exp(-z/h_r) reproduce the
    exponential geotherm (Turcotte & Schubert 2002 eq. 4.31). With exact layer means the
    flux is exact at each interface and the temperature error is at most H0 dz^2 / (12 k)
    (integral of the within-layer flux error)."""
    dz, h0, hr, k, q0, t0 = 100.0, 3.0 * UW, 8.0 * KM, 2.6, 70 * MW, 280.0
    edges = np.arange(0.0, 60.0 * KM + dz, dz)
    means = h0 * hr * (np.exp(-edges[:-1] / hr) - np.exp(-edges[1:] / hr)) / dz
    z = np.linspace(0.0, 60.0 * KM, 61)
    thin = layered_steady(z, t0, q0, np.diff(edges), means, np.full(means.shape, k))
    smooth = exponential_heat(z, t0, q0, h0, hr, k)
    np.testing.assert_allclose(
        thin.temperature, smooth.temperature, rtol=0, atol=h0 * dz**2 / (12 * k) + 1e-9
    )
    np.testing.assert_allclose(thin.heat_flow, smooth.heat_flow, rtol=0, atol=1e-12)


@pytest.mark.parametrize(
    ("make", "interfaces"),
    [
        (lambda z: (linear(z, 283.0, 0.025, 2.5), 2.5), []),
        (lambda z: (exponential_heat(z, 283.0, 0.065, 2.5e-6, 1e4, 2.5), 2.5), []),
        (lambda z: (half_space(z, 40 * MYR, 273.0, 1600.0, 1e-6, 3.3), 3.3), []),
        (lambda z: (plate(z, 80 * MYR, 273.0, 1600.0, 125e3, 1e-6, 3.3), 3.3), []),
        (
            lambda z: (
                layered_steady(z, 283.0, 0.065, [20e3, 50e3], [1e-6, 0.2e-6], [3.0, 3.0]),
                3.0,
            ),
            [20e3, 70e3],
        ),
    ],
    ids=["linear", "exponential", "half_space", "plate", "layered"],
)
def test_heat_flow_is_conductivity_times_gradient(make, interfaces):
    """Fourier's law q = k dT/dz, checked by central differences on a 10 m grid; relative
    truncation error (dz / 8 km)^2 ~ 2e-6, so 1e-5 relative is ample. Grid points on a
    layer interface are left out: there H jumps and the central difference is off by
    (H_above - H_below) dz / 4 by construction."""
    z = np.arange(1.0 * KM, 100.0 * KM, 10.0)
    profile, k = make(z)
    numeric = k * np.gradient(profile.temperature, z)
    keep = np.ones(z.shape, bool)
    keep[[0, -1]] = False  # one-sided differences at the ends
    for depth in interfaces:
        keep &= np.abs(z - depth) > 1.0
    np.testing.assert_allclose(numeric[keep], profile.heat_flow[keep], rtol=1e-5, atol=1e-9)


# -------------------------------------------------------------------------- adiabat


def test_adiabat_gradient_common_practice():
    """T = Tp + 0.4 K/km z (default gradient: common practice, value from memory):
    Tp + 40 K at 100 km, worked by hand."""
    assert adiabat(np.array([0.0, 100e3]), 1600.0).tolist() == pytest.approx([1600.0, 1640.0])


def test_cap_at_adiabat_never_exceeds_adiabat_and_leaves_cool_parts():
    """Invariant of min(T, T_ad): capped everywhere at or below the adiabat; unchanged where
    the geotherm was cooler; capped flux k * gradient (0.4e-3 K/m times 3.3 W/m/K)."""
    z = np.linspace(0.0, 300.0 * KM, 301)
    profile = linear(z, 273.0, 0.012, 3.3)
    ad = adiabat(z, 1623.0)
    capped = cap_at_adiabat(profile, z, 1623.0)
    assert np.all(capped.temperature <= ad)
    cool = profile.temperature <= ad
    assert cool.any() and (~cool).any()
    np.testing.assert_array_equal(capped.temperature[cool], profile.temperature[cool])
    np.testing.assert_array_equal(capped.heat_flow[cool], profile.heat_flow[cool])
    np.testing.assert_allclose(capped.temperature[~cool], ad[~cool])
    np.testing.assert_allclose(capped.heat_flow[~cool], 3.3 * 0.4e-3)


# --------------------------------------------------------------------- broadcasting


def _loop(function, realisation_args, shared):
    return np.stack([function(*shared(*args)).temperature for args in realisation_args])


def test_realisation_axis_equals_loop_over_scalar_calls():
    """(R, 1) parameters give (R, nz) results equal to one scalar call per realisation."""
    z = np.linspace(0.0, 150e3, 31)
    ages = np.array([[2.0], [15.0], [90.0]]) * MYR
    tm = np.array([[1600.0], [1650.0], [1700.0]])
    q0 = np.array([[0.05], [0.06], [0.07]])
    cases = [
        (
            half_space(z, ages, 273.0, tm),
            [half_space(z, a, 273.0, m) for a, m in zip(ages[:, 0], tm[:, 0])],
        ),
        (
            plate(z, ages, 273.0, tm, 110e3),
            [plate(z, a, 273.0, m, 110e3) for a, m in zip(ages[:, 0], tm[:, 0])],
        ),
        (linear(z, 273.0, q0 / 2.5, 2.5), [linear(z, 273.0, q / 2.5, 2.5) for q in q0[:, 0]]),
        (
            exponential_heat(z, 283.0, q0, 2e-6, 1e4, 2.5),
            [exponential_heat(z, 283.0, q, 2e-6, 1e4, 2.5) for q in q0[:, 0]],
        ),
    ]
    heat = np.array([[1e-6, 0.2e-6], [1.5e-6, 0.15e-6], [0.8e-6, 0.1e-6]])
    cases.append(
        (
            layered_steady(z, 283.0, q0, [15e3, 25e3], heat, [2.5, 3.0]),
            [
                layered_steady(z, 283.0, q, [15e3, 25e3], h, [2.5, 3.0])
                for q, h in zip(q0[:, 0], heat)
            ],
        )
    )
    for batched, singles in cases:
        assert batched.temperature.shape == (3, z.size)
        assert batched.heat_flow.shape == (3, z.size)
        # a plate batch sums as many series terms as its youngest member needs; the extra
        # terms (each < 1e-22) change older members only in the last bit: rtol 1e-14, and
        # for the flux, which cancels towards zero at depth, an absolute floor of 1e-16
        # W/m^2 (under 1e-15 of the O(0.1 W/m^2) leading term the rounding is relative to)
        expected_t = np.stack([s.temperature for s in singles])
        expected_q = np.stack([s.heat_flow for s in singles])
        np.testing.assert_allclose(batched.temperature, expected_t, rtol=1e-14, atol=0)
        np.testing.assert_allclose(batched.heat_flow, expected_q, rtol=1e-14, atol=1e-16)


def test_split_parts_equal_the_profile_and_dt_dq0_is_the_thermal_resistance():
    """With split=True a geotherm comes as T = base + value * shape. The parts must give
    the profile's numbers bit for bit (the batch engine relies on it), and for the layered
    solution T = T_i + q_i dz/k_i - H_i dz^2/(2 k_i) the shape dT/dq0 is the thermal
    resistance sum dz_i / k_i above each depth (Turcotte & Schubert 2002, ch. 4; the
    derivative is our own)."""
    z = np.linspace(0.0, 60e3, 61)
    q0 = np.array([[0.05], [0.065]])
    args = (z, 283.0, q0, [15e3, 25e3, 20e3], [1e-6, 0.3e-6, 0.02e-6], [2.5, 3.0, 3.3])
    whole, parts = layered_steady(*args), layered_steady(*args, split=True)
    assert np.array_equal(parts.temperature, whole.temperature)
    assert np.array_equal(parts.heat_flow, whole.heat_flow)
    resistance = np.minimum(z, 15e3) / 2.5 + np.clip(z - 15e3, 0, 25e3) / 3.0
    resistance += np.clip(z - 40e3, 0, None) / 3.3
    np.testing.assert_allclose(parts.shape, resistance, rtol=1e-14)
    line, line_parts = linear(z, 283.0, q0 / 2.5, 2.5), linear(z, 283.0, q0 / 2.5, 2.5, True)
    assert np.array_equal(line_parts.temperature, line.temperature)
    assert np.array_equal(np.broadcast_to(line_parts.heat_flow, (2, z.size)), line.heat_flow)


def test_realisation_depth_grids_of_shape_r_nz():
    """Depth of shape (R, nz) with (R, 1) parameters: each row as its own scalar call."""
    z = np.array([np.linspace(0, 50e3, 6), np.linspace(0, 100e3, 6)])
    t = np.array([[10.0], [40.0]]) * MYR
    batched = plate(z, t, 273.0, 1600.0, 100e3)
    for r in range(2):
        single = plate(z[r], t[r, 0], 273.0, 1600.0, 100e3)
        np.testing.assert_array_equal(batched.temperature[r], single.temperature)


# --------------------------------------------------------------------------- errors


Z = np.array([0.0, 10e3, 30e3])


@pytest.mark.parametrize(
    ("call", "pattern"),
    [
        (
            lambda: layered_steady(Z, 283.0, 0.06, [10e3, 0.0], [1e-6, 0.0], [2.5, 3.0]),
            r"thickness: got 0 m at index \(1,\); expected a layer thickness greater than zero",
        ),
        (
            lambda: layered_steady(Z, 283.0, 0.06, [-5e3], [1e-6], [2.5]),
            r"thickness: got -5000 m at index \(0,\); expected a layer thickness greater than zero",
        ),
        (
            lambda: layered_steady(Z, 283.0, 0.06, [10e3, 5e3], [1e-6, 0.0], [2.5, -3.0]),
            r"conductivity: got -3 W m\^-1 K\^-1 at index \(1,\); expected a conductivity greater",
        ),
        (
            lambda: layered_steady(Z, 283.0, 0.06, [10e3, 5e3], [1e-6, -1e-7], [2.5, 3.0]),
            r"heat_production: got -1e-07 W m\^-3 at index \(1,\); expected a heat production "
            r"of zero",
        ),
        (
            lambda: layered_steady(Z, 283.0, 0.06, [10e3, 5e3], [1e-6], [2.5, 3.0]),
            r"heat_production: got 1 layers .*expected one value per layer, as in thickness \(2",
        ),
        (
            lambda: linear(Z, 283.0, 0.02, conductivity=-2.5),
            r"conductivity: got -2.5 W m\^-1 K\^-1; expected a conductivity greater than zero",
        ),
        (
            lambda: exponential_heat(Z, 283.0, 0.06, 1e-6, 1e4, 0.0),
            r"conductivity: got 0 W m\^-1 K\^-1; expected a conductivity greater than zero",
        ),
        (
            lambda: exponential_heat(Z, 283.0, 0.06, 1e-6, -1e4, 2.5),
            r"decay_depth: got -10000 m; expected a decay depth greater than zero",
        ),
        (
            lambda: linear(np.array([0.0, np.nan]), 283.0, 0.02),
            r"depth: got nan at index \(1,\); expected a finite depth \[m\]",
        ),
        (
            lambda: linear(np.array([0.0, -1.0]), 283.0, 0.02),
            r"depth: got -1 m at index \(1,\); expected a depth of zero or more",
        ),
        (
            lambda: half_space(Z, np.nan, 273.0, 1600.0),
            r"age: got nan; expected a finite age \[s\]",
        ),
        (
            lambda: half_space(Z, 0.0, 273.0, 1600.0),
            r"age: got 0 s; expected an age greater than zero",
        ),
        (
            lambda: plate(Z, -3e13, 273.0, 1600.0, 1e5),
            r"age: got -3e\+13 s; expected an age greater than zero",
        ),
        (
            lambda: half_space(Z, 3e15, 273.0, 1600.0, diffusivity=0.0),
            r"diffusivity: got 0 m\^2 s\^-1; expected a diffusivity greater than zero",
        ),
        (
            lambda: half_space(Z, 3e15, -10.0, 1600.0),
            r"surface_temperature: got -10 K; expected a temperature greater than zero \[K\] "
            r"\(kelvin, above absolute zero\)",
        ),
        (
            lambda: half_space(Z, 3e15, 1700.0, 1600.0),
            r"mantle_temperature: got 1600 K, below surface_temperature 1700 K",
        ),
        (
            lambda: plate(Z, 3e15, 273.0, 1600.0, 0.0),
            r"plate_thickness: got 0 m; expected a thickness greater than zero",
        ),
        (
            lambda: plate(Z, 3e15, 273.0, 1600.0, 1e5, terms=0),
            r"terms: got 0; expected a whole number of at least 1",
        ),
        (
            lambda: plate(Z, 3e15, 273.0, 1600.0, 1e5, terms=2.5),
            r"terms: got 2.5; expected a whole number",
        ),
        (
            lambda: linear(Z, 283.0, "steep"),
            r"gradient: got 'steep'; expected a number or an array of numbers",
        ),
        (
            lambda: adiabat(Z, 0.0),
            r"potential_temperature: got 0 K; expected a temperature greater than zero",
        ),
        (
            lambda: cap_at_adiabat(np.ones(3), Z, 1600.0),
            r"profile: got ndarray; expected a GeothermProfile",
        ),
        (
            lambda: cap_at_adiabat(GeothermProfile(np.ones(4), np.ones(4)), Z, 1600.0),
            r"profile: temperature shape \(4,\) and heat_flow shape \(4,\) do not match depth",
        ),
    ],
)
def test_bad_input_raises_rheology_error(call, pattern):
    with pytest.raises(RheologyError, match=pattern):
        call()


def test_pint_quantity_is_refused_with_a_pointer_to_the_converters():
    from rheology.units import Q_

    with pytest.raises(RheologyError, match=r"depth: got a quantity with units .*to_si"):
        linear(Q_(np.array([0.0, 1.0]), "km"), 283.0, 0.02)


def test_exponential_heat_impossible_geotherm():
    """q0 = 20 mW/m^2 < H0 h_r = 2.5e-6 * 1e4 = 25 mW/m^2 needs a negative mantle flux."""
    with pytest.raises(
        RheologyError,
        match=r"surface heat flow q0 = 20 mW m\^-2 is less than the heat produced in the "
        r"crust \(H0 h_r = 25 mW m\^-2\)",
    ):
        exponential_heat(Z, 283.0, 20 * MW, 2.5 * UW, 10 * KM, 2.5)


def test_layered_steady_impossible_geotherm_names_depth_and_remedy():
    """q0 = 30 mW/m^2; layer 0 (10 km, 2 uW/m^3) takes 20, so 10 mW/m^2 enters layer 1 of
    1 uW/m^3 and is used up 10 km further down: zero flux at 20 km (hand arithmetic)."""
    with pytest.raises(
        RheologyError,
        match=r"heat flow falls to zero at 20 km depth in layer 1 \(10-40 km.*"
        r"raise surface_heat_flow or lower heat_production",
    ):
        layered_steady(Z, 283.0, 30 * MW, [10e3, 30e3], [2 * UW, 1 * UW], [2.5, 2.5])


def test_layered_steady_checks_only_layers_the_grid_reaches():
    """The same column is accepted when the grid stops in layer 0, and the check reports
    which realisation failed in a batch."""
    shallow = layered_steady(
        np.array([0.0, 5e3]), 283.0, 30 * MW, [10e3, 30e3], [2 * UW, 1 * UW], [2.5, 2.5]
    )
    assert np.all(shallow.heat_flow > 0)
    with pytest.raises(RheologyError, match=r"layer 1 .*\(realisation \(1,\)\)"):
        layered_steady(
            Z, 283.0, np.array([[60 * MW], [30 * MW]]), [10e3, 30e3], [2 * UW, 1 * UW], [2.5, 2.5]
        )


def test_layered_steady_checks_the_extended_last_layer():
    """One 10 km layer of 2 uW/m^3 with q0 = 30 mW/m^2 runs out of flux at 15 km: a grid to
    30 km reaches into the extension of the last layer and is refused (hand arithmetic)."""
    with pytest.raises(RheologyError, match=r"falls to zero at 15 km depth in layer 0"):
        layered_steady(Z, 283.0, 30 * MW, [10e3], [2 * UW], [2.5])


@pytest.mark.parametrize(
    ("call", "pattern"),
    [
        (lambda: linear(Z, 283.0, 25.0), r"gradient: above 1 K/m"),
        (lambda: exponential_heat(Z, 283.0, 65.0, 2.5e-6, 1e4, 2.5), r"surface_heat_flow: above"),
        (lambda: layered_steady(Z, 283.0, 0.065, [1e4], [2.5], [2.5]), r"heat_production: above"),
        (lambda: half_space(Z, 100.0, 273.0, 1600.0), r"age: below one year"),
    ],
)
def test_values_that_look_like_a_units_slip_warn(call, pattern):
    with pytest.warns(RheologyWarning, match=pattern):
        try:
            call()
        except RheologyError:
            pass  # the slip may also make the geotherm impossible; the warning came first


def test_physics_modules_import_only_numpy_scipy_and_core_modules():
    """Contract: geotherm and pressure are plain numpy/scipy (pint lives at the edges; no
    plotting or UI), read from the modules' own import statements."""
    import ast
    from pathlib import Path

    from rheology.physics import pressure

    allowed = {"__future__", "math", "warnings", "typing", "numpy", "scipy"}
    allowed_core = {
        "rheology.constants",
        "rheology.errors",
        "rheology.physics.geotherm",
        "rheology.physics.checks",
    }
    for module in (geotherm, pressure):
        tree = ast.parse(Path(module.__file__).read_text())
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                names = [alias.name for alias in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [node.module]
            else:
                continue
            for name in names:
                assert name.split(".")[0] in allowed or name in allowed_core, (module, name)
