"""Strength envelope of a layered column: brittle and ductile strength along depth.

Pipeline: scenario -> depth grid (layer boundaries appear twice, once for each layer,
so strength jumps at boundaries are kept) -> temperature, lithostatic and pore
pressure -> frictional strength (Byerlee 1978 on Andersonian faults) and composite
creep strength -> envelope = the lesser, and the mechanism at each depth.

Stresses are differential stresses sigma1 - sigma3 [Pa] in the triaxial convention.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rheology.model import Scenario
from rheology.physics import creep, friction, geotherm, pressure

#: Mechanism codes used in :attr:`Envelope.mechanism`.
MECHANISMS = (
    "frictional sliding",
    "semi-brittle",
    "dislocation creep",
    "diffusion creep",
    "low-temperature plasticity",
)
FRICTIONAL, SEMI_BRITTLE = 0, 1
_CREEP_CODE = {"dislocation": 2, "diffusion": 3, "peierls": 4}


@dataclass(frozen=True)
class Envelope:
    """A strength envelope on a depth grid (SI; stresses are sigma1 - sigma3 [Pa]).

    Attributes
    ----------
    scenario : Scenario
        The inputs (``faulting`` is the regime actually used).
    depth : ndarray
        Depth [m]; a layer boundary appears twice (upper layer, then lower layer).
    layer : ndarray of int
        Index of the layer each node belongs to.
    temperature [K], heat_flow [W/m^2], lithostatic [Pa], pore_pressure [Pa] : ndarray
    brittle, ductile, strength : ndarray
        Frictional strength, composite creep strength and their lesser [Pa].
    mechanism : ndarray of int
        Index into :data:`MECHANISMS`.
    """

    scenario: Scenario
    depth: np.ndarray
    layer: np.ndarray
    temperature: np.ndarray
    heat_flow: np.ndarray
    lithostatic: np.ndarray
    pore_pressure: np.ndarray
    brittle: np.ndarray
    ductile: np.ndarray
    strength: np.ndarray
    mechanism: np.ndarray

    @property
    def effective_pressure(self) -> np.ndarray:
        """Effective confining pressure sigma_v - P_f [Pa]."""
        return self.lithostatic - self.pore_pressure

    @property
    def mechanism_names(self) -> list[str]:
        """Mechanism at each node, in words."""
        return [MECHANISMS[i] for i in self.mechanism]

    @property
    def viscosity(self) -> np.ndarray:
        """Effective viscosity eta = tau_II / (2 edot_II) of the envelope [Pa s].

        For a triaxial flow law tau_II = sigma_d / sqrt(3) and edot_II = sqrt(3)/2 edot_ax,
        so eta = sigma_d / (3 edot_ax), evaluated with the envelope strength.
        """
        from rheology.physics.viscosity import effective_viscosity

        return effective_viscosity(self.strength, self.scenario.strain_rate)

    @property
    def creep_viscosity(self) -> np.ndarray:
        """Viscosity of creep alone [Pa s] (same convention as :attr:`viscosity`)."""
        from rheology.physics.viscosity import effective_viscosity

        return effective_viscosity(self.ductile, self.scenario.strain_rate)


def depth_grid(scenario: Scenario) -> tuple[np.ndarray, np.ndarray]:
    """Depth nodes [m] and their layer index; boundaries inside the column appear twice."""
    zmax, step = scenario.max_depth, scenario.depth_step
    count = int(np.ceil(zmax / step - 1e-9))
    regular = np.linspace(0.0, count * step, count + 1)
    regular = np.minimum(regular, zmax)
    bases = np.cumsum([layer.thickness for layer in scenario.layers])[:-1]
    inner = bases[bases < zmax]
    regular = np.unique(np.concatenate([regular, inner]))
    layer_of = np.searchsorted(inner, regular, side="right")
    depth = np.concatenate([regular, inner])
    layer = np.concatenate([layer_of, np.arange(inner.size)])
    order = np.lexsort((layer, depth))
    return depth[order], layer[order]


def geotherm_profile(scenario: Scenario, depth) -> geotherm.GeothermProfile:
    """Temperature [K] and heat flow [W/m^2] of the scenario's geotherm at ``depth``."""
    g = scenario.geotherm
    layers = scenario.layers
    if g.kind == "linear":
        conductivity = g.conductivity or layers[0].conductivity
        profile = geotherm.linear(depth, g.surface_temperature, g.gradient, conductivity)
    elif g.kind == "layered-steady":
        profile = geotherm.layered_steady(
            depth, g.surface_temperature, g.surface_heat_flow,
            [ly.thickness for ly in layers], [ly.heat_production for ly in layers],
            [ly.conductivity for ly in layers])
    elif g.kind == "exponential-heat":
        profile = geotherm.exponential_heat(depth, g.surface_temperature, g.surface_heat_flow,
                                            g.surface_heat_production, g.decay_depth,
                                            g.conductivity)
    elif g.kind == "half-space":
        profile = geotherm.half_space(depth, g.age, g.surface_temperature, g.mantle_temperature,
                                      g.diffusivity, g.conductivity or 3.3)
    else:
        profile = geotherm.plate(depth, g.age, g.surface_temperature, g.mantle_temperature,
                                 g.plate_thickness, g.diffusivity, g.conductivity or 3.3)
    if g.potential_temperature is not None:
        profile = geotherm.cap_at_adiabat(profile, depth, g.potential_temperature,
                                          g.adiabatic_gradient)
    return profile


def pore_pressure(scenario: Scenario, depth, lithostatic):
    """Pore-fluid pressure [Pa] at ``depth`` for the scenario's pore-pressure model."""
    model = scenario.pore_pressure
    if model.kind == "ratio":
        return pressure.pore_pressure_from_ratio(lithostatic, model.ratio)
    if model.kind == "hydrostatic":
        return pressure.hydrostatic_pressure(depth)
    return pressure.pore_pressure_overpressured(depth, lithostatic, model.top_depth,
                                                model.ratio_below)


def layer_terms(scenario: Scenario) -> list[list[creep.CreepTerm]]:
    """Creep terms of each layer's rock, with its grain size and water folded in."""
    return [[law.term(layer.grain_size, layer.water) for law in layer.rock.laws]
            for layer in scenario.layers]


def evaluate(scenario: Scenario, depth, layer, *, terms=None) -> dict[str, np.ndarray]:
    """All envelope fields at arbitrary ``depth`` [m] nodes assigned to ``layer`` indices.

    ``terms`` (from :func:`layer_terms`) may be passed to reuse prepared creep terms.
    """
    depth = np.asarray(depth, float)
    layer = np.asarray(layer, int)
    regime = scenario.faulting
    layers = scenario.layers
    temperature, heat_flow = geotherm_profile(scenario, depth)
    lithostatic = pressure.lithostatic_pressure(depth, [ly.thickness for ly in layers],
                                                [ly.density for ly in layers])
    fluid = pore_pressure(scenario, depth, lithostatic)
    brittle = friction.frictional_strength(lithostatic, fluid, regime, scenario.friction.mu,
                                           scenario.friction.cohesion)
    ductile = np.empty_like(depth)
    creep_code = np.empty(depth.shape, dtype=np.int8)
    terms = layer_terms(scenario) if terms is None else terms
    for index, layer_def in enumerate(layers):
        at = layer == index
        if not np.any(at):
            continue
        result = creep.composite_stress(scenario.strain_rate, temperature[at], lithostatic[at],
                                        terms[index])
        ductile[at] = result.stress
        codes = np.array([_CREEP_CODE[law.mechanism] for law in layer_def.rock.laws], np.int8)
        creep_code[at] = codes[result.dominant]
    strength = np.minimum(brittle, ductile)
    effective = lithostatic - fluid
    mechanism = np.where(brittle <= ductile, FRICTIONAL,
                         np.where(ductile > effective, SEMI_BRITTLE, creep_code)).astype(np.int8)
    return dict(depth=depth, layer=layer, temperature=temperature, heat_flow=heat_flow,
                lithostatic=lithostatic, pore_pressure=fluid, brittle=brittle, ductile=ductile,
                strength=strength, mechanism=mechanism)


def compute_envelope(scenario: Scenario, *, faulting: str | None = None) -> Envelope:
    """Strength envelope of ``scenario`` on its depth grid.

    Parameters
    ----------
    scenario : Scenario
        Column, geotherm, strain rate, regime and pore pressure.
    faulting : {"thrust", "strike-slip", "normal"}, optional
        Override the scenario's regime (e.g. to compare compression and extension).

    Returns
    -------
    Envelope

    Notes
    -----
    The envelope is the lesser of the frictional strength (Byerlee 1978, optimally
    oriented faults, Anderson 1951 regimes, effective stresses) and the creep strength
    at the given strain rate (mechanisms in parallel), after Goetze & Evans (1979) and
    Brace & Kohlstedt (1980). Where creep is weaker than friction but its flow stress
    still exceeds the effective confining pressure, the Goetze criterion
    (Kohlstedt, Evans & Mackwell 1995) marks the rock as semi-brittle.

    References
    ----------
    Goetze, C. & Evans, B. (1979). Stress and temperature in the bending lithosphere as
    constrained by experimental rock mechanics. Geophys. J. R. Astr. Soc. 59, 463-478.
    Brace, W. F. & Kohlstedt, D. L. (1980). J. Geophys. Res. 85(B11), 6248-6252.
    Kohlstedt, D. L., Evans, B. & Mackwell, S. J. (1995). Strength of the lithosphere:
    constraints imposed by laboratory experiments. J. Geophys. Res. 100(B9), 17587-17602.
    """
    if faulting is not None:
        friction.check_regime(faulting)
        scenario = _with_faulting(scenario, faulting)
    depth, layer = depth_grid(scenario)
    return Envelope(scenario=scenario, **evaluate(scenario, depth, layer))


def _with_faulting(scenario: Scenario, faulting: str) -> Scenario:
    from dataclasses import replace

    return replace(scenario, faulting=faulting)
