"""Everything a user asks of one envelope, gathered once: transitions, strength, Te, words."""

from __future__ import annotations

from dataclasses import dataclass

from rheology.answers.integrated import ElasticThickness, elastic_thickness, integrated_strength
from rheology.answers.transitions import (
    BRITTLE_TO_DUCTILE,
    DUCTILE_TO_BRITTLE,
    Band,
    Transition,
    find_transitions,
    goetze_depths,
    regime_bands,
)
from rheology.envelope import Envelope, compute_envelope
from rheology.model import Scenario

CAUTION = (
    "Screening estimate only: laboratory flow laws extrapolated over many orders of "
    "magnitude in strain rate, with uncertain temperature, pore pressure and rock "
    "composition. Not for the design of tunnels, wells, foundations or slopes, nor for "
    "hazard assessment: defer to site investigation, local codes and licensed professionals."
)


@dataclass(frozen=True)
class Analysis:
    """An envelope and its answers (SI units)."""

    envelope: Envelope
    transitions: tuple[Transition, ...]
    goetze: tuple[float, ...]
    bands: tuple[Band, ...]
    integrated: float
    integrated_by_layer: dict[str, float]
    elastic: ElasticThickness

    @property
    def scenario(self) -> Scenario:
        """The scenario analysed."""
        return self.envelope.scenario

    def summary(self) -> str:
        """Plain-language answer for geologists, with the caution."""
        return plain_summary(self)


def analyse(scenario: Scenario, *, faulting: str | None = None) -> Analysis:
    """Compute the envelope of ``scenario`` and all its answers."""
    envelope = compute_envelope(scenario, faulting=faulting)
    total, by_layer = integrated_strength(envelope)
    return Analysis(
        envelope,
        tuple(find_transitions(envelope)),
        tuple(goetze_depths(envelope)),
        tuple(regime_bands(envelope)),
        total,
        by_layer,
        elastic_thickness(envelope),
    )


def _km(metres: float) -> str:
    return f"{metres / 1e3:.1f} km"


def plain_summary(analysis: Analysis) -> str:
    """'Faults expected down to about X km; below about Y km deformation is by flow...'."""
    env = analysis.envelope
    lines = []
    transitions = analysis.transitions
    first_down = next((t for t in transitions if t.kind == BRITTLE_TO_DUCTILE), None)
    if first_down is None:
        lines.append(
            f"Faults are expected through the whole column (to {_km(env.depth[-1])}): "
            "friction is weaker than creep everywhere."
        )
    else:
        temp = first_down.temperature - 273.15
        lines.append(
            f"Faults expected down to about {_km(first_down.depth)} "
            f"(about {temp:.0f} degC, in the {first_down.layer_above})."
        )
        base = next((z for z in analysis.goetze if z >= first_down.depth - 1.0), None)
        if base is not None and base - first_down.depth > 100.0:
            lines.append(
                f"Between {_km(first_down.depth)} and {_km(base)} rock is semi-brittle "
                "(creep is weaker than friction, but the flow stress still exceeds the "
                "effective confining pressure: distributed cracking and flow)."
            )
            flow_top = base
        else:
            flow_top = first_down.depth
        lines.append(
            f"Below about {_km(flow_top)} deformation is by flow (folds, ductile shear zones)."
        )
        for t in transitions:
            if t.kind == DUCTILE_TO_BRITTLE:
                below = next((u for u in transitions if u.depth > t.depth), None)
                end = (
                    _km(below.depth) if below else f"the base of the column ({_km(env.depth[-1])})"
                )
                where = (
                    f"at the top of the {t.layer_below}"
                    if t.at_boundary
                    else (f"in the {t.layer_below}")
                )
                lines.append(
                    f"Faulting is possible again from {_km(t.depth)} ({where}) down to "
                    f"{end}: a strong, brittle layer beneath weaker ductile rock."
                )
    lines.append(
        f"Integrated strength {analysis.integrated / 1e12:.3g} TN/m; effective elastic "
        f"thickness about {_km(analysis.elastic.te)} "
        f"({'coupled' if analysis.elastic.coupled else 'decoupled'} layers)."
    )
    lines.append(CAUTION)
    return "\n".join(lines)
