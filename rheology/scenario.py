"""Scenario files: read and write the TOML description of a column, with checked units.

A scenario file names a layered column, its geotherm, the strain rate, the faulting
regime and the pore pressure. Every dimensional value is a string with its units
(``"15 km"``, ``"10 degC"``, ``"65 mW/m^2"``); the loader converts them to SI and returns
a :class:`rheology.model.Scenario`. Plain numbers are used only where a value has no
dimension (``n``, ``pore_pressure_ratio``, ``mu``, ``water_content``...). Every error is
a :class:`rheology.errors.ScenarioError` whose message starts with the path of the
field, for example ``layers[2].thickness: '-5 km' must be greater than zero``.

Schema
------
Top level::

    title = "Demo column"               # required, text
    strain_rate = "1e-15 1/s"           # required, axial strain rate (triaxial convention)
    faulting = "thrust"                 # required: "normal" | "strike-slip" | "thrust"
    max_depth = "80 km"                 # required
    depth_step = "0.05 km"              # optional, default 50 m
    # pore pressure: exactly one of
    pore_pressure_ratio = 0.37          # P_f / lithostatic, 0 <= ratio < 1; 0 = dry
    pore_pressure = "hydrostatic"       # P_f = rho_w g z
    # or an [overpressure] table (hydrostatic above top_depth; pore_pressure = "hydrostatic"
    # may be given with it, pore_pressure_ratio may not)

``[overpressure]``: ``top_depth`` (length >= 0) and ``ratio_below`` (number in [0, 1),
the fraction of each further increment of overburden carried by the fluid below
``top_depth``).

``[friction]`` (optional; absent means Byerlee 1978): ``mu`` (number > 0, required) and
``cohesion`` (stress >= 0, default ``"0 MPa"``).

``[geotherm]``: ``kind`` is one of ``linear``, ``layered-steady``, ``exponential-heat``,
``half-space``, ``plate`` (no default, no guessing). Always ``surface_temperature``; then

* ``linear``: ``gradient`` (e.g. ``"25 K/km"``); optional ``conductivity`` (heat flow
  only; default the first layer's);
* ``layered-steady``: ``surface_heat_flow``; each layer's ``heat_production`` and
  ``conductivity`` are used;
* ``exponential-heat``: ``surface_heat_flow``, ``surface_heat_production``,
  ``decay_depth``, ``conductivity``;
* ``half-space``: ``age``, ``mantle_temperature``, ``diffusivity``; optional
  ``conductivity`` for the heat flow (default 3.3 W/m/K);
* ``plate``: as half-space plus ``plate_thickness``.

Any kind also takes ``potential_temperature`` (caps temperatures at the mantle adiabat)
and, with it, ``adiabatic_gradient`` (default 0.4 K/km). A key that the chosen kind does
not use is an error, so a value is never silently ignored.

``[[layers]]`` (one or more, top down): ``name`` (unique text), ``thickness`` (> 0; the
last layer extends to ``max_depth`` when the thicknesses sum to less, and the column is
cut at ``max_depth`` when they sum to more), and either ``rock = "<id>"`` (an id of the
reference tables) or an inline power law. ``density``, ``heat_production``,
``conductivity`` and ``shear_modulus`` may be omitted when the rock names a row of the
rock-properties table; they are then taken from that row. Without such a row
``density`` is required, ``heat_production`` and ``conductivity`` are required for the
layered-steady geotherm (otherwise they default to 0 and 2.5 W/m/K, the
:class:`rheology.model.Layer` defaults) and ``shear_modulus`` defaults to 30 GPa.
Where the rock's laws need them: ``grain_size`` (length), and either
``water_fugacity`` (pressure; laws with ``water_form = "fugacity"``) or
``water_content`` (OH content in H/10^6 Si, a plain number; laws with
``water_form = "OH"``). Giving one of these to a rock that does not use it is an error.

Inline laws: ``[layers.dislocation]`` (required for an inline rock) and optionally
``[layers.diffusion]``, each with ``A`` (a string with units, triaxial convention; or
``log10_A`` with ``A_units`` as in the reference tables), ``n``, ``Q``, optional ``V``
(default 0), ``grain_size_exponent`` (required for diffusion, default 0 for
dislocation) and optional ``citation``. The units of A must have the dimension
[pressure]^-n [length]^p [time]^-1, as in the table loader. Water is taken as folded
into A (no explicit water term). The laws become :class:`rheology.library.FlowLaw`
objects with ids ``inline:<layer name>:<mechanism>`` and status ``"from memory"``, in a
:class:`rheology.library.Rock` with id ``inline:<layer name>``.

Notes
-----
The writer (:func:`scenario_to_mapping`, :func:`dump_scenario`) uses human units (km,
degC, mW/m^2, uW/m^3, W/m/K, Myr, 1/s, MPa, GPa, kJ/mol, cm^3/mol, mm) and, for each
value, the shortest decimal that reads back to the same SI float (up to 17 significant
digits), so a written scenario loads back to equal values.

Strength envelopes built from a scenario are screening estimates from laboratory laws
extrapolated over many orders of magnitude in strain rate; they do not replace site
investigation, local codes or the judgement of licensed professionals for tunnels,
wells, foundations, slopes or hazard.
"""

from __future__ import annotations

import difflib
import math
import os
import pathlib
import re
import tomllib
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any, NoReturn

import pint
import tomli_w

from rheology import model
from rheology.constants import ZERO_CELSIUS
from rheology.errors import RheologyError, ScenarioError
from rheology.library.flowlaw import FlowLaw, Rock
from rheology.physics.friction import REGIMES
from rheology.plausibility import check_plausible
from rheology.units import Q_, as_quantity, prefactor_to_si, to_kelvin, to_si

__all__ = [
    "bundled_example",
    "dump_scenario",
    "list_examples",
    "load_scenario",
    "parse_scenario",
    "save_scenario",
    "scenario_from_mapping",
    "scenario_to_mapping",
]

#: Tolerance on dimension exponents of A (units like MPa^-3.1 give float exponents);
#: the same as the reference-table loader.
_EXPONENT_TOLERANCE = 1e-9
#: Most significant digits tried when writing a value (17 always round-trips a double).
_MAX_DIGITS = 17

_NOT_FINITE = re.compile(r"^\s*[+-]?(nan|inf|infinity)\b", re.IGNORECASE)
_LOG10_PUBLISHED = re.compile(r"^10\^(?P<log>\S+) (?P<units>.+)$")


# ----------------------------------------------------------------------------- units


@dataclass(frozen=True)
class _Unit:
    """A dimension as the scenario file uses it."""

    si: str  # unit whose dimension is expected (SI magnitude returned)
    human: str  # unit written by the dumper
    what: str  # for messages: "a length"


LENGTH = _Unit("m", "km", "a length")
GRAIN = _Unit("m", "mm", "a length")
TEMPERATURE = _Unit("K", "degC", "a temperature")
RATE = _Unit("1/s", "1/s", "a strain rate")
HEAT_FLOW = _Unit("W/m^2", "mW/m^2", "a heat flow")
HEAT_PRODUCTION = _Unit("W/m^3", "uW/m^3", "a heat production")
CONDUCTIVITY = _Unit("W/m/K", "W/m/K", "a thermal conductivity")
GRADIENT = _Unit("K/m", "K/km", "a temperature gradient")
TIME = _Unit("s", "Myr", "a time")
DIFFUSIVITY = _Unit("m^2/s", "m^2/s", "a thermal diffusivity")
DENSITY = _Unit("kg/m^3", "kg/m^3", "a density")
STRESS = _Unit("Pa", "MPa", "a stress or pressure")
MODULUS = _Unit("Pa", "GPa", "an elastic modulus")
ENERGY = _Unit("J/mol", "kJ/mol", "a molar energy")
VOLUME = _Unit("m^3/mol", "cm^3/mol", "a molar volume")


def _fail(path: str, message: str) -> NoReturn:
    raise ScenarioError(f"{path}: {message}")


@contextmanager
def _prefixed(path: str) -> Iterator[None]:
    """Re-raise a RheologyError as a ScenarioError whose message starts with ``path``."""
    try:
        yield
    except ScenarioError:
        raise
    except RheologyError as exc:
        message = str(exc)
        if path and not message.startswith(path):
            message = f"{path}: {message}"
        raise ScenarioError(message) from None


def _si_from_text(text: str, unit: _Unit, path: str) -> float:
    """SI magnitude of a value string (the reader the writer also uses to check itself)."""
    with _prefixed(path):
        if unit is TEMPERATURE:
            return float(to_kelvin(text, path))
        return float(to_si(text, unit.si, path))


def _read_quantity(
    value: Any,
    path: str,
    unit: _Unit,
    example: str,
    *,
    positive: bool = False,
    nonnegative: bool = False,
) -> float:
    """A value with units (string or pint quantity) converted to SI, fully checked."""
    key = path.rsplit(".", 1)[-1]
    if isinstance(value, bool) or isinstance(value, int | float):
        _fail(
            path,
            f'got the bare number {value!r}; give a string with units, e.g. {key} = "{example}"',
        )
    if not isinstance(value, str | pint.Quantity):
        _fail(path, f"expected a string with units such as {example!r}, got {value!r}")
    if isinstance(value, str) and _NOT_FINITE.match(value):
        _fail(path, f"{value!r} is not a finite number; expected e.g. {example!r}")
    with _prefixed(path):
        quantity = as_quantity(value, unit.si, path)
    if quantity.dimensionality != Q_(1.0, unit.si).dimensionality:
        shown = value if isinstance(value, str) else f"{quantity:~}"
        if quantity.dimensionless:
            _fail(path, f"{shown!r} has no units; expected {unit.what} such as {example!r}")
        _fail(path, f"{shown!r} has the wrong dimension; expected {unit.what} such as {example!r}")
    with _prefixed(path):
        if unit is TEMPERATURE:
            return float(to_kelvin(quantity, path))
        return float(to_si(quantity, unit.si, path, positive=positive, nonnegative=nonnegative))


def _read_number(
    value: Any,
    path: str,
    example: str,
    *,
    minimum: float | None = None,
    above: float | None = None,
    below: float | None = None,
) -> float:
    """A plain (dimensionless) finite number, with optional bounds."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        _fail(path, f"expected a plain number such as {example}, got {value!r}")
    number = float(value)
    if not math.isfinite(number):
        _fail(path, f"{value!r} is not a finite number; expected e.g. {example}")
    if minimum is not None and not number >= minimum:
        _fail(path, f"{number!r} must be {minimum:g} or greater")
    if above is not None and not number > above:
        _fail(path, f"{number!r} must be greater than {above:g}")
    if below is not None and not number < below:
        _fail(path, f"{number!r} must be less than {below:g}")
    return number


def _short(number: float) -> str:
    text = repr(number)
    return text[:-2] if text.endswith(".0") else text


def _shortest(magnitude: float, units: str, read, target: float) -> str:
    """Shortest ``"<number> <units>"`` whose ``read`` gives exactly ``target``.

    Falls back to the full ``repr`` of ``magnitude`` (17 significant digits), which
    reads back to within a few ulp.
    """
    for digits in range(1, _MAX_DIGITS + 1):
        text = f"{_short(float(f'{magnitude:.{digits}g}'))} {units}"
        try:
            if read(text) == target:
                return text
        except RheologyError:  # a rounding too coarse may leave the valid range (0 K)
            continue
    return f"{_short(magnitude)} {units}"


def _write_quantity(value: float, unit: _Unit, path: str) -> str:
    """Shortest ``"<number> <unit>"`` string that reads back to exactly ``value`` (SI)."""
    if unit is TEMPERATURE:
        magnitude = value - ZERO_CELSIUS
    else:
        magnitude = value / _si_from_text(f"1 {unit.human}", unit, path)
    return _shortest(magnitude, unit.human, lambda text: _si_from_text(text, unit, path), value)


# ---------------------------------------------------------------------------- tables


class _Table:
    """One TOML table of the scenario with its path, for reading and error messages."""

    def __init__(self, data: Any, path: str, label: str):
        if not isinstance(data, Mapping):
            _fail(path or "scenario", f"expected a table ({label}), got {data!r}")
        self.data = data
        self.path = path

    def where(self, key: str) -> str:
        return f"{self.path}.{key}" if self.path else key

    def has(self, key: str) -> bool:
        return key in self.data

    def check_keys(self, allowed) -> None:
        allowed = list(allowed)
        for key in self.data:
            if key not in allowed:
                close = difflib.get_close_matches(str(key), allowed, n=1, cutoff=0.6)
                hint = (
                    f"did you mean {close[0]!r}?"
                    if close
                    else "expected one of " + ", ".join(allowed)
                )
                _fail(self.where(key), f"unknown key; {hint}")

    def missing(self, key: str, why: str, example: str) -> NoReturn:
        _fail(self.where(key), f"missing; {why} (e.g. {example})")

    def quantity(
        self,
        key: str,
        unit: _Unit,
        example: str,
        *,
        why: str = "required",
        required: bool = True,
        default: float | None = None,
        **sign,
    ) -> float | None:
        if key not in self.data:
            if required:
                self.missing(key, why, f'"{example}"')
            return default
        value = _read_quantity(self.data[key], self.where(key), unit, example, **sign)
        check_plausible(key, value, self.where(key), self.data[key])
        return value

    def number(
        self,
        key: str,
        example: str,
        *,
        required: bool = True,
        default: float | None = None,
        **bounds,
    ) -> float | None:
        if key not in self.data:
            if required:
                self.missing(key, "required", example)
            return default
        return _read_number(self.data[key], self.where(key), example, **bounds)

    def text(
        self, key: str, example: str, *, required: bool = True, default: str | None = None
    ) -> str | None:
        if key not in self.data:
            if required:
                self.missing(key, "required", f'"{example}"')
            return default
        value = self.data[key]
        if not isinstance(value, str) or not value.strip():
            _fail(self.where(key), f"expected non-empty text such as {example!r}, got {value!r}")
        return value

    def table(self, key: str, label: str) -> _Table:
        return _Table(self.data[key], self.where(key), label)


# ------------------------------------------------------------------------ top level

_TOP_KEYS = (
    "title",
    "strain_rate",
    "faulting",
    "pore_pressure_ratio",
    "pore_pressure",
    "max_depth",
    "depth_step",
    "geotherm",
    "layers",
    "overpressure",
    "friction",
)
_PORE_PRESSURE_NAMES = ("hydrostatic",)


def scenario_from_mapping(data: Mapping[str, Any], source: str = "<mapping>") -> model.Scenario:
    """Build a :class:`rheology.model.Scenario` from a mapping in the file schema.

    Parameters
    ----------
    data : mapping
        Keys and values as in a scenario file (see the module docstring); dimensional
        values are strings with units (pint quantities are accepted too).
    source : str, optional
        Where the mapping came from; named in error messages unless it is a
        placeholder such as ``"<mapping>"``.

    Returns
    -------
    rheology.model.Scenario
        Every value in SI.

    Raises
    ------
    ScenarioError
        Missing, unknown, inconsistent or wrongly dimensioned values; the message starts
        with the field path.
    """
    try:
        return _scenario(_Table(data, "", "the scenario"))
    except ScenarioError as exc:
        if source.startswith("<"):
            raise
        raise ScenarioError(f"{exc} (in {source})") from None


def _scenario(top: _Table) -> model.Scenario:
    top.check_keys(_TOP_KEYS)
    title = top.text("title", "Demo column")
    strain_rate = top.quantity("strain_rate", RATE, "1e-15 1/s", positive=True)
    faulting = _faulting(top)
    max_depth = top.quantity("max_depth", LENGTH, "80 km", positive=True)
    depth_step = top.quantity(
        "depth_step", LENGTH, "0.05 km", required=False, default=50.0, positive=True
    )
    pore = _pore_pressure(top)
    friction = _friction(top)
    if not top.has("geotherm"):
        top.missing("geotherm", "required", '[geotherm] with kind = "layered-steady"')
    geotherm = _geotherm(top.table("geotherm", "[geotherm]"))
    layers = _layers(top, geotherm.kind)
    with _prefixed(""):
        return model.Scenario(
            title=title,
            strain_rate=strain_rate,
            faulting=faulting,
            max_depth=max_depth,
            geotherm=geotherm,
            layers=layers,
            pore_pressure=pore,
            friction=friction,
            depth_step=depth_step,
        )


def _faulting(top: _Table) -> str:
    value = top.text("faulting", "thrust")
    if value not in REGIMES:
        _fail(
            "faulting", f"{value!r} is not a faulting regime; expected one of " + ", ".join(REGIMES)
        )
    return value


def _pore_pressure(top: _Table) -> model.PorePressure:
    has_ratio, has_name = top.has("pore_pressure_ratio"), top.has("pore_pressure")
    has_over = top.has("overpressure")
    if has_ratio and has_name:
        _fail("pore_pressure", "give either pore_pressure or pore_pressure_ratio, not both")
    if has_over and has_ratio:
        _fail(
            "overpressure",
            "cannot be combined with pore_pressure_ratio; the overpressured "
            "model is hydrostatic above top_depth",
        )
    if has_name:
        name = top.data["pore_pressure"]
        if name not in _PORE_PRESSURE_NAMES:
            _fail(
                "pore_pressure",
                f"{name!r} is not a pore-pressure model; expected "
                "'hydrostatic' (or give pore_pressure_ratio, or an "
                "[overpressure] table)",
            )
    if has_over:
        table = top.table("overpressure", "[overpressure]")
        table.check_keys(("top_depth", "ratio_below"))
        top_depth = table.quantity("top_depth", LENGTH, "3 km", nonnegative=True)
        ratio_below = table.number("ratio_below", "0.8", minimum=0.0, below=1.0)
        with _prefixed("overpressure"):
            return model.PorePressure(
                kind="overpressured", top_depth=top_depth, ratio_below=ratio_below
            )
    if has_name:
        return model.PorePressure(kind="hydrostatic")
    if not has_ratio:
        top.missing(
            "pore_pressure_ratio",
            'give pore_pressure_ratio (0 = dry) or pore_pressure = "hydrostatic"',
            "0.37",
        )
    ratio = top.number("pore_pressure_ratio", "0.37", minimum=0.0, below=1.0)
    with _prefixed("pore_pressure_ratio"):
        return model.PorePressure(kind="ratio", ratio=ratio)


def _friction(top: _Table) -> model.Friction:
    if not top.has("friction"):
        return model.Friction()
    table = top.table("friction", "[friction]")
    table.check_keys(("mu", "cohesion"))
    mu = table.number("mu", "0.6", above=0.0)
    cohesion = table.quantity(
        "cohesion", STRESS, "0 MPa", required=False, default=0.0, nonnegative=True
    )
    with _prefixed("friction"):
        return model.Friction(mu=mu, cohesion=cohesion)


# -------------------------------------------------------------------------- geotherm

#: Every geotherm parameter: (unit, example, sign); the ones a kind needs are in
#: :data:`rheology.model.GEOTHERM_PARAMETERS`.
_GEOTHERM_FIELDS: dict[str, tuple[_Unit, str, str]] = {
    "surface_temperature": (TEMPERATURE, "10 degC", ""),
    "surface_heat_flow": (HEAT_FLOW, "65 mW/m^2", "positive"),
    "gradient": (GRADIENT, "25 K/km", "positive"),
    "surface_heat_production": (HEAT_PRODUCTION, "2.5 uW/m^3", "positive"),
    "decay_depth": (LENGTH, "10 km", "positive"),
    "conductivity": (CONDUCTIVITY, "2.5 W/m/K", "positive"),
    "age": (TIME, "60 Myr", "positive"),
    "mantle_temperature": (TEMPERATURE, "1350 degC", ""),
    "diffusivity": (DIFFUSIVITY, "1e-6 m^2/s", "positive"),
    "plate_thickness": (LENGTH, "125 km", "positive"),
    "potential_temperature": (TEMPERATURE, "1350 degC", ""),
    "adiabatic_gradient": (GRADIENT, "0.4 K/km", "positive"),
}
#: Optional geotherm parameters of each kind (besides the adiabat cap).
_GEOTHERM_OPTIONAL = {
    "linear": ("conductivity",),
    "layered-steady": (),
    "exponential-heat": (),
    "half-space": ("conductivity",),
    "plate": ("conductivity",),
}
_ALWAYS = ("kind", "surface_temperature", "potential_temperature", "adiabatic_gradient")


def _geotherm(table: _Table) -> model.Geotherm:
    table.check_keys(tuple(_GEOTHERM_FIELDS) + ("kind",))
    kinds = ", ".join(model.GEOTHERM_KINDS)
    kind = table.text("kind", "layered-steady")
    if kind not in model.GEOTHERM_KINDS:
        _fail("geotherm.kind", f"{kind!r} is not a geotherm kind; expected one of {kinds}")
    required = model.GEOTHERM_PARAMETERS[kind]
    used = set(_ALWAYS) | set(required) | set(_GEOTHERM_OPTIONAL[kind])
    for key in table.data:
        if key not in used:
            users = [
                k
                for k in model.GEOTHERM_KINDS
                if key in model.GEOTHERM_PARAMETERS[k] + _GEOTHERM_OPTIONAL[k]
            ]
            _fail(
                table.where(key),
                f"not used by kind {kind!r} (it belongs to "
                f"{', '.join(users)}); remove it or change the kind",
            )
    if table.has("adiabatic_gradient") and not table.has("potential_temperature"):
        _fail(
            "geotherm.adiabatic_gradient",
            "only used with potential_temperature; give "
            'potential_temperature (e.g. "1350 degC") too',
        )
    values: dict[str, Any] = {"kind": kind}
    for key, (unit, example, sign) in _GEOTHERM_FIELDS.items():
        if key not in used:
            continue
        needed = key in required or key == "surface_temperature"
        value = table.quantity(
            key,
            unit,
            example,
            required=needed,
            why=f"required for kind {kind!r}",
            positive=sign == "positive",
        )
        if value is not None:
            values[key] = value
    with _prefixed("geotherm"):
        return model.Geotherm(**values)


# ---------------------------------------------------------------------------- layers

_LAYER_KEYS = (
    "name",
    "thickness",
    "density",
    "heat_production",
    "conductivity",
    "shear_modulus",
    "rock",
    "dislocation",
    "diffusion",
    "grain_size",
    "water_fugacity",
    "water_content",
)
_LAW_KEYS = ("A", "log10_A", "A_units", "n", "Q", "V", "grain_size_exponent", "citation")
_INLINE_NOTE = "inline law given in the scenario file"


def _layers(top: _Table, geotherm_kind: str) -> tuple[model.Layer, ...]:
    if not top.has("layers"):
        top.missing("layers", "give at least one [[layers]] table", 'name = "upper crust"')
    rows = top.data["layers"]
    if not isinstance(rows, list) or not rows:
        _fail("layers", f"expected one or more [[layers]] tables, got {rows!r}")
    layers, seen = [], {}
    for index, row in enumerate(rows):
        path = f"layers[{index}]"
        layer = _layer(_Table(row, path, "[[layers]]"), geotherm_kind)
        if layer.name in seen:
            first = f"layers[{seen[layer.name]}]"
            _fail(
                f"{path}.name",
                f"{layer.name!r} is already the name of {first}; layer names must be unique",
            )
        seen[layer.name] = index
        layers.append(layer)
    return tuple(layers)


def _layer(table: _Table, geotherm_kind: str) -> model.Layer:
    table.check_keys(_LAYER_KEYS)
    name = table.text("name", "upper crust")
    thickness = table.quantity("thickness", LENGTH, "15 km", positive=True)
    rock, rock_id = _layer_rock(table, name)
    properties = _properties_row(table, rock)
    values = _layer_properties(table, rock, properties, geotherm_kind)
    grain_size = _grain_size(table, rock)
    water = _water(table, rock)
    with _prefixed(table.path):
        return model.Layer(
            name=name,
            thickness=thickness,
            rock=rock,
            grain_size=grain_size,
            water=water,
            rock_id=rock_id,
            **values,
        )


def _layer_rock(table: _Table, name: str) -> tuple[Rock, str | None]:
    inline = [key for key in ("dislocation", "diffusion") if table.has(key)]
    if table.has("rock") and inline:
        _fail(table.where(inline[0]), "give either rock or an inline law, not both")
    if table.has("rock"):
        from rheology.library.tables import get_rock

        rock_id = table.data["rock"]
        with _prefixed(table.where("rock")):
            return get_rock(rock_id), rock_id
    if not inline:
        table.missing(
            "rock", "give rock = '<id>' or an inline [layers.dislocation] table", '"quartzite-wet"'
        )
    if not table.has("dislocation"):
        table.missing(
            "dislocation",
            "an inline rock needs a [layers.dislocation] law (diffusion creep may be added)",
            'A = "1.1e-4 MPa^-4 s^-1"',
        )
    laws = tuple(
        _inline_law(table.table(mech, f"[layers.{mech}]"), name, mech)
        for mech in ("dislocation", "diffusion")
        if table.has(mech)
    )
    return Rock(
        id=f"inline:{name}", name=name, laws=laws, description=f"{_INLINE_NOTE} (layer {name!r})"
    ), None


def _inline_law(table: _Table, layer_name: str, mechanism: str) -> FlowLaw:
    table.check_keys(_LAW_KEYS)
    n = table.number("n", "4.0", above=0.0)
    p = table.number(
        "grain_size_exponent", "3.0", minimum=0.0, required=mechanism == "diffusion", default=0.0
    )
    A, published = _inline_prefactor(table, n, p)
    Q = table.quantity("Q", ENERGY, "223 kJ/mol", nonnegative=True)
    V = table.quantity("V", VOLUME, "0 m^3/mol", required=False, default=0.0)
    citation = table.text(
        "citation",
        "Author (year), journal, equation",
        required=False,
        default=f"{_INLINE_NOTE} (layer {layer_name!r})",
    )
    with _prefixed(table.path):
        return FlowLaw(
            id=f"inline:{layer_name}:{mechanism}",
            rock=layer_name,
            mechanism=mechanism,
            A=A,
            n=n,
            Q=Q,
            V=V,
            grain_size_exponent=p,
            water_form="none",
            A_published=published,
            citation=citation,
            location="scenario file",
            status="from memory",
        )


def _inline_prefactor(table: _Table, n: float, p: float) -> tuple[float, str]:
    """A in SI [Pa^-n m^p s^-1] and as given, with the units checked against n and p."""
    example = f"MPa^{-n:g}" + (f" um^{p:g}" if p else "") + " s^-1"
    has_log = table.has("log10_A") or table.has("A_units")
    if table.has("A") and has_log:
        _fail(table.where("A"), "give either A or log10_A with A_units, not both")
    if has_log:
        log10_a = table.number("log10_A", "-11.2", minimum=-250.0, below=250.0)
        units = table.text("A_units", example)
        path = table.where("A_units")
        with _prefixed(path):
            quantity = 10.0**log10_a * as_quantity(f"1 {units}", "1/s", path)
        published = f"10^{log10_a!r} {units}"
    else:
        path = table.where("A")
        text = table.text("A", f"1.1e-4 {example}")
        if _NOT_FINITE.match(text):
            _fail(path, f"{text!r} is not a finite number; expected e.g. '1.1e-4 {example}'")
        with _prefixed(path):
            quantity = as_quantity(text, "1/s", path)
        published = units = text
    try:
        value = prefactor_to_si(quantity, n, p)
    except RheologyError as exc:
        _fail(path, f"{units!r}: {exc}")
    if not math.isfinite(value) or not value > 0:
        _fail(path, f"{published!r} must be a finite number greater than zero")
    return value, published


def _properties_row(table: _Table, rock: Rock):
    if not rock.properties:
        return None
    from rheology.library.tables import get_rock_properties

    with _prefixed(table.where("rock")):
        return get_rock_properties(rock.properties)


def _layer_properties(table: _Table, rock: Rock, properties, geotherm_kind: str) -> dict:
    """Density, heat production, conductivity and shear modulus: given, else the row's."""
    fields = {
        "density": (DENSITY, "2700 kg/m^3", "positive", None),
        "heat_production": (HEAT_PRODUCTION, "1.0 uW/m^3", "nonnegative", 0.0),
        "conductivity": (CONDUCTIVITY, "2.5 W/m/K", "positive", 2.5),
        "shear_modulus": (MODULUS, "30 GPa", "positive", 3.0e10),
    }
    values = {}
    for key, (unit, example, sign, default) in fields.items():
        if table.has(key):
            values[key] = table.quantity(key, unit, example, **{sign: True})
        elif properties is not None:
            values[key] = getattr(properties, key)
        elif default is None or (
            geotherm_kind == "layered-steady" and key in ("heat_production", "conductivity")
        ):
            who = (
                "an inline law has no rock-properties row"
                if rock.id.startswith("inline:")
                else f"rock {rock.id!r} names no row of the rock-properties table"
            )
            use = " and the layered-steady geotherm uses it" if default is not None else ""
            table.missing(key, f"{who}{use}", f'"{example}"')
        else:
            values[key] = default
    return values


def _grain_size(table: _Table, rock: Rock) -> float | None:
    sensitive = [law.id for law in rock.laws if law.needs_grain_size]
    if not sensitive:
        if table.has("grain_size"):
            _fail(
                table.where("grain_size"),
                f"rock {rock.id!r} has no grain-size-sensitive law; remove this key",
            )
        return None
    why = f"rock {rock.id!r} has grain-size-sensitive creep ({', '.join(sensitive)})"
    return table.quantity("grain_size", GRAIN, "1 mm", why=why, positive=True)


def _water(table: _Table, rock: Rock) -> float | None:
    forms = sorted({law.water_form for law in rock.laws if law.needs_water})
    given = [key for key in ("water_fugacity", "water_content") if table.has(key)]
    if len(given) == 2:
        _fail(table.where("water_content"), "give either water_fugacity or water_content, not both")
    if len(forms) > 1:
        _fail(
            table.where("rock"),
            f"rock {rock.id!r} mixes water forms {forms}; a layer holds a single water value",
        )
    if not forms:
        if given:
            _fail(
                table.where(given[0]),
                f"rock {rock.id!r} has no explicit water term "
                "(water is folded into A or absent); remove this key",
            )
        return None
    key, other = (
        ("water_fugacity", "water_content")
        if forms[0] == "fugacity"
        else ("water_content", "water_fugacity")
    )
    if table.has(other):
        _fail(
            table.where(other),
            f"rock {rock.id!r} takes water as "
            f"{'a fugacity' if key == 'water_fugacity' else 'an OH content'}"
            f"; give {key} instead",
        )
    why = f"rock {rock.id!r} has a water term ({forms[0]})"
    if key == "water_fugacity":
        return table.quantity(key, STRESS, "500 MPa", why=why, positive=True)
    if not table.has(key):
        table.missing(key, f"{why}; OH content in H/10^6 Si", "1000")
    return table.number(key, "1000", above=0.0)


# ------------------------------------------------------------------ files and text


def parse_scenario(text: str, source: str = "<string>") -> model.Scenario:
    """Parse scenario TOML text.

    Parameters
    ----------
    text : str
        TOML in the scenario schema (see the module docstring).
    source : str, optional
        Name used in error messages (a file name, or a placeholder such as
        ``"<string>"``).

    Returns
    -------
    rheology.model.Scenario

    Raises
    ------
    ScenarioError
        Malformed TOML (the message gives ``source``, line and column) or an invalid
        field (the message starts with the field path).
    """
    if not isinstance(text, str):
        _fail("text", f"expected TOML text (str), got {type(text).__name__}")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError(_toml_message(exc, source)) from None
    return scenario_from_mapping(data, source=source)


def _toml_message(exc: tomllib.TOMLDecodeError, source: str) -> str:
    message = str(exc)
    match = re.search(r"\s*\(at line (\d+), column (\d+)\)\s*$", message)
    if match:
        where = f"line {match[1]}, column {match[2]}"
        message = message[: match.start()]
    else:
        end = re.search(r"\s*\(at end of document\)\s*$", message)
        where = "end of document"
        message = message[: end.start()] if end else message
    return f"{source}: malformed TOML at {where}: {message}"


def load_scenario(path: str | os.PathLike) -> model.Scenario:
    """Read a scenario file.

    Parameters
    ----------
    path : str or os.PathLike
        A TOML file in the scenario schema.

    Returns
    -------
    rheology.model.Scenario

    Raises
    ------
    ScenarioError
        The file cannot be read, is malformed TOML (file name, line and column given) or
        has an invalid field (the message starts with the field path and names the file).
    """
    path = pathlib.Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ScenarioError(f"{path}: no such scenario file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ScenarioError(f"{path}: cannot read the scenario file ({exc})") from None
    return parse_scenario(text, source=str(path))


# -------------------------------------------------------------------------- writing


def scenario_to_mapping(scenario: model.Scenario) -> dict[str, Any]:
    """The scenario as a mapping in the file schema (values as strings with units).

    Parameters
    ----------
    scenario : rheology.model.Scenario

    Returns
    -------
    dict
        Ready for :func:`tomli_w.dumps`; :func:`scenario_from_mapping` of it gives back
        an equal scenario (each value is the shortest decimal that reads back to the
        same SI float).

    Raises
    ------
    ScenarioError
        A part of the scenario the file format cannot express (e.g. an inline rock with
        a low-temperature plasticity law, or a cohesion without a constant mu).
    """
    out: dict[str, Any] = {
        "title": scenario.title,
        "strain_rate": _write_quantity(scenario.strain_rate, RATE, "strain_rate"),
        "faulting": scenario.faulting,
        "max_depth": _write_quantity(scenario.max_depth, LENGTH, "max_depth"),
        "depth_step": _write_quantity(scenario.depth_step, LENGTH, "depth_step"),
    }
    pore = scenario.pore_pressure
    if pore.kind == "ratio":
        out["pore_pressure_ratio"] = float(pore.ratio)
    elif pore.kind == "hydrostatic":
        out["pore_pressure"] = "hydrostatic"
    out["geotherm"] = _geotherm_mapping(scenario.geotherm)
    if pore.kind == "overpressured":
        out["overpressure"] = {
            "top_depth": _write_quantity(pore.top_depth, LENGTH, "overpressure.top_depth"),
            "ratio_below": float(pore.ratio_below),
        }
    friction = _friction_mapping(scenario.friction)
    if friction:
        out["friction"] = friction
    out["layers"] = [
        _layer_mapping(layer, f"layers[{i}]") for i, layer in enumerate(scenario.layers)
    ]
    return out


def _geotherm_mapping(geotherm: model.Geotherm) -> dict[str, Any]:
    out: dict[str, Any] = {"kind": geotherm.kind}
    keys = (
        ("surface_temperature",)
        + model.GEOTHERM_PARAMETERS[geotherm.kind]
        + _GEOTHERM_OPTIONAL[geotherm.kind]
    )
    if geotherm.potential_temperature is not None:
        keys += ("potential_temperature", "adiabatic_gradient")
    for key in keys:
        value = getattr(geotherm, key)
        if value is not None:
            unit = _GEOTHERM_FIELDS[key][0]
            out[key] = _write_quantity(value, unit, f"geotherm.{key}")
    return out


def _friction_mapping(friction: model.Friction) -> dict[str, Any]:
    if friction.mu is None:
        if friction.cohesion != 0.0:
            _fail(
                "friction.cohesion",
                "a cohesion is used only with a constant mu; Byerlee "
                "friction (mu = None) cannot carry one",
            )
        return {}
    return {
        "mu": float(friction.mu),
        "cohesion": _write_quantity(friction.cohesion, STRESS, "friction.cohesion"),
    }


def _layer_mapping(layer: model.Layer, path: str) -> dict[str, Any]:
    out: dict[str, Any] = {
        "name": layer.name,
        "thickness": _write_quantity(layer.thickness, LENGTH, f"{path}.thickness"),
        "density": _write_quantity(layer.density, DENSITY, f"{path}.density"),
        "heat_production": _write_quantity(
            layer.heat_production, HEAT_PRODUCTION, f"{path}.heat_production"
        ),
        "conductivity": _write_quantity(layer.conductivity, CONDUCTIVITY, f"{path}.conductivity"),
        "shear_modulus": _write_quantity(layer.shear_modulus, MODULUS, f"{path}.shear_modulus"),
    }
    rock = layer.rock
    if layer.rock_id is not None:
        out["rock"] = layer.rock_id
    else:
        out.update(_inline_mapping(rock, layer.name, path))
    if rock.needs_grain_size:
        out["grain_size"] = _write_quantity(layer.grain_size, GRAIN, f"{path}.grain_size")
    forms = {law.water_form for law in rock.laws if law.needs_water}
    if "fugacity" in forms:
        out["water_fugacity"] = _write_quantity(layer.water, STRESS, f"{path}.water_fugacity")
    elif "OH" in forms:
        out["water_content"] = float(layer.water)
    return out


def _inline_mapping(rock: Rock, layer_name: str, path: str) -> dict[str, Any]:
    mechanisms = [law.mechanism for law in rock.laws]
    problem = None
    if "dislocation" not in mechanisms:
        problem = "it has no dislocation-creep law"
    elif len(set(mechanisms)) != len(mechanisms) or "peierls" in mechanisms:
        problem = "only one dislocation and one diffusion law can be written inline"
    elif rock.needs_water:
        problem = "inline laws cannot carry an explicit water term"
    if problem:
        _fail(
            f"{path}.rock",
            f"rock {rock.id!r} is not in the reference tables and cannot "
            f"be written inline: {problem}",
        )
    out = {}
    for law in rock.laws:
        where = f"{path}.{law.mechanism}"
        entry: dict[str, Any] = _prefactor_mapping(law, where)
        entry["n"] = float(law.n)
        entry["Q"] = _write_quantity(law.Q, ENERGY, f"{where}.Q")
        entry["V"] = _write_quantity(law.V, VOLUME, f"{where}.V")
        if law.mechanism == "diffusion" or law.grain_size_exponent != 0.0:
            entry["grain_size_exponent"] = float(law.grain_size_exponent)
        if law.citation != f"{_INLINE_NOTE} (layer {layer_name!r})":
            entry["citation"] = law.citation
        out[law.mechanism] = entry
    return out


def _prefactor_mapping(law: FlowLaw, where: str) -> dict[str, Any]:
    """A as given when it reads back to the same value, else in MPa^-n um^p s^-1."""
    match = _LOG10_PUBLISHED.match(law.A_published)
    try:
        if match:
            log10_a = float(match["log"])
            value = float(
                (10.0**log10_a * as_quantity(f"1 {match['units']}", "1/s", where))
                .to_base_units()
                .magnitude
            )
            if value == law.A:
                return {"log10_A": log10_a, "A_units": match["units"]}
        elif law.A_published:
            value = float(as_quantity(law.A_published, "1/s", where).to_base_units().magnitude)
            if value == law.A:
                return {"A": law.A_published}
    except (RheologyError, ValueError, pint.errors.PintError):
        pass
    p = law.grain_size_exponent
    units = f"MPa^{_short(-law.n)}" + (f" um^{_short(p)}" if p else "") + " s^-1"

    def read(text: str) -> float:
        return float(as_quantity(text, "1/s", where).to_base_units().magnitude)

    return {"A": _shortest(law.A / read(f"1 {units}"), units, read, law.A)}


_HEADER = "# rheology scenario; every dimensional value carries its units.\n"


def dump_scenario(scenario: model.Scenario) -> str:
    """The scenario as TOML text (see :func:`scenario_to_mapping`).

    Parameters
    ----------
    scenario : rheology.model.Scenario

    Returns
    -------
    str
        TOML that :func:`parse_scenario` reads back to an equal scenario.
    """
    return _HEADER + tomli_w.dumps(scenario_to_mapping(scenario))


def save_scenario(scenario: model.Scenario, path: str | os.PathLike) -> None:
    """Write the scenario to ``path`` as TOML (UTF-8).

    Parameters
    ----------
    scenario : rheology.model.Scenario
    path : str or os.PathLike
        Destination file; overwritten if it exists.
    """
    text = dump_scenario(scenario)
    pathlib.Path(path).write_text(text, encoding="utf-8")


# ------------------------------------------------------------------------- examples


def _examples_dir() -> pathlib.Path:
    here = pathlib.Path(__file__).resolve().parent
    bundled = here / "_bundled" / "examples"
    if bundled.is_dir():
        return bundled
    return here.parent / "examples"


def list_examples() -> list[str]:
    """Names of the bundled example scenarios (file stems, sorted).

    Returns
    -------
    list of str
        For example ``["collision_belt", "demo", "oceanic_plate", "rifted_margin"]``.
    """
    folder = _examples_dir()
    if not folder.is_dir():
        return []
    return sorted(path.stem for path in folder.glob("*.toml"))


def bundled_example(name: str = "demo") -> pathlib.Path:
    """Path of a bundled example scenario.

    Parameters
    ----------
    name : str, optional
        Example name (file stem, ``".toml"`` optional); default ``"demo"``.

    Returns
    -------
    pathlib.Path
        The file in ``rheology/_bundled/examples`` (installed wheel) or, in a source
        checkout, in ``examples`` at the repository root.

    Raises
    ------
    ScenarioError
        Unknown name; the message lists the available examples.
    """
    available = list_examples()
    stem = name[:-5] if isinstance(name, str) and name.endswith(".toml") else name
    if stem not in available:
        listed = ", ".join(available) if available else "none found"
        _fail("name", f"{name!r} is not a bundled example; available: {listed}")
    return _examples_dir() / f"{stem}.toml"
