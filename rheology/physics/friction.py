"""Frictional (brittle) strength: Byerlee's law on optimally oriented Andersonian faults.

Stresses are in Pa, compression positive. Effective stress is total stress minus pore
pressure. For an optimally oriented plane with friction coefficient mu and cohesion C
(tau = C + mu sigma_n'), the effective principal stresses at slip obey

    sigma1' = R sigma3' + 2 C sqrt(R),   R = (sqrt(1 + mu^2) + mu)^2

(Jaeger, Cook & Zimmerman 2007, ch. 4; Sibson 1974). Anderson's regimes fix which
principal stress is vertical:

* ``"thrust"``: sigma3 = sigma_v;
* ``"normal"``: sigma1 = sigma_v;
* ``"strike-slip"``: sigma_v = sigma2, taken as the mean (sigma1 + sigma3) / 2
  (the convention of this package).
"""

from __future__ import annotations

import numpy as np

from rheology.errors import RheologyError

REGIMES = ("thrust", "strike-slip", "normal")

#: Byerlee (1978) low-stress branch: tau = 0.85 sigma_n (sigma_n up to 200 MPa).
BYERLEE_LOW = (0.85, 0.0)
#: Byerlee (1978) high-stress branch: tau = 50 MPa + 0.6 sigma_n (sigma_n above 200 MPa).
BYERLEE_HIGH = (0.6, 50e6)


def check_regime(regime: str) -> str:
    """Return ``regime`` if it is an Andersonian regime, else raise a clear error."""
    if regime not in REGIMES:
        raise RheologyError(
            f"faulting: {regime!r} is not a faulting regime; expected one of "
            + ", ".join(repr(r) for r in REGIMES)
        )
    return regime


def byerlee_shear_strength(normal_stress):
    """Shear stress [Pa] to slide on a fault under effective normal stress [Pa].

    Notes
    -----
    tau = 0.85 sigma_n' for sigma_n' <= 200 MPa; tau = 50 MPa + 0.6 sigma_n' above.
    The two lines cross at 200 MPa (tau = 170 MPa), so the law is the lesser of the two.

    References
    ----------
    Byerlee, J. (1978). Friction of rocks. Pure Appl. Geophys. 116, 615-626.
    """
    normal_stress = np.asarray(normal_stress, float)
    low = BYERLEE_LOW[0] * normal_stress + BYERLEE_LOW[1]
    high = BYERLEE_HIGH[0] * normal_stress + BYERLEE_HIGH[1]
    return np.minimum(low, high)


def friction_ratio(mu):
    """Ratio R = sigma1'/sigma3' at slip on an optimally oriented cohesionless fault.

    .. math:: R = (\\sqrt{1 + \\mu^2} + \\mu)^2

    about 3.1 for mu = 0.6 and 4.7 for mu = 0.85.

    References
    ----------
    Jaeger, J. C., Cook, N. G. W. & Zimmerman, R. W. (2007). *Fundamentals of Rock
    Mechanics*, 4th ed., Blackwell, sec. 4.6. Sibson, R. H. (1974). Frictional
    constraints on thrust, wrench and normal faults. Nature 249, 542-544.
    """
    mu = np.asarray(mu, float)
    if np.any(~(mu > 0)) or np.any(~np.isfinite(mu)):
        raise RheologyError(f"friction coefficient: expected mu > 0, got {mu}")
    return (np.sqrt(1.0 + mu**2) + mu) ** 2


def andersonian_coefficients(mu, cohesion, regime):
    """Slope and intercept of frictional slip: sigma1 - sigma3 = slope sigma_v' + intercept.

    Parameters
    ----------
    mu : array_like
        Friction coefficient.
    cohesion : array_like
        Cohesion C [Pa].
    regime : {"thrust", "strike-slip", "normal"}
        Andersonian faulting regime.

    Returns
    -------
    slope : numpy.ndarray
        Dimensionless.
    intercept : numpy.ndarray
        [Pa].

    Notes
    -----
    From sigma1' = R sigma3' + 2 C sqrt(R) (Jaeger et al. 2007, sec. 4.6):

    * thrust (sigma3 = sigma_v): (R - 1) sigma_v' + 2 C sqrt(R)
    * normal (sigma1 = sigma_v): (1 - 1/R) sigma_v' + 2 C / sqrt(R)
    * strike-slip with sigma_v = (sigma1 + sigma3)/2:
      2 (R - 1)/(R + 1) sigma_v' + 4 C sqrt(R)/(R + 1)

    References
    ----------
    Sibson, R. H. (1974). Nature 249, 542-544. Anderson, E. M. (1951). *The Dynamics
    of Faulting*, 2nd ed., Oliver & Boyd.
    """
    check_regime(regime)
    ratio = friction_ratio(mu)
    root = np.sqrt(ratio)
    cohesion = np.asarray(cohesion, float)
    if regime == "thrust":
        return ratio - 1.0, 2.0 * cohesion * root
    if regime == "normal":
        return 1.0 - 1.0 / ratio, 2.0 * cohesion / root
    return 2.0 * (ratio - 1.0) / (ratio + 1.0), 4.0 * cohesion * root / (ratio + 1.0)


def andersonian_differential_stress(vertical_effective_stress, mu, cohesion, regime):
    """Differential stress sigma1 - sigma3 [Pa] at frictional slip, per Andersonian regime.

    Parameters
    ----------
    vertical_effective_stress : array_like
        sigma_v - P_f [Pa].
    mu : array_like
        Friction coefficient.
    cohesion : array_like
        Cohesion C [Pa].
    regime : {"thrust", "strike-slip", "normal"}
        Andersonian faulting regime.

    Returns
    -------
    numpy.ndarray
        Differential stress [Pa], ``slope * sigma_v' + intercept`` with the coefficients
        of :func:`andersonian_coefficients`.
    """
    slope, intercept = andersonian_coefficients(mu, cohesion, regime)
    return slope * np.asarray(vertical_effective_stress, float) + intercept


def byerlee_differential_stress(vertical_stress, pore_pressure, regime, mu_scale=1.0):
    """Differential stress [Pa] for Byerlee friction on an optimally oriented fault.

    Byerlee's envelope is the lesser of its two straight lines, so the Mohr circle at
    slip first touches the lesser branch: the strength is the lesser of the two branch
    solutions. It is continuous where the branches meet (sigma_n' = 200 MPa).

    Parameters
    ----------
    vertical_stress : array_like
        Lithostatic (vertical) stress [Pa].
    pore_pressure : array_like
        Pore-fluid pressure [Pa].
    regime : {"thrust", "strike-slip", "normal"}
    mu_scale : array_like, optional
        Multiplier of both branches' friction coefficients (1 = Byerlee's values), for
        sensitivity studies; the branch intercepts are kept.

    References
    ----------
    Byerlee, J. (1978). Pure Appl. Geophys. 116, 615-626; Brace, W. F. & Kohlstedt,
    D. L. (1980). J. Geophys. Res. 85, 6248-6252.
    """
    effective = np.asarray(vertical_stress, float) - np.asarray(pore_pressure, float)
    low = andersonian_differential_stress(
        effective, BYERLEE_LOW[0] * mu_scale, BYERLEE_LOW[1], regime
    )
    high = andersonian_differential_stress(
        effective, BYERLEE_HIGH[0] * mu_scale, BYERLEE_HIGH[1], regime
    )
    return np.minimum(low, high)


def frictional_coefficients(regime, mu=None, cohesion=0.0, mu_scale=1.0):
    """Slopes and intercepts of the branches of a frictional strength, for the batch scans.

    Parameters
    ----------
    regime : {"thrust", "strike-slip", "normal"}
    mu : float, optional
        A constant friction coefficient; None for Byerlee's (1978) two branches.
    cohesion : float, optional
        Cohesion [Pa] with a constant ``mu``.
    mu_scale : array_like, optional
        Multiplier of the friction coefficient(s), shape () or (R,).

    Returns
    -------
    slope, intercept : numpy.ndarray
        Shape (..., 2): the strength is the lesser branch, min_k(slope_k sigma_v' +
        intercept_k) (a constant mu gives two equal branches).
    """
    scale = np.asarray(mu_scale, float)
    if mu is None:
        branches = [
            andersonian_coefficients(BYERLEE_LOW[0] * scale, BYERLEE_LOW[1], regime),
            andersonian_coefficients(BYERLEE_HIGH[0] * scale, BYERLEE_HIGH[1], regime),
        ]
    else:
        branches = [andersonian_coefficients(mu * scale, cohesion, regime)] * 2
    slope = np.stack([np.broadcast_to(b[0], scale.shape) for b in branches], axis=-1)
    intercept = np.stack([np.broadcast_to(b[1], scale.shape) for b in branches], axis=-1)
    return slope, intercept


def frictional_strength(
    vertical_stress, pore_pressure, regime, mu=None, cohesion=0.0, mu_scale=1.0
):
    """Frictional strength [Pa]: Byerlee (``mu=None``) or a constant mu with cohesion.

    ``mu_scale`` multiplies the friction coefficient(s) (1 = as given).
    """
    if mu is None:
        return byerlee_differential_stress(vertical_stress, pore_pressure, regime, mu_scale)
    effective = np.asarray(vertical_stress, float) - np.asarray(pore_pressure, float)
    return andersonian_differential_stress(
        effective, mu * np.asarray(mu_scale, float), cohesion, regime
    )


def principal_effective_stresses(vertical_effective_stress, differential_stress, regime):
    """(sigma1', sigma3') [Pa] from the vertical effective stress and sigma1 - sigma3."""
    check_regime(regime)
    sv = np.asarray(vertical_effective_stress, float)
    diff = np.asarray(differential_stress, float)
    if regime == "thrust":
        return sv + diff, sv
    if regime == "normal":
        return sv, sv - diff
    return sv + diff / 2.0, sv - diff / 2.0
