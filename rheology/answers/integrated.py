"""Integrated strength of the column and effective elastic thickness from the envelope."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rheology.envelope import Envelope

#: Default thresholds for a mechanically competent layer (Burov & Diament 1995; from
#: memory): strength above 10 MPa and above 1 % of the lithostatic pressure.
COMPETENT_STRESS = 10e6
COMPETENT_FRACTION = 0.01


def integrated_strength(envelope: Envelope) -> tuple[float, dict[str, float]]:
    """Depth-integrated strength [N/m], total and per layer (trapezoid rule on the grid).

    .. math:: F = \\int_0^{z_{max}} (\\sigma_1 - \\sigma_3)\\, dz

    Because layer boundaries appear twice on the grid, each layer is integrated over its
    own nodes and the per-layer values add up to the total. Divide by 1e12 for TN/m.

    References
    ----------
    Ranalli, G. & Murphy, D. C. (1987). Rheological stratification of the lithosphere.
    Tectonophysics 132, 281-295 (from memory).
    """
    per_layer = {}
    for index, layer in enumerate(envelope.scenario.layers):
        at = envelope.layer == index
        if np.count_nonzero(at) > 1:
            per_layer[layer.name] = float(np.trapezoid(envelope.strength[at], envelope.depth[at]))
        elif np.any(at):
            per_layer[layer.name] = 0.0
    return float(sum(per_layer.values())), per_layer


@dataclass(frozen=True)
class ElasticThickness:
    """Effective elastic thickness estimate [m] and the competent layers it came from.

    ``competent`` lists (top, bottom) [m] of each mechanically strong layer.
    """

    te: float
    coupled: bool
    competent: tuple[tuple[float, float], ...]

    @property
    def thicknesses(self) -> tuple[float, ...]:
        """Mechanical thickness of each competent layer [m]."""
        return tuple(bottom - top for top, bottom in self.competent)


def elastic_thickness(
    envelope: Envelope,
    stress_threshold: float = COMPETENT_STRESS,
    fraction_threshold: float = COMPETENT_FRACTION,
) -> ElasticThickness:
    """Effective elastic thickness from the envelope (Burov & Diament 1995).

    A depth is competent where the envelope strength exceeds both ``stress_threshold``
    [Pa] and ``fraction_threshold`` x lithostatic pressure. Each contiguous competent
    depth range is a mechanical layer of thickness h_i. One layer, or layers with no weak
    gap between them, are coupled: Te = sum h_i. Layers separated by a weak (ductile)
    channel are decoupled: Te = (sum h_i^3)^(1/3).

    References
    ----------
    Burov, E. B. & Diament, M. (1995). The effective elastic thickness (Te) of
    continental lithosphere: what does it really mean? J. Geophys. Res. 100(B3),
    3905-3927 (the thresholds and the decoupled-layer rule are from memory).
    """
    strong = envelope.strength > np.maximum(
        stress_threshold, fraction_threshold * envelope.lithostatic
    )
    depth = envelope.depth
    edges = np.flatnonzero(np.diff(strong.astype(np.int8)))
    starts = list(edges[~strong[edges]] + 1)
    ends = list(edges[strong[edges]] + 1)
    if strong[0]:
        starts.insert(0, 0)
    if strong[-1]:
        ends.append(strong.size)
    segments = []
    for start, end in zip(starts, ends):
        top = 0.0 if start == 0 else 0.5 * (depth[start - 1] + depth[start])
        bottom = depth[-1] if end == strong.size else 0.5 * (depth[end - 1] + depth[end])
        if bottom > top:
            segments.append((float(top), float(bottom)))
    h = np.array([b - t for t, b in segments])
    if h.size == 0:
        return ElasticThickness(0.0, True, ())
    if h.size == 1:
        return ElasticThickness(float(h[0]), True, tuple(segments))
    return ElasticThickness(float(np.cbrt(np.sum(h**3))), False, tuple(segments))
