"""Read and validate the reference tables of flow laws, rocks and rock properties.

The tables are TOML files (``flow_laws.toml``, ``rocks.toml``, ``rock_properties.toml``)
that keep every value as published, with its units as a string. This module is the one
place that converts them to SI: A to Pa^-(n+r) m^p s^-1, Q to J/mol, V to m^3/mol,
stresses to Pa. Every row is validated; a bad row raises
:class:`rheology.errors.TableError` naming the file, the row (1-based), its id and the
column.
"""

from __future__ import annotations

import difflib
import functools
import math
import pathlib
import re
import tomllib
from collections.abc import Mapping
from typing import Any

from rheology.errors import RheologyError, TableError
from rheology.library.flowlaw import (
    MECHANISMS,
    STATUSES,
    WATER_FORMS,
    FlowLaw,
    Rock,
    RockProperties,
)
from rheology.units import Q_, as_quantity, prefactor_to_si

FLOW_LAWS_FILE = "flow_laws.toml"
ROCKS_FILE = "rocks.toml"
ROCK_PROPERTIES_FILE = "rock_properties.toml"

_ID_PATTERN = re.compile(r"^[a-z0-9]+(?:[-.][a-z0-9]+)*$")
#: Tolerance on dimension exponents: units like MPa^-3.1 give float exponents (3.1, 5.2).
_EXPONENT_TOLERANCE = 1e-9
#: |log10 A| beyond this overflows a float after conversion to SI.
_MAX_LOG10_A = 250.0

_LAW_REQUIRED = (
    "id",
    "rock",
    "mechanism",
    "n",
    "grain_size_exponent",
    "water_exponent",
    "water_form",
    "Q",
    "V",
    "experimental_range",
    "citation",
    "location",
    "status",
)
_LAW_PREFACTOR = ("A", "log10_A", "A_units")
_LAW_PEIERLS = ("peierls_stress", "peierls_p", "peierls_q", "min_stress")
_LAW_OPTIONAL = ("uncertainty", "notes")
_UNCERTAINTY_KEYS = ("log10_A", "n", "Q", "V")

_ROCK_REQUIRED = ("id", "name", "laws", "properties", "description")

_PROPERTIES_REQUIRED = (
    "id",
    "name",
    "density",
    "conductivity",
    "heat_production",
    "shear_modulus",
    "citation",
    "status",
)
_PROPERTIES_OPTIONAL = ("notes",)


# --------------------------------------------------------------------------- paths


def table_dir() -> pathlib.Path:
    """Directory holding the reference tables.

    Returns
    -------
    pathlib.Path
        The copy bundled into an installed wheel (``rheology/_bundled/reference_tables``)
        when it exists, else ``reference_tables`` at the root of a source checkout.
    """
    here = pathlib.Path(__file__).resolve()
    bundled = here.parents[1] / "_bundled" / "reference_tables"
    if bundled.is_dir():
        return bundled
    return here.parents[2] / "reference_tables"


# --------------------------------------------------------------- row-level helpers


class _Row:
    """One table row with the context needed for error messages."""

    def __init__(self, path: pathlib.Path, index: int, data: Mapping[str, Any]):
        self.path = path
        self.index = index
        self.data = data
        raw_id = data.get("id")
        self.id = raw_id if isinstance(raw_id, str) else None

    def error(self, column: str, message: str) -> TableError:
        """A TableError naming file, row number, id and column."""
        who = f"id {self.id!r}" if self.id is not None else "no id"
        return TableError(
            f"{self.path.name}, row {self.index} ({who}): column {column!r}: {message} "
            f"[file {self.path}]"
        )

    def check_keys(self, required, optional=()):
        """Every required key present and no unknown key (catches typos)."""
        for key in required:
            if key not in self.data:
                raise self.error(key, "required column is missing")
        allowed = set(required) | set(optional)
        for key in self.data:
            if key not in allowed:
                close = difflib.get_close_matches(key, sorted(allowed), n=1)
                hint = f"; did you mean {close[0]!r}?" if close else ""
                raise self.error(
                    key, f"unknown column{hint} (allowed: {', '.join(sorted(allowed))})"
                )

    def text(self, key: str, *, allow_empty: bool = False) -> str:
        """A string column."""
        value = self.data[key]
        if not isinstance(value, str):
            raise self.error(key, f"expected text, got {value!r}")
        if not allow_empty and not value.strip():
            raise self.error(key, "expected non-empty text, got an empty string")
        return value

    def choice(self, key: str, allowed) -> str:
        """A string column restricted to ``allowed``."""
        value = self.data[key]
        if value not in allowed:
            raise self.error(
                key, f"{value!r} is not allowed; expected one of {', '.join(map(repr, allowed))}"
            )
        return value

    def number(
        self,
        key: str,
        value: Any = None,
        *,
        minimum: float | None = None,
        strict: bool = False,
        column: str | None = None,
    ) -> float:
        """A finite number column, optionally bounded below (``strict``: > minimum)."""
        column = column or key
        value = self.data[key] if value is None else value
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.error(column, f"expected a number, got {value!r}")
        value = float(value)
        if not math.isfinite(value):
            raise self.error(column, f"expected a finite number, got {value!r}")
        if minimum is not None:
            if strict and not value > minimum:
                raise self.error(column, f"expected a number > {minimum:g}, got {value:g}")
            if not strict and not value >= minimum:
                raise self.error(column, f"expected a number >= {minimum:g}, got {value:g}")
        return value

    def quantity(
        self,
        key: str,
        unit: str,
        *,
        value: Any = None,
        nonnegative: bool = False,
        positive: bool = False,
        column: str | None = None,
    ) -> float:
        """A '<number> <unit>' string column converted to the SI magnitude of ``unit``."""
        column = column or key
        value = self.data[key] if value is None else value
        if not isinstance(value, str):
            raise self.error(
                column,
                f"expected a number with units as text (e.g. '1 {unit}'), got {value!r}",
            )
        try:
            quantity = as_quantity(value, unit, column)
        except RheologyError as exc:
            raise self.error(column, _strip_field(str(exc), column)) from None
        expected = Q_(1.0, unit)
        if quantity.dimensionality != expected.dimensionality:
            raise self.error(
                column,
                f"{value!r} has dimension {quantity.dimensionality}; expected a value in "
                f"{unit} (dimension {expected.dimensionality})",
            )
        magnitude = float(quantity.to_base_units().magnitude)
        if not math.isfinite(magnitude):
            raise self.error(column, f"{value!r} is not a finite number")
        if positive and not magnitude > 0:
            raise self.error(column, f"{value!r} must be greater than zero")
        if nonnegative and not magnitude >= 0:
            raise self.error(column, f"{value!r} must be zero or greater")
        return magnitude


def _strip_field(message: str, field: str) -> str:
    """Drop the 'field: ' prefix of a units error (the column is named already)."""
    prefix = f"{field}: "
    return message[len(prefix) :] if message.startswith(prefix) else message


def _read_rows(path: pathlib.Path, array: str) -> list[_Row]:
    """Parse a TOML file holding an array of tables ``[[array]]``."""
    try:
        with open(path, "rb") as handle:
            document = tomllib.load(handle)
    except FileNotFoundError:
        raise TableError(f"{path.name}: table file not found [file {path}]") from None
    except tomllib.TOMLDecodeError as exc:
        raise TableError(f"{path.name}: not valid TOML: {exc} [file {path}]") from None
    extra = sorted(set(document) - {array})
    if extra:
        raise TableError(
            f"{path.name}: unknown top-level key {extra[0]!r}; expected only [[{array}]] "
            f"tables [file {path}]"
        )
    rows = document.get(array)
    if not isinstance(rows, list) or not rows:
        raise TableError(f"{path.name}: no [[{array}]] tables found [file {path}]")
    result = []
    seen: dict[str, int] = {}
    for index, data in enumerate(rows, start=1):
        if not isinstance(data, dict):
            raise TableError(f"{path.name}, row {index}: expected a [[{array}]] table")
        row = _Row(path, index, data)
        if "id" not in data:
            raise row.error("id", "required column is missing")
        row_id = row.text("id")
        if not _ID_PATTERN.match(row_id):
            raise row.error(
                "id",
                f"{row_id!r} is not a valid id; use lower-case letters, digits, '-' and '.' "
                "(e.g. 'qtz-wet-gt95')",
            )
        if row_id in seen:
            raise row.error("id", f"duplicate id {row_id!r}; already used in row {seen[row_id]}")
        seen[row_id] = index
        result.append(row)
    return result


# ------------------------------------------------------------------------ flow laws


def _prefactor(row: _Row, n: float, p: float, r_eff: float) -> tuple[float, str]:
    """A converted to SI [Pa^-(n+r_eff) m^p s^-1] and A as published."""
    data = row.data
    has_a = "A" in data
    has_log = "log10_A" in data or "A_units" in data
    if has_a and has_log:
        raise row.error("A", "give either A or log10_A with A_units, not both")
    if not has_a and not has_log:
        raise row.error("A", "required column is missing (give A, or log10_A with A_units)")
    if has_a:
        column = "A"
        published = row.text("A")
        try:
            quantity = as_quantity(published, "1/s", "A")
        except RheologyError as exc:
            raise row.error("A", _strip_field(str(exc), "A")) from None
        units_text = published
    else:
        for key in ("log10_A", "A_units"):
            if key not in data:
                raise row.error(key, "required column is missing (log10_A needs A_units)")
        column = "A_units"
        log10_a = row.number("log10_A")
        if abs(log10_a) > _MAX_LOG10_A:
            raise row.error("log10_A", f"{log10_a:g} is out of range (|log10 A| <= 250)")
        units_text = row.text("A_units")
        try:
            unit = as_quantity(f"1 {units_text}", "1/s", "A_units")
        except RheologyError as exc:
            raise row.error("A_units", _strip_field(str(exc), "A_units")) from None
        quantity = 10.0**log10_a * unit
        published = f"10^{log10_a:g} {units_text}"
    try:
        value = prefactor_to_si(quantity, n, p, r_eff)
    except RheologyError as exc:
        raise row.error(
            column,
            f"{units_text!r}: {exc} (r counts only for water_form 'fugacity')",
        ) from None
    if not math.isfinite(value) or not value > 0:
        raise row.error(column, f"A must be a finite number > 0, got {published!r}")
    return value, published


def _uncertainty(row: _Row) -> dict[str, float]:
    """The optional uncertainty table, in SI (log10_A in dex, n bare, Q J/mol, V m^3/mol)."""
    if "uncertainty" not in row.data:
        return {}
    table = row.data["uncertainty"]
    if not isinstance(table, dict):
        raise row.error(
            "uncertainty",
            f"expected an inline table such as {{ n = 0.9, Q = '56 kJ/mol' }}, got {table!r}",
        )
    result = {}
    for key, value in table.items():
        column = f"uncertainty.{key}"
        if key not in _UNCERTAINTY_KEYS:
            raise row.error(column, f"unknown key; expected some of {', '.join(_UNCERTAINTY_KEYS)}")
        if key in ("log10_A", "n"):
            result[key] = row.number(key, value, minimum=0.0, column=column)
        else:
            unit = "J/mol" if key == "Q" else "m^3/mol"
            result[key] = row.quantity(key, unit, value=value, nonnegative=True, column=column)
    return result


def _flow_law(row: _Row) -> FlowLaw:
    """Validate one [[law]] row and convert it to a :class:`FlowLaw` in SI."""
    if "mechanism" not in row.data:
        raise row.error("mechanism", "required column is missing")
    mechanism = row.choice("mechanism", MECHANISMS)
    peierls = mechanism == "peierls"
    if not peierls:
        for key in _LAW_PEIERLS:
            if key in row.data:
                raise row.error(
                    key,
                    f"only rows with mechanism 'peierls' take this column "
                    f"(this row is {mechanism!r})",
                )
    row.check_keys(
        _LAW_REQUIRED + (_LAW_PEIERLS if peierls else ()), _LAW_PREFACTOR + _LAW_OPTIONAL
    )
    water_form = row.choice("water_form", WATER_FORMS)
    status = row.choice("status", STATUSES)
    n = row.number("n", minimum=0.0, strict=not peierls)
    p = row.number("grain_size_exponent", minimum=0.0)
    r = row.number("water_exponent")
    if water_form in ("none", "folded") and r != 0.0:
        raise row.error(
            "water_exponent",
            f"must be 0 when water_form is {water_form!r}, "
            f"got {r:g} (use 'fugacity' or 'OH' for an explicit water term)",
        )
    if water_form in ("fugacity", "OH") and not r > 0.0:
        raise row.error(
            "water_exponent", f"must be > 0 when water_form is {water_form!r}, got {r:g}"
        )
    r_eff = r if water_form == "fugacity" else 0.0
    A, published = _prefactor(row, n, p, r_eff)
    kwargs = {}
    if peierls:
        sigma_p = row.quantity("peierls_stress", "Pa", positive=True)
        # Kocks-type obstacle profile: 0 < p <= 1, 1 <= q <= 2 (Frost & Ashby 1982, ch. 2;
        # from memory); outside these the bracket (1 - (s/sP)^p)^q is no longer an
        # energy barrier that falls with stress.
        peierls_p = row.number("peierls_p", minimum=0.0, strict=True)
        if peierls_p > 1.0:
            raise row.error("peierls_p", f"expected 0 < p <= 1, got {peierls_p:g}")
        peierls_q = row.number("peierls_q", minimum=1.0)
        if peierls_q > 2.0:
            raise row.error("peierls_q", f"expected 1 <= q <= 2, got {peierls_q:g}")
        min_stress = row.quantity("min_stress", "Pa", nonnegative=True)
        if not min_stress < sigma_p:
            raise row.error("min_stress", "must be below peierls_stress")
        kwargs = dict(
            peierls_stress=sigma_p, peierls_p=peierls_p, peierls_q=peierls_q, min_stress=min_stress
        )
    return FlowLaw(
        id=row.id,
        rock=row.text("rock"),
        mechanism=mechanism,
        A=A,
        n=n,
        Q=row.quantity("Q", "J/mol", nonnegative=True),
        V=row.quantity("V", "m^3/mol"),
        grain_size_exponent=p,
        water_exponent=r,
        water_form=water_form,
        A_published=published,
        uncertainty=_uncertainty(row),
        experimental_range=row.text("experimental_range"),
        citation=row.text("citation"),
        location=row.text("location"),
        status=status,
        notes=row.text("notes", allow_empty=True) if "notes" in row.data else "",
        **kwargs,
    )


def _parse_flow_laws(path: pathlib.Path) -> dict[str, FlowLaw]:
    return {row.id: _flow_law(row) for row in _read_rows(path, "law")}


@functools.lru_cache(maxsize=1)
def _default_flow_laws() -> dict[str, FlowLaw]:
    return _parse_flow_laws(table_dir() / FLOW_LAWS_FILE)


def load_flow_laws(path=None) -> dict[str, FlowLaw]:
    """Load and validate a flow-law table.

    Parameters
    ----------
    path : str or pathlib.Path, optional
        A ``flow_laws.toml`` file; default the shipped table (read once, then cached).

    Returns
    -------
    dict of str to FlowLaw
        Laws by id, in file order, every value in SI.

    Raises
    ------
    TableError
        Malformed TOML, or a row that fails validation (the message names file, row,
        id and column).

    Notes
    -----
    Power laws read ``rate = A sigma^n d^-p w^r exp(-(Q + P V)/(R T))`` with the
    differential stress sigma and the axial strain rate of a triaxial test. The units of
    A must be [pressure]^-(n + r) [length]^p [time]^-1, where r counts only for
    ``water_form = "fugacity"`` (an OH content is dimensionless).
    """
    if path is None:
        return dict(_default_flow_laws())
    return _parse_flow_laws(pathlib.Path(path))


# ---------------------------------------------------------------- rock properties


def _rock_properties(row: _Row) -> RockProperties:
    row.check_keys(_PROPERTIES_REQUIRED, _PROPERTIES_OPTIONAL)
    return RockProperties(
        id=row.id,
        name=row.text("name"),
        density=row.quantity("density", "kg/m^3", positive=True),
        conductivity=row.quantity("conductivity", "W/m/K", positive=True),
        heat_production=row.quantity("heat_production", "W/m^3", nonnegative=True),
        shear_modulus=row.quantity("shear_modulus", "Pa", positive=True),
        citation=row.text("citation"),
        status=row.choice("status", STATUSES),
        notes=row.text("notes", allow_empty=True) if "notes" in row.data else "",
    )


def _parse_rock_properties(path: pathlib.Path) -> dict[str, RockProperties]:
    return {row.id: _rock_properties(row) for row in _read_rows(path, "lithology")}


@functools.lru_cache(maxsize=1)
def _default_rock_properties() -> dict[str, RockProperties]:
    return _parse_rock_properties(table_dir() / ROCK_PROPERTIES_FILE)


def load_rock_properties(path=None) -> dict[str, RockProperties]:
    """Load and validate a rock-properties table.

    Parameters
    ----------
    path : str or pathlib.Path, optional
        A ``rock_properties.toml`` file; default the shipped table (cached).

    Returns
    -------
    dict of str to RockProperties
        Density [kg/m^3], conductivity [W/m/K], heat production [W/m^3] and shear
        modulus [Pa] by id.

    Raises
    ------
    TableError
        Malformed TOML or an invalid row.
    """
    if path is None:
        return dict(_default_rock_properties())
    return _parse_rock_properties(pathlib.Path(path))


# -------------------------------------------------------------------------- rocks


def _suggest(name: str, known) -> str:
    close = difflib.get_close_matches(name, list(known), n=3, cutoff=0.6)
    if close:
        quoted = [repr(c) for c in close]
        listed = quoted[0] if len(quoted) == 1 else ", ".join(quoted[:-1]) + " or " + quoted[-1]
        return f"did you mean {listed}?"
    return "known ids: " + ", ".join(sorted(known))


def _rock(row: _Row, laws: Mapping[str, FlowLaw], properties: Mapping[str, RockProperties]) -> Rock:
    row.check_keys(_ROCK_REQUIRED)
    law_ids = row.data["laws"]
    if not isinstance(law_ids, list) or not law_ids:
        raise row.error("laws", f"expected a non-empty list of flow-law ids, got {law_ids!r}")
    chosen = {}
    for law_id in law_ids:
        if not isinstance(law_id, str):
            raise row.error("laws", f"expected flow-law ids as text, got {law_id!r}")
        if law_id not in laws:
            raise row.error("laws", f"unknown flow law {law_id!r}; {_suggest(law_id, laws)}")
        if law_id in chosen:
            raise row.error("laws", f"flow law {law_id!r} is listed twice")
        chosen[law_id] = laws[law_id]
    properties_id = row.text("properties")
    if properties_id not in properties:
        raise row.error(
            "properties",
            f"unknown lithology {properties_id!r}; {_suggest(properties_id, properties)}",
        )
    return Rock(
        id=row.id,
        name=row.text("name"),
        laws=tuple(chosen.values()),
        properties=properties_id,
        description=row.text("description"),
    )


def _parse_rocks(path, laws, properties) -> dict[str, Rock]:
    return {row.id: _rock(row, laws, properties) for row in _read_rows(path, "rock")}


@functools.lru_cache(maxsize=1)
def _default_rocks() -> dict[str, Rock]:
    return _parse_rocks(table_dir() / ROCKS_FILE, _default_flow_laws(), _default_rock_properties())


def load_rocks(path=None, laws=None, properties=None) -> dict[str, Rock]:
    """Load and validate a rock table, resolving its flow laws.

    Parameters
    ----------
    path : str or pathlib.Path, optional
        A ``rocks.toml`` file; default the shipped table (cached when ``laws`` and
        ``properties`` are also defaults).
    laws : mapping of str to FlowLaw, optional
        Flow laws the rocks may name; default :func:`load_flow_laws`.
    properties : mapping of str to RockProperties, optional
        Lithologies the rocks may name; default :func:`load_rock_properties`.

    Returns
    -------
    dict of str to Rock
        Rocks by id, each with its laws (acting in parallel) as FlowLaw objects.

    Raises
    ------
    TableError
        Malformed TOML, an invalid row, or a flow-law or lithology id that does not exist
        (the message suggests close matches).
    """
    if path is None and laws is None and properties is None:
        return dict(_default_rocks())
    path = table_dir() / ROCKS_FILE if path is None else pathlib.Path(path)
    laws = load_flow_laws() if laws is None else laws
    properties = load_rock_properties() if properties is None else properties
    return _parse_rocks(path, laws, properties)


# ---------------------------------------------------------------------- look-ups


def _lookup(table: Mapping[str, Any], key: Any, kind: str, hint: str):
    if not isinstance(key, str):
        raise RheologyError(f"{kind} id: expected text such as {next(iter(table))!r}, got {key!r}")
    if key in table:
        return table[key]
    raise RheologyError(f"unknown {kind} {key!r}; {_suggest(key, table)} (see {hint} for the list)")


def get_flow_law(law_id: str) -> FlowLaw:
    """The shipped flow law ``law_id``.

    Raises
    ------
    RheologyError
        Unknown id; the message suggests close matches.
    """
    return _lookup(
        _default_flow_laws(),
        law_id,
        "flow law",
        "`rheology rocks --laws` on the command line, or rheology.load_flow_laws() in Python,",
    )


def get_rock(rock_id: str) -> Rock:
    """The shipped rock ``rock_id``.

    Raises
    ------
    RheologyError
        Unknown id; the message suggests close matches.
    """
    return _lookup(_default_rocks(), rock_id, "rock", "`rheology rocks`")


def get_rock_properties(properties_id: str) -> RockProperties:
    """The shipped lithology ``properties_id`` of the rock-properties table.

    Raises
    ------
    RheologyError
        Unknown id; the message suggests close matches.
    """
    return _lookup(
        _default_rock_properties(),
        properties_id,
        "lithology",
        "`rheology.library.load_rock_properties()`",
    )


# ------------------------------------------------------------------------ frames


def _format_uncertainty(law: FlowLaw) -> str:
    parts = []
    for key, value in law.uncertainty.items():
        if key == "log10_A":
            parts.append(f"log10 A ±{value:g} dex")
        elif key == "n":
            parts.append(f"n ±{value:g}")
        elif key == "Q":
            parts.append(f"Q ±{value / 1e3:g} kJ/mol")
        elif key == "V":
            parts.append(f"V ±{value / 1e-6:g} cm^3/mol")
    return "; ".join(parts)


def flow_law_frame(laws=None):
    """One row per flow law, for display.

    Parameters
    ----------
    laws : mapping of str to FlowLaw, optional
        Default the shipped table.

    Returns
    -------
    pandas.DataFrame
        Columns ``id, rock, mechanism, A (as published), n, p, r, water_form,
        Q [kJ/mol], V [cm^3/mol], peierls_stress [GPa], uncertainty, experimental_range,
        citation, location, status``.
    """
    import pandas as pd

    laws = load_flow_laws() if laws is None else laws
    records = [
        {
            "id": law.id,
            "rock": law.rock,
            "mechanism": law.mechanism,
            "A (as published)": law.A_published,
            "n": law.n,
            "p": law.grain_size_exponent,
            "r": law.water_exponent,
            "water_form": law.water_form,
            "Q [kJ/mol]": law.Q / 1e3,
            "V [cm^3/mol]": law.V / 1e-6,
            "peierls_stress [GPa]": (
                law.peierls_stress / 1e9 if law.mechanism == "peierls" else float("nan")
            ),
            "uncertainty": _format_uncertainty(law),
            "experimental_range": law.experimental_range,
            "citation": law.citation,
            "location": law.location,
            "status": law.status,
        }
        for law in laws.values()
    ]
    return pd.DataFrame.from_records(records)


def rock_frame(rocks=None):
    """One row per rock, for display.

    Parameters
    ----------
    rocks : mapping of str to Rock, optional
        Default the shipped table.

    Returns
    -------
    pandas.DataFrame
        Columns ``id, name, laws, mechanisms, needs_grain_size, needs_water,
        properties, description``.
    """
    import pandas as pd

    rocks = load_rocks() if rocks is None else rocks
    records = [
        {
            "id": rock.id,
            "name": rock.name,
            "laws": ", ".join(law.id for law in rock.laws),
            "mechanisms": ", ".join(law.mechanism for law in rock.laws),
            "needs_grain_size": rock.needs_grain_size,
            "needs_water": rock.needs_water,
            "properties": rock.properties,
            "description": rock.description,
        }
        for rock in rocks.values()
    ]
    return pd.DataFrame.from_records(records)
