"""The page's set-up: a scenario mapping turned into widget values and back again.

Nothing here computes physics and nothing imports streamlit, so the conversion can be
tested on its own. The set-up is a plain dict of widget values (numbers in the units
the widgets show) plus the layer table as a pandas DataFrame. :func:`setup_from_mapping`
fills it from a scenario mapping (the file schema of :mod:`rheology.scenario`, values as
strings with units) and :func:`mapping_from_setup` writes it back into that schema, which
:func:`rheology.scenario.scenario_from_mapping` then checks. Nothing the page cannot show
is lost on the way: an inline diffusion law, an optional geotherm conductivity and the
exact strain-rate and diffusivity texts are carried along unchanged.
"""

from __future__ import annotations

import copy
import math
import re
from typing import Any

import pandas as pd

from rheology.errors import RheologyError
from rheology.model import GEOTHERM_KINDS, GEOTHERM_PARAMETERS
from rheology.physics.friction import REGIMES
from rheology.units import as_quantity

#: Choice in the rock column for a layer with its own dislocation-creep law.
CUSTOM_LAW = "custom power law"

# Layer-table columns (units in the names).
COL_NAME = "name"
COL_THICKNESS = "thickness [km]"
COL_ROCK = "rock"
COL_DENSITY = "density [kg/m³]"
COL_HEAT = "heat production [µW/m³]"
COL_CONDUCTIVITY = "conductivity [W/m/K]"
COL_SHEAR = "shear modulus [GPa]"
COL_GRAIN = "grain size [mm]"
COL_FUGACITY = "water fugacity [MPa]"
COL_OH = "OH content [H/10⁶ Si]"
COL_A = "custom A [with units]"
COL_N = "custom n [–]"
COL_Q = "custom Q [kJ/mol]"
COL_V = "custom V [cm³/mol]"

LAYER_COLUMNS = (
    COL_NAME,
    COL_THICKNESS,
    COL_ROCK,
    COL_DENSITY,
    COL_HEAT,
    COL_CONDUCTIVITY,
    COL_SHEAR,
    COL_GRAIN,
    COL_FUGACITY,
    COL_OH,
    COL_A,
    COL_N,
    COL_Q,
    COL_V,
)
TEXT_COLUMNS = (COL_NAME, COL_ROCK, COL_A)
NUMBER_COLUMNS = tuple(c for c in LAYER_COLUMNS if c not in TEXT_COLUMNS)

#: Numeric layer cells that map one-to-one onto a scenario key: (key, unit written).
_LAYER_QUANTITIES = {
    COL_THICKNESS: ("thickness", "km"),
    COL_DENSITY: ("density", "kg/m^3"),
    COL_HEAT: ("heat_production", "uW/m^3"),
    COL_CONDUCTIVITY: ("conductivity", "W/m/K"),
    COL_SHEAR: ("shear_modulus", "GPa"),
}

#: Widget label, unit shown (and written) and the smallest value the widget accepts, for
#: each geotherm parameter. Diffusivity is shown in mm^2/s (= 1e-6 m^2/s).
GEOTHERM_INPUTS: dict[str, tuple[str, str, float | None]] = {
    "surface_temperature": ("surface temperature [°C]", "degC", -273.15),
    "surface_heat_flow": ("surface heat flow [mW/m²]", "mW/m^2", 0.0),
    "gradient": ("temperature gradient [K/km]", "K/km", 0.0),
    "surface_heat_production": ("heat production at the surface [µW/m³]", "uW/m^3", 0.0),
    "decay_depth": ("decay depth of heat production [km]", "km", 0.0),
    "conductivity": ("thermal conductivity [W/m/K]", "W/m/K", 0.0),
    "age": ("age of the plate [Myr]", "Myr", 0.0),
    "mantle_temperature": ("mantle temperature [°C]", "degC", -273.15),
    "diffusivity": ("thermal diffusivity [mm²/s]", "mm^2/s", 0.0),
    "plate_thickness": ("plate thickness [km]", "km", 0.0),
    "potential_temperature": ("mantle potential temperature [°C]", "degC", -273.15),
    "adiabatic_gradient": ("adiabat gradient [K/km]", "K/km", 0.0),
}

#: Plain-words names of the geotherm kinds (our own wording).
GEOTHERM_LABELS = {
    "linear": "constant gradient",
    "layered-steady": "steady, heat production per layer",
    "exponential-heat": "steady, heat production fading down",
    "half-space": "cooling half-space (ocean)",
    "plate": "cooling plate (ocean)",
}

PORE_LABELS = {
    "ratio": "fixed fraction of overburden",
    "hydrostatic": "hydrostatic (open water column)",
    "overpressured": "overpressured below a depth",
}

#: Faulting regimes in the order the page offers them.
FAULTING_CHOICES = tuple(REGIMES)

FAULTING_LABELS = {
    "thrust": "thrust (compression)",
    "strike-slip": "strike-slip",
    "normal": "normal (extension)",
}

FRICTION_LABELS = {
    "byerlee": "Byerlee (1978) rule",
    "constant": "constant coefficient",
}

#: Bounds of the strain-rate slider [log10 1/s] and its step.
RATE_MIN, RATE_MAX, RATE_STEP = -18.0, -10.0, 0.1

#: Values for widgets the loaded scenario does not set (e.g. the parameters of another
#: geotherm kind, shown when the user switches kind). Illustrative, not recommendations.
DEFAULTS: dict[str, Any] = {
    "title": "my column",
    "log_rate": -15.0,
    "faulting": "thrust",
    "pore_kind": "ratio",
    "pore_ratio": 0.37,
    "over_top_km": 3.0,
    "over_ratio_below": 0.8,
    "friction_kind": "byerlee",
    "mu": 0.6,
    "cohesion_mpa": 0.0,
    "max_depth_km": 80.0,
    "depth_step_km": 0.05,
    "geo_kind": "layered-steady",
    "surface_temperature": 10.0,
    "surface_heat_flow": 65.0,
    "gradient": 25.0,
    "surface_heat_production": 2.5,
    "decay_depth": 10.0,
    "conductivity": 2.5,
    "age": 60.0,
    "mantle_temperature": 1350.0,
    "diffusivity": 1.0,
    "plate_thickness": 125.0,
    "cap_adiabat": False,
    "potential_temperature": 1350.0,
    "adiabatic_gradient": 0.4,
}

_LOG10_TEXT = re.compile(r"^\s*10\^(?P<log>[+-]?[0-9.eE+-]+)\s+(?P<units>.+?)\s*$")
_LAYER_PATH = re.compile(r"^layers\[(?P<index>\d+)\]")


# ----------------------------------------------------------------------------- reading


def _magnitude(text: Any, unit: str, field: str) -> float:
    """The number of ``text`` (a string with units) expressed in ``unit``."""
    if isinstance(text, int | float) and not isinstance(text, bool):
        return float(text)
    return float(as_quantity(text, unit, field).to(unit).magnitude)


def _tidy(value: float) -> float:
    """Round a converted value to 12 significant digits for display (1.0000000000000002 -> 1)."""
    return float(f"{value:.12g}")


def rate_log10(text: str) -> float:
    """log10 of a strain-rate string such as ``"1e-15 1/s"`` (value in 1/s)."""
    return math.log10(_magnitude(text, "1/s", "strain_rate"))


def rate_text(log_rate: float) -> str:
    """The strain rate shown for a slider position, e.g. ``-15.0 -> "1e-15 1/s"``."""
    return f"{10.0**log_rate:.3g} 1/s"


def rate_options(extra: float | None = None) -> tuple[float, ...]:
    """Positions of the strain-rate slider [log10 1/s], with ``extra`` added if off the grid."""
    count = round((RATE_MAX - RATE_MIN) / RATE_STEP)
    grid = {round(RATE_MIN + RATE_STEP * i, 1) for i in range(count + 1)}
    if extra is not None and math.isfinite(extra):
        grid.add(float(extra))
    return tuple(sorted(grid))


def empty_layer_frame() -> pd.DataFrame:
    """A layer table with no rows and the right column types."""
    frame = pd.DataFrame({c: pd.Series(dtype="object") for c in TEXT_COLUMNS})
    for column in NUMBER_COLUMNS:
        frame[column] = pd.Series(dtype="float64")
    return frame[list(LAYER_COLUMNS)]


def _layer_row(layer: dict[str, Any], index: int) -> dict[str, Any]:
    path = f"layers[{index}]"
    row: dict[str, Any] = {c: None for c in TEXT_COLUMNS}
    row.update({c: math.nan for c in NUMBER_COLUMNS})
    row[COL_NAME] = layer.get("name")
    for column, (key, unit) in _LAYER_QUANTITIES.items():
        if key in layer:
            row[column] = _magnitude(layer[key], unit, f"{path}.{key}")
    if "grain_size" in layer:
        row[COL_GRAIN] = _magnitude(layer["grain_size"], "mm", f"{path}.grain_size")
    if "water_fugacity" in layer:
        row[COL_FUGACITY] = _magnitude(layer["water_fugacity"], "MPa", f"{path}.water_fugacity")
    if "water_content" in layer:
        row[COL_OH] = float(layer["water_content"])
    if "rock" in layer:
        row[COL_ROCK] = layer["rock"]
    elif "dislocation" in layer:
        law = layer["dislocation"]
        row[COL_ROCK] = CUSTOM_LAW
        if "A" in law:
            row[COL_A] = law["A"]
        elif "log10_A" in law:
            row[COL_A] = f"10^{law['log10_A']!r} {law.get('A_units', '')}".strip()
        if "n" in law:
            row[COL_N] = float(law["n"])
        if "Q" in law:
            row[COL_Q] = _magnitude(law["Q"], "kJ/mol", f"{path}.dislocation.Q")
        if "V" in law:
            row[COL_V] = _magnitude(law["V"], "cm^3/mol", f"{path}.dislocation.V")
    return row


def layer_frame_from_mapping(mapping: dict[str, Any]) -> pd.DataFrame:
    """The layer table (one row per ``[[layers]]`` entry) of a scenario mapping."""
    rows = [_layer_row(layer, i) for i, layer in enumerate(mapping.get("layers", []))]
    if not rows:
        return empty_layer_frame()
    frame = pd.DataFrame.from_records(rows, columns=list(LAYER_COLUMNS))
    for column in NUMBER_COLUMNS:
        frame[column] = frame[column].astype("float64")
    for column in TEXT_COLUMNS:
        frame[column] = frame[column].astype("object")
    return frame


def setup_from_mapping(mapping: dict[str, Any]) -> dict[str, Any]:
    """Widget values of the page for a scenario mapping in the file schema.

    Parameters
    ----------
    mapping : dict
        As returned by :func:`rheology.scenario.scenario_to_mapping` (every dimensional
        value a string in the writer's units).

    Returns
    -------
    dict
        Widget values (keys of :data:`DEFAULTS`), ``"layers"`` (the layer table as a
        DataFrame), ``"rate_options"`` (slider positions) and ``"carry"`` (what the
        page does not show but must write back unchanged).
    """
    setup = copy.deepcopy(DEFAULTS)
    carry: dict[str, Any] = {"exact": {}, "diffusion": {}, "citation": {}}
    setup["title"] = mapping.get("title", DEFAULTS["title"])
    if "strain_rate" in mapping:
        log_rate = rate_log10(mapping["strain_rate"])
        setup["log_rate"] = log_rate
        carry["exact"]["strain_rate"] = (log_rate, mapping["strain_rate"])
    setup["rate_options"] = rate_options(setup["log_rate"])
    setup["faulting"] = mapping.get("faulting", DEFAULTS["faulting"])
    for key, name in (("max_depth", "max_depth_km"), ("depth_step", "depth_step_km")):
        if key in mapping:
            setup[name] = _magnitude(mapping[key], "km", key)

    if "overpressure" in mapping:
        over = mapping["overpressure"]
        setup["pore_kind"] = "overpressured"
        setup["over_top_km"] = _magnitude(over["top_depth"], "km", "overpressure.top_depth")
        setup["over_ratio_below"] = float(over["ratio_below"])
    elif mapping.get("pore_pressure") == "hydrostatic":
        setup["pore_kind"] = "hydrostatic"
    elif "pore_pressure_ratio" in mapping:
        setup["pore_kind"] = "ratio"
        setup["pore_ratio"] = float(mapping["pore_pressure_ratio"])

    friction = mapping.get("friction") or {}
    if "mu" in friction:
        setup["friction_kind"] = "constant"
        setup["mu"] = float(friction["mu"])
        if "cohesion" in friction:
            setup["cohesion_mpa"] = _magnitude(friction["cohesion"], "MPa", "friction.cohesion")

    geotherm = mapping.get("geotherm") or {}
    kind = geotherm.get("kind", DEFAULTS["geo_kind"])
    setup["geo_kind"] = kind
    for key, (_label, unit, _minimum) in GEOTHERM_INPUTS.items():
        if key in geotherm:
            value = _tidy(_magnitude(geotherm[key], unit, f"geotherm.{key}"))
            setup[key] = value
            carry["exact"][f"geotherm.{key}"] = (value, geotherm[key])
    setup["cap_adiabat"] = "potential_temperature" in geotherm
    if (
        kind in GEOTHERM_KINDS
        and "conductivity" in geotherm
        and ("conductivity" not in GEOTHERM_PARAMETERS[kind])
    ):
        # optional conductivity of linear, half-space and plate (heat flow only)
        carry["geotherm_optional"] = (kind, {"conductivity": geotherm["conductivity"]})

    for layer in mapping.get("layers", []):
        name = layer.get("name")
        if "diffusion" in layer:
            carry["diffusion"][name] = copy.deepcopy(layer["diffusion"])
        if "dislocation" in layer and "citation" in layer["dislocation"]:
            carry["citation"][name] = layer["dislocation"]["citation"]
    setup["layers"] = layer_frame_from_mapping(mapping)
    setup["carry"] = carry
    return setup


def apply_scenario_text(text: str, source: str) -> tuple[Any, dict[str, Any]]:
    """Check scenario TOML text (an upload or a paste) and return it with its set-up.

    Parameters
    ----------
    text : str
        TOML in the scenario schema.
    source : str
        Name used in error messages (file name, "pasted text", an example name).

    Returns
    -------
    (rheology.model.Scenario, dict)
        The scenario and the widget values of :func:`setup_from_mapping`.

    Raises
    ------
    rheology.errors.RheologyError
        Malformed TOML or an invalid field (the message gives the field path).
    """
    from rheology.scenario import parse_scenario, scenario_to_mapping

    scenario = parse_scenario(text, source=source)
    return scenario, setup_from_mapping(scenario_to_mapping(scenario))


def without_source(message: str, source: str) -> str:
    """``message`` without the ``source`` it names, for a page that names it already.

    The scenario reader starts a malformed-TOML message with ``"<source>: "`` and ends a
    field error with ``" (in <source>)"``; the page says "<source> was not loaded: ..."
    itself, so both are dropped.

    Parameters
    ----------
    message : str
        An error message of :func:`apply_scenario_text`.
    source : str
        The name given to it (a file name, "the pasted text").

    Returns
    -------
    str
    """
    prefix, suffix = f"{source}: ", f" (in {source})"
    if message.startswith(prefix):
        message = message[len(prefix) :]
    if message.endswith(suffix):
        message = message[: -len(suffix)]
    return message


# ----------------------------------------------------------------------------- writing


def _blank(value: Any) -> bool:
    if value is None:
        return True
    if isinstance(value, str):
        return not value.strip()
    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False


def _number_text(value: float, unit: str) -> str:
    return f"{float(value)!r} {unit}"


def _exact_or(carry: dict[str, Any], field: str, value: float, unit: str) -> str:
    """The loaded text of ``field`` if the widget still shows its value, else a new text."""
    shown, text = carry.get("exact", {}).get(field, (None, None))
    if shown is not None and value == shown:
        return text
    return _number_text(value, unit)


def _custom_law(row: pd.Series, name: str, carry: dict[str, Any]) -> dict[str, Any]:
    law: dict[str, Any] = {}
    a_text = row.get(COL_A)
    if not _blank(a_text):
        match = _LOG10_TEXT.match(str(a_text))
        if match:
            try:
                law["log10_A"] = float(match["log"])
                law["A_units"] = match["units"]
            except ValueError:
                law = {"A": str(a_text).strip()}
        else:
            law["A"] = str(a_text).strip()
    if not _blank(row.get(COL_N)):
        law["n"] = float(row[COL_N])
    if not _blank(row.get(COL_Q)):
        law["Q"] = _number_text(row[COL_Q], "kJ/mol")
    if not _blank(row.get(COL_V)):
        law["V"] = _number_text(row[COL_V], "cm^3/mol")
    if name in carry.get("citation", {}):
        law["citation"] = carry["citation"][name]
    return law


def _rock_needs(rock_id: str, rocks) -> tuple[bool, str | None]:
    """(needs a grain size, water form 'fugacity' / 'OH' / None) of a library rock."""
    rock = rocks.get(rock_id)
    if rock is None:
        return False, None
    forms = sorted({law.water_form for law in rock.laws if law.needs_water})
    return rock.needs_grain_size, (forms[0] if forms else None)


def _row_name(value: Any, index: int) -> str:
    return str(value).strip() if not _blank(value) else f"layer {index + 1}"


def layer_names(layers: pd.DataFrame) -> list[str]:
    """Names of the rows of the layer table (a blank name becomes 'layer <row>')."""
    if COL_NAME not in layers:
        return []
    return [_row_name(value, i) for i, value in enumerate(layers[COL_NAME].tolist())]


def _layer_mapping(
    row: pd.Series, index: int, carry: dict[str, Any], rocks, notes: list[str]
) -> dict[str, Any]:
    name = _row_name(row.get(COL_NAME), index)
    where = f"Layer table, row {index + 1} ({name!r})"
    layer: dict[str, Any] = {"name": name}
    for column, (key, unit) in _LAYER_QUANTITIES.items():
        if not _blank(row.get(column)):
            layer[key] = _number_text(row[column], unit)
    rock = row.get(COL_ROCK)
    needs_grain, water_form = False, None
    custom_cells = [c for c in (COL_A, COL_N, COL_Q, COL_V) if not _blank(row.get(c))]
    if _blank(rock):
        pass  # the scenario check reports the missing rock
    elif rock == CUSTOM_LAW:
        layer["dislocation"] = _custom_law(row, name, carry)
        if name in carry.get("diffusion", {}):
            layer["diffusion"] = copy.deepcopy(carry["diffusion"][name])
            needs_grain = True
    else:
        layer["rock"] = str(rock)
        needs_grain, water_form = _rock_needs(str(rock), rocks)
        if custom_cells:
            notes.append(
                f"{where}: the custom-law cells are not used because the rock is "
                f"{rock!r}; choose {CUSTOM_LAW!r} to use them."
            )
    cells = (
        (COL_GRAIN, needs_grain, "grain_size", "mm", "it has no grain-size-sensitive law"),
        (
            COL_FUGACITY,
            water_form == "fugacity",
            "water_fugacity",
            "MPa",
            "it takes no water fugacity",
        ),
        (COL_OH, water_form == "OH", "water_content", None, "it takes no OH content"),
    )
    for column, used, key, unit, why in cells:
        value = row.get(column)
        if used:
            if not _blank(value):
                layer[key] = float(value) if unit is None else _number_text(value, unit)
        elif not _blank(value) and not _blank(rock):
            notes.append(f"{where}: {column} is not used by rock {rock!r} ({why}).")
    return layer


def _strain_rate_text(setup: dict[str, Any], carry: dict[str, Any]) -> str:
    """The loaded strain-rate text while the slider stays on it, else the slider's rate."""
    shown, text = carry.get("exact", {}).get("strain_rate", (None, None))
    if shown is not None and setup["log_rate"] == shown:
        return text
    return rate_text(setup["log_rate"])


def _geotherm_mapping(setup: dict[str, Any], carry: dict[str, Any]) -> dict[str, Any]:
    kind = setup["geo_kind"]
    geotherm: dict[str, Any] = {"kind": kind}
    keys = ("surface_temperature",) + tuple(GEOTHERM_PARAMETERS.get(kind, ()))
    if setup.get("cap_adiabat"):
        keys += ("potential_temperature", "adiabatic_gradient")
    for key in keys:
        unit = GEOTHERM_INPUTS[key][1]
        geotherm[key] = _exact_or(carry, f"geotherm.{key}", setup[key], unit)
    optional = carry.get("geotherm_optional")
    if optional and optional[0] == kind:
        geotherm.update(optional[1])
    return geotherm


def mapping_from_setup(
    setup: dict[str, Any], layers: pd.DataFrame, rocks
) -> tuple[dict[str, Any], list[str]]:
    """The scenario mapping (file schema) for the page's widget values and layer table.

    Parameters
    ----------
    setup : dict
        Widget values (see :func:`setup_from_mapping`).
    layers : pandas.DataFrame
        The layer table as edited (columns :data:`LAYER_COLUMNS`).
    rocks : mapping of str to rheology.library.Rock
        The rock library, to know which rocks use a grain size or a water value.

    Returns
    -------
    (dict, list of str)
        The mapping for :func:`rheology.scenario.scenario_from_mapping`, and notes
        about table cells that the chosen rocks do not use.
    """
    carry = setup.get("carry", {})
    notes: list[str] = []
    mapping: dict[str, Any] = {
        "title": str(setup["title"]).strip() or DEFAULTS["title"],
        "strain_rate": _strain_rate_text(setup, carry),
        "faulting": str(setup["faulting"]),
        "max_depth": _number_text(setup["max_depth_km"], "km"),
        "depth_step": _number_text(setup["depth_step_km"], "km"),
    }
    pore = setup["pore_kind"]
    if pore == "ratio":
        mapping["pore_pressure_ratio"] = float(setup["pore_ratio"])
    elif pore == "hydrostatic":
        mapping["pore_pressure"] = "hydrostatic"
    else:
        mapping["overpressure"] = {
            "top_depth": _number_text(setup["over_top_km"], "km"),
            "ratio_below": float(setup["over_ratio_below"]),
        }
    if setup["friction_kind"] == "constant":
        mapping["friction"] = {
            "mu": float(setup["mu"]),
            "cohesion": _number_text(setup["cohesion_mpa"], "MPa"),
        }
    mapping["geotherm"] = _geotherm_mapping(setup, carry)
    mapping["layers"] = [
        _layer_mapping(row, i, carry, rocks, notes) for i, (_, row) in enumerate(layers.iterrows())
    ]
    return mapping, notes


def explain_error(exc: BaseException, layer_names: list[str] | None = None) -> str:
    """A RheologyError message with the layer path put in the page's words.

    ``layers[0].thickness: ...`` becomes ``Layer table, row 1 ('upper crust'):
    layers[0].thickness: ...``; other messages are returned unchanged.
    """
    message = str(exc)
    match = _LAYER_PATH.match(message)
    if match and isinstance(exc, RheologyError):
        index = int(match["index"])
        name = ""
        if layer_names is not None and index < len(layer_names):
            name = f" ({layer_names[index]!r})"
        return f"Layer table, row {index + 1}{name}: {message}"
    return message
