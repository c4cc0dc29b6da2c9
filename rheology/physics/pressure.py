"""Overburden (lithostatic) pressure and pore-fluid pressure along depth.

Depth [m] has shape ``(nz,)`` or ``(..., nz)``; scalar parameters may be arrays of shape
``(R, 1)`` (one value per realisation) and layer parameters carry the layer axis last
(``(L,)`` or ``(R, L)``). Everything is SI: pressures in Pa, densities in kg m^-3.

These are screening estimates for strength-envelope work. They are not a basis for
designing wells, tunnels or foundations or for assessing hazard: pore pressure in
particular must come from site investigation and measurement, local codes and licensed
professionals.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from rheology.constants import GRAVITY, WATER_DENSITY
from rheology.errors import RheologyError

# The input checks are shared with the geotherm module so both report bad input alike.
from rheology.physics.checks import checked, depth_array, layers_checked

__all__ = [
    "check_ratio",
    "hydrostatic_pressure",
    "hydrostatic_ratio",
    "lithostatic_pressure",
    "pore_pressure_from_ratio",
    "pore_pressure_overpressured",
]


def _gravity(gravity: Any) -> np.ndarray:
    return checked(gravity, "gravity", "m s^-2", positive=True, what="gravitational acceleration")


def check_ratio(value: Any, name: str) -> np.ndarray:
    """``value`` as an array after checking it is a pore-pressure ratio in [0, 1)."""
    return _ratio(value, name)


def _ratio(value: Any, name: str) -> np.ndarray:
    ratio = checked(value, name, "", nonnegative=True, what="pore-pressure ratio")
    if np.any(ratio >= 1.0):
        index = tuple(int(i) for i in np.argwhere(ratio >= 1.0)[0])
        where = f" at index {index}" if index else ""
        raise RheologyError(
            f"{name}: got {float(ratio[index]):g}{where}; expected a pore-pressure ratio from 0 "
            "up to but not including 1 (a ratio of 1 puts the pore pressure at the overburden "
            "and leaves no effective stress)"
        )
    return ratio


def lithostatic_pressure(depth, thickness, density, gravity=GRAVITY) -> np.ndarray:
    """Overburden pressure of a stack of layers of uniform density.

    Parameters
    ----------
    depth : array_like
        Depth below the surface [m], shape ``(nz,)`` or ``(..., nz)``.
    thickness : array_like
        Layer thicknesses [m], top layer first; shape ``(L,)`` or ``(R, L)``. The last
        layer extends below its nominal base to any depth asked for.
    density : array_like
        Density of each layer [kg m^-3].
    gravity : float or array_like, optional
        Gravitational acceleration g [m s^-2], uniform with depth.

    Returns
    -------
    numpy.ndarray
        Vertical stress sigma_v [Pa].

    Notes
    -----
    ``sigma_v(z) = integral_0^z rho(z') g dz' = sum_i rho_i g d_i(z)``, with ``d_i`` the
    part of layer i above z. Exact for piecewise-constant density (the result is
    piecewise linear in depth). Neglects the change of g with depth, which is below 1 %
    in the upper 100 km.
    """
    z = depth_array(depth)
    h, tops, arrays = layers_checked(thickness, density=(density, "kg m^-3", "density", True))
    rho = arrays["density"]
    g = _gravity(gravity)
    pressure = 0.0 * z
    n_layers = h.shape[-1]
    for i in range(n_layers):  # loop over layers only; each step is vectorised over depth
        limit = np.inf if i == n_layers - 1 else h[..., i : i + 1]
        inside = np.clip(z - tops[..., i : i + 1], 0.0, limit)  # thickness of layer i above z
        pressure = pressure + rho[..., i : i + 1] * g * inside  # sigma_v = sum rho_i g d_i
    return np.array(pressure)


def hydrostatic_pressure(depth, water_density=WATER_DENSITY, gravity=GRAVITY) -> np.ndarray:
    """Pressure of a water column connected to the surface.

    Parameters
    ----------
    depth : array_like
        Depth below the water table (here the surface) [m].
    water_density : float or array_like, optional
        Pore-water density rho_w [kg m^-3], uniform.
    gravity : float or array_like, optional
        Gravitational acceleration g [m s^-2].

    Returns
    -------
    numpy.ndarray
        Hydrostatic pore pressure [Pa].

    Notes
    -----
    ``P_h = rho_w g z`` for incompressible water of uniform density.
    """
    z = depth_array(depth)
    rho_w = checked(water_density, "water_density", "kg m^-3", positive=True, what="density")
    g = _gravity(gravity)
    return np.array(rho_w * g * z)  # P_h = rho_w g z


def hydrostatic_ratio(rock_density, water_density=WATER_DENSITY):
    """Pore-pressure ratio of a hydrostatic pore fluid in rock of uniform density.

    Parameters
    ----------
    rock_density : float or array_like
        Bulk rock density rho_r [kg m^-3]; greater than ``water_density``.
    water_density : float or array_like, optional
        Pore-water density rho_w [kg m^-3].

    Returns
    -------
    float or numpy.ndarray
        ``lambda_h = rho_w / rho_r`` (about 0.37 for 2700 kg m^-3).

    Notes
    -----
    With the pore-pressure ratio ``lambda = P_f / sigma_v`` (Hubbert & Rubey 1959;
    definition from memory), a hydrostatic pore pressure ``rho_w g z`` under an overburden
    ``rho_r g z`` gives ``lambda_h = rho_w / rho_r``.

    References
    ----------
    Hubbert, M. K. & Rubey, W. W. (1959). Role of fluid pressure in mechanics of
    overthrust faulting. Geological Society of America Bulletin 70(2), 115-166
    (citation details from memory).
    """
    rho_r = checked(rock_density, "rock_density", "kg m^-3", positive=True, what="density")
    rho_w = checked(water_density, "water_density", "kg m^-3", positive=True, what="density")
    if np.any(rho_r <= rho_w):
        bad = np.broadcast_to(rho_r <= rho_w, np.broadcast_shapes(rho_r.shape, rho_w.shape))
        index = tuple(int(i) for i in np.argwhere(bad)[0])
        raise RheologyError(
            f"rock_density: got {float(np.broadcast_to(rho_r, bad.shape)[index]):g} kg m^-3, not "
            f"above water_density {float(np.broadcast_to(rho_w, bad.shape)[index]):g} kg m^-3; "
            "expected a rock denser than its pore water"
        )
    ratio = rho_w / rho_r  # lambda_h = rho_w / rho_r
    return float(ratio) if np.ndim(ratio) == 0 else ratio


def pore_pressure_from_ratio(lithostatic, ratio) -> np.ndarray:
    """Pore pressure as a fixed fraction of the overburden.

    Parameters
    ----------
    lithostatic : array_like
        Vertical stress sigma_v [Pa], e.g. from :func:`lithostatic_pressure`.
    ratio : float or array_like
        Pore-pressure ratio lambda = P_f / sigma_v, in [0, 1). Zero means dry rock;
        1 is rejected because it leaves no effective vertical stress.

    Returns
    -------
    numpy.ndarray
        Pore-fluid pressure P_f [Pa].

    Notes
    -----
    ``P_f = lambda sigma_v`` (Hubbert & Rubey 1959; definition from memory). The
    effective stresses are ``sigma' = sigma - P_f``.

    References
    ----------
    Hubbert, M. K. & Rubey, W. W. (1959). Role of fluid pressure in mechanics of
    overthrust faulting. Geological Society of America Bulletin 70(2), 115-166
    (citation details from memory).
    """
    sigma_v = checked(lithostatic, "lithostatic", "Pa", nonnegative=True, what="pressure")
    lam = _ratio(ratio, "ratio")
    return np.array(lam * sigma_v)  # P_f = lambda sigma_v (Hubbert & Rubey 1959)


def pore_pressure_overpressured(
    depth,
    lithostatic,
    top_depth,
    ratio_below,
    lithostatic_at_top,
    water_density=WATER_DENSITY,
    gravity=GRAVITY,
) -> np.ndarray:
    """Hydrostatic pore pressure above a depth, overpressured below it.

    Parameters
    ----------
    depth : array_like
        Depth [m]; shape ``(nz,)`` or ``(..., nz)``.
    lithostatic : array_like
        Vertical stress sigma_v on the same grid [Pa].
    top_depth : float or array_like
        Depth z_t of the top of the overpressured zone [m]; scalar or ``(R, 1)``.
    ratio_below : float or array_like
        Fraction of each further increment of overburden carried by the pore fluid below
        ``top_depth``, in [0, 1).
    lithostatic_at_top : float or array_like
        Vertical stress sigma_v(z_t) at ``top_depth`` [Pa] (from :func:`lithostatic_pressure`).
    water_density : float or array_like, optional
        Pore-water density rho_w [kg m^-3].
    gravity : float or array_like, optional
        Gravitational acceleration g [m s^-2].

    Returns
    -------
    numpy.ndarray
        Pore-fluid pressure P_f [Pa].

    Notes
    -----
    ``P_f = rho_w g z`` for ``z <= z_t`` and
    ``P_f = rho_w g z_t + lambda_b (sigma_v(z) - sigma_v(z_t))`` below, a profile that is
    continuous at ``z_t``; it is steeper than hydrostatic when ``lambda_b`` exceeds the
    hydrostatic ratio ``rho_w / rho_r`` (it is not forced to). The model is our
    own composition of the hydrostatic gradient and the Hubbert & Rubey (1959) ratio.
    """
    z = depth_array(depth)
    sigma_v = checked(lithostatic, "lithostatic", "Pa", nonnegative=True, what="pressure")
    top = checked(top_depth, "top_depth", "m", nonnegative=True, what="depth")
    lam = _ratio(ratio_below, "ratio_below")
    rho_w = checked(water_density, "water_density", "kg m^-3", positive=True, what="density")
    g = _gravity(gravity)
    sigma_top = checked(
        lithostatic_at_top, "lithostatic_at_top", "Pa", nonnegative=True, what="pressure"
    )
    try:
        shape = np.broadcast_shapes(z.shape, sigma_v.shape, top.shape, sigma_top.shape)
    except ValueError:
        raise RheologyError(
            f"lithostatic: shape {np.shape(lithostatic)} does not match depth shape "
            f"{np.shape(depth)} (or top_depth shape {top.shape}); expected sigma_v on the "
            "depth grid"
        ) from None
    z = np.broadcast_to(z, shape)
    hydrostatic = rho_w * g * z  # P_h = rho_w g z
    below = rho_w * g * top + lam * (sigma_v - sigma_top)  # overpressure
    return np.array(np.where(z <= top, hydrostatic, below))
