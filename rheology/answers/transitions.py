"""Where the deformation regime changes with depth: transitions and regime bands.

A *transition* is a depth where the weaker of frictional and creep strength switches
(Brace & Kohlstedt 1980 sense): ``brittle-to-ductile`` going down from faulting to flow,
``ductile-to-brittle`` the reverse (e.g. a strong mantle lid below a weak lower crust).
Crossings inside a layer are located by a bracketed root search on
ln(brittle) - ln(ductile), so their depth is far finer than the grid step; a switch at a
layer boundary is placed on the boundary.

The Goetze criterion (Kohlstedt, Evans & Mackwell 1995) -- creep flow stress equal to the
effective confining pressure -- marks the base of the semi-brittle band below each
brittle-to-ductile crossing (the brittle-plastic transition).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from rheology.envelope import MECHANISMS, Envelope, evaluate, law_table

BRITTLE_TO_DUCTILE = "brittle-to-ductile"
DUCTILE_TO_BRITTLE = "ductile-to-brittle"
#: Depth tolerance of the root search [m].
DEPTH_TOLERANCE = 1e-3


@dataclass(frozen=True)
class Transition:
    """A change of deformation regime with depth (SI: m, K, Pa)."""

    depth: float
    temperature: float
    stress: float
    kind: str
    layer_above: str
    layer_below: str
    at_boundary: bool

    def as_dict(self) -> dict:
        """Plain dict in SI units."""
        return asdict(self)


@dataclass(frozen=True)
class Band:
    """A depth range with one mechanism (SI: m), for regime strips and tables."""

    top: float
    bottom: float
    mechanism: str
    layer: str


def _refine(lo, hi, layer, field_fn):
    """Illinois (modified regula falsi) search for field_fn(depth) = 0 on [lo, hi], vectorised."""
    f_lo, f_hi = field_fn(lo, layer), field_fn(hi, layer)
    side = np.zeros(lo.shape, int)
    for _ in range(60):
        width = hi - lo
        if np.all(width < DEPTH_TOLERANCE):
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            mid = hi - f_hi * (hi - lo) / (f_hi - f_lo)
        bad = ~np.isfinite(mid) | (mid <= lo) | (mid >= hi)
        mid = np.where(bad, 0.5 * (lo + hi), mid)
        f_mid = field_fn(mid, layer)
        same_as_lo = np.sign(f_mid) == np.sign(f_lo)
        lo, f_lo, hi, f_hi = (
            np.where(same_as_lo, mid, lo),
            np.where(same_as_lo, f_mid, f_lo),
            np.where(same_as_lo, hi, mid),
            np.where(same_as_lo, f_hi, f_mid),
        )
        # Illinois step: halve the stale end's value when the same end is kept twice
        f_hi = np.where(same_as_lo & (side == 1), 0.5 * f_hi, f_hi)
        f_lo = np.where(~same_as_lo & (side == -1), 0.5 * f_lo, f_lo)
        side = np.where(same_as_lo, 1, -1)
        done = f_mid == 0
        lo, hi = np.where(done, mid, lo), np.where(done, mid, hi)
    return 0.5 * (lo + hi)


def _log_ratio(fields, numerator, denominator):
    with np.errstate(divide="ignore", invalid="ignore"):
        value = np.log(fields[numerator]) - np.log(fields[denominator])
    # brittle strength 0 at the surface (no cohesion): firmly brittle
    return np.nan_to_num(value, nan=0.0, posinf=700.0, neginf=-700.0)


def find_transitions(envelope: Envelope) -> list[Transition]:
    """All brittle/ductile switches of ``envelope``, shallow first."""
    scenario = envelope.scenario
    terms = law_table(scenario)
    names = [layer.name for layer in scenario.layers]
    brittle_wins = envelope.brittle <= envelope.ductile
    j = np.flatnonzero(brittle_wins[1:] != brittle_wins[:-1])
    same_layer = envelope.layer[j] == envelope.layer[j + 1]
    depth = np.where(same_layer, np.nan, envelope.depth[j])
    inner = j[same_layer]
    if inner.size:

        def field_fn(z, layer):
            return _log_ratio(evaluate(scenario, z, layer, terms=terms), "brittle", "ductile")

        depth[same_layer] = _refine(
            envelope.depth[inner], envelope.depth[inner + 1], envelope.layer[inner], field_fn
        )
    transitions = []
    for k, index in enumerate(j):
        upper, lower = envelope.layer[index], envelope.layer[index + 1]
        kind = BRITTLE_TO_DUCTILE if brittle_wins[index] else DUCTILE_TO_BRITTLE
        if same_layer[k]:
            at = evaluate(scenario, depth[k : k + 1], np.array([upper]), terms=terms)
            temperature, stress = at["temperature"][0], at["strength"][0]
        else:
            temperature = envelope.temperature[index]
            stress = (
                envelope.strength[index + 1]
                if kind == BRITTLE_TO_DUCTILE
                else (envelope.strength[index])
            )
        transitions.append(
            Transition(
                float(depth[k]),
                float(temperature),
                float(stress),
                kind,
                names[upper],
                names[lower],
                not bool(same_layer[k]),
            )
        )
    return transitions


def goetze_depths(envelope: Envelope) -> list[float]:
    """Depths [m] where creep strength falls below the effective confining pressure.

    Only switches within ductile ground count (the base of each semi-brittle band,
    Kohlstedt et al. 1995); crossings are root-searched like transitions.
    """
    scenario = envelope.scenario
    terms = law_table(scenario)
    plastic = envelope.ductile <= envelope.effective_pressure
    ductile = envelope.brittle > envelope.ductile
    j = np.flatnonzero(~plastic[:-1] & plastic[1:] & ductile[:-1] & ductile[1:])
    if j.size == 0:
        return []
    same_layer = envelope.layer[j] == envelope.layer[j + 1]
    depth = envelope.depth[j + 1].astype(float)

    def field_fn(z, layer):
        fields = evaluate(scenario, z, layer, terms=terms)
        fields["effective"] = fields["lithostatic"] - fields["pore_pressure"]
        return _log_ratio(fields, "effective", "ductile")

    if np.any(same_layer):
        k = j[same_layer]
        depth[same_layer] = _refine(
            envelope.depth[k], envelope.depth[k + 1], envelope.layer[k], field_fn
        )
    return [float(z) for z in depth]


def regime_bands(envelope: Envelope) -> list[Band]:
    """Contiguous depth ranges with one mechanism, shallow first (grid resolution)."""
    names = [layer.name for layer in envelope.scenario.layers]
    key = envelope.mechanism.astype(int) * 10_000 + envelope.layer
    change = np.flatnonzero(key[1:] != key[:-1]) + 1
    starts = np.concatenate([[0], change])
    ends = np.concatenate([change, [key.size]])
    bands = []
    d = envelope.depth
    for start, end in zip(starts, ends):
        top = 0.0 if start == 0 else 0.5 * (d[start - 1] + d[start])
        bottom = d[-1] if end == key.size else 0.5 * (d[end - 1] + d[end])
        if bottom > top:
            bands.append(
                Band(
                    float(top),
                    float(bottom),
                    MECHANISMS[envelope.mechanism[start]],
                    names[envelope.layer[start]],
                )
            )
    return bands


def faulting_base(envelope: Envelope) -> float | None:
    """Depth [m] of the first brittle-to-ductile transition (None if brittle throughout)."""
    for transition in find_transitions(envelope):
        if transition.kind == BRITTLE_TO_DUCTILE:
            return transition.depth
    return None


__all__ = [
    "Band",
    "Transition",
    "find_transitions",
    "goetze_depths",
    "regime_bands",
    "faulting_base",
]
