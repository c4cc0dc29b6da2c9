"""Figure of a strength envelope: strength, mechanisms and geotherm against depth.

Only :class:`matplotlib.figure.Figure` and its artists are used (no ``pyplot``), so the
figure can be built inside a web app or a thread without a global GUI state. The
physics modules never import this one.

Layout (left to right, one shared depth axis pointing down):

* the strength panel: frictional (brittle) and creep (ductile) strength, the envelope
  (their lesser) filled, semi-brittle bands hatched, transitions drawn as dashed lines
  and labelled with depth, temperature and kind, layer boundaries as thin lines;
* a thin strip coloured by the governing mechanism;
* the geotherm, with the layer names written under each layer's top.

Stresses are differential stresses sigma1 - sigma3 [MPa]. With a ``companion`` analysis
(the opposite faulting regime) both envelopes are drawn, compression positive and
extension negative.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from rheology.constants import ZERO_CELSIUS

#: Colours of our own choosing.
BRITTLE_COLOUR = "#b3412c"  # brick red: frictional strength
DUCTILE_COLOUR = "#20639b"  # deep blue: creep strength
POSITIVE_FILL = "#e8c872"  # sand: envelope drawn on the positive (compression) side
NEGATIVE_FILL = "#9fc5b8"  # sage: envelope drawn on the negative (extension) side
ENVELOPE_EDGE = "#3d3522"
SEMI_BRITTLE_COLOUR = "#8c6bb1"  # violet hatch: semi-brittle band
TRANSITION_COLOUR = "#222222"
BOUNDARY_COLOUR = "#777777"
GEOTHERM_COLOUR = "#0b6e4f"  # dark green: temperature

#: Colour of each mechanism in the strip (keys are rheology.MECHANISMS).
MECHANISM_COLOURS = {
    "frictional sliding": "#d9822b",
    "semi-brittle": "#8c6bb1",
    "dislocation creep": "#3a7ca5",
    "diffusion creep": "#5aa469",
    "low-temperature plasticity": "#7a3b2e",
}

#: The stress axis ends at this multiple of the largest envelope strength, so creep or
#: friction strengths far above the envelope (creep of cold rock near the surface, friction
#: at depth) do not squash the figure; those curves run off the edge.
STRESS_CAP_FACTOR = 1.5

#: The caution in one short line at the foot of the figure (the full text is
#: rheology.CAUTION and the README's Cautions section).
FOOTER = "Screening estimate from laboratory flow laws - not for design; see README Cautions"
#: Height of the panels against the footer line (about 7 pt of the 547 pt figure).
FOOTER_RATIO = 60.0

_MPA = 1e6
_KM = 1e3
_OPPOSITE_SIDE = {"normal": -1.0}


def _side(faulting: str) -> float:
    """+1 for compression or strike-slip (drawn positive), -1 for extension (normal)."""
    return _OPPOSITE_SIDE.get(faulting, 1.0)


def _fill(sign: float) -> str:
    return POSITIVE_FILL if sign > 0 else NEGATIVE_FILL


def stress_cap(analyses) -> float:
    """Right end of the stress axis [MPa]: a multiple of the largest envelope strength.

    Parameters
    ----------
    analyses : sequence of rheology.Analysis

    Returns
    -------
    float
        :data:`STRESS_CAP_FACTOR` x the largest finite envelope strength [MPa]
        (at least 1 MPa so an all-weak column still has an axis).
    """
    peaks = []
    for analysis in analyses:
        strength = np.asarray(analysis.envelope.strength, float)
        finite = strength[np.isfinite(strength)]
        if finite.size:
            peaks.append(float(finite.max()))
    peak = max(peaks, default=0.0) / _MPA
    return max(STRESS_CAP_FACTOR * peak, 1.0)


def _spread_labels(depths, minimum_gap, top=0.0):
    """Label positions (label bottoms) at least ``minimum_gap`` apart, near ``depths``.

    Labels sit just above their line. Crowded labels are pushed upward (deepest one
    first); if that would push the shallowest above ``top + minimum_gap`` they are laid
    out downward from there instead.
    """
    placed = list(depths)
    for i in range(len(placed) - 2, -1, -1):
        placed[i] = min(placed[i], placed[i + 1] - minimum_gap)
    if placed and placed[0] < top + minimum_gap:
        placed[0] = max(depths[0], top + minimum_gap)
        for i in range(1, len(placed)):
            placed[i] = max(depths[i], placed[i - 1] + minimum_gap)
    return placed


def _draw_strength(ax, analysis, sign, fill, cap, label_side, gap, show_labels):
    env = analysis.envelope
    depth = env.depth / _KM
    brittle = np.where(np.isfinite(env.brittle), env.brittle / _MPA, np.inf)
    ductile = np.where(np.isfinite(env.ductile), env.ductile / _MPA, np.inf)
    strength = env.strength / _MPA
    # Curves beyond the axis end are clipped at 1.05 x the cap (off the visible edge) so
    # that huge or infinite values do not disturb the drawing.
    limit = 1.05 * cap
    ax.fill_betweenx(
        depth,
        0.0,
        sign * np.minimum(strength, limit),
        color=fill,
        alpha=0.85,
        linewidth=0,
        zorder=1,
    )
    ax.plot(sign * np.minimum(strength, limit), depth, color=ENVELOPE_EDGE, lw=1.0, zorder=3)
    ax.plot(
        sign * np.minimum(brittle, limit), depth, color=BRITTLE_COLOUR, lw=1.6, ls="-", zorder=4
    )
    ax.plot(
        sign * np.minimum(ductile, limit), depth, color=DUCTILE_COLOUR, lw=1.6, ls="--", zorder=4
    )
    from rheology.outputs import semi_brittle_intervals

    for band in semi_brittle_intervals(analysis):
        top, bottom = band["top"] / _KM, band["bottom"] / _KM
        ax.fill_betweenx(
            [top, bottom],
            0.0,
            sign * cap,
            facecolor="none",
            edgecolor=SEMI_BRITTLE_COLOUR,
            hatch="////",
            linewidth=0.0,
            alpha=0.6,
            zorder=2,
        )
    transitions = sorted(analysis.transitions, key=lambda t: t.depth)
    x_text = 0.985 if label_side > 0 else 0.015
    align = "right" if label_side > 0 else "left"
    label_y = _spread_labels([t.depth / _KM for t in transitions], gap)
    for transition, y in zip(transitions, label_y):
        z = transition.depth / _KM
        # each transition line spans its own side of the stress axis only
        ax.plot(
            [0.0, sign * cap], [z, z], color=TRANSITION_COLOUR, lw=0.9, ls=(0, (4, 2)), zorder=5
        )
        ax.plot(
            [sign * transition.stress / _MPA],
            [z],
            marker="o",
            ms=4.5,
            mfc="white",
            mec=TRANSITION_COLOUR,
            zorder=6,
        )
        if not show_labels:
            continue
        temperature = transition.temperature - ZERO_CELSIUS
        text = f"{z:.1f} km, {temperature:.0f} °C\n{transition.kind}"
        moved = abs(y - z) > 0.05 * gap
        ax.annotate(
            text,
            xy=(x_text, z),
            xycoords=("axes fraction", "data"),
            xytext=(x_text, y),
            textcoords=("axes fraction", "data"),
            ha=align,
            va="bottom",
            fontsize=7.5,
            color=TRANSITION_COLOUR,
            bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.85),
            arrowprops=dict(arrowstyle="-", color=TRANSITION_COLOUR, lw=0.6, shrinkA=0, shrinkB=0)
            if moved
            else None,
            zorder=7,
        )


def _layer_boundaries(scenario):
    tops = scenario.layer_tops
    return [
        (float(top) / _KM, layer.name)
        for top, layer in zip(tops, scenario.layers)
        if top < scenario.max_depth
    ]


def _draw_strip(ax, analysis, regime_note):
    for band in analysis.bands:
        top, bottom = band.top / _KM, band.bottom / _KM
        ax.fill_between(
            [0.0, 1.0], top, bottom, color=MECHANISM_COLOURS[band.mechanism], linewidth=0
        )
    ax.set_xlim(0.0, 1.0)
    ax.set_xticks([])
    ax.set_xlabel("mecha-\nnism" + regime_note, fontsize=8)


def _draw_geotherm(ax, analysis, layers, gap):
    env = analysis.envelope
    depth = env.depth / _KM
    celsius = env.temperature - ZERO_CELSIUS
    ax.plot(celsius, depth, color=GEOTHERM_COLOUR, lw=1.8)
    for transition in analysis.transitions:
        ax.plot(
            [transition.temperature - ZERO_CELSIUS],
            [transition.depth / _KM],
            marker="o",
            ms=4,
            mfc="white",
            mec=TRANSITION_COLOUR,
        )
    ax.set_xlim(min(0.0, float(np.min(celsius))), 1.08 * float(np.max(celsius)))
    ax.set_xlabel("temperature [°C]")
    ax.yaxis.set_label_position("right")
    ax.yaxis.tick_right()
    ax.set_ylabel("depth [km]")
    ax.grid(True, color="#dddddd", lw=0.6)
    for top, name in layers:
        ax.annotate(
            name,
            xy=(0.97, top + 0.25 * gap),
            xycoords=("axes fraction", "data"),
            ha="right",
            va="top",
            fontsize=8,
            style="italic",
            color="#333333",
            bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.8),
        )


def _regime_words(faulting: str) -> str:
    return {
        "thrust": "thrust faulting (compression)",
        "normal": "normal faulting (extension)",
        "strike-slip": "strike-slip faulting",
    }.get(faulting, faulting)


def strength_figure(analysis, *, companion=None) -> Figure:
    """A figure of the strength envelope, mechanisms and geotherm against depth.

    Parameters
    ----------
    analysis : rheology.Analysis
        The envelope to draw (from :func:`rheology.analyse`).
    companion : rheology.Analysis, optional
        The same column in the opposite faulting regime (e.g. normal for a thrust
        analysis). Both envelopes are drawn, compression positive and extension
        negative.

    Returns
    -------
    matplotlib.figure.Figure
        Three axes sharing the depth axis (depth increasing downward): strength [MPa],
        mechanism strip, temperature [°C]. ``figure.axes[0]`` is the strength panel.

    Notes
    -----
    The stress axis ends at :data:`STRESS_CAP_FACTOR` times the largest envelope
    strength; the cap is stated in a note on the figure. Curves that exceed it (creep of
    cold rock near the surface, friction at depth) run off the edge.
    """
    scenario = analysis.scenario
    analyses = [analysis] + ([companion] if companion is not None else [])
    cap = stress_cap(analyses)
    max_depth = float(scenario.max_depth) / _KM
    # label spacing: two 7.5 pt text lines plus padding (about 22 pt) on an axis about
    # 420 pt tall at the default figure size
    gap = 0.055 * max_depth

    figure = Figure(figsize=(11.0, 7.6), layout="constrained")
    # the panels and their legend above, the caution line alone below
    panels, footer = figure.subfigures(2, 1, height_ratios=[FOOTER_RATIO, 1.0])
    footer.text(0.5, 0.5, FOOTER, ha="center", va="center", fontsize=7, color="#777777")
    grid = panels.add_gridspec(1, 3, width_ratios=[6.0, 0.35, 2.6])
    ax_strength = panels.add_subplot(grid[0, 0])
    ax_strip = panels.add_subplot(grid[0, 1], sharey=ax_strength)
    ax_temperature = panels.add_subplot(grid[0, 2], sharey=ax_strength)

    main_sign = _side(scenario.faulting)
    if companion is not None:
        companion_sign = _side(companion.scenario.faulting)
        if companion_sign == main_sign:
            companion_sign = -main_sign
        _draw_strength(
            ax_strength,
            companion,
            companion_sign,
            _fill(companion_sign),
            cap,
            label_side=companion_sign,
            gap=gap,
            show_labels=True,
        )
        ax_strength.set_xlim(-cap, cap)
        ax_strength.axvline(0.0, color="#444444", lw=0.8)
    else:
        companion_sign = None
        ax_strength.set_xlim(0.0, cap) if main_sign > 0 else ax_strength.set_xlim(-cap, 0.0)
    _draw_strength(
        ax_strength,
        analysis,
        main_sign,
        _fill(main_sign),
        cap,
        label_side=main_sign,
        gap=gap,
        show_labels=True,
    )

    layers = _layer_boundaries(scenario)
    for ax in (ax_strength, ax_strip, ax_temperature):
        for top, _name in layers[1:]:
            ax.axhline(top, color=BOUNDARY_COLOUR, lw=1.1, ls="-", zorder=6)
    ax_strength.set_ylim(max_depth, 0.0)  # depth increases downward
    ax_strength.set_ylabel("depth [km]")
    if companion is None:
        ax_strength.set_xlabel("differential stress σ1 − σ3 [MPa]")
    else:
        ax_strength.set_xlabel(
            "differential stress σ1 − σ3 [MPa]  (compression positive, extension negative)"
        )
    ax_strength.grid(True, color="#e4e4e4", lw=0.6, zorder=0)
    ax_strength.set_axisbelow(True)
    ax_strength.text(
        0.5 if companion is not None else 0.02,
        0.005,
        f"stress axis ends at {cap:.0f} MPa ({STRESS_CAP_FACTOR:g} × the peak "
        "envelope strength); curves beyond run off the edge",
        transform=ax_strength.transAxes,
        ha="center" if companion is not None else "left",
        va="bottom",
        fontsize=7,
        color="#555555",
        bbox=dict(boxstyle="round,pad=0.2", fc="white", ec="none", alpha=0.85),
        zorder=8,
    )
    if companion is not None:
        for sign, item in ((main_sign, analysis), (companion_sign, companion)):
            ax_strength.text(
                0.5 + 0.25 * sign,
                1.01,
                _regime_words(item.scenario.faulting),
                transform=ax_strength.transAxes,
                ha="center",
                va="bottom",
                fontsize=9,
            )

    _draw_strip(ax_strip, analysis, f"\n({scenario.faulting})" if companion is not None else "")
    ax_strip.tick_params(axis="y", labelleft=False, left=False)
    _draw_geotherm(ax_temperature, analysis, layers, gap)

    title = (
        f"{scenario.title}\n{_regime_words(scenario.faulting)}, strain rate "
        f"{scenario.strain_rate:.3g} 1/s"
    )
    if companion is not None:
        title += f"; also {_regime_words(companion.scenario.faulting)}"
    figure.suptitle(title, fontsize=12)

    handles = [
        Line2D([], [], color=BRITTLE_COLOUR, lw=1.6, label="frictional strength (brittle)"),
        Line2D([], [], color=DUCTILE_COLOUR, lw=1.6, ls="--", label="creep strength (ductile)"),
        Patch(
            facecolor=_fill(main_sign),
            edgecolor=ENVELOPE_EDGE,
            label=f"envelope, {scenario.faulting}",
        ),
    ]
    if companion is not None:
        handles.append(
            Patch(
                facecolor=_fill(companion_sign),
                edgecolor=ENVELOPE_EDGE,
                label=f"envelope, {companion.scenario.faulting}",
            )
        )
    handles += [
        Patch(
            facecolor="none",
            edgecolor=SEMI_BRITTLE_COLOUR,
            hatch="////",
            label="semi-brittle band (hatched)",
        ),
        Line2D(
            [],
            [],
            color=TRANSITION_COLOUR,
            lw=0.9,
            ls=(0, (4, 2)),
            marker="o",
            mfc="white",
            label="transition",
        ),
        Line2D([], [], color=BOUNDARY_COLOUR, lw=1.1, label="layer boundary"),
        Line2D([], [], color=GEOTHERM_COLOUR, lw=1.8, label="geotherm"),
    ]
    present = {band.mechanism for band in analysis.bands}
    handles += [
        Patch(facecolor=colour, label=name)
        for name, colour in MECHANISM_COLOURS.items()
        if name in present
    ]
    # two rows of legend entries below the panels
    panels.legend(
        handles=handles,
        loc="outside lower center",
        ncol=(len(handles) + 1) // 2,
        fontsize=8,
        frameon=False,
    )
    return figure


def save_figure(figure: Figure, path, dpi: int = 150) -> None:
    """Write ``figure`` to ``path`` (format from the suffix, e.g. ``.png``, ``.pdf``, ``.svg``).

    Parameters
    ----------
    figure : matplotlib.figure.Figure
    path : str or os.PathLike
        Destination file (overwritten).
    dpi : int, optional
        Resolution of raster formats [dots per inch].
    """
    figure.savefig(path, dpi=dpi)
