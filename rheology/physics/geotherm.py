"""Geotherms: temperature and conductive heat flow along depth.

Every function takes depth [m] (shape ``(nz,)`` or ``(..., nz)``) and SI parameters that
are scalars or arrays of shape ``(R, 1)`` (one value per realisation); results then have
shape ``(R, nz)``. Layer parameters carry the layer axis last (``(L,)`` or ``(R, L)``).
Temperatures are kelvin throughout; published formulas written in degrees Celsius are
unchanged by the shift because they involve only temperature differences.

Heat flow is the conductive flux ``q = k dT/dz`` with depth ``z`` positive downwards, so
a positive value means heat flowing up towards the surface.
"""

from __future__ import annotations

import math
import warnings
from typing import Any, NamedTuple

import numpy as np
from scipy.special import erf

from rheology.constants import SECONDS_PER_MYR, ZERO_CELSIUS
from rheology.errors import RheologyError, RheologyWarning
from rheology.physics.checks import checked, depth_array, layers_checked, temperature_array

__all__ = [
    "PLATE_DEFAULTS",
    "GeothermProfile",
    "LinearGeotherm",
    "adiabat",
    "cap_at_adiabat",
    "exponential_heat",
    "half_space",
    "layered_steady",
    "linear",
    "plate",
]


class GeothermProfile(NamedTuple):
    """Temperature and conductive heat flow on a depth grid.

    Attributes
    ----------
    temperature : numpy.ndarray
        Temperature [K].
    heat_flow : numpy.ndarray
        Conductive heat flux ``k dT/dz`` [W m^-2]; positive means heat flowing up.
    """

    temperature: np.ndarray
    heat_flow: np.ndarray


class LinearGeotherm(NamedTuple):
    """A geotherm linear in one surface value: T = base + value * shape.

    Returned by :func:`linear` (value = gradient) and :func:`layered_steady` (value =
    surface heat flow) with ``split=True``. For a batch of values, shape (R, 1), the
    temperature costs one multiply-add per node, which the column scans do themselves.

    Attributes
    ----------
    base : numpy.ndarray
        Temperature [K] with the value at zero.
    value : numpy.ndarray
        The surface value (gradient [K m^-1] or heat flow [W m^-2]).
    shape : numpy.ndarray
        dT / d(value) at each depth.
    flux_base, flux_shape : numpy.ndarray
        Conductive heat flux [W m^-2] = flux_base + value * flux_shape.
    """

    base: np.ndarray
    value: np.ndarray
    shape: np.ndarray
    flux_base: np.ndarray
    flux_shape: np.ndarray

    @property
    def temperature(self) -> np.ndarray:
        """Temperature [K]."""
        return np.asarray(self.base + self.value * self.shape)

    @property
    def heat_flow(self) -> np.ndarray:
        """Conductive heat flux k dT/dz [W m^-2]."""
        return np.asarray(self.flux_base + self.value * self.flux_shape)


#: Published plate-model parameters, in SI (plate thickness [m], basal temperature [K]).
#: ``published`` keeps the values as printed; ``status`` follows the project vocabulary.
PLATE_DEFAULTS: dict[str, dict[str, Any]] = {
    "parsons_sclater_1977": {
        "plate_thickness": 125.0e3,
        "mantle_temperature": 1350.0 + ZERO_CELSIUS,
        "published": "plate thickness 125 +/- 10 km; basal temperature 1350 +/- 275 degC",
        "uncertainty": {"plate_thickness": 10.0e3, "mantle_temperature": 275.0},
        "citation": (
            "Parsons, B. & Sclater, J. G. (1977). An analysis of the variation of ocean floor "
            "bathymetry and heat flow with age. Journal of Geophysical Research 82(5), 803-827."
        ),
        "source": "abstract",
        "status": "checked",
    },
    "stein_stein_1992": {
        "plate_thickness": 95.0e3,
        "mantle_temperature": 1450.0 + ZERO_CELSIUS,
        "published": "GDH1: plate thickness 95 km; basal temperature 1450 degC",
        "uncertainty": {},
        "citation": (
            "Stein, C. A. & Stein, S. (1992). A model for the global variation in oceanic "
            "depth and heat flow with lithospheric age. Nature 359, 123-129."
        ),
        "source": "secondary: quoted in the abstract of Honda & Yuen (2004)",
        "status": "checked (secondary)",
    },
}

#: Default adiabatic gradient [K/m]: 0.4 K/km (common practice; value from memory).
ADIABATIC_GRADIENT = 0.4e-3

# Half-space switch of the plate model: for sqrt(kappa t) <= L/12, i.e. L/(2 sqrt(kappa t))
# >= 6, the plate differs from the half-space by less than erfc(6) = 2e-17 of (Tm - T0) in
# temperature and exp(-36) = 2e-16 of the surface flux (first image term), below double
# precision; the half-space is used there, where the series would need very many terms.
_TAU_SWITCH = 1.0 / 144.0
# Series terms whose decay factor exp(-n^2 pi^2 kappa t / L^2) is below this cannot change
# a double-precision result whose leading term is of order one.
_NEGLIGIBLE_TERM = 1e-22
# Largest temporary (elements) built while summing the series over a trailing term axis.
_MAX_CHUNK_ELEMENTS = 2**22
# A flux this small relative to the surface heat flow counts as zero (rounding of sums).
_FLUX_RELATIVE_TOLERANCE = 1e-10

# Values above these look like a units slip (mW for W, K/km for K/m, uW for W).
_SLIP_HEAT_FLOW = 1.0  # W m^-2
_SLIP_GRADIENT = 1.0  # K m^-1
_SLIP_HEAT_PRODUCTION = 1e-3  # W m^-3
_SLIP_AGE = SECONDS_PER_MYR / 1e6  # one year [s]


def _warn_if_above(array: np.ndarray, limit: float, message: str, stacklevel: int = 3) -> None:
    if np.any(array > limit):
        warnings.warn(message, RheologyWarning, stacklevel=stacklevel)


# ------------------------------------------------------------------------- geotherms


def linear(
    depth, surface_temperature, gradient, conductivity=2.5, split=False
) -> GeothermProfile | LinearGeotherm:
    """Linear geotherm with a constant temperature gradient.

    Parameters
    ----------
    depth : array_like
        Depth below the surface [m], shape ``(nz,)`` or ``(..., nz)``.
    surface_temperature : float or array_like
        Temperature at the surface [K]; scalar or shape ``(R, 1)``.
    gradient : float or array_like
        Temperature gradient dT/dz [K m^-1] (25 K/km is 0.025); zero or more.
    conductivity : float or array_like, optional
        Thermal conductivity [W m^-1 K^-1], used only for the heat flow.
    split : bool, optional
        Return the parts T0 + G z (:class:`LinearGeotherm`, value = G) instead.

    Returns
    -------
    GeothermProfile
        Temperature [K] and the uniform heat flow ``k * gradient`` [W m^-2].

    Notes
    -----
    ``T(z) = T0 + G z`` and ``q = k G``: steady conduction with no heat production and
    uniform conductivity. Valid as long as heat production in the range is negligible.
    """
    z = depth_array(depth)
    t0 = temperature_array(surface_temperature, "surface_temperature")
    g = checked(gradient, "gradient", "K m^-1", nonnegative=True, what="temperature gradient")
    k = checked(conductivity, "conductivity", "W m^-1 K^-1", positive=True, what="conductivity")
    _warn_if_above(
        g, _SLIP_GRADIENT, "gradient: above 1 K/m; gradients are in K/m (25 K/km is 0.025)"
    )
    parts = LinearGeotherm(t0, g, z, 0.0, k)  # T = T0 + G z; Fourier's law, q = k G
    if split:
        return parts
    temperature, heat_flow = np.broadcast_arrays(parts.temperature, parts.heat_flow)
    return GeothermProfile(np.array(temperature), np.array(heat_flow))


def layered_steady(
    depth,
    surface_temperature,
    surface_heat_flow,
    thickness,
    heat_production,
    conductivity,
    split=False,
) -> GeothermProfile | LinearGeotherm:
    """Steady 1-D conductive geotherm through layers of uniform heat production.

    Parameters
    ----------
    depth : array_like
        Depth below the surface [m], shape ``(nz,)`` or ``(..., nz)``.
    surface_temperature : float or array_like
        Temperature at the surface [K]; scalar or shape ``(R, 1)``.
    surface_heat_flow : float or array_like
        Heat flow at the surface [W m^-2] (65 mW/m^2 is 0.065); zero or more.
    thickness : array_like
        Layer thicknesses [m], top layer first; shape ``(L,)`` or ``(R, L)``.
    heat_production : array_like
        Radiogenic heat production of each layer [W m^-3]; zero or more.
    conductivity : array_like
        Thermal conductivity of each layer [W m^-1 K^-1].
    split : bool, optional
        Return the parts (T0 - G) + q0 F (:class:`LinearGeotherm`, value = q0) instead.

    Returns
    -------
    GeothermProfile
        Temperature [K] and conductive heat flow [W m^-2].

    Raises
    ------
    RheologyError
        Invalid input, or a heat flow that would turn negative (heat flowing down) within
        the layers the depth grid reaches.

    Notes
    -----
    In a layer with top at ``z_i``, top temperature ``T_i``, top heat flow ``q_i``,
    heat production ``H_i`` and conductivity ``k_i``, steady conduction
    ``k d^2T/dz^2 = -H`` gives, for ``dz = z - z_i``,

    ``T = T_i + q_i dz / k_i - H_i dz^2 / (2 k_i)``  and  ``q = q_i - H_i dz``,

    with T and q continuous at the interfaces. The last layer extends below its nominal
    base to any depth asked for. Assumes 1-D steady conduction with conductivity uniform
    within each layer.

    References
    ----------
    Turcotte, D. L. & Schubert, G. (2002). Geodynamics, 2nd ed. Cambridge University
    Press, ch. 4 (steady conduction with volumetric heat sources; section from memory).
    """
    z = depth_array(depth)
    t0 = temperature_array(surface_temperature, "surface_temperature")
    q0 = checked(
        surface_heat_flow, "surface_heat_flow", "W m^-2", nonnegative=True, what="heat flow"
    )
    h, tops, arrays = layers_checked(
        thickness,
        heat_production=(heat_production, "W m^-3", "heat production", False),
        conductivity=(conductivity, "W m^-1 K^-1", "conductivity", True),
    )
    heat, k = arrays["heat_production"], arrays["conductivity"]
    _warn_if_above(q0, _SLIP_HEAT_FLOW, "surface_heat_flow: above 1 W/m^2; heat flow is in W/m^2")
    _warn_if_above(heat, _SLIP_HEAT_PRODUCTION, "heat_production: above 1e-3 W/m^3; it is in W/m^3")
    in_layer = heat * h
    produced_above = np.cumsum(in_layer, axis=-1) - in_layer  # above each layer's top
    q_tops = q0 - produced_above  # flux entering each layer top
    _check_flux_stays_positive(z, q0, h, tops, heat, q_tops)

    # T = (T0 - G(z)) + q0 F(z): F and G depend only on the layering, so a batch of
    # surface heat flows costs one multiply-add over the grid.
    n_layers = h.shape[-1]
    F = G = produced = 0.0
    for i in range(n_layers):  # loop over layers only; each step is vectorised over depth
        top, above = tops[..., i : i + 1], produced_above[..., i : i + 1]
        h_i, k_i, heat_i = h[..., i : i + 1], k[..., i : i + 1], heat[..., i : i + 1]
        limit = np.inf if i == n_layers - 1 else h_i  # the last layer extends downwards
        dz = np.clip(z - top, 0.0, limit)  # depth travelled inside layer i
        F = F + dz / k_i
        G = G + (above * dz + 0.5 * heat_i * dz**2) / k_i  # layer solution, q_i = q0 - above
        produced = produced + heat_i * dz
    parts = LinearGeotherm(t0 - G, q0, F, -produced, 1.0)  # q = q_i - H_i dz
    return parts if split else GeothermProfile(parts.temperature, np.asarray(parts.heat_flow))


def _check_flux_stays_positive(z, q0, h, tops, heat, q_tops) -> None:
    """Raise if the heat flow turns negative in a layer the depth grid reaches."""
    z_max = np.max(z, axis=-1, keepdims=True) if z.ndim else z[..., None]
    tops_b, h_b, heat_b, q_tops_b, z_max_b, q0_b = np.broadcast_arrays(
        tops, h, heat, q_tops, z_max, q0 if q0.ndim else q0[..., None]
    )
    reach = np.array(h_b, dtype=float)
    reach[..., -1] = np.maximum(reach[..., -1], z_max_b[..., -1] - tops_b[..., -1])
    q_base = q_tops_b - heat_b * reach  # flux at the base of each layer (last one extended)
    spanned = tops_b <= z_max_b
    bad = spanned & (q_base < -_FLUX_RELATIVE_TOLERANCE * q0_b)
    if not np.any(bad):
        return
    index = tuple(int(i) for i in np.argwhere(bad)[0])
    layer = index[-1]
    top, q_top, production = tops_b[index], q_tops_b[index], heat_b[index]
    zero_depth = top + q_top / production  # q_top - H dz = 0
    base = top + h_b[index]
    realisation = f" (realisation {index[:-1]})" if len(index) > 1 else ""
    raise RheologyError(
        f"layered_steady: the heat flow falls to zero at {zero_depth / 1e3:.4g} km depth in "
        f"layer {layer} ({top / 1e3:.4g}-{base / 1e3:.4g} km, counting from 0){realisation} and "
        f"would be negative (heat flowing down) below it: surface_heat_flow = "
        f"{q0_b[index] * 1e3:.4g} mW m^-2 is less than the heat produced above that layer's "
        "base. Expected a surface heat flow at least equal to the heat produced in the "
        "layers the depth grid reaches: raise surface_heat_flow or lower heat_production"
    )


def exponential_heat(
    depth,
    surface_temperature,
    surface_heat_flow,
    surface_heat_production,
    decay_depth,
    conductivity,
) -> GeothermProfile:
    """Steady geotherm with heat production decaying exponentially with depth.

    Parameters
    ----------
    depth : array_like
        Depth below the surface [m], shape ``(nz,)`` or ``(..., nz)``.
    surface_temperature : float or array_like
        Temperature at the surface T0 [K].
    surface_heat_flow : float or array_like
        Surface heat flow q0 [W m^-2] (65 mW/m^2 is 0.065).
    surface_heat_production : float or array_like
        Heat production at the surface H0 [W m^-3] (2.5 uW/m^3 is 2.5e-6); zero or more.
    decay_depth : float or array_like
        e-folding depth h_r of the heat production [m].
    conductivity : float or array_like
        Thermal conductivity k [W m^-1 K^-1].

    Returns
    -------
    GeothermProfile
        Temperature [K] and conductive heat flow [W m^-2].

    Raises
    ------
    RheologyError
        Invalid input, or a reduced (mantle) heat flow ``q0 - H0 h_r`` below zero.

    Notes
    -----
    With ``H(z) = H0 exp(-z/h_r)`` and uniform k, steady conduction gives the reduced heat
    flow ``q_m = q0 - H0 h_r`` and

    ``T(z) = T0 + q_m z / k + (H0 h_r^2 / k) (1 - exp(-z/h_r))``,
    ``q(z) = q_m + H0 h_r exp(-z/h_r)``.

    Valid for steady 1-D conduction; the exponential law is a fit to the linear
    heat-flow/heat-production relation of continental provinces and does not hold
    everywhere.

    References
    ----------
    Turcotte, D. L. & Schubert, G. (2002). Geodynamics, 2nd ed. Cambridge University
    Press, eqs. 4.30-4.31 (equation numbers from memory).
    Wangen, M. (2010). Physical Principles of Sedimentary Basin Analysis. Cambridge
    University Press, eqs. 6.85-6.87 (checked).
    """
    z = depth_array(depth)
    t0 = temperature_array(surface_temperature, "surface_temperature")
    q0 = checked(surface_heat_flow, "surface_heat_flow", "W m^-2", what="heat flow")
    h0 = checked(
        surface_heat_production,
        "surface_heat_production",
        "W m^-3",
        nonnegative=True,
        what="heat production",
    )
    hr = checked(decay_depth, "decay_depth", "m", positive=True, what="decay depth")
    k = checked(conductivity, "conductivity", "W m^-1 K^-1", positive=True, what="conductivity")
    _warn_if_above(q0, _SLIP_HEAT_FLOW, "surface_heat_flow: above 1 W/m^2; heat flow is in W/m^2")
    _warn_if_above(
        h0, _SLIP_HEAT_PRODUCTION, "surface_heat_production: above 1e-3 W/m^3; it is in W/m^3"
    )
    crustal = h0 * hr
    q_m = q0 - crustal  # reduced heat flow, Turcotte & Schubert eq. 4.30
    bad = q_m < -_FLUX_RELATIVE_TOLERANCE * np.abs(q0)
    if np.any(bad):
        index = tuple(int(i) for i in np.argwhere(np.broadcast_to(bad, np.shape(q_m)))[0])
        q0_v = np.broadcast_to(q0, np.shape(q_m))[index]
        c_v = np.broadcast_to(crustal, np.shape(q_m))[index]
        where = f" (at index {index})" if index else ""
        raise RheologyError(
            f"exponential_heat: surface heat flow q0 = {q0_v * 1e3:.4g} mW m^-2{where} is less "
            f"than the heat produced in the crust (H0 h_r = {c_v * 1e3:.4g} mW m^-2), which "
            "would need a negative mantle heat flow; expected q0 >= H0 h_r: raise "
            "surface_heat_flow or lower surface_heat_production or decay_depth"
        )
    decay = np.exp(-z / hr)
    temperature = t0 + q_m * z / k + (h0 * hr**2 / k) * (1.0 - decay)  # T&S eq. 4.31
    heat_flow = q_m + crustal * decay  # q(z) = q_m + H0 h_r exp(-z/h_r)
    temperature, heat_flow = np.broadcast_arrays(temperature, heat_flow)
    return GeothermProfile(np.array(temperature), np.array(heat_flow))


def _cooling_inputs(depth, age, surface_temperature, mantle_temperature, diffusivity, conductivity):
    z = depth_array(depth)
    t = checked(age, "age", "s", positive=True, what="age")
    t0 = temperature_array(surface_temperature, "surface_temperature")
    tm = temperature_array(mantle_temperature, "mantle_temperature")
    kappa = checked(diffusivity, "diffusivity", "m^2 s^-1", positive=True, what="diffusivity")
    k = checked(conductivity, "conductivity", "W m^-1 K^-1", positive=True, what="conductivity")
    if np.any(tm < t0):
        bad = np.broadcast_to(tm < t0, np.broadcast_shapes(tm.shape, t0.shape))
        index = tuple(int(i) for i in np.argwhere(bad)[0])
        raise RheologyError(
            f"mantle_temperature: got {float(np.broadcast_to(tm, bad.shape)[index]):g} K, below "
            f"surface_temperature {float(np.broadcast_to(t0, bad.shape)[index]):g} K; expected a "
            "mantle temperature at least equal to the surface temperature"
        )
    if np.any(t < _SLIP_AGE):
        warnings.warn(
            "age: below one year; ages are in seconds (1 Myr is 3.15576e13 s)",
            RheologyWarning,
            stacklevel=4,
        )
    return z, t, t0, tm, kappa, k


def _half_space(z, t, t0, tm, kappa, k):
    scale = np.sqrt(kappa * t)
    temperature = t0 + (tm - t0) * erf(z / (2.0 * scale))  # half-space cooling (T&S sec. 4.16)
    heat_flow = k * (tm - t0) / np.sqrt(np.pi) / scale * np.exp(-(z**2) / (4.0 * kappa * t))
    temperature, heat_flow = np.broadcast_arrays(temperature, heat_flow)
    return np.array(temperature), np.array(heat_flow)


def half_space(
    depth, age, surface_temperature, mantle_temperature, diffusivity=1e-6, conductivity=3.3
) -> GeothermProfile:
    """Geotherm of a cooling half-space (oceanic lithosphere of a given age).

    Parameters
    ----------
    depth : array_like
        Depth below the sea floor [m], shape ``(nz,)`` or ``(..., nz)``.
    age : float or array_like
        Age since the lithosphere left the ridge, t [s] (1 Myr is 3.15576e13 s).
    surface_temperature : float or array_like
        Sea-floor temperature T0 [K].
    mantle_temperature : float or array_like
        Initial (mantle) temperature Tm [K]; at least T0.
    diffusivity : float or array_like, optional
        Thermal diffusivity kappa [m^2 s^-1].
    conductivity : float or array_like, optional
        Thermal conductivity k [W m^-1 K^-1], used only for the heat flow.

    Returns
    -------
    GeothermProfile
        Temperature [K] and conductive heat flow [W m^-2].

    Notes
    -----
    ``T = T0 + (Tm - T0) erf(z / (2 sqrt(kappa t)))`` and
    ``q = k (Tm - T0) / sqrt(pi kappa t) exp(-z^2 / (4 kappa t))``; at the surface
    ``q0 = k (Tm - T0) / sqrt(pi kappa t)``. Constant properties, no heat production,
    no basal heat supply: old sea floor (beyond about 80 Myr) is hotter and has more
    heat flow than the half-space predicts; use :func:`plate` there.

    References
    ----------
    Turcotte, D. L. & Schubert, G. (2002). Geodynamics, 2nd ed. Cambridge University
    Press, sec. 4.16 (equation numbers from memory).
    Wangen, M. (2010). Physical Principles of Sedimentary Basin Analysis. Cambridge
    University Press, eq. 6.205 (checked).
    """
    z, t, t0, tm, kappa, k = _cooling_inputs(
        depth, age, surface_temperature, mantle_temperature, diffusivity, conductivity
    )
    return GeothermProfile(*_half_space(z, t, t0, tm, kappa, k))


def plate(
    depth,
    age,
    surface_temperature,
    mantle_temperature,
    plate_thickness,
    diffusivity=1e-6,
    conductivity=3.3,
    terms=100,
) -> GeothermProfile:
    """Geotherm of a cooling plate of fixed thickness with its base held at Tm.

    Parameters
    ----------
    depth : array_like
        Depth below the sea floor [m], shape ``(nz,)`` or ``(..., nz)``.
    age : float or array_like
        Age t [s] (1 Myr is 3.15576e13 s).
    surface_temperature : float or array_like
        Sea-floor temperature T0 [K].
    mantle_temperature : float or array_like
        Initial and basal temperature Tm [K]; at least T0.
    plate_thickness : float or array_like
        Plate thickness L [m]. :data:`PLATE_DEFAULTS` holds published values.
    diffusivity : float or array_like, optional
        Thermal diffusivity kappa [m^2 s^-1].
    conductivity : float or array_like, optional
        Thermal conductivity k [W m^-1 K^-1], used only for the heat flow.
    terms : int, optional
        Largest number of series terms summed. Summation stops earlier once the decay
        factor of every further term is below 1e-22; a warning is issued if ``terms`` is
        too small for that.

    Returns
    -------
    GeothermProfile
        Temperature [K] and conductive heat flow [W m^-2]. Below the plate base the
        temperature is Tm and the conductive flux is zero (the heat supplied at the base
        is not modelled there).

    Notes
    -----
    For ``0 <= z <= L``, with ``e_n = exp(-n^2 pi^2 kappa t / L^2)``,

    ``T = T0 + (Tm - T0) [z/L + (2/pi) sum_n (1/n) e_n sin(n pi z / L)]``,
    ``q = k (Tm - T0) / L [1 + 2 sum_n e_n cos(n pi z / L)]``.

    At young ages the series converges slowly. Where ``sqrt(kappa t) <= L/12`` the
    half-space solution (:func:`half_space`) is returned instead: there the two differ
    by less than ``erfc(6) = 2e-17`` of ``Tm - T0`` in temperature and ``exp(-36)`` of
    the surface flux (the first image term of the plate), below double precision. For
    older ages at most about 28 terms are needed. At old ages the profile tends to the
    linear steady state ``q = k (Tm - T0) / L``.

    References
    ----------
    Parsons, B. & Sclater, J. G. (1977). An analysis of the variation of ocean floor
    bathymetry and heat flow with age. Journal of Geophysical Research 82(5), 803-827.
    Turcotte, D. L. & Schubert, G. (2002). Geodynamics, 2nd ed. Cambridge University
    Press, ch. 4, plate cooling model (eq. 4.130; equation number from memory).
    """
    z, t, t0, tm, kappa, k = _cooling_inputs(
        depth, age, surface_temperature, mantle_temperature, diffusivity, conductivity
    )
    thick = checked(plate_thickness, "plate_thickness", "m", positive=True, what="thickness")
    if isinstance(terms, bool) or not isinstance(terms, int | np.integer) or terms < 1:
        raise RheologyError(f"terms: got {terms!r}; expected a whole number of at least 1")

    tau = kappa * t / thick**2  # dimensionless age
    use_half_space = tau <= _TAU_SWITCH
    tau_series = np.maximum(tau, _TAU_SWITCH)  # young realisations are replaced below
    needed = math.ceil(math.sqrt(-math.log(_NEGLIGIBLE_TERM) / float(np.min(tau_series))) / math.pi)
    if terms < needed and not np.all(use_half_space):
        warnings.warn(
            f"plate: terms={terms} truncates the series before it converges at the youngest "
            f"age given; {needed} terms are needed for double precision",
            RheologyWarning,
            stacklevel=2,
        )
    n_used = min(int(terms), needed)

    zeta = np.clip(z / thick, 0.0, 1.0)
    sum_t, sum_q = _plate_sums(zeta, tau_series, n_used)
    dt = tm - t0
    temperature = t0 + dt * (zeta + (2.0 / np.pi) * sum_t)  # plate series, T&S eq. 4.130
    heat_flow = k * dt / thick * (1.0 + 2.0 * sum_q)  # its z-derivative times k

    t_half, q_half = _half_space(z, t, t0, tm, kappa, k)
    temperature = np.where(use_half_space, t_half, temperature)
    heat_flow = np.where(use_half_space, q_half, heat_flow)
    below = z > thick
    temperature = np.where(z >= thick, tm, temperature)
    heat_flow = np.where(below, 0.0, heat_flow)
    temperature, heat_flow = np.broadcast_arrays(temperature, heat_flow)
    return GeothermProfile(np.array(temperature), np.array(heat_flow))


def _plate_sums(zeta: np.ndarray, tau: np.ndarray, n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """Sum (1/n) e_n sin(n pi zeta) and e_n cos(n pi zeta) over a trailing term axis."""
    shape = np.broadcast_shapes(zeta.shape, tau.shape)
    sum_t = np.zeros(shape)
    sum_q = np.zeros(shape)
    chunk = max(1, _MAX_CHUNK_ELEMENTS // max(1, math.prod(shape)))
    for start in range(1, n_terms + 1, chunk):  # chunks of terms, never a loop over depth
        n = np.arange(start, min(start + chunk, n_terms + 1), dtype=float)
        decay = np.exp(-((n * np.pi) ** 2) * tau[..., None])
        phase = n * np.pi * zeta[..., None]
        sum_t += np.sum(decay / n * np.sin(phase), axis=-1)
        sum_q += np.sum(decay * np.cos(phase), axis=-1)
    return sum_t, sum_q


# -------------------------------------------------------------------------- adiabat


def adiabat(depth, potential_temperature, gradient=ADIABATIC_GRADIENT) -> np.ndarray:
    """Linearised mantle adiabat.

    Parameters
    ----------
    depth : array_like
        Depth [m], shape ``(nz,)`` or ``(..., nz)``.
    potential_temperature : float or array_like
        Mantle potential temperature Tp [K] (the adiabat extrapolated to the surface).
    gradient : float or array_like, optional
        Adiabatic gradient [K m^-1]; default 0.4 K/km (common practice; value from memory).

    Returns
    -------
    numpy.ndarray
        Temperature on the adiabat [K].

    Notes
    -----
    ``T = Tp + G_ad z``, the first-order form of ``T = Tp exp(alpha g z / c_p)``; upper-mantle
    adiabatic gradients of about 0.3-0.5 K/km are in common use (from memory). Valid in
    the convecting upper mantle, not within the conductive lid.
    """
    z = depth_array(depth)
    tp = temperature_array(potential_temperature, "potential_temperature")
    g = checked(gradient, "gradient", "K m^-1", nonnegative=True, what="adiabatic gradient")
    _warn_if_above(
        g, _SLIP_GRADIENT, "gradient: above 1 K/m; gradients are in K/m (0.4 K/km is 4e-4)"
    )
    return np.array(tp + g * z)  # linearised adiabat


def cap_at_adiabat(
    profile, depth, potential_temperature, gradient=ADIABATIC_GRADIENT, conductivity=3.3
) -> GeothermProfile:
    """Limit a geotherm to the mantle adiabat.

    Parameters
    ----------
    profile : GeothermProfile
        Geotherm on ``depth`` (temperature [K], heat flow [W m^-2]).
    depth : array_like
        Depth [m] the profile was computed on.
    potential_temperature : float or array_like
        Mantle potential temperature Tp [K].
    gradient : float or array_like, optional
        Adiabatic gradient [K m^-1]; default 0.4 K/km (common practice; from memory).
    conductivity : float or array_like, optional
        Conductivity [W m^-1 K^-1] used to express the adiabatic gradient as a flux.

    Returns
    -------
    GeothermProfile
        ``temperature = min(T, T_adiabat)``. Where the cap applies the heat flow is
        ``conductivity * gradient``, the conductive flux along the adiabat; elsewhere it
        is the profile's own.

    Notes
    -----
    Below the depth where a conductive geotherm meets the adiabat, heat is carried by
    convection, not conduction: the returned flux there is only the small conductive part
    implied by the adiabatic gradient, not the heat the mantle actually transports.
    """
    if not (isinstance(profile, tuple) and len(profile) == 2):
        raise RheologyError(
            f"profile: got {type(profile).__name__}; expected a GeothermProfile "
            "(temperature, heat_flow)"
        )
    temperature = temperature_array(profile[0], "profile.temperature")
    heat_flow = checked(profile[1], "profile.heat_flow", "W m^-2", what="heat flow")
    k = checked(conductivity, "conductivity", "W m^-1 K^-1", positive=True, what="conductivity")
    on_adiabat = adiabat(depth, potential_temperature, gradient)
    flux_on_adiabat = k * np.asarray(gradient, dtype=float)  # conductive flux along the adiabat
    try:
        shape = np.broadcast_shapes(
            temperature.shape, heat_flow.shape, on_adiabat.shape, flux_on_adiabat.shape
        )
    except ValueError:
        raise RheologyError(
            f"profile: temperature shape {temperature.shape} and heat_flow shape "
            f"{heat_flow.shape} do not match depth shape {np.shape(depth)}; expected the "
            "profile computed on this depth grid"
        ) from None
    capped = temperature > on_adiabat
    new_temperature = np.broadcast_to(np.minimum(temperature, on_adiabat), shape)
    new_heat_flow = np.broadcast_to(np.where(capped, flux_on_adiabat, heat_flow), shape)
    return GeothermProfile(np.array(new_temperature), np.array(new_heat_flow))
