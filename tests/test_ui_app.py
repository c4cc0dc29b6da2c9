"""Tests of the web page (ui/app.py) through streamlit's AppTest, and of its helpers.

The page holds no physics, so what is checked here is that it hands the right inputs
to the public API and shows the API's answers unchanged:

* every number the page shows for the bundled demo is the one that
  ``rheology.analyse(rheology.load_scenario(rheology.bundled_example("demo")))``
  computes (the reference here is the API, tested against published sources in the
  physics tests);
* changing a widget changes the answer in the direction common practice expects
  (a faster strain rate strengthens the creeping layers, so the brittle-to-ductile
  transition moves down; a hotter geotherm weakens them, so it moves up; e.g.
  Brace & Kohlstedt 1980, J. Geophys. Res. 85(B11), 6248-6252, common practice),
  and to exactly the answer the API gives for the changed scenario;
* bad input shows the RheologyError text on the page, no traceback, and the last good
  result stays;
* uploads and pastes replace the set-up; the download payloads carry the API's numbers;
* the envelope chart (drawn by the browser) receives the API's numbers: its tables, as
  the page sends them, hold the transitions and the profile of the analysis shown.
"""

from __future__ import annotations

import dataclasses
import io
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest
import tomli_w

pytest.importorskip("streamlit")
from streamlit.testing.v1 import AppTest  # noqa: E402

import rheology  # noqa: E402
from rheology import outputs  # noqa: E402
from rheology.errors import RheologyError  # noqa: E402
from rheology.library.tables import load_rocks  # noqa: E402
from rheology.scenario import (  # noqa: E402
    bundled_example,
    list_examples,
    load_scenario,
    parse_scenario,
    scenario_from_mapping,
)
from ui import state, views  # noqa: E402

APP = Path(__file__).resolve().parents[1] / "ui" / "app.py"
# The first run imports matplotlib and pandas and reads the tables: allow for a slow CI box.
TIMEOUT = 120
# The page's set-up carries every demo value exactly (same unit texts, the loaded
# strain-rate text is kept), so the page's numbers should equal the API's; 1e-12 only
# absorbs a last-digit difference should a value ever be re-typed in the widget unit.
SAME_RTOL = 1e-12


def _app() -> AppTest:
    return AppTest.from_file(str(APP), default_timeout=TIMEOUT)


def _depths_km(analysis) -> list[float]:
    return [t.depth / 1e3 for t in sorted(analysis.transitions, key=lambda t: t.depth)]


def _first_km(analysis) -> float:
    return views.first_faulting_base(analysis).depth / 1e3


def _table(at: AppTest, columns) -> pd.DataFrame:
    for element in at.dataframe:
        frame = element.value
        if tuple(frame.columns) == tuple(columns):
            return frame
    raise AssertionError(f"no table with columns {columns} on the page")


def _page_transitions(at: AppTest) -> pd.DataFrame:
    return _table(at, views.TRANSITION_COLUMNS)


def _open_tab(at: AppTest, label: str) -> AppTest:
    """Select a results tab (only the open tab is drawn) and rerun."""
    at.session_state["view_tab"] = label
    return at.run()


def _chart(at: AppTest) -> tuple[dict, dict[str, pd.DataFrame]]:
    """The envelope chart as the page sends it: Vega-Lite spec and its named tables."""
    charts = at.get("vega_lite_chart")
    assert len(charts) == 1, "the envelope chart is missing"
    proto = charts[0].proto
    tables = {
        dataset.name: pa.ipc.open_stream(dataset.data.data).read_all().to_pandas()
        for dataset in proto.datasets
    }
    return json.loads(proto.spec), tables


def _markdown(at: AppTest) -> str:
    return "\n".join(m.value for m in at.markdown)


@pytest.fixture(scope="module")
def demo():
    return rheology.analyse(load_scenario(bundled_example("demo")))


@pytest.fixture(scope="module")
def demo_page():
    at = _app().run()
    assert not at.exception
    return at


# ------------------------------------------------------------------------ default page


def test_default_page_renders_without_exception_or_error(demo_page):
    assert not demo_page.exception
    assert not demo_page.error
    spec, tables = _chart(demo_page)
    assert len(spec["hconcat"]) == 3  # strength, mechanism strip, geotherm
    assert set(tables) == {"profile", "transitions", "semi_brittle", "bands", "layers"}
    # the page no longer sends a picture of the envelope
    assert not demo_page.image


def test_default_chart_carries_the_api_transitions_and_profile(demo_page, demo):
    """The chart's tables hold the demo's transitions and strengths as the API computes
    them (in km, MPa and degC), and its depth axis points down."""
    spec, tables = _chart(demo_page)
    ordered = sorted(demo.transitions, key=lambda t: t.depth)
    transitions = tables["transitions"]
    np.testing.assert_allclose(transitions["depth_km"], _depths_km(demo), rtol=SAME_RTOL)
    np.testing.assert_allclose(
        transitions["temperature_c"], [t.temperature - 273.15 for t in ordered], rtol=SAME_RTOL
    )
    np.testing.assert_allclose(
        transitions["stress_mpa"], [t.stress / 1e6 for t in ordered], rtol=SAME_RTOL
    )
    assert list(transitions["kind"]) == [t.kind for t in ordered]
    profile = tables["profile"]
    env = demo.envelope
    # the deepest row is the base of the column, with the API's strength there
    assert profile["depth_km"].iloc[-1] == pytest.approx(env.depth[-1] / 1e3, rel=SAME_RTOL)
    assert profile["envelope_mpa"].iloc[-1] == pytest.approx(env.strength[-1] / 1e6, rel=SAME_RTOL)
    for t in ordered:
        if not t.at_boundary:
            row = profile[np.isclose(profile["depth_km"], t.depth / 1e3, rtol=SAME_RTOL)]
            assert row["envelope_mpa"].to_numpy() == pytest.approx([t.stress / 1e6], rel=SAME_RTOL)
    depth_scale = spec["hconcat"][0]["layer"][0]["encoding"]["y"]["scale"]
    assert depth_scale["reverse"] is True
    assert depth_scale["domain"] == [0.0, demo.scenario.max_depth / 1e3]


def test_default_page_shows_demo_transitions_as_the_api_computes_them(demo_page, demo):
    """Transition depths, temperatures and stresses of the demo equal the API's."""
    table = _page_transitions(demo_page)
    ordered = sorted(demo.transitions, key=lambda t: t.depth)
    np.testing.assert_allclose(table["depth [km]"], _depths_km(demo), rtol=SAME_RTOL)
    np.testing.assert_allclose(
        table["temperature [°C]"], [t.temperature - 273.15 for t in ordered], rtol=SAME_RTOL
    )
    np.testing.assert_allclose(
        table["stress [MPa]"], [t.stress / 1e6 for t in ordered], rtol=SAME_RTOL
    )
    assert list(table["layer above"]) == [t.layer_above for t in ordered]


def test_default_page_writes_the_demo_transitions_in_words(demo_page, demo):
    text = _markdown(demo_page)
    for t in demo.transitions:
        assert views.km(t.depth) in text
    metrics = {m.label: m.value for m in demo_page.metric}
    assert metrics["faults reach"] == views.km(views.first_faulting_base(demo).depth)
    assert metrics["effective elastic thickness"] == views.km(demo.elastic.te, 1)
    # the API's own plain-words answer is on the page, line by line
    for line in views.summary_lines(demo):
        assert line in text


def test_layer_tab_shows_integrated_strength_per_layer_as_the_api(demo):
    at = _open_tab(_app().run(), "Strength of each layer")
    assert not at.exception
    table = _table(at, views.LAYER_STRENGTH_COLUMNS)
    expected = [v / 1e12 for v in demo.integrated_by_layer.values()] + [demo.integrated / 1e12]
    np.testing.assert_allclose(table["integrated strength [TN/m]"], expected, rtol=SAME_RTOL)


def test_default_page_shows_the_caution(demo_page):
    assert any(rheology.CAUTION in w.value for w in demo_page.warning)


def test_library_tab_lists_every_flow_law_with_status():
    at = _open_tab(_app().run(), "Flow-law library")
    assert not at.exception
    laws = rheology.load_flow_laws()
    table = _table(at, tuple(views.library_frame().columns))
    assert set(table["id"]) == set(laws)
    assert set(table["verification"]) <= {"checked", "from memory"}
    assert table["citation"].str.len().min() > 0


# -------------------------------------------------------------------- widget changes


def test_faster_strain_rate_moves_first_transition_deeper_or_equal(demo):
    """Common practice: creep strength grows with strain rate (power law), so the
    brittle-to-ductile transition goes down (Brace & Kohlstedt 1980)."""
    at = _app().run()
    at.select_slider(key="w_log_rate").set_value(-13.0).run()
    assert not at.exception and not at.error
    page = _page_transitions(at)
    faster = rheology.analyse(dataclasses.replace(demo.scenario, strain_rate=1e-13))
    np.testing.assert_allclose(page["depth [km]"], _depths_km(faster), rtol=SAME_RTOL)
    # the chart is redrawn for the new rate
    spec, tables = _chart(at)
    np.testing.assert_allclose(
        tables["transitions"]["depth_km"], _depths_km(faster), rtol=SAME_RTOL
    )
    assert "strain rate 1e-13 1/s" in spec["title"]["subtitle"]
    first_page = page.loc[page["change"].str.startswith("brittle-to-ductile"), "depth [km]"]
    assert first_page.iloc[0] >= _first_km(demo)


def test_hotter_geotherm_moves_first_transition_shallower_or_equal(demo):
    """Common practice: hotter rock creeps at lower stress, so the brittle-to-ductile
    transition rises (Brace & Kohlstedt 1980)."""
    at = _app().run()
    at.number_input(key="w_surface_heat_flow").set_value(80.0).run()
    assert not at.exception and not at.error
    page = _page_transitions(at)
    hotter_geotherm = dataclasses.replace(demo.scenario.geotherm, surface_heat_flow=0.080)
    hotter = rheology.analyse(dataclasses.replace(demo.scenario, geotherm=hotter_geotherm))
    np.testing.assert_allclose(page["depth [km]"], _depths_km(hotter), rtol=SAME_RTOL)
    first_page = page.loc[page["change"].str.startswith("brittle-to-ductile"), "depth [km]"]
    assert first_page.iloc[0] <= _first_km(demo)


def test_second_regime_is_drawn_on_the_negative_side(demo):
    """Choosing normal faulting as the second regime adds its envelope, extension drawn
    negative, with the transitions the API computes for that regime."""
    at = _app().run()
    at.selectbox(key="w_companion").set_value("normal").run()
    assert not at.exception and not at.error
    _spec, tables = _chart(at)
    profile = tables["profile"]
    assert set(profile["regime"]) == {"thrust", "normal"}
    assert (profile.loc[profile["regime"] == "normal", "envelope_x"] <= 0).all()
    assert (profile.loc[profile["regime"] == "thrust", "envelope_x"] >= 0).all()
    normal = rheology.analyse(demo.scenario, faulting="normal")
    transitions = tables["transitions"]
    np.testing.assert_allclose(
        transitions.loc[transitions["regime"] == "normal", "depth_km"],
        _depths_km(normal),
        rtol=SAME_RTOL,
    )


def test_point_question_matches_point_answer(demo):
    at = _open_tab(_app().run(), "Ask about one depth")
    at.number_input(key="w_probe_depth_km").set_value(25.0).run()
    assert not at.exception
    answer = rheology.point_answer(demo.scenario, 25e3)
    assert any(answer.sentence() == i.value for i in at.info)


def test_point_question_with_a_load_matches_point_answer(demo):
    at = _open_tab(_app().run(), "Ask about one depth")
    at.checkbox(key="w_probe_load").check().run()
    at.number_input(key="w_probe_stress_mpa").set_value(100.0).run()
    at.number_input(key="w_probe_years").set_value(1.0e4).run()
    assert not at.exception
    # one Julian year is 365.25 days (pint's "year"; IAU convention)
    answer = rheology.point_answer(
        demo.scenario, 10e3, stress=100e6, duration=1.0e4 * 365.25 * 86400.0
    )
    assert any(answer.sentence() == i.value for i in at.info)


def test_bands_tab_shows_the_api_regime_bands(demo):
    at = _open_tab(_app().run(), "Faults or flow, by depth")
    table = _table(at, views.BAND_COLUMNS)
    assert list(table["mechanism"]) == [b.mechanism for b in demo.bands]
    np.testing.assert_allclose(
        table["from [km]"], [b.top / 1e3 for b in demo.bands], rtol=SAME_RTOL
    )
    faults = table.loc[table["mechanism"] == "frictional sliding", "what to expect"]
    assert faults.str.startswith("faults").all()


# ----------------------------------------------------------------------- bad input


def _edit_first_layer(at: AppTest, column: str, value) -> None:
    at.session_state["w_layers"] = {
        "edited_rows": {0: {column: value}},
        "added_rows": [],
        "deleted_rows": [],
    }


def test_zero_thickness_shows_error_and_keeps_last_result(demo):
    at = _app().run()
    _edit_first_layer(at, state.COL_THICKNESS, 0.0)
    at.run()
    assert not at.exception
    messages = " ".join(e.value for e in at.error)
    assert "layers[0].thickness" in messages and "greater than zero" in messages
    assert "row 1 ('upper crust')" in messages
    np.testing.assert_allclose(
        _page_transitions(at)["depth [km]"], _depths_km(demo), rtol=SAME_RTOL
    )


def test_heat_production_above_surface_heat_flow_shows_error_and_keeps_result(demo):
    """15 km at 10 uW/m^3 produce 150 mW/m^2, more than the 65 mW/m^2 leaving the surface:
    a steady conductive geotherm would need heat flowing down (energy balance of steady
    conduction, common practice)."""
    at = _app().run()
    _edit_first_layer(at, state.COL_HEAT, 10.0)
    at.run()
    assert not at.exception
    messages = " ".join(e.value for e in at.error)
    assert "surface_heat_flow" in messages and "heat_production" in messages
    np.testing.assert_allclose(
        _page_transitions(at)["depth [km]"], _depths_km(demo), rtol=SAME_RTOL
    )


def _paste(at: AppTest, text: str) -> AppTest:
    at.text_area(key="w_paste").input(text)
    at.button(key="apply_paste").click().run()
    return at


def test_unknown_rock_in_pasted_text_shows_error_and_keeps_setup(demo):
    text = bundled_example("demo").read_text(encoding="utf-8")
    bad = text.replace('rock = "quartzite-wet"', 'rock = "granite-purple"')
    at = _paste(_app().run(), bad)
    assert not at.exception
    messages = " ".join(e.value for e in at.error)
    assert "unknown rock 'granite-purple'" in messages
    np.testing.assert_allclose(
        _page_transitions(at)["depth [km]"], _depths_km(demo), rtol=SAME_RTOL
    )


@pytest.mark.parametrize(
    "edit, expected",
    [
        (
            lambda text: "title = 'x'\n[[layers]\n",
            "the pasted text was not loaded: malformed TOML at line 2",
        ),
        (
            lambda text: text.replace('rock = "quartzite-wet"', 'rock = "granite-purple"'),
            "the pasted text was not loaded: layers[0].rock: unknown rock 'granite-purple'",
        ),
    ],
)
def test_paste_error_names_the_pasted_text_once(edit, expected):
    text = bundled_example("demo").read_text(encoding="utf-8")
    at = _paste(_app().run(), edit(text))
    assert not at.exception
    messages = " ".join(e.value for e in at.error)
    assert messages.startswith(expected), messages
    assert messages.count("the pasted text") == 1, messages


def test_without_source_drops_only_the_source_it_is_given():
    assert state.without_source("a.toml: malformed TOML at line 2", "a.toml") == (
        "malformed TOML at line 2"
    )
    assert state.without_source("layers[0].rock: bad (in a.toml)", "a.toml") == (
        "layers[0].rock: bad"
    )
    assert state.without_source("b.toml: malformed", "a.toml") == "b.toml: malformed"


def test_malformed_upload_shows_error_and_keeps_setup(demo):
    at = _app().run()
    at.file_uploader(key="w_upload").upload(
        "broken.toml", b"title = 'x'\n[[layers]\n", "application/toml"
    ).run()
    assert not at.exception
    messages = " ".join(e.value for e in at.error)
    assert "broken.toml" in messages and "malformed TOML" in messages
    np.testing.assert_allclose(
        _page_transitions(at)["depth [km]"], _depths_km(demo), rtol=SAME_RTOL
    )


# ------------------------------------------------------------------ uploads, pastes


def test_uploaded_scenario_replaces_the_setup():
    path = bundled_example("rifted_margin")
    expected = rheology.analyse(load_scenario(path))
    at = _app().run()
    at.file_uploader(key="w_upload").upload(path.name, path.read_bytes(), "application/toml").run()
    assert not at.exception and not at.error
    np.testing.assert_allclose(
        _page_transitions(at)["depth [km]"], _depths_km(expected), rtol=SAME_RTOL
    )
    assert at.radio(key="w_faulting").value == "normal"
    assert at.selectbox(key="w_pore_kind").value == "overpressured"
    assert any("Loaded" in s.value for s in at.success)


def test_pasted_scenario_replaces_the_setup():
    path = bundled_example("oceanic_plate")
    expected = rheology.analyse(load_scenario(path))
    at = _paste(_app().run(), path.read_text(encoding="utf-8"))
    assert not at.exception and not at.error
    np.testing.assert_allclose(
        _page_transitions(at)["depth [km]"], _depths_km(expected), rtol=SAME_RTOL
    )
    assert at.selectbox(key="w_geo_kind").value == expected.scenario.geotherm.kind


def test_bundled_example_loads_from_the_sidebar():
    expected = rheology.analyse(load_scenario(bundled_example("collision_belt")))
    at = _app().run()
    at.selectbox(key="w_example").set_value("collision_belt")
    at.button(key="load_example").click().run()
    assert not at.exception and not at.error
    np.testing.assert_allclose(
        _page_transitions(at)["depth [km]"], _depths_km(expected), rtol=SAME_RTOL
    )


@pytest.mark.parametrize("name", list_examples())
def test_setup_round_trips_every_bundled_example(name):
    """Widgets then mapping give back the very scenario that was loaded (nothing lost)."""
    scenario, setup = state.apply_scenario_text(
        bundled_example(name).read_text(encoding="utf-8"), name
    )
    mapping, notes = state.mapping_from_setup(setup, setup["layers"], load_rocks())
    assert notes == []
    assert scenario_from_mapping(mapping) == scenario


_INLINE_LAWS = """grain_size = "1 mm"

[layers.dislocation]
log10_A = -2.6
A_units = "MPa^-3 s^-1"
n = 3.0
Q = "356 kJ/mol"
citation = "invented values, for a round-trip check only"

[layers.diffusion]
A = "10 MPa^-1 um^3 s^-1"
n = 1.0
grain_size_exponent = 3.0
Q = "170 kJ/mol"
"""


def test_setup_round_trips_inline_laws_with_diffusion():
    """A layer with its own laws (values invented for this check) survives the table: the
    dislocation law shows as a custom row and the diffusion law is carried unchanged."""
    text = bundled_example("demo").read_text(encoding="utf-8")
    inline = text.replace('rock = "plagioclase-wet"\n', _INLINE_LAWS)
    scenario, setup = state.apply_scenario_text(inline, "inline.toml")
    assert setup["layers"].loc[1, state.COL_ROCK] == state.CUSTOM_LAW
    assert setup["layers"].loc[1, state.COL_A] == "10^-2.6 MPa^-3 s^-1"
    mapping, notes = state.mapping_from_setup(setup, setup["layers"], load_rocks())
    assert notes == []
    assert scenario_from_mapping(mapping) == scenario


def test_apply_scenario_text_rejects_malformed_text():
    with pytest.raises(RheologyError, match=r"upload\.toml: malformed TOML at line 2"):
        state.apply_scenario_text("title = 'x'\n[[layers]\n", "upload.toml")


def test_apply_scenario_text_rejects_zero_thickness():
    text = bundled_example("demo").read_text(encoding="utf-8")
    bad = text.replace('thickness = "15 km"', 'thickness = "0 km"')
    with pytest.raises(RheologyError, match=r"layers\[0\]\.thickness: '0 km' must be greater"):
        state.apply_scenario_text(bad, "pasted text")


# ------------------------------------------------------------------ layer table


def _demo_setup():
    return state.apply_scenario_text(bundled_example("demo").read_text(encoding="utf-8"), "demo")[1]


def test_custom_law_with_library_values_gives_the_library_envelope(demo):
    """A custom law typed in with Gleason & Tullis (1995) values (A = 1.1e-4 MPa^-4 s^-1,
    n = 4, Q = 223 kJ/mol; the library row 'qtz-wet-gt95', from memory) reproduces the
    envelope of the library rock: the custom-law cells reach the physics unchanged."""
    setup = _demo_setup()
    layers = setup["layers"].copy()
    layers.loc[0, state.COL_ROCK] = state.CUSTOM_LAW
    layers.loc[0, [state.COL_A, state.COL_N, state.COL_Q, state.COL_V]] = [
        "1.1e-4 MPa^-4 s^-1",
        4.0,
        223.0,
        0.0,
    ]
    mapping, notes = state.mapping_from_setup(setup, layers, load_rocks())
    assert notes == []
    assert mapping["layers"][0]["dislocation"]["A"] == "1.1e-4 MPa^-4 s^-1"
    custom = rheology.analyse(scenario_from_mapping(mapping))
    np.testing.assert_allclose(custom.envelope.strength, demo.envelope.strength, rtol=SAME_RTOL)
    np.testing.assert_allclose(_depths_km(custom), _depths_km(demo), rtol=SAME_RTOL)


def test_unused_cells_are_reported_not_silently_dropped():
    setup = _demo_setup()
    layers = setup["layers"].copy()
    layers.loc[0, state.COL_GRAIN] = 1.0  # wet quartzite has no grain-size-sensitive law
    mapping, notes = state.mapping_from_setup(setup, layers, load_rocks())
    assert "grain_size" not in mapping["layers"][0]
    assert len(notes) == 1 and "grain size" in notes[0] and "quartzite-wet" in notes[0]


def test_grain_size_cell_reaches_a_rock_that_needs_it():
    setup = _demo_setup()
    layers = setup["layers"].copy()
    layers.loc[1, state.COL_ROCK] = "anorthite-wet-composite"
    layers.loc[1, state.COL_GRAIN] = 0.5
    mapping, _ = state.mapping_from_setup(setup, layers, load_rocks())
    scenario = scenario_from_mapping(mapping)
    assert scenario.layers[1].grain_size == pytest.approx(0.5e-3, rel=SAME_RTOL)


def test_missing_grain_size_is_a_named_error():
    setup = _demo_setup()
    layers = setup["layers"].copy()
    layers.loc[1, state.COL_ROCK] = "anorthite-wet-composite"
    mapping, _ = state.mapping_from_setup(setup, layers, load_rocks())
    with pytest.raises(RheologyError, match=r"layers\[1\]\.grain_size: missing"):
        scenario_from_mapping(mapping)


def test_explain_error_names_the_table_row():
    exc = RheologyError("layers[2].density: '-1 kg/m^3' must be greater than zero")
    text = state.explain_error(exc, ["a", "b", "mantle"])
    assert text.startswith("Layer table, row 3 ('mantle'): layers[2].density")


def test_strain_rate_slider_text_and_positions():
    assert state.rate_text(-15.0) == "1e-15 1/s"
    options = state.rate_options()
    assert options[0] == -18.0 and options[-1] == -10.0 and -15.0 in options
    assert len(options) == 81
    # an off-grid rate from a file is added as its own position, not rounded
    off = np.log10(3.17e-14)
    assert off in state.rate_options(off)


# ------------------------------------------------------------------------ downloads


@pytest.fixture(scope="module")
def page_analysis():
    """The analysis the page computes for its default set-up (the demo)."""
    setup = _demo_setup()
    mapping, _ = state.mapping_from_setup(setup, setup["layers"], load_rocks())
    return views.run_analysis(tomli_w.dumps(mapping))


def test_json_download_is_the_api_json(page_analysis, demo):
    assert views.result_json(page_analysis) == outputs.analysis_to_json(demo)


def test_csv_download_reads_back_to_the_api_profile(page_analysis, demo):
    text = views.profile_csv(page_analysis)
    assert text.startswith("# ")
    frame = pd.read_csv(io.StringIO(text), comment="#")
    pd.testing.assert_frame_equal(frame, outputs.profile_frame(demo), check_exact=True)


def test_toml_download_reads_back_to_the_scenario(page_analysis, demo):
    assert parse_scenario(views.scenario_toml(page_analysis)) == demo.scenario


def test_png_download_is_the_strength_figure(page_analysis):
    from PIL import Image

    from rheology.plotting import strength_figure

    data = views.figure_png(page_analysis, dpi=50)
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = strength_figure(page_analysis).get_size_inches()
    with Image.open(io.BytesIO(data)) as image:
        # savefig rounds the pixel size to whole pixels
        assert abs(image.size[0] - width * 50) <= 1 and abs(image.size[1] - height * 50) <= 1


def test_payload_file_names_come_from_the_title(demo):
    names = views.payload_names(demo)
    assert names["toml"] == "mirrowen-platform-demo.toml"
    assert names["csv"].endswith("-profile.csv") and names["png"].endswith(".png")
