"""Tests of the page's envelope chart (ui/chart.py): its tables and its specification.

The chart holds no physics. What is checked is that it draws the public API's numbers
unchanged, only converted to display units by the SI definitions (1 km = 1e3 m,
1 MPa = 1e6 Pa, t/degC = T/K - 273.15 exactly; BIPM, The International System of Units,
9th ed., 2019, tables 7 and 8 and sec. 2.3.1), that the depth axis points down, that
curves are cut at the stress cap of :func:`rheology.plotting.stress_cap` (our own
display convention, shared with the PNG figure), and that the specification is valid
Vega-Lite (the v6 JSON schema shipped with altair; Satyanarayan, Moritz, Wongsuphasawat
& Heer 2017, Vega-Lite: a grammar of interactive graphics, IEEE Trans. Vis. Comput.
Graph. 23(1), 341-350).

The reference analyses come from ``rheology.analyse`` of the bundled examples (the
physics behind them is tested against published sources elsewhere).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

alt = pytest.importorskip("altair")

import rheology  # noqa: E402
from rheology.errors import RheologyError  # noqa: E402
from rheology.plotting import stress_cap  # noqa: E402
from rheology.scenario import bundled_example, list_examples, load_scenario  # noqa: E402
from ui import chart  # noqa: E402

# One division or subtraction in both the chart and the check: the same IEEE operation
# gives the same double, so values are compared exactly.
EXACT = 0.0


@pytest.fixture(scope="module")
def demo():
    return rheology.analyse(load_scenario(bundled_example("demo")))


@pytest.fixture(scope="module")
def demo_normal(demo):
    return rheology.analyse(demo.scenario, faulting="normal")


def _grid_rows(frame: pd.DataFrame) -> pd.DataFrame:
    """Rows of the profile that are grid nodes (not added transition points)."""
    return frame[~frame["mechanism"].str.startswith("transition")]


def _nodes(analysis) -> np.ndarray:
    """Grid nodes the profile keeps (its grid rows, in order)."""
    inner = [t for t in analysis.transitions if not t.at_boundary]
    return chart.kept_nodes(analysis.envelope, chart.MAX_POINTS, extra=len(inner))


# --------------------------------------------------------------------- profile table


def test_profile_rows_are_the_api_envelope_in_km_mpa_and_degc(demo):
    """Every grid row carries env.depth / 1e3, T - 273.15, strengths / 1e6 (SI, BIPM 2019)."""
    env = demo.envelope
    frame = chart.profile_table(demo)
    rows = _grid_rows(frame)
    nodes = _nodes(demo)
    assert len(rows) == nodes.size
    np.testing.assert_allclose(rows["depth_km"], env.depth[nodes] / 1e3, rtol=EXACT)
    np.testing.assert_allclose(rows["temperature_c"], env.temperature[nodes] - 273.15, rtol=EXACT)
    np.testing.assert_allclose(rows["frictional_mpa"], env.brittle[nodes] / 1e6, rtol=EXACT)
    np.testing.assert_allclose(rows["creep_mpa"], env.ductile[nodes] / 1e6, rtol=EXACT)
    np.testing.assert_allclose(rows["envelope_mpa"], env.strength[nodes] / 1e6, rtol=EXACT)
    assert list(rows["mechanism"]) == [env.mechanism_names[i] for i in nodes]


def test_profile_is_thinned_but_keeps_both_ends_and_every_boundary_pair(demo):
    env = demo.envelope
    frame = chart.profile_table(demo)
    assert env.depth.size > chart.MAX_POINTS  # the demo grid (1603 nodes) needs thinning
    assert len(frame) <= chart.MAX_POINTS
    assert frame["depth_km"].iloc[0] == 0.0
    assert frame["depth_km"].iloc[-1] == env.depth[-1] / 1e3
    assert frame["depth_km"].is_monotonic_increasing
    assert list(frame["order"]) == list(range(len(frame)))
    names = [layer.name for layer in demo.scenario.layers]
    for top, upper, lower in zip(demo.scenario.layer_tops[1:], names, names[1:]):
        at = frame[frame["depth_km"] == top / 1e3]
        # the upper layer's node comes first, so the jump in strength is drawn flat
        assert list(at["layer"]) == [upper, lower]


def test_profile_holds_each_transition_at_its_refined_depth(demo):
    frame = chart.profile_table(demo)
    inner = [t for t in demo.transitions if not t.at_boundary]
    assert inner, "the demo has transitions inside layers"
    for t in inner:
        row = frame[frame["depth_km"] == t.depth / 1e3]
        assert len(row) == 1
        assert row["envelope_mpa"].iloc[0] == t.stress / 1e6
        assert row["temperature_c"].iloc[0] == t.temperature - 273.15
        assert row["mechanism"].iloc[0] == f"transition ({t.kind})"


def test_short_grids_are_not_thinned():
    """A grid smaller than the row limit is drawn whole (every node kept)."""
    scenario = load_scenario(bundled_example("demo"))
    coarse = rheology.analyse(dataclasses.replace(scenario, depth_step=1000.0))
    assert coarse.envelope.depth.size < chart.MAX_POINTS
    np.testing.assert_array_equal(
        chart.kept_nodes(coarse.envelope), np.arange(coarse.envelope.depth.size)
    )


@pytest.mark.parametrize("bad", [1, 0, -5, 2.5, "600"])
def test_kept_nodes_rejects_a_bad_row_limit(demo, bad):
    with pytest.raises(RheologyError, match=r"max_points: .* expected a whole number"):
        chart.kept_nodes(demo.envelope, bad)


# ------------------------------------------------------------------------ stress cap


def test_curves_are_cut_just_beyond_the_stress_cap(demo):
    """Drawn positions equal the strength where it is on the axis and the cut beyond."""
    cap = stress_cap([demo])
    limit = chart.CLIP_FACTOR * cap
    frame = chart.profile_table(demo)
    for name in ("frictional", "creep", "envelope"):
        value, drawn = frame[f"{name}_mpa"].to_numpy(), frame[f"{name}_x"].to_numpy()
        assert drawn.max() <= limit
        np.testing.assert_array_equal(drawn, np.minimum(value, limit))
    # creep of cold rock near the surface is far above the cap (tens of thousands of
    # MPa), so the cut is exercised
    assert (frame["creep_mpa"] > limit).any()


def test_an_infinite_strength_is_shown_blank_and_drawn_at_the_cut(demo):
    env = demo.envelope
    ductile = env.ductile.copy()
    ductile[0] = np.inf
    weird = dataclasses.replace(demo, envelope=dataclasses.replace(env, ductile=ductile))
    frame = chart.profile_table(weird, cap=100.0)
    assert np.isnan(frame["creep_mpa"].iloc[0])
    assert frame["creep_x"].iloc[0] == chart.CLIP_FACTOR * 100.0


def test_stress_axis_ends_at_the_cap_and_the_note_says_so(demo):
    spec = chart.envelope_spec(demo)
    cap = stress_cap([demo])
    strength = spec["hconcat"][0]
    x_scales = [
        layer["encoding"]["x"]["scale"]
        for layer in strength["layer"]
        if "scale" in layer.get("encoding", {}).get("x", {})
    ]
    assert x_scales == [{"domain": [0.0, cap], "nice": False, "zero": False}]
    assert f"ends at {cap:,.0f} MPa" in strength["title"]["subtitle"]
    # every curve and the envelope fill are clipped at the axis end
    drawn = [layer for layer in strength["layer"] if layer["mark"]["type"] in ("line", "area")]
    assert len(drawn) == 3 and all(layer["mark"]["clip"] for layer in drawn)


# ------------------------------------------------------------------------ depth axis


def _depth_channels(spec):
    for panel in spec["hconcat"]:
        for layer in panel["layer"]:
            y = layer.get("encoding", {}).get("y")
            if y is not None and "field" in y:
                yield panel, y


def test_depth_axis_points_down_in_every_panel(demo):
    spec = chart.envelope_spec(demo)
    max_km = demo.scenario.max_depth / 1e3
    channels = list(_depth_channels(spec))
    assert len({id(panel) for panel, _ in channels}) == 3
    for _panel, y in channels:
        assert y["scale"]["reverse"] is True  # depth increases downward
        assert y["scale"]["domain"] == [0.0, max_km]
        assert y["title"] == "depth [km]"
    assert spec["resolve"]["scale"]["y"] == "shared"


def test_every_axis_names_its_unit(demo):
    spec = chart.envelope_spec(demo)
    titles = [
        channel["axis"]["title"]
        for panel in spec["hconcat"]
        for layer in panel["layer"]
        for name, channel in layer.get("encoding", {}).items()
        if name in ("x", "y") and isinstance(channel.get("axis"), dict)
    ]
    assert set(titles) == {"depth [km]", "differential stress σ1 − σ3 [MPa]", "temperature [°C]"}


# ---------------------------------------------------------------- the other tables


def test_transition_table_carries_the_api_transitions(demo):
    table = chart.transition_table(demo)
    ordered = sorted(demo.transitions, key=lambda t: t.depth)
    np.testing.assert_allclose(table["depth_km"], [t.depth / 1e3 for t in ordered], rtol=EXACT)
    np.testing.assert_allclose(
        table["temperature_c"], [t.temperature - 273.15 for t in ordered], rtol=EXACT
    )
    np.testing.assert_allclose(table["stress_mpa"], [t.stress / 1e6 for t in ordered], rtol=EXACT)
    for label, t in zip(table["label"], ordered):
        assert label.startswith(f"{t.depth / 1e3:.1f} km") and label.endswith(t.kind)


def test_labels_never_overlap_and_stay_on_the_axis():
    """Crowded lines (values of our own, a worst case): boxes one gap apart, inside 0..80."""
    depths = [0.5, 1.0, 1.2, 40.0, 79.5, 79.9]
    below = [True, False, True, False, True, True]
    tops = chart.place_labels(depths, below, gap=2.0, bottom=80.0)
    assert all(b - a >= 2.0 - 1e-12 for a, b in zip(tops, tops[1:]))  # rounding only
    assert tops[0] >= 0.0 and tops[-1] + 2.0 <= 80.0
    # a lone label touches its line: hanging below it, or standing on it from above
    assert tops[3] == 40.0 - 2.0
    assert chart.place_labels([10.0], [True], 2.0, 80.0) == [10.0]


def test_band_and_layer_tables_are_the_api_bands_and_layers(demo):
    bands = chart.band_table(demo)
    assert list(bands["mechanism"]) == [b.mechanism for b in demo.bands]
    np.testing.assert_allclose(bands["top_km"], [b.top / 1e3 for b in demo.bands], rtol=EXACT)
    layers = chart.layer_table(demo)
    assert list(layers["name"]) == [layer.name for layer in demo.scenario.layers]
    np.testing.assert_allclose(layers["top_km"], demo.scenario.layer_tops / 1e3, rtol=EXACT)


# ------------------------------------------------------------------------- companion


def test_companion_extension_is_drawn_negative(demo, demo_normal):
    spec = chart.envelope_spec(demo, demo_normal)
    profile = spec["datasets"]["profile"]
    thrust = profile[profile["regime"] == "thrust"]
    normal = profile[profile["regime"] == "normal"]
    assert (thrust["envelope_x"] >= 0).all() and (normal["envelope_x"] <= 0).all()
    # the strengths themselves stay positive (sigma1 - sigma3 > 0 in both regimes)
    assert (normal["envelope_mpa"] >= 0).all()
    cap = stress_cap([demo, demo_normal])
    strength = spec["hconcat"][0]
    domains = [
        layer["encoding"]["x"]["scale"]["domain"]
        for layer in strength["layer"]
        if "scale" in layer.get("encoding", {}).get("x", {})
    ]
    assert domains == [[-cap, cap]]
    transitions = spec["datasets"]["transitions"]
    assert set(transitions["regime"]) == {"thrust", "normal"}
    np.testing.assert_allclose(
        transitions.loc[transitions["regime"] == "normal", "depth_km"],
        sorted(t.depth / 1e3 for t in demo_normal.transitions),
        rtol=EXACT,
    )


def test_a_normal_faulting_column_alone_is_drawn_on_the_negative_side():
    analysis = rheology.analyse(load_scenario(bundled_example("rifted_margin")))
    assert analysis.scenario.faulting == "normal"
    spec = chart.envelope_spec(analysis)
    assert (spec["datasets"]["profile"]["envelope_x"] <= 0).all()
    assert (spec["datasets"]["transitions"]["edge_x"] < 0).all()


# ------------------------------------------------------------- a valid specification


def _fields(layer) -> set[str]:
    fields = set()
    for channel in layer.get("encoding", {}).values():
        for item in channel if isinstance(channel, list) else [channel]:
            if isinstance(item, dict) and "field" in item:
                fields.add(item["field"])
    return fields


def _made(layer) -> set[str]:
    made = set()
    for step in layer.get("transform", []):
        if "fold" in step:
            made.update(step["as"])
        if "calculate" in step:
            made.add(step["as"])
    return made


@pytest.mark.parametrize("name", list_examples())
def test_every_field_drawn_is_a_column_of_its_dataset(name):
    """A misspelt field would draw nothing without any error: check them all."""
    analysis = rheology.analyse(load_scenario(bundled_example(name)))
    spec = chart.envelope_spec(analysis)
    assert set(spec["datasets"]) == set(chart.DATASETS)
    for panel in spec["hconcat"]:
        for layer in panel["layer"]:
            if "name" not in layer.get("data", {}):
                continue
            columns = set(spec["datasets"][layer["data"]["name"]].columns)
            assert _fields(layer) <= columns | _made(layer), layer


@pytest.mark.parametrize("with_companion", [False, True])
def test_specification_is_valid_vega_lite(demo, demo_normal, with_companion):
    """altair checks the spec against the Vega-Lite v6 JSON schema while building it."""
    companion = demo_normal if with_companion else None
    built = chart.envelope_chart(demo, companion)
    assert isinstance(built, alt.HConcatChart)
    spec = built.to_dict()  # validates again, with the rows inline
    assert len(spec["hconcat"]) == 3
    expected = chart.envelope_spec(demo, companion)["datasets"]["profile"]
    assert len(spec["datasets"]["profile"]) == len(expected)
