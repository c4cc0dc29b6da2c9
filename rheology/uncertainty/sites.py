"""Many sites at once: a table of per-site inputs over a base scenario, one row of answers each.

A sites table is a CSV file with an ``id`` column and any of these columns, each
replacing the base scenario's value at that site (an empty cell keeps the base value):

* ``strain_rate``; ``faulting`` (``thrust``, ``strike-slip`` or ``normal``);
  ``pore_pressure_ratio`` (plain number in [0, 1)); ``friction_scale`` (plain number
  > 0 multiplying the friction coefficients);
* geotherm parameters of the base scenario's geotherm kind: ``surface_temperature``,
  ``surface_heat_flow``, ``gradient``, ``surface_heat_production``, ``decay_depth``,
  ``conductivity`` (half-space and plate only), ``age``, ``mantle_temperature``,
  ``diffusivity``, ``plate_thickness`` (and ``potential_temperature``,
  ``adiabatic_gradient`` when the base scenario caps temperatures at an adiabat);
* layer thicknesses: ``thickness:<layer name>`` or ``layers[<index>].thickness``.

Dimensional values carry units, either in the cell (``"65 mW/m^2"``) or in the column
header in square brackets (``surface_heat_flow [mW/m^2]``), which then applies to bare
numbers in that column; a unit in a cell wins over the header's. Unknown columns, a
missing ``id`` column or a bad header unit stop the run; a bad cell (malformed number,
wrong dimension, negative thickness, unknown regime, impossible geotherm) marks only its
row, which is reported with its row number and column and skipped.

Results are screening estimates (see :data:`rheology.CAUTION`).
"""

from __future__ import annotations

import csv
import io
import math
import os
import pathlib
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from rheology.constants import ZERO_CELSIUS
from rheology.envelope import Variation, depth_grid
from rheology.errors import RheologyError
from rheology.model import GEOTHERM_PARAMETERS, Scenario
from rheology.physics.friction import REGIMES
from rheology.uncertainty.montecarlo import (
    CHUNK_ELEMENTS,
    ColumnAnswers,
    chunk_map,
    column_answers,
)

#: Dimension of each quantity column: (SI unit, example, is a temperature, sign rule).
_QUANTITY_COLUMNS = {
    "strain_rate": ("1/s", "1e-15 1/s", False, "positive"),
    "surface_temperature": ("K", "10 degC", True, "positive"),
    "surface_heat_flow": ("W/m^2", "65 mW/m^2", False, "positive"),
    "gradient": ("K/m", "25 K/km", False, "positive"),
    "surface_heat_production": ("W/m^3", "2.5 uW/m^3", False, "positive"),
    "decay_depth": ("m", "10 km", False, "positive"),
    "conductivity": ("W/m/K", "2.5 W/m/K", False, "positive"),
    "age": ("s", "60 Myr", False, "positive"),
    "mantle_temperature": ("K", "1350 degC", True, "positive"),
    "diffusivity": ("m^2/s", "1e-6 m^2/s", False, "positive"),
    "plate_thickness": ("m", "125 km", False, "positive"),
    "potential_temperature": ("K", "1350 degC", True, "positive"),
    "adiabatic_gradient": ("K/m", "0.4 K/km", False, "positive"),
    "thickness": ("m", "15 km", False, "positive"),
}
#: Plain-number columns: (example, lower bound, upper bound, bounds text).
_NUMBER_COLUMNS = {
    "pore_pressure_ratio": ("0.37", 0.0, 1.0, "a number from 0 up to, not including, 1"),
    "friction_scale": ("1.0", 0.0, math.inf, "a number > 0"),
}
#: Optional geotherm columns per kind. A linear geotherm's conductivity only sets its heat
#: flow, which no site answer uses (and the engine cannot vary it per realisation yet).
_OPTIONAL_GEOTHERM = {
    "half-space": ("conductivity",),
    "plate": ("conductivity",),
}
_HEADER = re.compile(r"^\s*(?P<name>.*?)\s*(?:\[(?P<unit>[^\[\]]*)\])?\s*$")
_CELL = re.compile(r"^\s*(?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>.*?)\s*$")
_LAYER_INDEX = re.compile(r"^layers\[(\d+)\]\.thickness$")

#: Result columns (header text, with units in brackets).
RESULT_COLUMNS = (
    "id",
    "status",
    "first_brittle_ductile_depth [km]",
    "first_brittle_ductile_temperature [degC]",
    "deepest_faulting_depth [km]",
    "semi_brittle_base [km]",
    "integrated_strength [TN/m]",
    "elastic_thickness [km]",
    "transitions",
    "message",
)


@dataclass(frozen=True)
class SiteColumn:
    """One input column: the header as written, the field it sets and its header unit."""

    header: str
    field: str
    unit: str | None
    layer: int | None = None


@dataclass
class SiteTable:
    """Parsed sites: ids, per-field values [SI] (NaN or None = base value), row errors.

    ``values`` maps a field (``"strain_rate"``, ``"thickness"``...) to an array over
    rows; ``thickness`` has shape (rows, layers) and ``faulting`` is a list of text.
    ``errors`` maps a row index (from 0) to the first problem found in that row.
    """

    source: str
    columns: tuple[SiteColumn, ...]
    ids: list[str]
    values: dict
    errors: dict[int, str]

    @property
    def size(self) -> int:
        """Number of data rows."""
        return len(self.ids)

    def where(self, row: int, column: str) -> str:
        """'row 3 (line 4), column 'x'' for messages."""
        return f"row {row + 1} (line {row + 2}), column {column!r}"


def _allowed_fields(scenario: Scenario) -> list[str]:
    g = scenario.geotherm
    fields = [
        "strain_rate",
        "faulting",
        "pore_pressure_ratio",
        "friction_scale",
        "surface_temperature",
        *GEOTHERM_PARAMETERS[g.kind],
        *_OPTIONAL_GEOTHERM.get(g.kind, ()),
    ]
    if g.potential_temperature is not None:
        fields += ["potential_temperature", "adiabatic_gradient"]
    return fields


def _column(header: str, scenario: Scenario, source: str) -> SiteColumn:
    match = _HEADER.match(header)
    if match is None or not match["name"]:
        raise RheologyError(
            f"{source}: column header {header!r} cannot be read; expected a "
            "name with an optional unit in brackets, e.g. "
            "'surface_heat_flow [mW/m^2]'"
        )
    name, unit = match["name"], match["unit"]
    unit = unit.strip() if unit is not None else None
    names = [layer.name for layer in scenario.layers]
    if name == "id":
        return SiteColumn(header, "id", None)
    layer = None
    if name.startswith("thickness:"):
        layer_name = name.split(":", 1)[1].strip()
        if layer_name not in names:
            raise RheologyError(
                f"{source}: column {header!r} names no layer of the base "
                f"scenario; expected one of {', '.join(map(repr, names))}"
            )
        field, layer = "thickness", names.index(layer_name)
    elif _LAYER_INDEX.match(name):
        layer = int(_LAYER_INDEX.match(name)[1])
        if layer >= len(names):
            raise RheologyError(
                f"{source}: column {header!r}: the base scenario has "
                f"{len(names)} layers (layers[0] to layers[{len(names) - 1}])"
            )
        field = "thickness"
    else:
        allowed = _allowed_fields(scenario)
        if name not in allowed:
            known = name in _QUANTITY_COLUMNS or name in _NUMBER_COLUMNS
            why = (
                f"it is not used by the base scenario's {scenario.geotherm.kind!r} geotherm"
                if known
                else "unknown column"
            )
            raise RheologyError(
                f"{source}: column {header!r}: {why}; expected id, "
                + ", ".join(allowed)
                + ", thickness:<layer name> or layers[<i>].thickness"
            )
        field = name
    if unit is not None and field not in _QUANTITY_COLUMNS:
        raise RheologyError(
            f"{source}: column {header!r}: {field} is a plain value and takes no unit in the header"
        )
    if unit is not None:
        _unit_factor(unit, field, f"{source}: column {header!r}")  # checks the header unit
    return SiteColumn(header, field, unit or None, layer)


def _unit_factor(unit: str, field: str, where: str):
    """The pint unit of ``unit`` if it has the dimension ``field`` needs (else raise)."""
    from rheology.units import Q_, as_quantity

    si, example, temperature, _ = _QUANTITY_COLUMNS[field]
    try:
        quantity = as_quantity(f"1 {unit}", si, where)
    except RheologyError:
        raise RheologyError(
            f"{where}: unknown unit {unit!r}; expected a unit such as the one in {example!r}"
        ) from None
    if quantity.dimensionality != Q_(1.0, si).dimensionality:
        what = "a temperature" if temperature else f"a value in {si}"
        raise RheologyError(
            f"{where}: unit {unit!r} has the wrong dimension; expected {what} such as {example!r}"
        )
    return quantity.units


def read_sites(source, scenario: Scenario) -> SiteTable:
    """Read a sites table (CSV) for ``scenario``.

    Parameters
    ----------
    source : str, os.PathLike or file-like
        The CSV file (UTF-8), or an open text stream.
    scenario : Scenario
        The base scenario; it decides which columns are allowed.

    Returns
    -------
    SiteTable
        Values in SI; rows with a bad cell are listed in ``errors`` (row index -> message
        naming the row, the line and the column).

    Raises
    ------
    RheologyError
        Unreadable file, no header, a missing ``id`` column, a duplicate, unknown or
        not-applicable column, or a header unit of the wrong dimension.
    """
    text, name = _read_text(source)
    reader = csv.reader(io.StringIO(text))
    try:
        header = next(reader)
    except StopIteration:
        raise RheologyError(
            f"{name}: the sites table is empty; expected a header row with an 'id' column"
        ) from None
    except csv.Error as exc:
        raise RheologyError(f"{name}: malformed CSV header ({exc})") from None
    if "id" not in [h.strip() for h in header]:
        raise RheologyError(
            f"{name}: no 'id' column (header {','.join(header)!r}); expected "
            "a header such as 'id,surface_heat_flow [mW/m^2]'"
        )
    columns = tuple(_column(h, scenario, name) for h in header)
    fields = [c.field for c in columns]
    keys = [(c.field, c.layer) for c in columns]
    for k, key in enumerate(keys):
        if keys.index(key) != k:
            raise RheologyError(
                f"{name}: columns {columns[keys.index(key)].header!r} and "
                f"{columns[k].header!r} set the same value; keep one"
            )
    try:
        rows = list(reader)
    except csv.Error as exc:
        raise RheologyError(f"{name}: malformed CSV ({exc})") from None
    rows = [row for row in rows if any(cell.strip() for cell in row)] if rows else rows
    table = SiteTable(name, columns, [], {}, {})
    n_rows, n_layers = len(rows), len(scenario.layers)
    for column in columns:
        if column.field == "thickness" and "thickness" not in table.values:
            table.values["thickness"] = np.full((n_rows, n_layers), np.nan)
        elif column.field == "faulting":
            table.values["faulting"] = [None] * n_rows
        elif column.field not in ("id", "thickness"):
            table.values[column.field] = np.full(n_rows, np.nan)
    seen_ids: dict[str, int] = {}
    pending: dict[int, list] = {k: [] for k in range(len(columns))}  # (row, number, unit)
    for r, row in enumerate(rows):
        if len(row) != len(columns):
            table.errors[r] = (
                f"row {r + 1} (line {r + 2}): {len(row)} cells, expected "
                f"{len(columns)} (one per column)"
            )
            table.ids.append(
                row[fields.index("id")].strip() if len(row) > fields.index("id") else ""
            )
            continue
        for k, (column, cell) in enumerate(zip(columns, row)):
            cell = cell.strip()
            if column.field == "id":
                table.ids.append(cell)
                if not cell:
                    table.errors.setdefault(r, f"{table.where(r, column.header)}: empty id")
                elif cell in seen_ids:
                    table.errors.setdefault(
                        r,
                        f"{table.where(r, column.header)}: id {cell!r} "
                        f"is already used in row {seen_ids[cell] + 1}",
                    )
                else:
                    seen_ids[cell] = r
            elif not cell:
                continue
            elif column.field == "faulting":
                if cell not in REGIMES:
                    table.errors.setdefault(
                        r,
                        f"{table.where(r, column.header)}: {cell!r} is not a faulting "
                        "regime; expected one of " + ", ".join(REGIMES),
                    )
                else:
                    table.values["faulting"][r] = cell
            else:
                problem = _cell(table, r, column, cell, pending[k])
                if problem:
                    table.errors.setdefault(r, problem)
    for k, column in enumerate(columns):
        if pending[k]:
            _convert_column(table, column, pending[k])
    _check_heat_flow(table, scenario)
    return table


def _read_text(source) -> tuple[str, str]:
    if hasattr(source, "read"):
        return source.read(), getattr(source, "name", "<sites>")
    path = pathlib.Path(os.fspath(source))
    try:
        return path.read_text(encoding="utf-8-sig"), str(path)
    except FileNotFoundError:
        raise RheologyError(f"{path}: no such sites file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise RheologyError(f"{path}: cannot read the sites file ({exc})") from None


def _cell(table, r, column, cell, pending):
    """Check one numeric cell; quantities are queued for conversion by unit."""
    match = _CELL.match(cell)
    if column.field in _NUMBER_COLUMNS:
        example, low, high, expected = _NUMBER_COLUMNS[column.field]
        if match is None or match["unit"]:
            return (
                f"{table.where(r, column.header)}: {cell!r} is not a plain number; "
                f"expected {expected}, e.g. {example}"
            )
        value = float(match["num"])
        if not (low <= value < high) or (column.field == "friction_scale" and value <= 0):
            return f"{table.where(r, column.header)}: {cell!r} is out of range; expected {expected}"
        table.values[column.field][r] = value
        return None
    if match is None:
        example = _QUANTITY_COLUMNS[column.field][1]
        return (
            f"{table.where(r, column.header)}: could not read {cell!r}; expected a number "
            f"with units such as {example!r}"
        )
    unit = match["unit"] or column.unit
    if unit is None:
        example = _QUANTITY_COLUMNS[column.field][1]
        return (
            f"{table.where(r, column.header)}: {cell!r} has no units; write e.g. "
            f"{example!r}, or give the unit in the header, e.g. "
            f"'{column.field} [{example.split(' ', 1)[1]}]'"
        )
    pending.append((r, float(match["num"]), unit, cell))
    return None


def _convert_column(table, column, pending):
    """Convert a column's queued numbers to SI, one pint call per distinct unit."""
    from rheology.units import Q_

    _, example, temperature, _ = _QUANTITY_COLUMNS[column.field]
    rows = np.array([p[0] for p in pending])
    numbers = np.array([p[1] for p in pending])
    units = np.array([p[2] for p in pending], dtype=object)
    cells = [p[3] for p in pending]
    for unit in dict.fromkeys(units):
        at = units == unit
        where_rows = rows[at]
        try:
            pint_unit = _unit_factor(unit, column.field, "")
        except RheologyError as exc:
            reason = str(exc).lstrip(": ")
            for k in np.flatnonzero(at):
                r = int(rows[k])
                table.errors.setdefault(
                    r, f"{table.where(r, column.header)}: {cells[k]!r}: {reason}"
                )
            continue
        quantity = Q_(numbers[at], pint_unit)
        si = quantity.to("K").magnitude if temperature else quantity.to_base_units().magnitude
        si = np.asarray(si, float)
        bad = ~np.isfinite(si) | (si <= 0)
        what = "above absolute zero" if temperature else "greater than zero"
        for k in np.flatnonzero(at)[bad]:
            r = int(rows[k])
            table.errors.setdefault(
                r, f"{table.where(r, column.header)}: {cells[k]!r} must be {what}"
            )
        good_rows, good_values = where_rows[~bad], si[~bad]
        if column.field == "thickness":
            table.values["thickness"][good_rows, column.layer] = good_values
        else:
            table.values[column.field][good_rows] = good_values


def _thickness(table: SiteTable, scenario: Scenario, rows) -> np.ndarray | None:
    if "thickness" not in table.values:
        return None
    base = np.array([layer.thickness for layer in scenario.layers])
    given = table.values["thickness"][rows]
    return np.where(np.isnan(given), base, given)


def _check_heat_flow(table: SiteTable, scenario: Scenario) -> None:
    """Mark rows whose surface heat flow is below the heat produced in their column."""
    g = scenario.geotherm
    if g.kind not in ("layered-steady", "exponential-heat"):
        return
    rows = np.arange(table.size)
    q0 = _filled(table, "surface_heat_flow", g.surface_heat_flow, rows)
    if g.kind == "exponential-heat":
        h0 = _filled(table, "surface_heat_production", g.surface_heat_production, rows)
        hr = _filled(table, "decay_depth", g.decay_depth, rows)
        produced = h0 * hr  # q0 >= H0 h_r
    else:
        thickness = _thickness(table, scenario, rows)
        if thickness is None:
            thickness = np.broadcast_to(
                [ly.thickness for ly in scenario.layers], (table.size, len(scenario.layers))
            )
        tops = np.cumsum(thickness, axis=1) - thickness
        bases = np.concatenate([tops[:, 1:], np.full((table.size, 1), np.inf)], axis=1)
        inside = np.clip(np.minimum(bases, scenario.max_depth) - tops, 0.0, None)
        produced = inside @ np.array([ly.heat_production for ly in scenario.layers])
    # the geotherm's own tolerance on a flux of zero at the base
    bad = q0 < produced * (1.0 - 1e-10)
    column = next(
        (c.header for c in table.columns if c.field == "surface_heat_flow"), "surface_heat_flow"
    )
    for r in np.flatnonzero(bad):
        table.errors.setdefault(
            int(r),
            (
                f"{table.where(int(r), column)}: {q0[r] * 1e3:.4g} mW/m^2 is less than the heat "
                f"produced in the column ({produced[r] * 1e3:.4g} mW/m^2), so heat would flow "
                "down; expected a larger surface heat flow"
            ),
        )


def _filled(table, field, base, rows):
    values = table.values.get(field)
    if values is None:
        return np.full(len(rows), np.nan if base is None else float(base))
    values = values[rows]
    return np.where(np.isnan(values), np.nan if base is None else float(base), values)


def site_grid(scenario: Scenario, thickness: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Depth nodes [m] and layer indices, shape (R, M), for per-site layer thicknesses.

    Parameters
    ----------
    scenario : Scenario
        Supplies ``max_depth`` and ``depth_step``.
    thickness : ndarray (R, L)
        Layer thicknesses [m] of each site.

    Returns
    -------
    depth, layer : ndarray (R, M)
        The scenario's regular nodes plus each site's layer boundaries twice (upper
        layer, then lower layer), as :func:`rheology.envelope.depth_grid` builds them.
        Boundaries below ``max_depth`` become repeated copies of the last node, so every
        row has the same length; a repeated node adds nothing to an integral and makes no
        transition.
    """
    zmax, step = scenario.max_depth, scenario.depth_step
    count = int(np.ceil(zmax / step - 1e-9))
    regular = np.minimum(np.linspace(0.0, count * step, count + 1), zmax)
    size = thickness.shape[0]
    bases = np.cumsum(thickness, axis=1)[:, :-1]
    inside = bases < zmax
    z = np.broadcast_to(regular, (size, regular.size))
    layer_of = np.sum((z[..., None] >= bases[:, None, :]) & inside[:, None, :], axis=-1)
    bottom_layer = np.sum(inside, axis=1, keepdims=True)
    upper = np.where(inside, np.arange(bases.shape[1]), bottom_layer)
    lower = np.where(inside, np.arange(bases.shape[1]) + 1, bottom_layer)
    edge = np.where(inside, bases, zmax)
    depth = np.concatenate([z, edge, edge], axis=1)
    layer = np.concatenate([layer_of, upper, lower], axis=1)
    order = np.lexsort((layer, depth), axis=-1)
    return np.take_along_axis(depth, order, 1), np.take_along_axis(layer, order, 1)


@dataclass
class SiteResults:
    """One row of answers per site (SI; NaN where an answer does not exist or failed)."""

    table: SiteTable
    status: list[str]
    messages: list[str]
    first_down_depth: np.ndarray
    first_down_temperature: np.ndarray
    deepest_faulting: np.ndarray
    semi_brittle_base: np.ndarray
    integrated: np.ndarray
    elastic_thickness: np.ndarray
    count: np.ndarray

    @property
    def failed(self) -> list[int]:
        """Indices of the rows that were skipped."""
        return [r for r, s in enumerate(self.status) if s != "ok"]

    def rows(self) -> list[list[str]]:
        """Result table rows (text, display units), in the order of :data:`RESULT_COLUMNS`."""
        columns = (
            self.first_down_depth / 1e3,
            self.first_down_temperature - ZERO_CELSIUS,
            self.deepest_faulting / 1e3,
            self.semi_brittle_base / 1e3,
            self.integrated / 1e12,
            self.elastic_thickness / 1e3,
        )
        values = np.column_stack(columns).tolist()  # plain floats format fastest
        counts = self.count.tolist()
        return [
            [
                site,
                status,
                *("" if v != v else f"{v:.6g}" for v in row),
                str(count) if status == "ok" else "",
                message,
            ]
            for site, status, message, row, count in zip(
                self.table.ids, self.status, self.messages, values, counts
            )
        ]


def _variation(table: SiteTable, scenario: Scenario, rows: np.ndarray) -> Variation:
    """The Variation of the given rows (empty cells filled with the base values)."""
    geotherm = {}
    strain_rate = pore = friction = faulting = None
    for field, values in table.values.items():
        if field == "thickness":
            continue
        if field == "faulting":
            faulting = np.array([values[r] or scenario.faulting for r in rows])
        elif field == "strain_rate":
            strain_rate = _filled(table, field, scenario.strain_rate, rows)
        elif field == "pore_pressure_ratio":
            base = (
                scenario.pore_pressure.ratio if scenario.pore_pressure.kind == "ratio" else (None)
            )
            pore = _filled(table, field, base, rows)
        elif field == "friction_scale":
            friction = _filled(table, field, 1.0, rows)
        else:
            geotherm[field] = _filled(table, field, _base_geotherm_value(scenario, field), rows)
    return Variation(
        size=len(rows),
        strain_rate=strain_rate,
        geotherm=geotherm,
        pore_pressure_ratio=pore,
        friction_scale=friction,
        thickness=_thickness(table, scenario, rows),
        faulting=faulting,
    )


def _base_geotherm_value(scenario: Scenario, field: str):
    """The base scenario's value of a geotherm field, with the engine's defaults.

    An optional conductivity left out of the base scenario is the first layer's for a
    linear geotherm and 3.3 W/m/K otherwise (as in :func:`rheology.envelope.geotherm_profile`).
    """
    value = getattr(scenario.geotherm, field)
    if value is None and field == "conductivity":
        return scenario.layers[0].conductivity if scenario.geotherm.kind == "linear" else 3.3
    return value


def _pore_problem(table, scenario, rows):
    """Rows whose empty pore-pressure cell cannot take a ratio from the base scenario."""
    if "pore_pressure_ratio" not in table.values or scenario.pore_pressure.kind == "ratio":
        return []
    values = table.values["pore_pressure_ratio"][rows]
    return [int(r) for r in rows[np.isnan(values)]]


def run_sites(
    table: SiteTable,
    scenario: Scenario,
    *,
    chunk: int | None = None,
    progress: Callable[[int, int], None] | None = None,
    workers: int | None = None,
) -> SiteResults:
    """Answers of every good row of ``table`` over the base ``scenario``.

    Parameters
    ----------
    table : SiteTable
        From :func:`read_sites`.
    scenario : Scenario
        The base scenario (depth grid, layers, every value a column does not replace).
    chunk : int, optional
        Sites evaluated at once (one :class:`rheology.envelope.Variation` each); default
        about :data:`rheology.uncertainty.montecarlo.CHUNK_ELEMENTS` depth nodes per chunk.
    progress : callable, optional
        Called as ``progress(done, total)`` after each chunk.
    workers : int, optional
        Threads evaluating chunks at once (default one per CPU core); the results do
        not depend on it.

    Returns
    -------
    SiteResults

    Notes
    -----
    Each chunk is one call of :func:`rheology.uncertainty.montecarlo.column_answers`
    (the compiled column scan), so a site's answers equal a single-site run of the same
    scenario except for the transition depths, which are interpolated between nodes
    (see :func:`rheology.columns.scan_answers`). A chunk that the physics
    rejects is split in halves until the offending sites are isolated; they are
    reported, the others kept.
    """
    n = table.size
    status, messages = ["ok"] * n, [""] * n
    for r, message in table.errors.items():
        status[r], messages[r] = "error", message
    for r in _pore_problem(table, scenario, np.arange(n)):
        if status[r] == "ok":
            status[r] = "error"
            messages[r] = (
                f"{table.where(r, 'pore_pressure_ratio')}: empty, and the base "
                f"scenario's pore pressure is {scenario.pore_pressure.kind!r}, not "
                "a ratio; expected a number"
            )
    good = np.array([r for r in range(n) if status[r] == "ok"], dtype=int)
    nan = np.full(n, np.nan)
    results = SiteResults(
        table,
        status,
        messages,
        nan.copy(),
        nan.copy(),
        nan.copy(),
        nan.copy(),
        nan.copy(),
        nan.copy(),
        np.zeros(n, int),
    )
    varies_thickness = "thickness" in table.values
    if not varies_thickness:
        depth, layer = depth_grid(scenario)
        nodes = depth.size
    else:
        nodes = depth_grid(scenario)[0].size + 2 * (len(scenario.layers) - 1)
    if chunk is None:
        chunk = max(1, CHUNK_ELEMENTS // nodes)
    if isinstance(chunk, bool) or not isinstance(chunk, int | np.integer) or chunk < 1:
        raise RheologyError(f"chunk: got {chunk!r}; expected a whole number >= 1")
    grid = None if varies_thickness else (depth, layer)

    def work(rows):
        _solve(table, scenario, rows, results, grid)
        return rows.size

    done = n - good.size
    chunks = [good[start : start + chunk] for start in range(0, good.size, chunk)]
    with chunk_map(workers) as mapper:
        for size in mapper(work, chunks):
            done += size
            if progress is not None:
                progress(done, n)
    if progress is not None and good.size == 0:
        progress(n, n)
    return results


def _solve(table, scenario, rows, results, grid):
    """Evaluate ``rows``; on a physics error split them until the bad sites are isolated."""
    variation = _variation(table, scenario, rows)
    try:
        if grid is None:
            depth, layer = site_grid(scenario, variation.thickness)
        else:
            depth, layer = grid
        answers = column_answers(scenario, depth, layer, variation).answers
    except RheologyError as exc:
        if rows.size == 1:
            r = int(rows[0])
            results.status[r] = "error"
            results.messages[r] = f"row {r + 1} (line {r + 2}): {exc}"
            return
        half = rows.size // 2
        _solve(table, scenario, rows[:half], results, grid)
        _solve(table, scenario, rows[half:], results, grid)
        return
    _store(results, rows, answers)


def _store(results: SiteResults, rows, answers: ColumnAnswers) -> None:
    results.first_down_depth[rows] = answers.first_down_depth
    results.first_down_temperature[rows] = answers.first_down_temperature
    results.deepest_faulting[rows] = answers.deepest_faulting
    results.semi_brittle_base[rows] = answers.semi_brittle_base
    results.integrated[rows] = answers.integrated
    results.elastic_thickness[rows] = answers.elastic_thickness
    results.count[rows] = answers.count


def write_site_results(results: SiteResults, destination) -> None:
    """Write the results table as CSV (UTF-8) to a path or an open text stream.

    The first line is a comment, ``# <caution>`` (:data:`rheology.CAUTION`), as in the
    profile CSV of :func:`rheology.outputs.write_profile_csv`. Then come the columns
    :data:`RESULT_COLUMNS` (units in the headers); empty cells mean "no such depth"
    (e.g. no brittle-to-ductile transition) or a skipped row (status ``error``). Text
    cells are quoted, so a ``#`` in a site id or a message is not taken for a comment.
    Read it with ``pandas.read_csv(path, comment="#")``, or skip the first line.
    """
    if hasattr(destination, "write"):
        _write(results, destination)
        return
    with open(os.fspath(destination), "w", encoding="utf-8", newline="") as handle:
        _write(results, handle)


#: Result columns written as numbers (unquoted); the others are text.
_NUMERIC_RESULTS = frozenset(RESULT_COLUMNS[2:-1])


def _typed(row: list[str]) -> list:
    """Cells of one result row, numbers as int or float so the writer leaves them unquoted."""
    return [
        cell
        if name not in _NUMERIC_RESULTS or cell == ""
        else (int(cell) if name == "transitions" else float(cell))
        for name, cell in zip(RESULT_COLUMNS, row)
    ]


def _write(results, handle) -> None:
    from rheology.answers.report import CAUTION

    handle.write("# " + " ".join(CAUTION.split()) + "\n")
    writer = csv.writer(handle, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC)
    writer.writerow(RESULT_COLUMNS)
    writer.writerows(_typed(row) for row in results.rows())


def process_sites(
    sites,
    scenario: Scenario,
    out,
    *,
    chunk: int | None = None,
    progress: Callable[[int, int], None] | None = None,
    workers: int | None = None,
) -> SiteResults:
    """Read a sites CSV, run every good row over ``scenario`` and write the results CSV.

    Parameters
    ----------
    sites : str, os.PathLike or file-like
        The sites table (see the module docstring).
    scenario : Scenario
        The base scenario.
    out : str, os.PathLike or file-like
        Where the results CSV goes.
    chunk, progress, workers
        As in :func:`run_sites`.

    Returns
    -------
    SiteResults
    """
    table = read_sites(sites, scenario)
    results = run_sites(table, scenario, chunk=chunk, progress=progress, workers=workers)
    write_site_results(results, out)
    return results


__all__: Sequence[str] = (
    "RESULT_COLUMNS",
    "SiteColumn",
    "SiteResults",
    "SiteTable",
    "process_sites",
    "read_sites",
    "run_sites",
    "site_grid",
    "write_site_results",
)
