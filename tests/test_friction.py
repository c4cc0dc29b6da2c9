"""Frictional strength: Byerlee (1978) on optimally oriented Andersonian faults."""

import numpy as np
import pytest

from rheology.errors import RheologyError
from rheology.physics import friction

RHO, G = 2700.0, 9.81


def test_byerlee_1978_branches_and_continuity_at_200_mpa():
    """Byerlee (1978), Pure Appl. Geophys. 116: tau = 0.85 sn up to 200 MPa, 50 + 0.6 sn above;
    both give 170 MPa at 200 MPa."""
    sn = np.array([50e6, 100e6, 200e6, 400e6, 1000e6])
    expected = np.array([0.85 * 50e6, 0.85 * 100e6, 170e6, 50e6 + 0.6 * 400e6, 50e6 + 0.6 * 1e9])
    np.testing.assert_allclose(friction.byerlee_shear_strength(sn), expected, rtol=1e-12)
    eps = 1e-3  # Pa: the law is continuous, so both sides agree to rounding
    left = friction.byerlee_shear_strength(200e6 - eps)
    right = friction.byerlee_shear_strength(200e6 + eps)
    assert abs(left - right) < 1.0


def test_stress_ratio_jaeger_cook_zimmerman_2007_sibson_1974():
    """(sqrt(1+mu^2)+mu)^2 is about 3.1 for mu = 0.6 (Jaeger, Cook & Zimmerman 2007,
    Fundamentals of Rock Mechanics, 4th ed.; Sibson 1974), and equals the Mohr-Coulomb
    ratio (1 + sin phi)/(1 - sin phi) with phi = arctan mu (Jaeger et al. 2007)."""
    assert friction.friction_ratio(0.6) == pytest.approx(3.12, abs=0.01)
    mu = np.linspace(0.1, 1.2, 12)
    phi = np.arctan(mu)
    np.testing.assert_allclose(
        friction.friction_ratio(mu), (1 + np.sin(phi)) / (1 - np.sin(phi)), rtol=1e-12
    )


@pytest.mark.parametrize(
    ("regime", "beta"), [("thrust", 3.0), ("strike-slip", 1.2), ("normal", 0.75)]
)
def test_sibson_1974_regime_factors_for_mu_075(regime, beta):
    """Sibson (1974), Nature 249: for mu = 0.75 (R = 4) and no cohesion, the differential
    stress is beta * sigma_v' with beta = 3 : 1.2 : 0.75 (thrust : strike-slip : normal)."""
    sv = RHO * G * 10e3
    assert friction.andersonian_differential_stress(sv, 0.75, 0.0, regime) == pytest.approx(
        beta * sv, rel=1e-12
    )


@pytest.mark.parametrize("regime", friction.REGIMES)
@pytest.mark.parametrize("depth", [1e3, 3e3, 10e3, 25e3])
def test_byerlee_solution_touches_the_envelope_on_the_optimal_plane(regime, depth):
    """Mohr-circle tangency (Jaeger, Cook & Zimmerman 2007, sec. 4.6): at the computed
    strength the optimal plane's tractions lie on Byerlee's envelope, and nowhere else does
    the circle cross it -- so the lesser branch solution is the right one."""
    sv = RHO * G * depth
    diff = friction.byerlee_differential_stress(sv, 0.0, regime)
    s1, s3 = friction.principal_effective_stresses(sv, diff, regime)
    # the circle's closest approach to the envelope: touching means max over planes of
    # (tau - envelope(sn)) is zero
    theta = np.linspace(0, np.pi, 200001)
    centre, radius = (s1 + s3) / 2, (s1 - s3) / 2
    sn = centre + radius * np.cos(theta)
    tau = radius * np.sin(theta)
    gap = tau - friction.byerlee_shear_strength(sn)
    assert np.max(gap) == pytest.approx(0.0, abs=1e-6 * diff)  # angular grid resolution


def test_branches_meet_continuously_with_depth():
    """The strength is continuous with depth where the fault's normal stress crosses 200 MPa
    (Byerlee 1978 continuity; the minimum rule)."""
    depth = np.linspace(0, 40e3, 400001)
    strength = friction.byerlee_differential_stress(RHO * G * depth, 0.0, "thrust")
    jumps = np.abs(np.diff(strength))
    # the largest step is the slope times dz (no jump): slope rho g at most
    assert jumps.max() <= (friction.friction_ratio(0.85) - 1) * RHO * G * 0.1 * 1.0001


def test_pore_pressure_scales_cohesionless_strength_hubbert_rubey_1959():
    """Effective stress (Hubbert & Rubey 1959, from memory): with pore pressure = lambda
    sigma_v and no cohesion, the strength scales by (1 - lambda)."""
    sv = RHO * G * 5e3
    dry = friction.andersonian_differential_stress(sv, 0.6, 0.0, "thrust")
    wet = friction.andersonian_differential_stress(sv * (1 - 0.37), 0.6, 0.0, "thrust")
    assert wet == pytest.approx(0.63 * dry, rel=1e-12)
    via_pf = friction.frictional_strength(sv, 0.37 * sv, "thrust", mu=0.6)
    assert via_pf == pytest.approx(wet, rel=1e-12)


def test_regime_order_anderson_1951():
    """Anderson (1951): rock is strongest in thrust, weakest in normal faulting."""
    sv = RHO * G * np.linspace(1e3, 30e3, 30)
    thrust, strike, normal = (
        friction.byerlee_differential_stress(sv, 0, r) for r in ("thrust", "strike-slip", "normal")
    )
    assert np.all(thrust > strike) and np.all(strike > normal)


def test_cohesion_form_sigma1_equals_r_sigma3_plus_2c_sqrt_r():
    """Jaeger et al. (2007) sec. 4.6: sigma1' = R sigma3' + 2 C sqrt(R) with cohesion C."""
    sv, mu, c = 100e6, 0.6, 50e6
    for regime in friction.REGIMES:
        diff = friction.andersonian_differential_stress(sv, mu, c, regime)
        s1, s3 = friction.principal_effective_stresses(sv, diff, regime)
        ratio = friction.friction_ratio(mu)
        assert s1 == pytest.approx(ratio * s3 + 2 * c * np.sqrt(ratio), rel=1e-12)


def test_bad_regime_and_friction_raise():
    with pytest.raises(RheologyError, match="'reverse' is not a faulting regime"):
        friction.byerlee_differential_stress(1e8, 0, "reverse")
    with pytest.raises(RheologyError, match="expected mu > 0"):
        friction.friction_ratio(-0.1)
    with pytest.raises(RheologyError, match="expected mu > 0"):
        friction.friction_ratio(np.nan)
