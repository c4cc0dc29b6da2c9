"""The envelope as an interactive chart drawn in the browser (Vega-Lite).

The page shows this chart instead of a matplotlib picture: the server only builds a few
small tables and a Vega-Lite specification (:func:`envelope_spec`, a plain dict, a few
milliseconds), and the browser draws them. :func:`envelope_chart` gives the same chart
as an altair object, e.g. to save it as a stand-alone HTML page. No physics here:
every number is read from a :class:`rheology.Analysis` and converted for display
(depths / 1e3 -> km, stresses / 1e6 -> MPa, temperatures - 273.15 -> degC). Colours and
the stress-axis cap are those of :mod:`rheology.plotting`, so the page and the
downloaded PNG agree.

Layout (left to right, one depth axis pointing down, shared by the three panels):

* strength: frictional (brittle) and creep (ductile) strength, the envelope (their
  lesser) filled, semi-brittle bands shaded, transitions as dashed rules labelled with
  depth, temperature and kind, layer boundaries as grey rules;
* a narrow strip coloured by the governing mechanism;
* the geotherm [degC], with the layer names under each layer's top.

Pointing at any depth of the strength or geotherm panel shows depth, temperature,
strengths, mechanism and layer there.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from rheology.constants import ZERO_CELSIUS
from rheology.errors import RheologyError
from rheology.outputs import semi_brittle_intervals
from rheology.plotting import (
    BOUNDARY_COLOUR,
    BRITTLE_COLOUR,
    DUCTILE_COLOUR,
    ENVELOPE_EDGE,
    GEOTHERM_COLOUR,
    MECHANISM_COLOURS,
    NEGATIVE_FILL,
    POSITIVE_FILL,
    SEMI_BRITTLE_COLOUR,
    STRESS_CAP_FACTOR,
    TRANSITION_COLOUR,
    stress_cap,
)

_KM = 1e3
_MPA = 1e6

#: Most rows of the depth profile sent to the browser (per regime). Layer-boundary
#: pairs and transition points are always kept on top of an even thinning.
MAX_POINTS = 600
#: Curves are cut at this multiple of the axis end, just beyond the visible edge, so a
#: huge or infinite strength does not disturb the drawing (as rheology.plotting does).
CLIP_FACTOR = 1.05

#: Panel sizes [px]. The depth axis is the same height in every panel.
HEIGHT = 560
STRENGTH_WIDTH = 620
STRIP_WIDTH = 22
GEOTHERM_WIDTH = 250
#: Least vertical distance between two transition labels [px] (one 11 px line of text
#: and its white halo).
LABEL_GAP_PX = 17

#: Names of the two curves in the chart's legend, in drawing order.
FRICTIONAL_CURVE = "frictional strength (brittle)"
CREEP_CURVE = "creep strength (ductile)"

#: Columns of the depth profile table (see :func:`profile_table`).
PROFILE_COLUMNS = (
    "order",
    "regime",
    "depth_km",
    "temperature_c",
    "frictional_mpa",
    "creep_mpa",
    "envelope_mpa",
    "mechanism",
    "layer",
    "frictional_x",
    "creep_x",
    "envelope_x",
)

_REGIME_WORDS = {
    "thrust": "thrust faulting (compression)",
    "normal": "normal faulting (extension)",
    "strike-slip": "strike-slip faulting",
}


# ----------------------------------------------------------------------------- tables


def side(faulting: str) -> float:
    """Side of the stress axis a regime is drawn on: -1 for normal faulting, else +1."""
    return -1.0 if faulting == "normal" else 1.0


def sides(analysis, companion=None) -> tuple[float, float | None]:
    """Signs of the main and companion envelopes (the companion takes the other side)."""
    main = side(analysis.scenario.faulting)
    if companion is None:
        return main, None
    return main, -main


def kept_nodes(envelope, max_points: int = MAX_POINTS, extra: int = 0) -> np.ndarray:
    """Indices of the grid nodes drawn: an even thinning plus every layer-boundary pair.

    Parameters
    ----------
    envelope : rheology.envelope.Envelope
    max_points : int, optional
        Most rows wanted, including the ``extra`` rows the caller adds.
    extra : int, optional
        Rows added afterwards (transition points).

    Returns
    -------
    ndarray of int
        Increasing node indices: the first and last node, every ``stride``-th node and
        both nodes of each layer boundary (a boundary appears twice on the grid).

    Raises
    ------
    rheology.errors.RheologyError
        ``max_points`` is not a whole number >= 2.
    """
    if not (isinstance(max_points, int | np.integer) and max_points >= 2):
        raise RheologyError(
            f"max_points: {max_points!r}; expected a whole number of chart rows >= 2"
        )
    count = envelope.depth.size
    boundary = np.flatnonzero(envelope.layer[1:] != envelope.layer[:-1])
    fixed = 2 + 2 * boundary.size + extra
    stride = max(1, math.ceil(count / max(max_points - fixed, 1)))
    keep = np.zeros(count, dtype=bool)
    keep[::stride] = True
    keep[[0, -1]] = True
    keep[boundary] = True
    keep[boundary + 1] = True
    return np.flatnonzero(keep)


def _finite_or_nan(values) -> np.ndarray:
    values = np.asarray(values, dtype=float)
    return np.where(np.isfinite(values), values, np.nan)


def profile_table(
    analysis, *, sign: float = 1.0, cap: float | None = None, max_points: int = MAX_POINTS
) -> pd.DataFrame:
    """The depth profile of an analysis in display units, thinned for the chart.

    Parameters
    ----------
    analysis : rheology.Analysis
    sign : float, optional
        +1 to draw the strengths on the positive side, -1 on the negative side.
    cap : float, optional
        End of the stress axis [MPa]; default :func:`rheology.plotting.stress_cap`.
    max_points : int, optional
        Most rows (see :func:`kept_nodes`).

    Returns
    -------
    pandas.DataFrame
        Columns :data:`PROFILE_COLUMNS`: ``depth_km`` [km], ``temperature_c`` [degC],
        ``frictional_mpa``, ``creep_mpa``, ``envelope_mpa`` [MPa] as computed (NaN where
        infinite), ``mechanism`` and ``layer`` in words, ``regime``, and the drawn
        positions ``*_x`` [MPa]: ``sign`` x the strength cut at :data:`CLIP_FACTOR` x
        ``cap``. ``order`` is the drawing order (depth, upper layer first at a boundary).
        Each transition inside a layer is added as its own row at its refined depth,
        with its stress as both strengths.
    """
    env = analysis.envelope
    if cap is None:
        cap = stress_cap([analysis])
    inner = [t for t in analysis.transitions if not t.at_boundary]
    nodes = kept_nodes(env, max_points, extra=len(inner))
    names = [layer.name for layer in analysis.scenario.layers]
    mechanisms = env.mechanism_names
    rows = {
        "key": nodes.astype(float),
        "depth_km": env.depth[nodes] / _KM,
        "temperature_c": env.temperature[nodes] - ZERO_CELSIUS,
        "frictional_mpa": _finite_or_nan(env.brittle[nodes]) / _MPA,
        "creep_mpa": _finite_or_nan(env.ductile[nodes]) / _MPA,
        "envelope_mpa": _finite_or_nan(env.strength[nodes]) / _MPA,
        "mechanism": [mechanisms[i] for i in nodes],
        "layer": [names[env.layer[i]] for i in nodes],
    }
    frame = pd.DataFrame(rows)
    if inner:
        # a transition sits between the last node above it and the next one
        above = np.searchsorted(env.depth, [t.depth for t in inner], side="right") - 1
        points = pd.DataFrame(
            {
                "key": above + 0.5,
                "depth_km": [t.depth / _KM for t in inner],
                "temperature_c": [t.temperature - ZERO_CELSIUS for t in inner],
                "frictional_mpa": [t.stress / _MPA for t in inner],
                "creep_mpa": [t.stress / _MPA for t in inner],
                "envelope_mpa": [t.stress / _MPA for t in inner],
                "mechanism": [f"transition ({t.kind})" for t in inner],
                "layer": [t.layer_above for t in inner],
            }
        )
        frame = pd.concat([frame, points], ignore_index=True)
    frame = frame.sort_values("key", kind="stable").reset_index(drop=True)
    frame["order"] = np.arange(len(frame))
    frame["regime"] = analysis.scenario.faulting
    limit = CLIP_FACTOR * cap
    for name in ("frictional", "creep", "envelope"):
        values = frame[f"{name}_mpa"].to_numpy(dtype=float)
        # NaN marks an infinite strength: drawn at the cut, off the visible edge
        frame[f"{name}_x"] = sign * np.minimum(np.nan_to_num(values, nan=limit), limit)
    return frame[list(PROFILE_COLUMNS)]


def place_labels(depths, below, gap: float, bottom: float) -> list[float]:
    """Tops of label boxes ``gap`` tall, each touching its line where there is room.

    Parameters
    ----------
    depths : sequence of float
        Depths of the lines, increasing [km].
    below : sequence of bool
        Whether each label hangs below its line (else it stands above it).
    gap : float
        Height of a label box [km].
    bottom : float
        Deepest point of the axis [km].

    Returns
    -------
    list of float
        Box tops [km]: at least ``gap`` apart, within 0 to ``bottom``; crowded boxes
        are pushed down, and back up from the bottom if they would leave the axis.
    """
    placed = [z if hang else z - gap for z, hang in zip(depths, below)]
    for i in range(len(placed)):
        floor = placed[i - 1] + gap if i else 0.0
        placed[i] = max(placed[i], floor)
    for i in range(len(placed) - 1, -1, -1):
        ceiling = placed[i + 1] - gap if i + 1 < len(placed) else bottom - gap
        placed[i] = max(min(placed[i], ceiling), 0.0)
    return placed


def transition_table(analysis, *, sign: float = 1.0, cap: float | None = None) -> pd.DataFrame:
    """Transitions in display units with where their rule, marker and label go.

    Returns
    -------
    pandas.DataFrame
        One row per transition, shallow first: ``depth_km``, ``temperature_c``,
        ``stress_mpa``, ``kind``, ``layer_above``, ``layer_below``; drawn positions
        ``stress_x`` (``sign`` x stress), ``edge_x`` (``sign`` x ``cap``, where the rule
        ends and the label stands), ``label_km`` (top of the label box, see
        :func:`place_labels`), ``leader_km`` (where a leader from the line meets a label
        pushed away from it; the line's own depth when the label touches it) and
        ``label`` (text).
    """
    if cap is None:
        cap = stress_cap([analysis])
    ordered = sorted(analysis.transitions, key=lambda t: t.depth)
    max_depth = analysis.scenario.max_depth / _KM
    depths = [t.depth / _KM for t in ordered]
    gap = LABEL_GAP_PX * max_depth / HEIGHT
    # A label goes on the ductile side of its line: on the brittle side creep is the
    # stronger mechanism and its curve usually runs off the outer edge, where labels stand.
    below = [t.kind == "brittle-to-ductile" for t in ordered]
    tops = place_labels(depths, below, gap, max_depth)
    rows = []
    for t, label_km in zip(ordered, tops):
        celsius = t.temperature - ZERO_CELSIUS
        z = t.depth / _KM
        # a leader joins a label pushed away from its line to the line
        leader_km = min(max(z, label_km), label_km + gap)
        rows.append(
            {
                "depth_km": t.depth / _KM,
                "temperature_c": celsius,
                "stress_mpa": t.stress / _MPA,
                "kind": t.kind,
                "layer_above": t.layer_above,
                "layer_below": t.layer_below,
                "stress_x": sign * t.stress / _MPA,
                "edge_x": sign * cap,
                "label_km": label_km,
                "leader_km": leader_km,
                "label": f"{t.depth / _KM:.1f} km · {celsius:.0f} °C · {t.kind}",
            }
        )
    columns = [
        "depth_km",
        "temperature_c",
        "stress_mpa",
        "kind",
        "layer_above",
        "layer_below",
        "stress_x",
        "edge_x",
        "label_km",
        "leader_km",
        "label",
    ]
    return pd.DataFrame.from_records(rows, columns=columns)


def band_table(analysis) -> pd.DataFrame:
    """Regime bands (``top_km``, ``bottom_km``, ``mechanism``, ``layer``) for the strip."""
    return pd.DataFrame.from_records(
        [(b.top / _KM, b.bottom / _KM, b.mechanism, b.layer) for b in analysis.bands],
        columns=["top_km", "bottom_km", "mechanism", "layer"],
    )


def semi_brittle_table(analysis, *, sign: float = 1.0, cap: float | None = None) -> pd.DataFrame:
    """Semi-brittle depth ranges (refined edges) and the stress span they are shaded over."""
    if cap is None:
        cap = stress_cap([analysis])
    return pd.DataFrame.from_records(
        [
            (b["top"] / _KM, b["bottom"] / _KM, b["layer"], 0.0, sign * cap)
            for b in semi_brittle_intervals(analysis)
        ],
        columns=["top_km", "bottom_km", "layer", "x0", "x1"],
    )


def layer_table(analysis) -> pd.DataFrame:
    """Top of each layer inside the column [km] and its name."""
    scenario = analysis.scenario
    return pd.DataFrame.from_records(
        [
            (float(top) / _KM, layer.name)
            for top, layer in zip(scenario.layer_tops, scenario.layers)
            if top < scenario.max_depth
        ],
        columns=["top_km", "name"],
    )


def chart_tables(analysis, companion=None) -> dict[str, pd.DataFrame]:
    """Every table the chart draws, in display units (km, MPa, degC).

    Parameters
    ----------
    analysis : rheology.Analysis
    companion : rheology.Analysis, optional
        The same column in another faulting regime, drawn on the other side.

    Returns
    -------
    dict of str to pandas.DataFrame
        ``profile`` (:func:`profile_table`, both regimes stacked), ``transitions``
        (both regimes, with a ``regime`` column), ``semi_brittle``, ``bands`` (main
        analysis only), ``layers``.
    """
    analyses = [analysis] + ([companion] if companion is not None else [])
    cap = stress_cap(analyses)
    main_sign, other_sign = sides(analysis, companion)
    pairs = [(analysis, main_sign)] + ([(companion, other_sign)] if companion else [])
    profiles, transitions, semi = [], [], []
    for item, sign in pairs:
        profiles.append(profile_table(item, sign=sign, cap=cap))
        table = transition_table(item, sign=sign, cap=cap)
        table.insert(0, "regime", item.scenario.faulting)
        transitions.append(table)
        bands = semi_brittle_table(item, sign=sign, cap=cap)
        bands.insert(0, "regime", item.scenario.faulting)
        semi.append(bands)
    return {
        "profile": pd.concat(profiles, ignore_index=True),
        "transitions": pd.concat(transitions, ignore_index=True),
        "semi_brittle": pd.concat(semi, ignore_index=True),
        "bands": band_table(analysis),
        "layers": layer_table(analysis),
    }


# ------------------------------------------------------------------------------ chart

#: Vega-Lite version the specification is written for (the one altair and streamlit's
#: front end use).
SCHEMA = "https://vega.github.io/schema/vega-lite/v6.json"
#: Names of the datasets inside the specification (``spec["datasets"][name]``).
DATASETS = ("profile", "transitions", "semi_brittle", "bands", "layers")

_GRID = "#e8e8e8"
_POINTER = "#555555"


def _depth(max_depth: float, field: str = "depth_km", axis: dict | None = None) -> dict:
    """Depth channel [km]; the same scale in every panel, depth increasing downward."""
    return {
        "field": field,
        "type": "quantitative",
        "title": "depth [km]",
        "scale": {"domain": [0.0, max_depth], "reverse": True, "nice": False, "zero": True},
        "axis": axis,
    }


def _axis(title: str, **extra) -> dict:
    return {"title": title, "grid": True, "gridColor": _GRID, **extra}


def _q(field: str, title: str, fmt: str) -> dict:
    return {"field": field, "type": "quantitative", "title": title, "format": fmt}


def _n(field: str, title: str) -> dict:
    return {"field": field, "type": "nominal", "title": title}


_TOOLTIP = [
    _q("depth_km", "depth [km]", ".2f"),
    _q("temperature_c", "temperature [°C]", ".0f"),
    _q("envelope_mpa", "envelope strength [MPa]", ",.1f"),
    _q("frictional_mpa", "frictional strength [MPa]", ",.1f"),
    _q("creep_mpa", "creep strength [MPa]", ",.4~g"),
    _n("mechanism", "governing mechanism"),
    _n("layer", "layer"),
    _n("regime", "faulting regime"),
]


def _only(faulting: str) -> dict:
    return {"filter": {"field": "regime", "equal": faulting}}


def _hover_layers(rows: int, span, max_depth: float, name: str, faulting=None) -> list[dict]:
    """A pointer rule at the depth pointed at, and invisible rules that carry the tooltips.

    One invisible rule per profile row spans the panel and is as thick as the spacing of
    the rows, so pointing anywhere in the panel finds the row at that depth.
    """
    transform = [_only(faulting)] if faulting is not None else []
    thickness = max(2.0, math.ceil(HEIGHT / max(rows, 1)) + 1.0)
    catcher = {
        "data": {"name": "profile"},
        "transform": transform,
        "params": [
            {
                "name": name,
                "select": {
                    "type": "point",
                    "on": "pointerover",
                    "clear": "pointerout",
                    "fields": ["order", "regime"],
                },
            }
        ],
        "mark": {"type": "rule", "strokeWidth": thickness, "opacity": 0.001},
        "encoding": {
            "y": _depth(max_depth),
            "x": {"datum": float(span[0])},
            "x2": {"datum": float(span[1])},
            "tooltip": _TOOLTIP,
        },
    }
    pointer = {
        "data": {"name": "profile"},
        "transform": transform + [{"filter": {"param": name, "empty": False}}],
        "mark": {"type": "rule", "color": _POINTER, "strokeWidth": 0.8},
        "encoding": {"y": _depth(max_depth)},
    }
    return [pointer, catcher]


def _boundaries(max_depth: float, colour: str = BOUNDARY_COLOUR, width: float = 1.2) -> dict:
    # the first layer's top is the surface: no line there
    return {
        "data": {"name": "layers"},
        "transform": [{"filter": "datum.top_km > 0"}],
        "mark": {"type": "rule", "color": colour, "strokeWidth": width},
        "encoding": {"y": _depth(max_depth, "top_km")},
    }


def _words(analysis) -> str:
    return _REGIME_WORDS.get(analysis.scenario.faulting, analysis.scenario.faulting)


def _share_axis(layers: list[dict], axis: dict | None) -> list[dict]:
    """Give every layer of a panel the same depth axis (a null one would hide it)."""
    for layer in layers:
        y = layer.get("encoding", {}).get("y")
        if y is not None and "field" in y:
            y["axis"] = axis
    return layers


def _strength_panel(tables, analysis, companion, cap: float) -> dict:
    max_depth = analysis.scenario.max_depth / _KM
    main_sign, other_sign = sides(analysis, companion)
    span = (-cap, cap) if companion is not None else tuple(sorted((0.0, main_sign * cap)))
    title = "differential stress σ1 − σ3 [MPa]"
    if companion is not None:
        title += "  (compression positive, extension negative)"
    y = _depth(max_depth)
    x = {
        "field": "envelope_x",
        "type": "quantitative",
        "title": title,
        "scale": {"domain": list(span), "nice": False, "zero": False},
        "axis": _axis(title, tickCount=8),
    }
    order = {"field": "order", "type": "quantitative"}
    items = [(analysis, main_sign)] + ([(companion, other_sign)] if companion else [])
    envelope_fill = {
        "data": {"name": "profile"},
        "mark": {"type": "area", "orient": "horizontal", "opacity": 0.85, "clip": True},
        "encoding": {
            "y": y,
            "x": x,
            "x2": {"datum": 0.0},
            # no order channel: an area is drawn in depth order (an order channel
            # would stack it instead)
            "fill": {
                "field": "regime",
                "type": "nominal",
                "scale": {
                    "domain": [item.scenario.faulting for item, _ in items],
                    "range": [POSITIVE_FILL if s > 0 else NEGATIVE_FILL for _, s in items],
                },
                "legend": {
                    "title": "envelope (the lesser strength)",
                    "orient": "bottom",
                    "symbolType": "square",
                    "symbolOpacity": 0.85,
                },
            },
        },
    }
    envelope_edge = {
        "data": {"name": "profile"},
        "mark": {"type": "line", "color": ENVELOPE_EDGE, "strokeWidth": 1.0, "clip": True},
        "encoding": {
            "y": y,
            "x": {"field": "envelope_x", "type": "quantitative"},
            "order": order,
            "detail": {"field": "regime", "type": "nominal"},
        },
    }
    curve_names = [FRICTIONAL_CURVE, CREEP_CURVE]
    curve_legend = {"title": "strength", "orient": "bottom", "symbolSize": 400}
    curves = {
        "data": {"name": "profile"},
        "transform": [
            {"fold": ["frictional_x", "creep_x"], "as": ["series", "stress_x"]},
            {
                "calculate": f"datum.series === 'frictional_x' ? '{FRICTIONAL_CURVE}' "
                f": '{CREEP_CURVE}'",
                "as": "curve",
            },
        ],
        "mark": {"type": "line", "strokeWidth": 1.8, "clip": True},
        "encoding": {
            "y": y,
            "x": {"field": "stress_x", "type": "quantitative"},
            "order": order,
            "detail": {"field": "regime", "type": "nominal"},
            "color": {
                "field": "curve",
                "type": "nominal",
                "scale": {"domain": curve_names, "range": [BRITTLE_COLOUR, DUCTILE_COLOUR]},
                "legend": curve_legend,
            },
            "strokeDash": {
                "field": "curve",
                "type": "nominal",
                "scale": {"domain": curve_names, "range": [[1, 0], [6, 3]]},
                "legend": curve_legend,
            },
        },
    }
    semi = {
        "data": {"name": "semi_brittle"},
        "mark": {"type": "rect", "color": SEMI_BRITTLE_COLOUR, "opacity": 0.25, "clip": True},
        "encoding": {
            "y": _depth(max_depth, "top_km"),
            "y2": {"field": "bottom_km"},
            "x": {"field": "x0", "type": "quantitative"},
            "x2": {"field": "x1"},
        },
    }
    rules = {
        "data": {"name": "transitions"},
        "mark": {
            "type": "rule",
            "color": TRANSITION_COLOUR,
            "strokeWidth": 1.0,
            "strokeDash": [5, 3],
            "clip": True,
        },
        "encoding": {
            "y": _depth(max_depth),
            "x": {"field": "edge_x", "type": "quantitative"},
            "x2": {"datum": 0.0},
        },
    }
    leaders = {
        "data": {"name": "transitions"},
        "mark": {"type": "rule", "color": TRANSITION_COLOUR, "strokeWidth": 0.7},
        "encoding": {
            "y": _depth(max_depth),
            "y2": {"field": "leader_km"},
            "x": {"field": "edge_x", "type": "quantitative"},
        },
    }
    markers = {
        "data": {"name": "transitions"},
        "mark": {
            "type": "point",
            "shape": "circle",
            "size": 45,
            "filled": True,
            "fill": "white",
            "stroke": TRANSITION_COLOUR,
            "strokeWidth": 1.4,
        },
        "encoding": {
            "y": _depth(max_depth),
            "x": {"field": "stress_x", "type": "quantitative"},
            "tooltip": [
                _n("kind", "transition"),
                _q("depth_km", "depth [km]", ".2f"),
                _q("temperature_c", "temperature [°C]", ".0f"),
                _q("stress_mpa", "stress [MPa]", ",.0f"),
                _n("layer_above", "layer above"),
                _n("layer_below", "layer below"),
                _n("regime", "faulting regime"),
            ],
        },
    }
    # labels stand at the outer edge of their own side, in their box; each is
    # drawn twice, first as a thick white outline (a halo over the curves), then in ink
    labels = [
        {
            "data": {"name": "transitions"},
            "transform": [{"filter": f"datum.edge_x {'>' if s > 0 else '<'} 0"}],
            "mark": {
                "type": "text",
                "align": "right" if s > 0 else "left",
                "dx": -4 if s > 0 else 4,
                "dy": 3,
                "baseline": "top",
                "fontSize": 11,
                **style,
            },
            "encoding": {
                "y": _depth(max_depth, "label_km"),
                "x": {"field": "edge_x", "type": "quantitative"},
                "text": {"field": "label", "type": "nominal"},
            },
        }
        for style in (
            {"stroke": "white", "strokeWidth": 4, "strokeOpacity": 0.9, "color": "white"},
            {"color": TRANSITION_COLOUR},
        )
        for s in (1.0, -1.0)
    ]
    layers = [semi, envelope_fill, envelope_edge, curves, _boundaries(max_depth)]
    if companion is not None:
        layers.append(
            {
                "data": {"values": [{}]},
                "mark": {"type": "rule", "color": "#444444", "strokeWidth": 1.0},
                "encoding": {"x": {"datum": 0.0}},
            }
        )
        for item, sign in items:
            layers.append(
                {
                    "data": {"values": [{}]},
                    "mark": {
                        "type": "text",
                        "fontSize": 12,
                        "fontWeight": "bold",
                        "baseline": "top",
                        "dy": 6,
                        "text": _words(item),
                    },
                    "encoding": {"x": {"datum": 0.5 * sign * cap}, "y": {"value": 0}},
                }
            )
    rows = int(tables["profile"].groupby("regime")["depth_km"].nunique().max())
    layers += [rules, leaders, markers, *labels]
    layers += _hover_layers(rows, span, max_depth, "strength_hover")
    note = (
        f"stress axis ends at {cap:,.0f} MPa ({STRESS_CAP_FACTOR:g} × the peak envelope "
        "strength); curves beyond run off the edge"
    )
    return {
        "width": STRENGTH_WIDTH,
        "height": HEIGHT,
        "title": {
            "text": "strength",
            "subtitle": note,
            "anchor": "start",
            "fontSize": 13,
            "subtitleColor": "#555555",
        },
        "layer": _share_axis(layers, _axis("depth [km]")),
    }


def _strip_panel(max_depth: float) -> dict:
    bands = {
        "data": {"name": "bands"},
        "mark": {"type": "rect"},
        "encoding": {
            "y": _depth(max_depth, "top_km"),
            "y2": {"field": "bottom_km"},
            "x": {"value": 0},
            "x2": {"value": STRIP_WIDTH},
            "color": {
                "field": "mechanism",
                "type": "nominal",
                "scale": {
                    "domain": list(MECHANISM_COLOURS),
                    "range": list(MECHANISM_COLOURS.values()),
                },
                # the legend is drawn under the geotherm (see _mechanism_key)
                "legend": None,
            },
            "tooltip": [
                _n("mechanism", "mechanism"),
                _q("top_km", "from [km]", ".2f"),
                _q("bottom_km", "to [km]", ".2f"),
                _n("layer", "layer"),
            ],
        },
    }
    return {
        "width": STRIP_WIDTH,
        "height": HEIGHT,
        "title": {"text": " ", "subtitle": " "},
        "layer": [bands, _boundaries(max_depth, "white", 1.5)],
    }


def _mechanism_key(present: list[str], max_depth: float) -> dict:
    """An invisible layer whose legend explains the colours of the mechanism strip.

    A legend under the narrow strip would widen its column; this one stands under the
    geotherm with the strip's colours, listing the mechanisms ``present``.
    """
    return {
        "data": {"name": "bands"},
        "mark": {"type": "rect", "opacity": 0},
        "encoding": {
            "y": _depth(max_depth, "top_km"),
            "color": {
                "field": "mechanism",
                "type": "nominal",
                "scale": {
                    "domain": list(MECHANISM_COLOURS),
                    "range": list(MECHANISM_COLOURS.values()),
                },
                "legend": {
                    "title": "governing mechanism (narrow strip)",
                    "orient": "bottom",
                    "columns": 2,
                    "symbolType": "square",
                    "symbolOpacity": 1,
                    "values": present,
                },
            },
        },
    }


def _geotherm_panel(tables, analysis, max_depth: float) -> dict:
    faulting = analysis.scenario.faulting
    profile = tables["profile"]
    main = profile[profile["regime"] == faulting]
    celsius = main["temperature_c"].to_numpy(dtype=float)
    present = [m for m in MECHANISM_COLOURS if m in set(tables["bands"]["mechanism"])]
    span = (min(0.0, float(np.min(celsius))), 1.08 * float(np.max(celsius)))
    line = {
        "data": {"name": "profile"},
        "transform": [_only(faulting)],
        "mark": {"type": "line", "color": GEOTHERM_COLOUR, "strokeWidth": 2.0, "clip": True},
        "encoding": {
            "y": _depth(max_depth, axis=_axis("depth [km]", orient="right")),
            "x": {
                "field": "temperature_c",
                "type": "quantitative",
                "title": "temperature [°C]",
                "scale": {"domain": list(span), "nice": False, "zero": False},
                "axis": _axis("temperature [°C]", tickCount=5),
            },
            "order": {"field": "order", "type": "quantitative"},
        },
    }
    markers = {
        "data": {"name": "transitions"},
        "transform": [_only(faulting)],
        "mark": {
            "type": "point",
            "shape": "circle",
            "size": 40,
            "filled": True,
            "fill": "white",
            "stroke": TRANSITION_COLOUR,
        },
        "encoding": {
            "y": _depth(max_depth),
            "x": {"field": "temperature_c", "type": "quantitative"},
        },
    }
    names = {
        "data": {"name": "layers"},
        "mark": {
            "type": "text",
            "align": "right",
            "baseline": "top",
            "dx": -6,
            "dy": 4,
            "fontSize": 11,
            "fontStyle": "italic",
            "color": "#333333",
        },
        "encoding": {
            "y": _depth(max_depth, "top_km"),
            "x": {"value": GEOTHERM_WIDTH},
            "text": {"field": "name", "type": "nominal"},
        },
    }
    hover = _hover_layers(
        int(main["depth_km"].nunique()), span, max_depth, "geotherm_hover", faulting
    )
    return {
        "width": GEOTHERM_WIDTH,
        "height": HEIGHT,
        "title": {"text": "geotherm", "subtitle": " ", "anchor": "start", "fontSize": 13},
        "layer": _share_axis(
            [
                line,
                _boundaries(max_depth),
                markers,
                names,
                _mechanism_key(present, max_depth),
                *hover,
            ],
            _axis("depth [km]", orient="right"),
        ),
    }


def envelope_spec(analysis, companion=None) -> dict:
    """The chart of :func:`envelope_chart` as a Vega-Lite specification (a plain dict).

    Parameters
    ----------
    analysis : rheology.Analysis
        The envelope to draw (from :func:`rheology.analyse`).
    companion : rheology.Analysis, optional
        The same column in another faulting regime; both envelopes are drawn, the
        normal-faulting (extension) one on the negative side.

    Returns
    -------
    dict
        A Vega-Lite v6 specification: three panels side by side sharing the depth axis
        [km], depth increasing downward: strength [MPa], mechanism strip, temperature
        [degC]. ``spec["datasets"]`` holds the tables of :func:`chart_tables` (pandas
        DataFrames) under the names :data:`DATASETS`; streamlit sends them to the
        browser as Arrow tables.

    Notes
    -----
    This is what the page draws: written directly, it costs a few milliseconds, where
    building the same chart through altair's objects and their validation costs some
    hundreds. The stress axis ends at :func:`rheology.plotting.stress_cap` (the same end
    as the PNG figure); curves beyond it are cut just outside the edge (at
    :data:`CLIP_FACTOR` x the cap) and a note says so.
    """
    cap = stress_cap([analysis] + ([companion] if companion is not None else []))
    tables = chart_tables(analysis, companion)
    max_depth = analysis.scenario.max_depth / _KM
    subtitle = f"{_words(analysis)}, strain rate {analysis.scenario.strain_rate:.3g} 1/s"
    if companion is not None:
        subtitle += f"; also {_words(companion)}"
    return {
        "$schema": SCHEMA,
        "title": {
            "text": analysis.scenario.title,
            "subtitle": subtitle,
            "anchor": "middle",
            "fontSize": 15,
        },
        "hconcat": [
            _strength_panel(tables, analysis, companion, cap),
            _strip_panel(max_depth),
            _geotherm_panel(tables, analysis, max_depth),
        ],
        "spacing": 6,
        "resolve": {"scale": {"y": "shared", "color": "independent", "strokeDash": "independent"}},
        # fixed panel sizes; the chart takes the room its panels, axes and legends need
        "autosize": {"type": "pad", "contains": "padding"},
        "config": {
            "legend": {"labelFontSize": 11, "titleFontSize": 11, "symbolStrokeWidth": 2},
            "axis": {"labelFontSize": 11, "titleFontSize": 12},
            "view": {"stroke": "#bbbbbb"},
        },
        "datasets": {name: tables[name] for name in DATASETS},
    }


def _records(frame: pd.DataFrame) -> list[dict]:
    """Rows as JSON-ready dicts (NaN, e.g. an infinite strength, becomes null)."""
    return frame.astype(object).where(frame.notna(), None).to_dict(orient="records")


def envelope_chart(analysis, companion=None):
    """The strength envelope, mechanism strip and geotherm as one interactive chart.

    Parameters
    ----------
    analysis : rheology.Analysis
        The envelope to draw (from :func:`rheology.analyse`).
    companion : rheology.Analysis, optional
        The same column in another faulting regime, drawn on the other side of zero
        (extension negative).

    Returns
    -------
    altair.HConcatChart
        The chart of :func:`envelope_spec` with its rows inline, checked against the
        Vega-Lite schema; e.g. ``envelope_chart(a).save("envelope.html")`` writes a page
        that opens in any browser.
    """
    import altair as alt

    spec = envelope_spec(analysis, companion)
    spec["datasets"] = {name: _records(frame) for name, frame in spec["datasets"].items()}
    return alt.HConcatChart.from_dict(spec)
