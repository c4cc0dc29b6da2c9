"""Figure of a Monte Carlo run: strength bands and the chance of frictional sliding.

Only :class:`matplotlib.figure.Figure` and its artists are used (no ``pyplot``), so the
figure can be built in a web app or a thread without global GUI state.

Layout (one shared depth axis, depth increasing downwards):

* left: the envelope strength (differential stress sigma1 - sigma3 [MPa]) of the
  realisations as a P10-P90 band with its median, and the envelope of the central inputs
  as a dashed line;
* right: the share of realisations in which frictional sliding is the weaker mechanism
  at each depth (the chance that faults reach that depth) [%].

Each transition found in at least :data:`MIN_FRACTION` of the realisations is marked in
both panels by its P10-P90 depth range, labelled with its kind, layer and how often it
occurs.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from rheology.textout import share_text

#: Colours of our own choosing.
BAND_COLOUR = "#c9a227"  # ochre: P10-P90 strength band
MEDIAN_COLOUR = "#5b3a00"  # dark umber: median strength
CENTRAL_COLOUR = "#1d3557"  # navy: envelope of the central inputs
CHANCE_COLOUR = "#a23b72"  # plum: chance of frictional sliding
DOWN_COLOUR = "#e76f51"  # coral: brittle-to-ductile range
UP_COLOUR = "#2a9d8f"  # teal: ductile-to-brittle range
BOUNDARY_COLOUR = "#8d8d8d"

#: Transitions found in fewer realisations than this share are not marked.
MIN_FRACTION = 0.05
#: The stress axis ends at this multiple of the largest P90 strength.
STRESS_MARGIN = 1.1

_MPA, _KM = 1e6, 1e3


def uncertainty_figure(result, *, width: float = 10.0, height: float = 7.0) -> Figure:
    """Strength percentile bands and the chance of frictional sliding against depth.

    Parameters
    ----------
    result : rheology.uncertainty.MonteCarloResult
        A Monte Carlo run.
    width, height : float, optional
        Figure size [inch].

    Returns
    -------
    matplotlib.figure.Figure
        Save it with ``figure.savefig(path)``.
    """
    figure = Figure(figsize=(width, height), layout="constrained")
    strength_ax, chance_ax = figure.subplots(
        1, 2, sharey=True, gridspec_kw={"width_ratios": (2.6, 1.0)}
    )
    depth = result.depth / _KM
    low, mid, high = (result.bands[p] / _MPA for p in (10.0, 50.0, 90.0))
    strength_ax.fill_betweenx(
        depth,
        low,
        high,
        color=BAND_COLOUR,
        alpha=0.45,
        linewidth=0,
        label=f"P10-P90 of {result.band_count} realisations",
    )
    strength_ax.plot(mid, depth, color=MEDIAN_COLOUR, linewidth=1.6, label="median (P50)")
    strength_ax.plot(
        result.nominal_strength / _MPA,
        depth,
        color=CENTRAL_COLOUR,
        linewidth=1.1,
        linestyle="--",
        label="central inputs",
    )
    finite = high[np.isfinite(high)]
    cap = STRESS_MARGIN * float(finite.max()) if finite.size and finite.max() > 0 else 1.0
    strength_ax.set_xlim(0.0, cap)
    strength_ax.set_ylim(depth[-1], 0.0)  # depth increases downwards
    strength_ax.set_xlabel("differential stress sigma1 - sigma3 [MPa]")
    strength_ax.set_ylabel("depth [km]")
    strength_ax.set_title("envelope strength")

    chance = 100.0 * result.frictional_probability
    chance_ax.fill_betweenx(depth, 0.0, chance, color=CHANCE_COLOUR, alpha=0.25, linewidth=0)
    chance_ax.plot(chance, depth, color=CHANCE_COLOUR, linewidth=1.4)
    chance_ax.set_xlim(0.0, 100.0)
    chance_ax.set_xlabel("chance of frictional sliding [%]")
    chance_ax.set_title("faults reach this depth")

    _mark_boundaries(result, (strength_ax, chance_ax), cap)
    _mark_transitions(result, (strength_ax, chance_ax), cap)
    handles, labels = strength_ax.get_legend_handles_labels()
    handles += [Patch(color=DOWN_COLOUR, alpha=0.3), Patch(color=UP_COLOUR, alpha=0.3)]
    labels += ["brittle-to-ductile, P10-P90 depth", "ductile-to-brittle, P10-P90 depth"]
    strength_ax.legend(handles, labels, loc="lower right", fontsize="small", framealpha=0.9)
    for ax in (strength_ax, chance_ax):
        ax.grid(True, color="#dddddd", linewidth=0.6)
        ax.set_axisbelow(True)
    figure.suptitle(
        f"{result.scenario.title}: {result.samples} realisations "
        f"(seed {result.seed}); screening estimate"
    )
    return figure


def _mark_boundaries(result, axes, cap) -> None:
    scenario = result.scenario
    tops = scenario.layer_tops
    for layer, top in zip(scenario.layers, tops):
        if top >= scenario.max_depth:
            continue
        for ax in axes:
            if top > 0:
                ax.axhline(top / _KM, color=BOUNDARY_COLOUR, linewidth=0.7, linestyle=":")
        axes[0].text(
            0.01 * cap,
            top / _KM + 0.005 * scenario.max_depth / _KM,
            f" {layer.name}",
            va="top",
            ha="left",
            fontsize="x-small",
            color=BOUNDARY_COLOUR,
        )


def _mark_transitions(result, axes, cap) -> None:
    for t in result.transitions:
        if t.fraction < MIN_FRACTION or not np.isfinite(t.depth.p10):
            continue
        colour = DOWN_COLOUR if t.kind == "brittle-to-ductile" else UP_COLOUR
        top, bottom = t.depth.p10 / _KM, t.depth.p90 / _KM
        for ax in axes:
            if bottom - top > 0:
                ax.axhspan(top, bottom, color=colour, alpha=0.18, linewidth=0)
            ax.axhline(t.depth.p50 / _KM, color=colour, linewidth=0.9)
        axes[0].text(
            0.98 * cap,
            t.depth.p50 / _KM,
            f"{t.kind} in {t.layer}: {top:.1f}-{bottom:.1f} km ({share_text(t.fraction)} of runs)",
            ha="right",
            va="bottom",
            fontsize="x-small",
            color=colour,
        )
