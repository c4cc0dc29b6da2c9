"""Point answers: which mechanism governs at one depth, and what a given load does there."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from rheology.envelope import CREEP_CODES, FRICTIONAL, MECHANISMS, SEMI_BRITTLE, evaluate
from rheology.errors import RheologyError
from rheology.library.flowlaw import Rock
from rheology.model import Friction, Layer, Scenario
from rheology.physics import creep, friction
from rheology.physics.viscosity import effective_viscosity

#: A load lasting less than this fraction of the Maxwell time counts as elastic.
ELASTIC_FRACTION = 0.1

ELASTIC, BREAKS, FLOWS = "stays elastic", "breaks (frictional failure)", "flows (creep)"


@dataclass(frozen=True)
class LoadVerdict:
    """What an applied differential stress held for a duration does (SI)."""

    stress: float
    duration: float
    outcome: str
    maxwell_time: float
    creep_rate: float
    reason: str


@dataclass(frozen=True)
class PointAnswer:
    """Governing mechanism and margins at one depth, or at given conditions (SI).

    ``depth`` [m] is None for an answer at given temperature and pressure.
    """

    depth: float | None
    layer: str
    rock: str
    temperature: float
    lithostatic: float
    pore_pressure: float
    strain_rate: float
    brittle: float
    ductile: float
    mechanism: str
    margin: float
    creep_by_law: dict[str, float] = field(default_factory=dict)
    load: LoadVerdict | None = None

    @property
    def strength(self) -> float:
        """The lesser of brittle and ductile strength [Pa]."""
        return min(self.brittle, self.ductile)

    def sentence(self) -> str:
        """The answer in one plain sentence."""
        weaker, stronger = sorted((self.brittle, self.ductile))
        which = "friction" if self.brittle <= self.ductile else "creep"
        where = (
            f"{self.lithostatic / 1e6:.0f} MPa"
            if self.depth is None
            else f"{self.depth / 1e3:.2f} km"
        )
        text = (
            f"At {where} ({self.temperature - 273.15:.0f} degC, "
            f"{self.rock}): {self.mechanism} governs; {which} needs "
            f"{weaker / 1e6:.1f} MPa, {self.margin:.2g} times less than the other "
            f"mechanism ({stronger / 1e6:.3g} MPa)."
        )
        if self.load is not None:
            text += f" A load of {self.load.stress / 1e6:.3g} MPa {self.load.outcome}: "
            text += self.load.reason
        return text


def layer_at(scenario: Scenario, depth: float) -> int:
    """Index of the layer containing ``depth`` [m] (the last layer extends downwards)."""
    if not np.isfinite(depth) or depth < 0 or depth > scenario.max_depth:
        raise RheologyError(
            f"depth: {depth / 1e3:g} km is outside the column; expected 0 to "
            f"{scenario.max_depth / 1e3:g} km"
        )
    bases = np.cumsum([ly.thickness for ly in scenario.layers])[:-1]
    return int(np.searchsorted(bases, depth, side="left"))


def _creep_rate(layer: Layer, stress, temperature, pressure) -> float:
    return float(
        sum(
            law.strain_rate(stress, temperature, pressure, layer.grain_size, layer.water)
            for law in layer.rock.laws
        )
    )


def judge_load(
    layer: Layer,
    brittle: float,
    ductile: float,
    temperature: float,
    pressure: float,
    stress: float,
    duration: float,
) -> LoadVerdict:
    """Elastic, breaks or flows, for ``stress`` [Pa] held for ``duration`` [s].

    * breaks if the stress reaches the frictional strength;
    * flows if the load lasts at least 10 % of the Maxwell time t_M = eta / G, with
      eta = sigma / (3 edot(sigma)) from the creep laws at the applied stress and G the
      layer's shear modulus, or if the stress exceeds the creep strength at the
      reference strain rate;
    * stays elastic otherwise (duration well below t_M, stress below both strengths).

    References
    ----------
    Maxwell time: Turcotte, D. L. & Schubert, G. (2002). *Geodynamics*, 2nd ed.,
    Cambridge University Press, sec. 7.10 (from memory).
    """
    if not (np.isfinite(stress) and stress > 0):
        raise RheologyError(f"stress: {stress!r} Pa; expected a differential stress > 0")
    if not (np.isfinite(duration) and duration > 0):
        raise RheologyError(f"duration: {duration!r} s; expected a loading time > 0")
    rate = _creep_rate(layer, stress, temperature, pressure)
    viscosity = float(effective_viscosity(stress, rate)) if rate > 0 else np.inf
    maxwell = viscosity / layer.shear_modulus
    if stress >= brittle:
        return LoadVerdict(
            stress,
            duration,
            BREAKS,
            maxwell,
            rate,
            f"it reaches the frictional strength ({brittle / 1e6:.3g} MPa).",
        )
    if duration >= ELASTIC_FRACTION * maxwell or stress >= ductile:
        return LoadVerdict(
            stress,
            duration,
            FLOWS,
            maxwell,
            rate,
            f"creep runs at {rate:.2g} 1/s and the Maxwell time is "
            f"{_years(maxwell)}, not long against the load's {_years(duration)}.",
        )
    return LoadVerdict(
        stress,
        duration,
        ELASTIC,
        maxwell,
        rate,
        f"below both strengths, and the load's {_years(duration)} is short "
        f"against the Maxwell time of {_years(maxwell)}.",
    )


def _years(seconds: float) -> str:
    years = seconds / 3.15576e7
    if not np.isfinite(years):
        return "infinite time"
    return f"{years:.2g} years"


def point_answer(
    scenario: Scenario,
    depth: float,
    *,
    strain_rate: float | None = None,
    stress: float | None = None,
    duration: float | None = None,
) -> PointAnswer:
    """Which mechanism governs at ``depth`` [m] of ``scenario``, and by what margin.

    Parameters
    ----------
    scenario : Scenario
    depth : float
        Depth [m].
    strain_rate : float, optional
        Strain rate [1/s]; defaults to the scenario's.
    stress, duration : float, optional
        Applied differential stress [Pa] and how long it is held [s]; both together give
        a :class:`LoadVerdict`.
    """
    from dataclasses import replace

    if strain_rate is not None:
        scenario = replace(scenario, strain_rate=strain_rate)
    index = layer_at(scenario, float(depth))
    layer = scenario.layers[index]
    at = evaluate(scenario, np.array([float(depth)]), np.array([index]))
    temperature, lithostatic = float(at["temperature"][0]), float(at["lithostatic"][0])
    brittle, ductile = float(at["brittle"][0]), float(at["ductile"][0])
    return _answer(
        float(depth),
        layer,
        layer.name,
        (temperature, lithostatic, float(at["pore_pressure"][0]), scenario.strain_rate),
        brittle,
        ductile,
        MECHANISMS[at["mechanism"][0]],
        stress,
        duration,
    )


def _answer(depth, layer, where, conditions, brittle, ductile, mechanism, stress, duration):
    """Assemble a :class:`PointAnswer`: creep of each law alone, margin, load verdict."""
    temperature, lithostatic, fluid, strain_rate = conditions
    if (stress is None) != (duration is None):
        raise RheologyError(
            "stress and duration: give both (the load and how long it lasts), or neither"
        )
    by_law = {
        law.id: float(
            law.stress(strain_rate, temperature, lithostatic, layer.grain_size, layer.water)
        )
        for law in layer.rock.laws
    }
    weaker, stronger = sorted((brittle, ductile))
    load = None
    if stress is not None:
        load = judge_load(layer, brittle, ductile, temperature, lithostatic, stress, duration)
    return PointAnswer(
        depth,
        where,
        layer.rock.name,
        float(temperature),
        float(lithostatic),
        float(fluid),
        float(strain_rate),
        brittle,
        ductile,
        mechanism,
        float(stronger / weaker) if weaker > 0 else float("inf"),
        by_law,
        load,
    )


def conditions_answer(
    rock: Rock,
    temperature: float,
    pressure: float,
    strain_rate: float,
    *,
    faulting: str = "thrust",
    pore_pressure_ratio: float = 0.0,
    friction_law: Friction | None = None,
    grain_size: float | None = None,
    water: float | None = None,
    shear_modulus: float = 3.0e10,
    stress: float | None = None,
    duration: float | None = None,
) -> PointAnswer:
    """Which mechanism governs ``rock`` at given temperature [K] and pressure [Pa].

    The pressure is taken as the vertical (lithostatic) stress of the Andersonian regime,
    pore pressure as ``pore_pressure_ratio`` x pressure; otherwise as :func:`point_answer`.
    """
    layer = Layer(
        "conditions",
        1.0,
        1.0,
        rock,
        grain_size=grain_size,
        water=water,
        shear_modulus=shear_modulus,
        rock_id=rock.id,
    )
    friction_law = friction_law or Friction()
    if not (np.isfinite(pressure) and pressure >= 0):
        raise RheologyError(f"pressure: {pressure!r} Pa; expected a pressure >= 0")
    if not (0 <= pore_pressure_ratio < 1):
        raise RheologyError(
            f"pore_pressure_ratio: got {pore_pressure_ratio!r}; expected a number from 0 (dry) "
            "up to, not including, 1 (lithostatic)"
        )
    fluid = pore_pressure_ratio * pressure
    brittle = float(
        friction.frictional_strength(
            pressure, fluid, faulting, friction_law.mu, friction_law.cohesion
        )
    )
    terms = [law.term(grain_size, water) for law in rock.laws]
    result = creep.composite_stress(strain_rate, temperature, pressure, terms)
    ductile = float(result.stress)
    if brittle <= ductile:
        mechanism = MECHANISMS[FRICTIONAL]
    elif ductile > pressure - fluid:
        mechanism = MECHANISMS[SEMI_BRITTLE]
    else:
        mechanism = MECHANISMS[CREEP_CODES[rock.laws[int(result.dominant)].mechanism]]
    return _answer(
        None,
        layer,
        "given conditions",
        (temperature, pressure, fluid, strain_rate),
        brittle,
        ductile,
        mechanism,
        stress,
        duration,
    )
