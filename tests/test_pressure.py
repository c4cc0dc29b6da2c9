"""Tests of rheology.physics.pressure (SI: depth in m, density in kg m^-3, pressure in Pa)."""

import numpy as np
import pytest
from scipy.integrate import quad

from rheology.constants import GRAVITY
from rheology.errors import RheologyError
from rheology.physics.pressure import (
    hydrostatic_pressure,
    hydrostatic_ratio,
    lithostatic_pressure,
    pore_pressure_from_ratio,
    pore_pressure_overpressured,
)

MPA = 1e6
# Our hand arithmetic is carried to 1 kPa; products of three doubles round at ~1e-16.
HAND_P = 1e3  # Pa
ROUNDING_REL = 1e-13


def test_uniform_density_is_rho_g_z():
    """sigma_v = rho g z for one uniform layer (definition of overburden pressure)."""
    z = np.linspace(0.0, 50e3, 51)
    np.testing.assert_allclose(
        lithostatic_pressure(z, [20e3], [2700.0]), 2700.0 * GRAVITY * z, rtol=ROUNDING_REL
    )


def test_overburden_at_3_km_worked_by_hand():
    """rho = 2700 kg/m^3, g = 9.81, z = 3 km: sigma_v = rho g z (the definition of
    overburden pressure), worked by hand here: 2700 * 9.81 * 3000 = 79.461 MPa."""
    sigma_v = lithostatic_pressure(np.array([3e3]), [35e3], [2700.0])[0]
    assert sigma_v / MPA == pytest.approx(79.46, abs=0.005)  # quoted to 0.01 MPa


def test_two_layers_integrate_piecewise_by_hand():
    """10 km of 2700 kg/m^3 over 3300 kg/m^3, g = 9.81 (hand arithmetic):
    5 km -> 2700*9.81*5e3 = 132.435 MPa; 10 km -> 264.870 MPa;
    30 km -> 264.870 + 3300*9.81*20e3 = 264.870 + 647.460 = 912.330 MPa."""
    z = np.array([0.0, 5e3, 10e3, 30e3])
    sigma_v = lithostatic_pressure(z, [10e3, 25e3], [2700.0, 3300.0])
    np.testing.assert_allclose(sigma_v, [0.0, 132.435e6, 264.870e6, 912.330e6], atol=HAND_P)


def test_layers_match_scipy_quadrature_of_rho_g():
    """sigma_v(z) = integral_0^z rho(z') g dz', against scipy.integrate.quad over each piece
    (quad is exact for a constant integrand to ~1e-14 relative)."""
    thickness, density = [3e3, 12e3, 20e3], [2300.0, 2750.0, 2950.0]
    edges = np.concatenate([[0.0], np.cumsum(thickness)])

    def rho(depth):
        return density[min(np.searchsorted(edges, depth, side="right") - 1, len(density) - 1)]

    z = np.array([1e3, 3e3, 7.5e3, 15e3, 33e3, 60e3])
    expected = []
    for depth in z:
        breaks = [b for b in edges[1:] if b < depth]
        pieces = zip([0.0, *breaks], [*breaks, depth], strict=True)
        expected.append(sum(quad(lambda s: rho(s) * 9.81, a, b)[0] for a, b in pieces if b > a))
    np.testing.assert_allclose(lithostatic_pressure(z, thickness, density), expected, rtol=1e-12)


def test_last_layer_extends_below_its_base():
    """Below the stack the last density continues (hand: 2700*9.81*1e4 + 3300*9.81*1e4)."""
    sigma_v = lithostatic_pressure(np.array([20e3]), [10e3, 5e3], [2700.0, 3300.0])
    assert sigma_v[0] == pytest.approx(264.870e6 + 323.730e6, abs=HAND_P)


def test_hydrostatic_pressure_is_rho_w_g_z():
    """P_h = rho_w g z: 1000 * 9.81 * 4000 = 39.24 MPa at 4 km (hand arithmetic)."""
    assert hydrostatic_pressure(np.array([4e3]))[0] == pytest.approx(39.24e6, abs=HAND_P)


def test_hydrostatic_ratio_hubbert_rubey():
    """lambda_h = rho_w / rho_r = 1000 / 2700 = 0.370 (Hubbert & Rubey 1959 definition,
    from memory; the 0.37 value as in Brace & Kohlstedt 1980's lambda curves)."""
    assert hydrostatic_ratio(2700.0) == pytest.approx(0.370, abs=5e-4)  # quoted to 0.001
    np.testing.assert_allclose(
        hydrostatic_ratio(np.array([2700.0, 3300.0]), 1030.0), [1030 / 2700, 1030 / 3300]
    )


def test_pore_pressure_from_hydrostatic_ratio_equals_hydrostatic_pressure():
    """With lambda = rho_w/rho_r in uniform rock, lambda sigma_v = rho_w g z (identity)."""
    z = np.linspace(0.0, 20e3, 21)
    sigma_v = lithostatic_pressure(z, [30e3], [2650.0])
    pf = pore_pressure_from_ratio(sigma_v, hydrostatic_ratio(2650.0))
    np.testing.assert_allclose(pf, hydrostatic_pressure(z), rtol=ROUNDING_REL, atol=1e-6)


def test_pore_pressure_ratio_zero_is_dry():
    assert np.all(pore_pressure_from_ratio(np.array([0.0, 5e7]), 0.0) == 0.0)


def test_overpressure_profile_hydrostatic_above_and_continuous_at_top():
    """Hydrostatic to 3 km, then 0.8 of each overburden increment (rho = 2700): below the
    top the gradient is 0.8 * 2700 * 9.81 = 21.190 kPa/m, steeper than 9.81 kPa/m
    (hand arithmetic); 3 km lies between grid points here."""
    z = np.linspace(0.0, 10e3, 41)[:-1] + 10.0  # 10 m, 260 m, ... 3 km is off the grid
    sigma_v = lithostatic_pressure(z, [20e3], [2700.0])
    pf = pore_pressure_overpressured(
        z, sigma_v, 3e3, 0.8, lithostatic_pressure(3e3, [20e3], [2700.0])
    )
    above = z <= 3e3
    np.testing.assert_allclose(pf[above], 1000.0 * 9.81 * z[above], rtol=ROUNDING_REL)
    # continuity: extrapolate the deep branch back to 3 km and compare with rho_w g z_t
    slope = np.diff(pf[~above])
    np.testing.assert_allclose(slope / np.diff(z[~above]), 21190.0, atol=0.5)  # to 1 Pa/m
    z_first = z[~above][0]
    at_top = pf[~above][0] - 0.8 * 2700.0 * 9.81 * (z_first - 3e3)
    assert at_top == pytest.approx(1000.0 * 9.81 * 3e3, abs=1e-3)  # mPa: rounding only
    assert np.all(pf < sigma_v + 1e-6)


def test_overpressure_across_a_density_interface_on_the_grid():
    """Top at a grid point inside a two-layer column: P_f(z) - P_f(z_t) = lambda_b
    (sigma_v(z) - sigma_v(z_t)) exactly (definition), with sigma_v from the hand values
    132.435 MPa (5 km) and 912.330 MPa (30 km) of the two-layer test."""
    z = np.array([0.0, 5e3, 10e3, 30e3])
    sigma_v = lithostatic_pressure(z, [10e3, 25e3], [2700.0, 3300.0])
    pf = pore_pressure_overpressured(
        z, sigma_v, 5e3, 0.6, lithostatic_pressure(5e3, [10e3, 25e3], [2700.0, 3300.0])
    )
    expected_30 = 1000 * 9.81 * 5e3 + 0.6 * (912.330e6 - 132.435e6)
    assert pf[3] == pytest.approx(expected_30, abs=HAND_P)


def test_overpressure_broadcasts_over_realisations():
    """(R, 1) top depths and ratios give (R, nz) profiles equal to scalar calls."""
    z = np.linspace(0.0, 8e3, 17)
    sigma_v = lithostatic_pressure(z, [10e3], [2600.0])
    tops, ratios = np.array([[1e3], [2.2e3], [6e3]]), np.array([[0.5], [0.7], [0.9]])
    at_tops = lithostatic_pressure(tops, [10e3], [2600.0])
    batched = pore_pressure_overpressured(z, sigma_v, tops, ratios, at_tops)
    assert batched.shape == (3, z.size)
    for r in range(3):
        single = pore_pressure_overpressured(z, sigma_v, tops[r, 0], ratios[r, 0], at_tops[r, 0])
        np.testing.assert_array_equal(batched[r], single)


def test_lithostatic_broadcasts_over_realisations():
    """(R, L) densities and (R, 1) gravity give (R, nz), equal to one call per realisation."""
    z = np.linspace(0.0, 40e3, 9)
    density = np.array([[2600.0, 3000.0], [2700.0, 3100.0]])
    gravity = np.array([[9.8], [9.81]])
    batched = lithostatic_pressure(z, [15e3, 20e3], density, gravity)
    assert batched.shape == (2, z.size)
    for r in range(2):
        single = lithostatic_pressure(z, [15e3, 20e3], density[r], gravity[r, 0])
        np.testing.assert_array_equal(batched[r], single)


Z = np.array([0.0, 1e3, 2e3])


@pytest.mark.parametrize(
    ("call", "pattern"),
    [
        (
            lambda: lithostatic_pressure(Z, [0.0], [2700.0]),
            r"thickness: got 0 m at index \(0,\); expected a layer thickness greater than zero",
        ),
        (
            lambda: lithostatic_pressure(Z, [1e3, -2e3], [2700.0, 2800.0]),
            r"thickness: got -2000 m at index \(1,\)",
        ),
        (
            lambda: lithostatic_pressure(Z, [1e3], [-2700.0]),
            r"density: got -2700 kg m\^-3 at index \(0,\); expected a density greater than zero",
        ),
        (
            lambda: lithostatic_pressure(Z, [1e3, 2e3], [2700.0]),
            r"density: got 1 layers .*expected one value per layer",
        ),
        (
            lambda: lithostatic_pressure(np.array([np.nan]), [1e3], [2700.0]),
            r"depth: got nan at index \(0,\); expected a finite depth",
        ),
        (
            lambda: lithostatic_pressure(Z, [1e3], [2700.0], gravity=0.0),
            r"gravity: got 0 m s\^-2; expected a gravitational acceleration greater than zero",
        ),
        (lambda: hydrostatic_pressure(-Z), r"depth: got -1000 m at index \(1,\)"),
        (
            lambda: hydrostatic_pressure(Z, water_density=np.inf),
            r"water_density: got inf; expected a finite density",
        ),
        (
            lambda: hydrostatic_ratio(900.0),
            r"rock_density: got 900 kg m\^-3, not above water_density 1000 kg m\^-3",
        ),
        (
            lambda: pore_pressure_from_ratio(Z, 1.0),
            r"ratio: got 1; expected a pore-pressure ratio from 0 up to but not including 1 "
            r"\(a ratio of 1 puts the pore pressure at the overburden",
        ),
        (
            lambda: pore_pressure_from_ratio(Z, -0.1),
            r"ratio: got -0.1; expected a pore-pressure ratio of zero or more",
        ),
        (
            lambda: pore_pressure_from_ratio(-Z, 0.4),
            r"lithostatic: got -1000 Pa at index \(1,\); expected a pressure of zero or more",
        ),
        (
            lambda: pore_pressure_overpressured(Z, Z * 3e4, 1e3, 1.2, 3e7),
            r"ratio_below: got 1.2; expected a pore-pressure ratio from 0 up to but not",
        ),
        (
            lambda: pore_pressure_overpressured(Z, Z * 3e4, 1e3, 0.5, -1.0),
            r"lithostatic_at_top: got -1 Pa; expected a pressure of zero or more",
        ),
        (
            lambda: pore_pressure_overpressured(Z, np.ones(4), 1e3, 0.5, 3e7),
            r"lithostatic: shape \(4,\) does not match depth shape \(3,\)",
        ),
        (
            lambda: pore_pressure_overpressured(Z, Z * 3e4, -1.0, 0.5, 3e7),
            r"top_depth: got -1 m; expected a depth of zero or more",
        ),
    ],
)
def test_bad_input_raises_rheology_error(call, pattern):
    with pytest.raises(RheologyError, match=pattern):
        call()
