"""The scenario: a layered column, its geotherm, loading and pore pressure, in SI units.

These dataclasses are what :func:`rheology.envelope.compute_envelope` consumes. They are
built from TOML files by :mod:`rheology.scenario`, from the UI, or directly in Python;
``__post_init__`` checks each value so a bad number is caught where it is made.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from rheology.errors import RheologyError
from rheology.library.flowlaw import Rock
from rheology.physics.friction import check_regime

GEOTHERM_KINDS = ("linear", "layered-steady", "exponential-heat", "half-space", "plate")

#: Parameters each geotherm kind needs (besides surface_temperature).
GEOTHERM_PARAMETERS = {
    "linear": ("gradient",),
    "layered-steady": ("surface_heat_flow",),
    "exponential-heat": (
        "surface_heat_flow",
        "surface_heat_production",
        "decay_depth",
        "conductivity",
    ),
    "half-space": ("age", "mantle_temperature", "diffusivity"),
    "plate": ("age", "mantle_temperature", "diffusivity", "plate_thickness"),
}

PORE_PRESSURE_KINDS = ("ratio", "hydrostatic", "overpressured")


def _require(condition: bool, field_name: str, value, expected: str) -> None:
    if not condition:
        raise RheologyError(f"{field_name}: got {value!r}; expected {expected}")


def _positive(value, name: str) -> None:
    _require(
        value is not None and np.isfinite(value) and value > 0, name, value, "a finite value > 0"
    )


@dataclass(frozen=True)
class Geotherm:
    """A geotherm model and its parameters [SI: K, W/m^2, K/m, W/m^3, m, W/m/K, s, m^2/s].

    ``kind`` is one of :data:`GEOTHERM_KINDS`; the parameters it needs are listed in
    :data:`GEOTHERM_PARAMETERS`. ``potential_temperature`` (with ``adiabatic_gradient``)
    caps temperatures at the convecting mantle's adiabat when given.
    ``conductivity`` for half-space and plate models is used for the heat flow only.
    """

    kind: str
    surface_temperature: float
    surface_heat_flow: float | None = None
    gradient: float | None = None
    surface_heat_production: float | None = None
    decay_depth: float | None = None
    conductivity: float | None = None
    age: float | None = None
    mantle_temperature: float | None = None
    diffusivity: float | None = None
    plate_thickness: float | None = None
    potential_temperature: float | None = None
    adiabatic_gradient: float = 0.4e-3

    def __post_init__(self):
        _require(
            self.kind in GEOTHERM_KINDS,
            "geotherm.kind",
            self.kind,
            "one of " + ", ".join(GEOTHERM_KINDS),
        )
        _positive(self.surface_temperature, "geotherm.surface_temperature")
        for name in GEOTHERM_PARAMETERS[self.kind]:
            _positive(getattr(self, name), f"geotherm.{name}")
        if self.potential_temperature is not None:
            _positive(self.potential_temperature, "geotherm.potential_temperature")


@dataclass(frozen=True)
class PorePressure:
    """Pore-fluid pressure model.

    * ``"ratio"``: P_f = ``ratio`` x lithostatic (0 = dry);
    * ``"hydrostatic"``: P_f = rho_w g z;
    * ``"overpressured"``: hydrostatic down to ``top_depth`` [m], then rising with
      ``ratio_below`` x the lithostatic gradient.
    """

    kind: str = "ratio"
    ratio: float = 0.0
    top_depth: float | None = None
    ratio_below: float | None = None

    def __post_init__(self):
        _require(
            self.kind in PORE_PRESSURE_KINDS,
            "pore_pressure",
            self.kind,
            "one of " + ", ".join(PORE_PRESSURE_KINDS),
        )
        if self.kind == "ratio":
            _require(
                np.isfinite(self.ratio) and 0 <= self.ratio < 1,
                "pore_pressure_ratio",
                self.ratio,
                "a number from 0 (dry) up to, not including, 1 (lithostatic)",
            )
        if self.kind == "overpressured":
            _require(
                self.top_depth is not None and np.isfinite(self.top_depth) and self.top_depth >= 0,
                "overpressure.top_depth",
                self.top_depth,
                "a depth >= 0",
            )
            _require(
                self.ratio_below is not None and 0 <= self.ratio_below < 1,
                "overpressure.ratio_below",
                self.ratio_below,
                "a number in [0, 1)",
            )


@dataclass(frozen=True)
class Friction:
    """Frictional law: Byerlee (1978) when ``mu`` is None, else constant mu and cohesion [Pa]."""

    mu: float | None = None
    cohesion: float = 0.0

    def __post_init__(self):
        if self.mu is not None:
            _positive(self.mu, "friction.mu")
        _require(
            np.isfinite(self.cohesion) and self.cohesion >= 0,
            "friction.cohesion",
            self.cohesion,
            "a stress >= 0",
        )


@dataclass(frozen=True)
class Layer:
    """One layer of the column [SI].

    ``rock`` holds the flow laws; ``rock_id`` is the library id it came from (None for an
    inline law). ``grain_size`` [m] and ``water`` (fugacity [Pa] or OH content) are
    required when the rock's laws need them. ``shear_modulus`` [Pa] sets Maxwell times.
    """

    name: str
    thickness: float
    density: float
    rock: Rock
    heat_production: float = 0.0
    conductivity: float = 2.5
    grain_size: float | None = None
    water: float | None = None
    shear_modulus: float = 3.0e10
    rock_id: str | None = None

    def __post_init__(self):
        where = f"layer {self.name!r}"
        _positive(self.thickness, f"{where}: thickness")
        _positive(self.density, f"{where}: density")
        _positive(self.conductivity, f"{where}: conductivity")
        _positive(self.shear_modulus, f"{where}: shear_modulus")
        _require(
            np.isfinite(self.heat_production) and self.heat_production >= 0,
            f"{where}: heat_production",
            self.heat_production,
            "a value >= 0",
        )
        if self.rock.needs_grain_size:
            _positive(self.grain_size, f"{where}: grain_size (needed by rock {self.rock.id!r})")
        if self.rock.needs_water:
            _positive(self.water, f"{where}: water (needed by rock {self.rock.id!r})")


@dataclass(frozen=True)
class Scenario:
    """A column and its loading [SI].

    ``strain_rate`` is the axial strain rate of the triaxial convention [1/s];
    ``faulting`` one of "thrust", "strike-slip", "normal"; ``max_depth`` and
    ``depth_step`` [m]. The last layer extends to ``max_depth`` when the thicknesses sum
    to less.
    """

    title: str
    strain_rate: float
    faulting: str
    max_depth: float
    geotherm: Geotherm
    layers: tuple[Layer, ...]
    pore_pressure: PorePressure = field(default_factory=PorePressure)
    friction: Friction = field(default_factory=Friction)
    depth_step: float = 50.0

    def __post_init__(self):
        _positive(self.strain_rate, "strain_rate")
        check_regime(self.faulting)
        _positive(self.max_depth, "max_depth")
        _positive(self.depth_step, "depth_step")
        _require(
            self.depth_step <= self.max_depth,
            "depth_step",
            self.depth_step,
            f"a step no larger than max_depth ({self.max_depth:g} m)",
        )
        _require(
            self.max_depth / self.depth_step <= 2_000_000,
            "depth_step",
            self.depth_step,
            "at most 2,000,000 depth nodes",
        )
        _require(len(self.layers) > 0, "layers", self.layers, "at least one layer")

    @property
    def layer_tops(self) -> np.ndarray:
        """Depth of each layer's top [m]."""
        return np.concatenate([[0.0], np.cumsum([ly.thickness for ly in self.layers])[:-1]])
