"""Strength envelope of a layered column: brittle and ductile strength along depth.

Pipeline: scenario -> depth grid (layer boundaries appear twice, once for each layer,
so strength jumps at boundaries are kept) -> temperature, lithostatic and pore
pressure -> frictional strength (Byerlee 1978 on Andersonian faults) and composite
creep strength -> envelope = the lesser, and the mechanism at each depth.

Stresses are differential stresses sigma1 - sigma3 [Pa] in the triaxial convention.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from rheology import columns
from rheology.columns import (
    CREEP_CODES,
    FRICTIONAL,
    MECHANISMS,
    SEMI_BRITTLE,
    ColumnInputs,
    LawTable,
    node_rows,
    scan_fields,
)
from rheology.model import Scenario
from rheology.physics import friction, geotherm, pressure

__all__ = [
    "CREEP_CODES",
    "FRICTIONAL",
    "MECHANISMS",
    "SEMI_BRITTLE",
    "Envelope",
    "Variation",
    "column_inputs",
    "compute_envelope",
    "depth_grid",
    "evaluate",
]


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


@dataclass(frozen=True)
class Variation:
    """Per-realisation replacements of scenario inputs, for Monte Carlo runs and site batches.

    Every array has the realisation axis first (length R); None keeps the scenario value.

    Attributes
    ----------
    size : int
        Number of realisations R.
    strain_rate : ndarray, optional
        Axial strain rate [1/s], shape (R,).
    geotherm : dict, optional
        :class:`rheology.model.Geotherm` field name -> values (R,) [SI].
    pore_pressure_ratio : ndarray, optional
        Pore-pressure ratio (R,); replaces the scenario's pore-pressure model.
    friction_scale : ndarray, optional
        Multiplier of the friction coefficients (R,) (of both Byerlee branches, or of mu).
    thickness : ndarray, optional
        Layer thicknesses [m], shape (R, L).
    faulting : ndarray of str, optional
        Faulting regime per realisation (R,).
    laws : dict, optional
        (layer index, law index) -> {"A": (R,), "n": (R,), "Q": (R,), "V": (R,)} [SI];
        A is the law's SI pre-factor before grain size and water are folded in.
    """

    size: int
    strain_rate: np.ndarray | None = None
    geotherm: dict = field(default_factory=dict)
    pore_pressure_ratio: np.ndarray | None = None
    friction_scale: np.ndarray | None = None
    thickness: np.ndarray | None = None
    faulting: np.ndarray | None = None
    laws: dict = field(default_factory=dict)


def _column(values):
    """(R,) -> (R, 1) so per-realisation values broadcast against depth."""
    return None if values is None else np.asarray(values, float)[:, None]


def geotherm_profile(
    scenario: Scenario, depth, variation: Variation | None = None, split: bool = False
):
    """Temperature [K] and heat flow [W/m^2] of the scenario's geotherm at ``depth``.

    With ``split``, linear and layered steady geotherms (without an adiabat) come as
    :class:`rheology.physics.geotherm.LinearGeotherm` parts.
    """
    g = scenario.geotherm
    layers = scenario.layers
    values = {name: getattr(g, name) for name in g.__dataclass_fields__}
    thickness = [ly.thickness for ly in layers]
    if variation is not None:
        values.update({k: _column(v) for k, v in variation.geotherm.items()})
        if variation.thickness is not None:
            thickness = variation.thickness
    v = values
    if g.kind == "linear":
        conductivity = layers[0].conductivity if v["conductivity"] is None else v["conductivity"]
        profile = geotherm.linear(
            depth, v["surface_temperature"], v["gradient"], conductivity, split=split
        )
    elif g.kind == "layered-steady":
        profile = geotherm.layered_steady(
            depth,
            v["surface_temperature"],
            v["surface_heat_flow"],
            thickness,
            [ly.heat_production for ly in layers],
            [ly.conductivity for ly in layers],
            split=split,
        )
    elif g.kind == "exponential-heat":
        profile = geotherm.exponential_heat(
            depth,
            v["surface_temperature"],
            v["surface_heat_flow"],
            v["surface_heat_production"],
            v["decay_depth"],
            v["conductivity"],
        )
    elif g.kind == "half-space":
        profile = geotherm.half_space(
            depth,
            v["age"],
            v["surface_temperature"],
            v["mantle_temperature"],
            v["diffusivity"],
            3.3 if v["conductivity"] is None else v["conductivity"],
        )
    else:
        profile = geotherm.plate(
            depth,
            v["age"],
            v["surface_temperature"],
            v["mantle_temperature"],
            v["plate_thickness"],
            v["diffusivity"],
            3.3 if v["conductivity"] is None else v["conductivity"],
        )
    if v["potential_temperature"] is not None:
        if isinstance(profile, geotherm.LinearGeotherm):
            profile = geotherm.GeothermProfile(profile.temperature, profile.heat_flow)
        profile = geotherm.cap_at_adiabat(
            profile, depth, v["potential_temperature"], v["adiabatic_gradient"]
        )
    return profile


def pore_pressure(scenario: Scenario, depth, lithostatic, variation: Variation | None = None):
    """Pore pressure as (pressure [Pa], ratio): P_f = pressure + ratio sigma_v.

    A pore-pressure ratio (the variation's, or the scenario's model) comes as the ratio
    itself (Hubbert & Rubey 1959), with no pressure array; the hydrostatic and
    overpressured models come as pressures with ratio 0.
    """
    ratio = None if variation is None else variation.pore_pressure_ratio
    model = scenario.pore_pressure
    if ratio is None and model.kind == "ratio":
        ratio = model.ratio
    if ratio is not None:  # P_f = lambda sigma_v
        ratio = pressure.check_ratio(np.asarray(ratio, float).reshape(-1), "pore_pressure_ratio")
        return np.zeros((1, np.shape(depth)[-1])), ratio
    if model.kind == "hydrostatic":
        return pressure.hydrostatic_pressure(depth) + 0.0 * lithostatic, np.zeros(1)
    thickness = [ly.thickness for ly in scenario.layers]
    if variation is not None and variation.thickness is not None:
        thickness = np.asarray(variation.thickness, float)
    at_top = pressure.lithostatic_pressure(
        np.full(np.shape(thickness)[:-1] + (1,), model.top_depth),
        thickness,
        [ly.density for ly in scenario.layers],
    )
    fluid = pressure.pore_pressure_overpressured(
        depth, lithostatic, model.top_depth, model.ratio_below, at_top
    )
    return fluid, np.zeros(1)


def layer_terms(scenario: Scenario, variation: Variation | None = None):
    """Creep terms of each layer's rock, with grain size and water folded in.

    With a variation, replaced parameters become (R, 1) columns.
    """
    terms = []
    for i, layer in enumerate(scenario.layers):
        row = []
        for j, law in enumerate(layer.rock.laws):
            changed = {} if variation is None else variation.laws.get((i, j), {})
            if changed:
                law = replace(law, **{k: _column(v) for k, v in changed.items()})
            row.append(law.term(layer.grain_size, layer.water))
        terms.append(row)
    return terms


def law_table(scenario: Scenario, variation: Variation | None = None) -> LawTable:
    """The creep laws of every layer packed for the column scans (see :func:`layer_terms`)."""
    codes = [[CREEP_CODES[law.mechanism] for law in ly.rock.laws] for ly in scenario.layers]
    size = 1 if variation is None else variation.size
    return LawTable.from_terms(layer_terms(scenario, variation), codes, size)


def assign_layers(scenario: Scenario, depth, variation: Variation | None = None):
    """Layer index of each depth node (a node on a boundary belongs to the lower layer)."""
    depth = np.asarray(depth, float)
    if variation is None or variation.thickness is None:
        bases = np.cumsum([ly.thickness for ly in scenario.layers])[:-1]
        return np.searchsorted(bases, depth, side="right")
    bases = np.cumsum(np.asarray(variation.thickness, float), axis=-1)[:, :-1]
    return np.sum(depth[..., None] >= bases[:, None, :], axis=-1)


def _friction_rows(scenario: Scenario, variation: Variation | None) -> np.ndarray:
    """Slope and intercept of both frictional branches, (1 or R, 4)."""
    f = scenario.friction
    scale = 1.0
    if variation is not None and variation.friction_scale is not None:
        scale = np.asarray(variation.friction_scale, float)
    regimes = None if variation is None else variation.faulting
    if regimes is None:
        slope, intercept = friction.frictional_coefficients(
            scenario.faulting, f.mu, f.cohesion, scale
        )
    else:
        regimes = np.asarray(regimes)
        scale = np.broadcast_to(scale, regimes.shape)
        slope, intercept = np.empty((regimes.size, 2)), np.empty((regimes.size, 2))
        for regime in np.unique(regimes):  # each realisation's rows, once
            rows = regimes == regime
            slope[rows], intercept[rows] = friction.frictional_coefficients(
                str(regime), f.mu, f.cohesion, scale[rows]
            )
    packed = np.stack([slope[..., 0], intercept[..., 0], slope[..., 1], intercept[..., 1]], -1)
    return np.ascontiguousarray(packed.reshape(-1, 4))


def column_inputs(
    scenario: Scenario,
    depth,
    layer=None,
    *,
    variation: Variation | None = None,
    laws: LawTable | None = None,
    temperature: bool = True,
) -> tuple[ColumnInputs, np.ndarray | None]:
    """Inputs of the column scans, from the numpy physics (geotherm, pressures, friction).

    Parameters
    ----------
    scenario : Scenario
    depth : array_like
        Depth nodes [m], shape (nz,) or (R, nz).
    layer : array_like of int, optional
        Layer of each node; by default from the layer thicknesses.
    variation : Variation, optional
        Per-realisation inputs (R = ``variation.size`` columns).
    laws : LawTable, optional
        Packed creep laws (:func:`law_table`) to reuse.
    temperature : bool
        Compute the geotherm now; with False the inputs carry no temperature, to be
        given chunk by chunk (:meth:`rheology.columns.ColumnInputs.rows`,
        :func:`geotherm_profile`).

    Returns
    -------
    inputs : rheology.columns.ColumnInputs
    heat_flow : ndarray or None
        Conductive heat flow [W/m^2] of the geotherm, (nz,) or (R, nz).
    """
    depth = np.asarray(depth, float)
    layer = assign_layers(scenario, depth, variation) if layer is None else np.asarray(layer)
    thickness = [ly.thickness for ly in scenario.layers]
    if variation is not None and variation.thickness is not None:
        thickness = np.asarray(variation.thickness, float)
    size = 1 if variation is None else int(variation.size)
    heat_flow = None
    temperature_fields = dict.fromkeys(("temperature", "temperature_value", "temperature_shape"))
    if temperature:
        profile = geotherm_profile(scenario, depth, variation, split=True)
        heat_flow = profile.heat_flow
        temperature_fields = columns.temperature_fields(profile, size)
    lithostatic = pressure.lithostatic_pressure(
        depth, thickness, [ly.density for ly in scenario.layers]
    )
    fluid, ratio = pore_pressure(scenario, depth, lithostatic, variation)
    strain_rate = scenario.strain_rate
    if variation is not None and variation.strain_rate is not None:
        strain_rate = np.asarray(variation.strain_rate, float)
    inputs = ColumnInputs(
        size=size,
        depth=node_rows(depth, size),
        layer=node_rows(np.broadcast_to(layer, np.shape(depth)), size, np.int64),
        **temperature_fields,
        lithostatic=node_rows(lithostatic, size),
        pore_pressure=node_rows(fluid, size),
        pore_ratio=ratio,
        log_rate=np.log(np.asarray(strain_rate, float)).reshape(-1),
        friction=_friction_rows(scenario, variation),
        laws=law_table(scenario, variation) if laws is None else laws,
    )
    return inputs, heat_flow


def evaluate(
    scenario: Scenario, depth, layer=None, *, variation: Variation | None = None, terms=None
) -> dict[str, np.ndarray]:
    """All envelope fields at ``depth`` [m] nodes.

    Parameters
    ----------
    scenario : Scenario
    depth : array_like
        Depth nodes [m], shape (nz,) or (R, nz).
    layer : array_like of int, optional
        Layer of each node; by default from the layer thicknesses.
    variation : Variation, optional
        Per-realisation inputs; results then have shape (R, nz) when anything varies.
    terms : LawTable, optional
        Packed creep laws (:func:`law_table`) to reuse.

    Returns
    -------
    dict
        depth, layer, temperature, heat_flow, lithostatic, pore_pressure, brittle, ductile,
        strength, mechanism (codes into :data:`MECHANISMS`).
    """
    depth = np.asarray(depth, float)
    if layer is None:
        layer = assign_layers(scenario, depth, variation)
    inputs, heat_flow = column_inputs(scenario, depth, layer, variation=variation, laws=terms)
    rows = inputs.distinct_rows()
    scanned = scan_fields(replace(inputs, size=rows) if rows == 1 else inputs)
    fields = dict(
        temperature=inputs.temperature_field(),
        lithostatic=inputs.lithostatic,
        pore_pressure=inputs.pore_pressure_field(),
        **scanned,
    )
    if rows == 1 and depth.ndim < 2:  # one column: (nz,) fields
        fields = {name: value[0] for name, value in fields.items()}
        heat_flow = np.broadcast_to(heat_flow, depth.shape)
    brittle, ductile = fields["brittle"], fields["ductile"]
    return dict(
        fields,
        depth=depth,
        layer=np.asarray(layer),
        heat_flow=heat_flow,
        strength=np.minimum(brittle, ductile),
    )


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
        scenario = replace(scenario, faulting=faulting)
    depth, layer = depth_grid(scenario)
    return Envelope(scenario=scenario, **evaluate(scenario, depth, layer))
