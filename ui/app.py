"""The rheology web page: set up a rock column, see where faults give way to flow.

Run with ``streamlit run ui/app.py`` (or ``rheology app``). The page holds no physics:
it turns its widgets into a scenario mapping (:mod:`ui.state`), lets
:func:`rheology.scenario.scenario_from_mapping` check it, calls :func:`rheology.analyse`
and shows the answers (:mod:`ui.views`). The envelope is a chart drawn by the browser
(:mod:`ui.chart`): the server only sends its specification and a few small tables.
Analyses, chart specifications and the library are cached on the scenario text, so a
rerun that does not change the column costs almost nothing; the matplotlib figure is
drawn only when its PNG is downloaded.
"""

from __future__ import annotations

import copy
import sys
from pathlib import Path

_ROOT = Path(__file__).resolve().parents[1]
if str(_ROOT) not in sys.path:  # a source checkout: make `rheology` and `ui` importable
    sys.path.insert(0, str(_ROOT))

import streamlit as st  # noqa: E402
import tomli_w  # noqa: E402

from rheology.answers.point import point_answer  # noqa: E402
from rheology.answers.report import CAUTION  # noqa: E402
from rheology.errors import RheologyError  # noqa: E402
from rheology.library.tables import load_rocks  # noqa: E402
from rheology.model import GEOTHERM_KINDS, GEOTHERM_PARAMETERS  # noqa: E402
from rheology.scenario import bundled_example, list_examples  # noqa: E402
from rheology.units import to_si  # noqa: E402
from ui import chart, state, views  # noqa: E402

#: Widget keys kept when a new scenario replaces the set-up (the loaders themselves).
_LOADER_KEYS = ("w_example", "w_upload", "w_paste")
_FIRST_EXAMPLE = "demo"
#: Extra set-up values of the page itself (not part of the scenario).
_PAGE_DEFAULTS = {
    "companion": "none",
    "probe_depth_km": 10.0,
    "probe_same_rate": True,
    "probe_log_rate": -15.0,
    "probe_load": False,
    "probe_stress_mpa": 50.0,
    "probe_years": 1000.0,
}

st.set_page_config(page_title="rheology · strength of a rock column", layout="wide")


# ------------------------------------------------------------------------------ caches


@st.cache_resource(show_spinner=False)
def rock_library():
    """The rock library (read once per server)."""
    return load_rocks()


@st.cache_data(show_spinner=False)
def example_names() -> list[str]:
    return list_examples()


@st.cache_data(show_spinner=False)
def example_text(name: str) -> str:
    return bundled_example(name).read_text(encoding="utf-8")


@st.cache_resource(show_spinner=False)
def example_setup(name: str) -> dict:
    """Widget values of a bundled example (copy before changing them)."""
    return state.apply_scenario_text(example_text(name), f"example {name!r}")[1]


@st.cache_data(show_spinner=False)
def library_tables():
    return views.library_frame(), views.rock_library_frame()


@st.cache_resource(show_spinner=False, max_entries=64)
def cached_analysis(scenario_text: str):
    """Analysis of a set-up, keyed on its TOML text (errors are not cached)."""
    return views.run_analysis(scenario_text)


@st.cache_resource(show_spinner=False, max_entries=32)
def cached_companion(scenario_text: str, faulting: str):
    return views.run_companion(cached_analysis(scenario_text), faulting)


@st.cache_resource(show_spinner=False, max_entries=64)
def cached_chart_spec(scenario_text: str, companion: str) -> dict:
    """The envelope chart's Vega-Lite specification, keyed like the analysis.

    The browser draws it; streamlit copies the spec before sending it, so the cached
    object is not changed.
    """
    analysis = cached_analysis(scenario_text)
    other = cached_companion(scenario_text, companion) if companion != "none" else None
    return chart.envelope_spec(analysis, other)


# ------------------------------------------------------------------------ set-up state


def _fresh_setup(setup: dict) -> dict:
    fresh = copy.deepcopy(setup)
    for key, value in _PAGE_DEFAULTS.items():
        fresh.setdefault(key, value)
    return fresh


def _install(setup: dict, message: str) -> None:
    """Replace the set-up and reset every set-up widget so it shows the new values."""
    st.session_state["setup"] = _fresh_setup(setup)
    for key in list(st.session_state.keys()):
        if str(key).startswith("w_") and key not in _LOADER_KEYS:
            del st.session_state[key]
    st.session_state["flash"] = ("success", message)


def apply_text(text: str, source: str) -> bool:
    """Apply scenario TOML text (upload or paste); on a bad text keep the set-up.

    Returns True when the text was applied. The message to show is left in
    ``st.session_state["flash"]``.
    """
    try:
        scenario, setup = state.apply_scenario_text(text, source)
    except RheologyError as exc:
        message = state.without_source(str(exc), source)
        st.session_state["flash"] = ("error", f"{source} was not loaded: {message}")
        return False
    except Exception as exc:  # never a traceback on the page
        st.session_state["flash"] = (
            "error",
            f"{source} was not loaded: unexpected {type(exc).__name__}: {exc}",
        )
        return False
    _install(setup, f"Loaded {source}: {scenario.title}")
    return True


def _on_example() -> None:
    name = st.session_state.get("w_example", _FIRST_EXAMPLE)
    try:
        setup = example_setup(name)
    except Exception as exc:  # a broken installation: say so, keep the set-up
        st.session_state["flash"] = (
            "error",
            f"The example {name!r} could not be opened ({type(exc).__name__}: {exc}).",
        )
        return
    _install(setup, f"Loaded the bundled example {name!r}.")


def _on_upload() -> None:
    upload = st.session_state.get("w_upload")
    if upload is None:
        return
    try:
        text = upload.getvalue().decode("utf-8")
    except UnicodeDecodeError:
        st.session_state["flash"] = (
            "error",
            f"{upload.name} was not loaded: it is not UTF-8 text; expected a scenario .toml file",
        )
        return
    apply_text(text, upload.name)


def _on_paste() -> None:
    apply_text(st.session_state.get("w_paste", ""), "the pasted text")


if "setup" not in st.session_state:
    try:
        st.session_state["setup"] = _fresh_setup(example_setup(_FIRST_EXAMPLE))
    except Exception as exc:  # a broken installation, not a user error
        st.error(
            f"The bundled example {_FIRST_EXAMPLE!r} could not be opened "
            f"({type(exc).__name__}: {exc}). Is the package installed completely?"
        )
        st.stop()
S = st.session_state["setup"]


def _number(where, name: str, label: str, **options) -> float:
    value = where.number_input(label, value=float(S[name]), key=f"w_{name}", **options)
    S[name] = float(value)
    return S[name]


def _choice(widget, name: str, label: str, options, labels=None, **extra):
    options = list(options)
    current = S[name] if S[name] in options else options[0]
    chosen = widget(
        label,
        options,
        index=options.index(current),
        key=f"w_{name}",
        format_func=(labels.get if labels else str),
        **extra,
    )
    S[name] = chosen
    return chosen


# ----------------------------------------------------------------------------- sidebar

side = st.sidebar
side.header("Set-up")
with side.expander("Open a scenario: example, file or pasted text", expanded=False):
    names = example_names()
    st.selectbox(
        "Bundled example",
        names,
        index=names.index(_FIRST_EXAMPLE) if _FIRST_EXAMPLE in names else 0,
        key="w_example",
        format_func=lambda n: n.replace("_", " "),
    )
    st.button("Load this example", key="load_example", on_click=_on_example)
    st.file_uploader("Scenario file (.toml)", type=["toml"], key="w_upload", on_change=_on_upload)
    st.text_area("…or paste scenario text (TOML)", key="w_paste", height=160)
    st.button("Use the pasted text", key="apply_paste", on_click=_on_paste)

S["title"] = side.text_input("Title", value=S["title"], key="w_title")

side.subheader("Loading")
S["log_rate"] = side.select_slider(
    "Strain rate [1/s]",
    options=S["rate_options"],
    value=S["log_rate"],
    key="w_log_rate",
    format_func=state.rate_text,
    help="Axial strain rate, on a logarithmic scale from 1e-18 to 1e-10 1/s. "
    "Geological rates are often near 1e-15 1/s (common practice).",
)
_choice(side.radio, "faulting", "Faulting regime", state.FAULTING_CHOICES, state.FAULTING_LABELS)
pore = _choice(
    side.selectbox, "pore_kind", "Pore-fluid pressure", state.PORE_LABELS, state.PORE_LABELS
)
if pore == "ratio":
    _number(
        side,
        "pore_ratio",
        "pore pressure / overburden [–]",
        min_value=0.0,
        step=0.01,
        format="%.3f",
        help="0 is dry rock; about 0.37 is a water column over crustal rock.",
    )
elif pore == "overpressured":
    _number(side, "over_top_km", "overpressure starts at [km]", min_value=0.0, step=0.5)
    _number(
        side,
        "over_ratio_below",
        "share of extra overburden carried by the fluid [–]",
        min_value=0.0,
        step=0.05,
    )
friction = _choice(
    side.radio,
    "friction_kind",
    "Friction on faults",
    state.FRICTION_LABELS,
    state.FRICTION_LABELS,
    horizontal=True,
)
if friction == "constant":
    _number(side, "mu", "friction coefficient [–]", min_value=0.0, step=0.05)
    _number(side, "cohesion_mpa", "cohesion [MPa]", min_value=0.0, step=5.0)

side.subheader("Temperature")
kind = _choice(side.selectbox, "geo_kind", "Geotherm", GEOTHERM_KINDS, state.GEOTHERM_LABELS)
_STEPS = {
    "surface_temperature": 5.0,
    "surface_heat_flow": 1.0,
    "gradient": 1.0,
    "surface_heat_production": 0.1,
    "decay_depth": 1.0,
    "conductivity": 0.1,
    "age": 5.0,
    "mantle_temperature": 10.0,
    "diffusivity": 0.1,
    "plate_thickness": 5.0,
    "potential_temperature": 10.0,
    "adiabatic_gradient": 0.05,
}
for parameter in ("surface_temperature",) + tuple(GEOTHERM_PARAMETERS[kind]):
    label, _unit, minimum = state.GEOTHERM_INPUTS[parameter]
    _number(side, parameter, label, min_value=minimum, step=_STEPS[parameter], format="%g")
if kind == "layered-steady":
    side.caption("Heat production and conductivity come from the layer table.")
S["cap_adiabat"] = side.checkbox(
    "Cap temperatures at the mantle adiabat", value=bool(S["cap_adiabat"]), key="w_cap_adiabat"
)
if S["cap_adiabat"]:
    for parameter in ("potential_temperature", "adiabatic_gradient"):
        label, _unit, minimum = state.GEOTHERM_INPUTS[parameter]
        _number(side, parameter, label, min_value=minimum, step=_STEPS[parameter], format="%g")

side.subheader("Depth grid")
_number(side, "max_depth_km", "deepest point [km]", min_value=0.0, step=5.0, format="%g")
_number(
    side,
    "depth_step_km",
    "step [km]",
    min_value=0.0,
    step=0.05,
    format="%g",
    help="Transitions are found more finely than the step; a finer step mainly "
    "sharpens the figure and the tables of bands.",
)


side.divider()
side.caption(
    "Screening estimates from laboratory flow laws; not for engineering design. "
    "The full caution is shown beside the results."
)

# -------------------------------------------------------------------------------- main

st.title("Strength of a rock column")
st.caption(
    "Set up the layers, the temperature and the loading; the envelope shows where "
    "rock breaks on faults and where it flows. Every change is applied at once."
)

flash = st.session_state.pop("flash", None)
if flash is not None:
    (st.success if flash[0] == "success" else st.error)(flash[1])

rocks = rock_library()
rock_ids = list(rocks) + [state.CUSTOM_LAW]
_num = st.column_config.NumberColumn
layer_config = {
    state.COL_NAME: st.column_config.TextColumn(state.COL_NAME, required=True),
    state.COL_THICKNESS: _num(
        state.COL_THICKNESS,
        min_value=0.0,
        format="%g",
        help="The last layer reaches down to the deepest point.",
    ),
    state.COL_ROCK: st.column_config.SelectboxColumn(
        state.COL_ROCK,
        options=rock_ids,
        required=True,
        help="A rock of the library (see the flow-law library tab), or "
        f"'{state.CUSTOM_LAW}' with the custom A, n, Q and V columns.",
    ),
    state.COL_DENSITY: _num(state.COL_DENSITY, min_value=0.0, format="%g"),
    state.COL_HEAT: _num(state.COL_HEAT, min_value=0.0, format="%g"),
    state.COL_CONDUCTIVITY: _num(state.COL_CONDUCTIVITY, min_value=0.0, format="%g"),
    state.COL_SHEAR: _num(
        state.COL_SHEAR,
        min_value=0.0,
        format="%g",
        help="Sets the Maxwell time of the depth question.",
    ),
    state.COL_GRAIN: _num(
        state.COL_GRAIN, min_value=0.0, format="%g", help="Only for rocks with diffusion creep."
    ),
    state.COL_FUGACITY: _num(
        state.COL_FUGACITY,
        min_value=0.0,
        format="%g",
        help="Only for rocks whose law has a water-fugacity term.",
    ),
    state.COL_OH: _num(
        state.COL_OH,
        min_value=0.0,
        format="%g",
        help="Only for rocks whose law takes an OH content.",
    ),
    state.COL_A: st.column_config.TextColumn(
        state.COL_A,
        help="Pre-factor with its units, triaxial convention, e.g. '1.1e-4 MPa^-4 s^-1' for n = 4.",
    ),
    state.COL_N: _num(state.COL_N, min_value=0.0, format="%g"),
    state.COL_Q: _num(state.COL_Q, min_value=0.0, format="%g"),
    state.COL_V: _num(state.COL_V, format="%g"),
}
with st.expander("Layers, top down: edit any cell, add or delete rows", expanded=True):
    edited = st.data_editor(
        S["layers"],
        key="w_layers",
        column_config=layer_config,
        num_rows="dynamic",
        hide_index=True,
        width="stretch",
    )
    st.caption(
        "A blank density, heat production, conductivity or shear modulus is taken "
        "from the rock's typical values. Grain size and water are asked only by "
        "rocks whose laws use them."
    )

error = None
layer_names = state.layer_names(edited)
try:
    mapping, notes = state.mapping_from_setup(S, edited, rocks)
    scenario_text = tomli_w.dumps(mapping)
    analysis = cached_analysis(scenario_text)
    st.session_state["last_good"] = scenario_text
except RheologyError as exc:
    error, notes = state.explain_error(exc, layer_names), []
except Exception as exc:  # never a traceback on the page
    error, notes = (
        (
            f"Unexpected problem ({type(exc).__name__}: {exc}). Please check the "
            "set-up; the last good result is kept."
        ),
        [],
    )
for note in notes:
    st.info(note)
if error is not None:
    st.error(f"**This set-up cannot be used.** {error}")
    scenario_text = st.session_state.get("last_good")
    if scenario_text is None:
        st.warning(CAUTION)
        st.stop()
    analysis = cached_analysis(scenario_text)
    st.caption("The results below are still those of the last set-up that worked.")

*metric_cols, pick_col = st.columns([1, 1, 1, 1.5], gap="medium")
for where, (label, value) in zip(metric_cols, views.headline(analysis).items()):
    where.metric(label, value)
with pick_col:
    others = ["none"] + [r for r in state.FAULTING_CHOICES if r != analysis.scenario.faulting]
    if S["companion"] not in others:
        S["companion"] = "none"
    companion = _choice(
        st.selectbox,
        "companion",
        "Draw a second regime beside it",
        others,
        {"none": "no, one regime only", **state.FAULTING_LABELS},
    )
try:
    spec = cached_chart_spec(scenario_text, companion)
except Exception as exc:  # never a traceback on the page
    st.error(f"The figure could not be drawn ({type(exc).__name__}: {exc}).")
else:
    st.vega_lite_chart(spec, width="content", key="envelope_chart")
    st.caption(
        "Strength envelope (differential stress σ1 − σ3), governing mechanism and "
        "geotherm against depth. Dashed lines: transitions; grey lines: layer boundaries; "
        "violet shading: semi-brittle bands. Point at any depth for its numbers; the "
        "figure as a PNG is under 'Take the numbers away'."
    )
words_col, caution_col = st.columns([1.7, 1], gap="medium")
with words_col:
    st.markdown("**In plain words**")
    st.markdown("\n".join(f"- {line}" for line in views.summary_lines(analysis)))
with caution_col:
    st.warning(CAUTION, icon="⚠️")

_fmt = {"format": "%.2f"}


def show_transitions(analysis) -> None:
    lines = views.transition_lines(analysis)
    st.markdown(
        "\n".join(f"- {line}" for line in lines)
        if lines
        else "No transition: one mechanism governs the whole column."
    )
    st.dataframe(
        views.transitions_frame(analysis),
        hide_index=True,
        column_config={
            "depth [km]": _num(**_fmt),
            "temperature [°C]": _num(format="%.0f"),
            "stress [MPa]": _num(format="%.0f"),
        },
    )


def show_bands(analysis) -> None:
    st.dataframe(
        views.bands_frame(analysis),
        hide_index=True,
        width="stretch",
        column_config={"from [km]": _num(**_fmt), "to [km]": _num(**_fmt)},
    )
    st.caption(
        "Band edges are at the depth-grid resolution; the transitions tab gives the refined depths."
    )


def show_layer_strength(analysis) -> None:
    left, right = st.columns([1.4, 1])
    with left:
        st.markdown("**Depth-integrated strength**")
        st.dataframe(
            views.layer_strength_frame(analysis),
            hide_index=True,
            column_config={
                "integrated strength [TN/m]": _num(format="%.3g"),
                "share of the column [%]": _num(format="%.0f"),
            },
        )
    with right:
        elastic = analysis.elastic
        st.metric(
            "effective elastic thickness",
            views.km(elastic.te, 1),
            help="From the mechanically strong depth ranges (Burov & Diament 1995).",
        )
        st.caption(
            "Strong layers coupled: their thicknesses add."
            if elastic.coupled
            else "Strong layers decoupled by a weak channel: Te = (Σ h³)^(1/3)."
        )
        st.dataframe(
            views.competent_frame(analysis),
            hide_index=True,
            column_config={c: _num(**_fmt) for c in views.COMPETENT_COLUMNS},
        )


def show_point_question(analysis) -> None:
    a, b, c = st.columns(3)
    depth_km = _number(a, "probe_depth_km", "depth [km]", min_value=0.0, step=0.5, format="%g")
    S["probe_same_rate"] = b.checkbox(
        "use the column's strain rate", value=bool(S["probe_same_rate"]), key="w_probe_same_rate"
    )
    probe_rate = None
    if not S["probe_same_rate"]:
        if S["probe_log_rate"] not in S["rate_options"]:
            S["probe_log_rate"] = S["log_rate"]
        S["probe_log_rate"] = b.select_slider(
            "strain rate here [1/s]",
            options=S["rate_options"],
            value=S["probe_log_rate"],
            key="w_probe_log_rate",
            format_func=state.rate_text,
        )
        probe_rate = 10.0 ** S["probe_log_rate"]
    S["probe_load"] = c.checkbox(
        "test a load held for a time", value=bool(S["probe_load"]), key="w_probe_load"
    )
    stress = duration = None
    if S["probe_load"]:
        megapascals = _number(
            c,
            "probe_stress_mpa",
            "differential stress [MPa]",
            min_value=0.0,
            step=10.0,
            format="%g",
        )
        years = _number(
            c, "probe_years", "held for [years]", min_value=0.0, step=100.0, format="%g"
        )
        stress = to_si(megapascals, "MPa", "stress")
        duration = to_si(years, "year", "duration")
    try:
        answer = point_answer(
            analysis.scenario,
            depth_km * 1e3,
            strain_rate=probe_rate,
            stress=stress,
            duration=duration,
        )
    except RheologyError as exc:
        st.error(str(exc))
    else:
        st.info(answer.sentence())
        st.dataframe(views.point_frame(answer), hide_index=True)


def _filter(frame, needle: str):
    text = frame.astype(str).apply(lambda column: column.str.lower())
    keep = text.apply(lambda column: column.str.contains(needle, regex=False)).any(axis=1)
    return frame[keep]


def show_library() -> None:
    laws, rock_table = library_tables()
    search = st.text_input("Filter (rock, mechanism, citation, status…)", key="w_library_filter")
    if search.strip():
        needle = search.strip().lower()
        laws, rock_table = _filter(laws, needle), _filter(rock_table, needle)
    st.markdown(
        "**Flow laws** (A as published, with its units; Q [kJ/mol], V [cm³/mol]; "
        "'verification' says whether the values were checked against the paper)"
    )
    st.dataframe(laws, hide_index=True, width="stretch")
    st.markdown("**Rocks** a layer can name")
    st.dataframe(rock_table, hide_index=True, width="stretch")


def show_files(analysis, scenario_text: str, companion: str) -> None:
    names = views.payload_names(analysis)
    st.markdown("Files of the result shown above (units in every column name and key).")
    other = cached_companion(scenario_text, companion) if companion != "none" else None
    buttons = (
        ("Scenario (.toml)", lambda: views.scenario_toml(analysis), "toml", "application/toml"),
        ("Profile table (.csv)", lambda: views.profile_csv(analysis), "csv", "text/csv"),
        ("Full result (.json)", lambda: views.result_json(analysis), "json", "application/json"),
        ("Figure (.png)", lambda: views.figure_png(analysis, other), "png", "image/png"),
    )
    # the payloads are made only when a button is pressed (a callable as data)
    for where, (label, payload, kind, mime) in zip(st.columns(4), buttons):
        where.download_button(
            label,
            data=payload,
            file_name=names[kind],
            mime=mime,
            on_click="ignore",
            key=f"download_{kind}",
        )
    st.caption(
        "The CSV starts with one comment line; in Python read it with "
        "pandas.read_csv(path, comment='#'). The scenario file can be opened again "
        "here or used with the rheology command line."
    )


TAB_NAMES = (
    "Transitions",
    "Faults or flow, by depth",
    "Strength of each layer",
    "Ask about one depth",
    "Flow-law library",
    "Take the numbers away",
)
# Only the open tab is drawn: switching tabs reruns the page from the caches.
tabs = st.tabs(list(TAB_NAMES), key="view_tab", on_change="rerun")
sections = (
    lambda: show_transitions(analysis),
    lambda: show_bands(analysis),
    lambda: show_layer_strength(analysis),
    lambda: show_point_question(analysis),
    show_library,
    lambda: show_files(analysis, scenario_text, companion),
)
for tab, section in zip(tabs, sections):
    if tab.open:
        with tab:
            try:
                section()
            except Exception as exc:  # never a traceback on the page
                st.error(f"This part of the page failed ({type(exc).__name__}: {exc}).")
