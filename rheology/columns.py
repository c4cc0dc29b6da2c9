"""Compiled scans down many columns at once: envelope fields and each column's answers.

A batch is R columns (realisations of a Monte Carlo run, sites of a table, or one single
column) on nz depth nodes each. :class:`ColumnInputs` holds what the scans need, already
in SI: depth, layer, temperature, lithostatic and pore pressure at every node (arrays of
1 or R rows, shared rows broadcast), the strain rate and the coefficients of frictional
strength of each column, and the creep laws of every layer. The numbers come from the
numpy physics of :mod:`rheology.physics` (see :func:`rheology.envelope.column_inputs`);
the scans add, node by node, the two strengths and what follows from them:

* :func:`scan_fields` - frictional strength, creep strength and the mechanism at every
  node (the fields of :class:`rheology.envelope.Envelope`);
* :func:`scan_answers` - the same strengths, reduced on the fly to each column's
  transitions, base of the semi-brittle band, integrated strength and elastic thickness,
  with the count of frictional columns at each node and, for the first few columns, the
  strength profile itself (for percentile bands).

Both call the same compiled node function, so a column's numbers do not depend on the
batch it is in, the chunk size or the thread. Stresses are differential stresses
sigma1 - sigma3 [Pa]; strain rates are axial (triaxial convention).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from rheology.errors import RheologyError
from rheology.physics.compiled import compiled
from rheology.physics.creep import (
    A_TERM,
    H_TERM,
    LOG_MIN,
    LOG_STRESS_FLOOR,
    NEGLIGIBLE,
    TERM_FIELDS,
    WORK_COLUMNS,
    arrhenius,
    power_law_log_stress,
    set_law,
    solve_log_stress,
    term_table,
)
from rheology.physics.geotherm import LinearGeotherm

#: Mechanism names; :attr:`rheology.envelope.Envelope.mechanism` holds indices into it.
MECHANISMS = (
    "frictional sliding",
    "semi-brittle",
    "dislocation creep",
    "diffusion creep",
    "low-temperature plasticity",
)
FRICTIONAL, SEMI_BRITTLE = 0, 1
#: Mechanism code of each flow-law mechanism.
CREEP_CODES = {"dislocation": 2, "diffusion": 3, "peierls": 4}
#: Clamp of ln(brittle / ductile) where a strength is 0 or infinite, as in
#: :mod:`rheology.answers.transitions`.
LOG_CLAMP = 700.0
#: Transitions (and Goetze crossings) kept per column before a chunk is scanned again
#: with room for all of them.
CAPACITY = 16


@dataclass(frozen=True)
class LawTable:
    """Creep terms of every layer, packed for the scans.

    ``first`` and ``count`` (L,) locate each layer's terms; ``kind`` (K,) is 0 for a
    power law and 1 for low-temperature plasticity; ``code`` (K,) the mechanism code
    (index into :data:`MECHANISMS`); ``values`` (1 or R, 8, K) the parameters in the
    order of :data:`rheology.physics.creep.TERM_FIELDS` with A, sigma_P and the lowest
    stress as natural logarithms [SI].
    """

    first: np.ndarray
    count: np.ndarray
    kind: np.ndarray
    code: np.ndarray
    values: np.ndarray

    @classmethod
    def from_terms(cls, layers, codes, size: int = 1) -> LawTable:
        """Pack the creep terms of every layer with their mechanism ``codes``.

        ``layers`` is a list of :class:`~rheology.physics.creep.CreepTerm` lists, their
        parameters scalars or (R, 1) columns.
        """
        terms = [term for row in layers for term in row]
        counts = np.array([len(row) for row in layers], np.int64)
        per_row = any(
            np.ndim(getattr(t, name)) and np.size(getattr(t, name)) > 1
            for t in terms
            for name in TERM_FIELDS
        )
        rows = size if per_row else 1
        kind, *fields = term_table(terms, (rows, 1))
        values = np.stack([np.broadcast_to(f, (len(terms), rows)).T for f in fields], axis=1)
        return cls(
            first=np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64),
            count=counts,
            kind=kind,
            code=np.array([c for row in codes for c in row], np.int8),
            values=np.ascontiguousarray(values),
        )


@dataclass(frozen=True)
class ColumnInputs:
    """Everything the scans need for R columns on nz nodes [SI].

    Node arrays have shape (1, nz) (shared by every column) or (R, nz); per-column
    arrays (1,) / (1, ...) or (R,) / (R, ...).

    Attributes
    ----------
    size : int
        R.
    depth : ndarray (., nz)
        Depth [m], increasing; a layer boundary appears twice (upper layer first).
    layer : ndarray of int64 (., nz)
    temperature, temperature_value, temperature_shape : ndarray (., nz), (.,), (., nz)
        Temperature [K] = temperature + temperature_value * temperature_shape (a
        geotherm linear in one surface value, :class:`rheology.physics.geotherm.
        LinearGeotherm`, or the temperature itself with value 0); None until given
        (see :meth:`rows`).
    lithostatic : ndarray (., nz)
        Vertical stress [Pa].
    pore_pressure, pore_ratio : ndarray (., nz), ndarray (.,)
        Pore-fluid pressure P_f = pore_pressure + pore_ratio sigma_v [Pa] (a pressure
        model, or a ratio to the overburden, Hubbert & Rubey 1959).
    log_rate : ndarray (.,)
        ln(axial strain rate [1/s]).
    friction : ndarray (., 4)
        slope and intercept [Pa] of two branches; frictional strength is
        min(slope_k (sigma_v - P_f) + intercept_k).
    laws : LawTable
    """

    size: int
    depth: np.ndarray
    layer: np.ndarray
    temperature: np.ndarray | None
    temperature_value: np.ndarray | None
    temperature_shape: np.ndarray | None
    lithostatic: np.ndarray
    pore_pressure: np.ndarray
    pore_ratio: np.ndarray
    log_rate: np.ndarray
    friction: np.ndarray
    laws: LawTable

    def rows(self, start: int, stop: int, geotherm=None) -> ColumnInputs:
        """Columns ``start .. stop - 1`` (arrays with one row per column are sliced).

        ``geotherm`` (a :class:`rheology.physics.geotherm.LinearGeotherm` of those
        columns) replaces the temperature fields.
        """
        size = stop - start

        def cut(array):
            if array is None or not (self.size > 1 and len(array) == self.size):
                return array
            return array[start:stop]

        fields = {name: cut(getattr(self, name)) for name in _PER_COLUMN}
        if geotherm is not None:
            fields.update(temperature_fields(geotherm, size))
        laws = replace(self.laws, values=cut(self.laws.values))
        return ColumnInputs(size=size, laws=laws, **fields)

    def distinct_rows(self) -> int:
        """1 when every column is the same, else R."""
        per_column = (self.laws.values, *(getattr(self, name) for name in _PER_COLUMN))
        return max(len(array) for array in per_column)

    def pore_pressure_field(self) -> np.ndarray:
        """Pore-fluid pressure [Pa] at every node, (1 or R, nz), as the scans compute it."""
        return self.pore_pressure + self.pore_ratio[:, None] * self.lithostatic

    def temperature_field(self) -> np.ndarray:
        """Temperature [K] at every node, (1 or R, nz), as the scans compute it."""
        return self.temperature + self.temperature_value[:, None] * self.temperature_shape

    def node_arrays(self):
        """The arrays the compiled scans take, in their order."""
        if self.temperature is None:
            raise RheologyError("temperature: not given; expected the temperature at every node")
        return (
            self.depth,
            self.layer,
            self.temperature,
            self.temperature_value,
            self.temperature_shape,
            self.lithostatic,
            self.pore_pressure,
            self.pore_ratio,
            self.log_rate,
            self.friction,
            self.laws.kind,
            self.laws.code,
            self.laws.first,
            self.laws.count,
            self.laws.values,
        )


#: The fields of :class:`ColumnInputs` with one row per column or one shared row.
_PER_COLUMN = (
    "depth",
    "layer",
    "temperature",
    "temperature_value",
    "temperature_shape",
    "lithostatic",
    "pore_pressure",
    "pore_ratio",
    "log_rate",
    "friction",
)


def temperature_fields(geotherm, size: int) -> dict[str, np.ndarray]:
    """The temperature fields of :class:`ColumnInputs` from a geotherm of ``size`` columns.

    ``geotherm`` is a :class:`rheology.physics.geotherm.LinearGeotherm`, any other
    :class:`rheology.physics.geotherm.GeothermProfile`, or a temperature array [K].
    """
    if not isinstance(geotherm, LinearGeotherm):
        temperature = node_rows(getattr(geotherm, "temperature", geotherm), size)
        return {
            "temperature": temperature,
            "temperature_value": np.zeros(1),
            "temperature_shape": np.zeros((1, temperature.shape[1])),
        }
    nz = np.shape(geotherm.shape)[-1]
    return {
        "temperature": node_rows(np.broadcast_to(geotherm.base, _rows(geotherm.base, nz)), size),
        "temperature_value": np.asarray(geotherm.value, float).reshape(-1),
        "temperature_shape": node_rows(geotherm.shape, size),
    }


def _rows(array, nz):
    return (np.shape(array)[0] if np.ndim(array) == 2 else 1, nz)


def node_rows(values, size: int, dtype=float) -> np.ndarray:
    """``values`` (scalar, (nz,), (1, nz) or (R, nz)) as a C-contiguous (1 or R, nz) array."""
    array = np.asarray(values, dtype)
    if array.ndim < 2:
        array = array.reshape(1, -1)
    if array.shape[0] not in (1, size):
        raise RheologyError(f"expected 1 or {size} rows of depth nodes, got {array.shape[0]}")
    return np.ascontiguousarray(array)


# ------------------------------------------------------------------------ compiled


@compiled
def _row(array, r):
    return r if array.shape[0] > 1 else 0


@compiled
def _log_ratio(numerator, denominator):
    """ln(numerator / denominator); 0 for 0/0 or inf/inf, +-LOG_CLAMP for +-inf."""
    value = np.log(numerator) - np.log(denominator)
    if np.isnan(value):
        return 0.0
    if np.isinf(value):
        return LOG_CLAMP if value > 0 else -LOG_CLAMP
    return value


@compiled
def _fraction(g0, g1, same):
    """Where g crosses zero between two nodes, as a fraction of the step (linear in g)."""
    if not same:
        return 0.0
    fraction = g0 / (g0 - g1)
    if np.isnan(fraction):
        return 0.0
    return min(max(fraction, 0.0), 1.0)


@compiled
def _scan(
    size,
    depth,
    layer,
    temperature,
    temperature_value,
    temperature_shape,
    lithostatic,
    pore,
    pore_ratio,
    log_rate,
    friction,
    kind,
    code,
    first,
    count,
    values,
    competent_stress,
    competent_fraction,
    brittle_out,
    ductile_out,
    mechanism_out,
    per_column,
    coupled,
    counts,
    crossing_values,
    crossing_codes,
    frictional,
    band,
):
    """Scan R columns down their nodes; fill the fields and/or the answers asked for.

    Fields are written when ``brittle_out`` has R rows, answers when ``per_column`` has;
    returns the most transitions (or Goetze crossings) found in one column, or -1 - the
    index (row * nz + node) of the first node whose temperature is not above 0 K.
    """
    n_terms, nz = kind.size, depth.shape[1]
    want_fields, want_answers = brittle_out.shape[0] == size, per_column.shape[0] == size
    capacity = crossing_values.shape[1]
    work = np.empty((n_terms, WORK_COLUMNS))
    log_A, n, Q, V = np.empty(n_terms), np.empty(n_terms), np.empty(n_terms), np.empty(n_terms)
    goetze = np.empty(capacity)
    most = 0
    for r in range(size):
        row = _row(values, r)
        for t in range(n_terms):  # this column's laws; ln A and H are set at each node
            law = values[row, :, t]  # A, n, Q, V, sigma_P, p, q, lowest stress (TERM_FIELDS)
            log_A[t], n[t], Q[t], V[t] = law[0], law[1], law[2], law[3]
            set_law(work, t, kind[t], n[t], law[4], law[5], law[6], law[7])
        rd, rl, rt = _row(depth, r), _row(layer, r), _row(temperature, r)
        rv, rh = _row(temperature_value, r), _row(temperature_shape, r)
        value = temperature_value[rv]
        rs, rp, rf = _row(lithostatic, r), _row(pore, r), _row(friction, r)
        target, ratio = log_rate[_row(log_rate, r)], pore_ratio[_row(pore_ratio, r)]
        f0, f1, f2, f3 = friction[rf, 0], friction[rf, 1], friction[rf, 2], friction[rf, 3]
        first_depth = first_temperature = last_down = np.nan
        n_cross = n_goetze = n_layers = 0
        integrated = h_sum = h_cubes = top = 0.0
        inside = wins0 = plastic0 = False
        z0 = t0 = b0 = d0 = e0 = s0 = 0.0
        l0 = 0
        for j in range(nz):
            T = temperature[rt, j] + value * temperature_shape[rh, j]  # base + value shape
            sv = lithostatic[rs, j]
            if not T > 0:
                return -1 - (r * nz + j)
            effective = sv - (pore[rp, j] + ratio * sv)  # sigma_v - P_f
            brittle = min(f0 * effective + f1, f2 * effective + f3)  # the lesser branch
            L = layer[rl, j]
            start, n_here = first[L], count[L]
            if n_here == 1 and kind[start] == 0:  # one power law: closed form
                log_ductile = power_law_log_stress(
                    target, log_A[start] - arrhenius(Q[start], V[start], sv, T), n[start]
                )
                dominant = start
            else:  # mechanisms in parallel
                fastest, log_ductile = start, np.inf
                for t in range(start, start + n_here):
                    H = arrhenius(Q[t], V[t], sv, T)
                    work[t, H_TERM] = H
                    work[t, A_TERM] = log_A[t] - H if kind[t] == 0 else log_A[t]
                    if kind[t] == 0:
                        alone = power_law_log_stress(target, work[t, A_TERM], n[t])
                        if alone < log_ductile:
                            fastest, log_ductile = t, alone
                # The power law that alone reaches the rate at the lowest stress carries it
                # all when the other terms are switched off there or slower by exp(-40): the
                # solver would return the same (its first step); skip the call.
                for t in range(start, start + n_here):
                    if t == fastest:
                        continue
                    if kind[t] == 0:
                        off = work[t, A_TERM] + n[t] * log_ductile < target - NEGLIGIBLE
                    else:
                        off = log_ductile < work[t, LOG_MIN]
                    if not off:
                        log_ductile, fastest = solve_log_stress(target, work, start, n_here)
                        break
                dominant = fastest
            ductile = 0.0 if log_ductile <= LOG_STRESS_FLOOR else math.exp(log_ductile)
            if want_fields:
                brittle_out[r, j] = brittle
                ductile_out[r, j] = ductile
                if brittle <= ductile:
                    mechanism_out[r, j] = FRICTIONAL
                elif ductile > effective:  # Goetze criterion: semi-brittle
                    mechanism_out[r, j] = SEMI_BRITTLE
                else:
                    mechanism_out[r, j] = code[dominant]
            if not want_answers:
                continue
            z = depth[rd, j]
            strength = min(brittle, ductile)
            wins = brittle <= ductile  # friction is the weaker mechanism
            plastic = ductile <= effective  # creep stress below the effective pressure
            if r < band.shape[0]:
                band[r, j] = strength
            if wins:
                frictional[j] += 1
            if j > 0:
                integrated += (z - z0) * (strength + s0) / 2.0  # trapezoid rule
                same = l0 == L
                if wins != wins0:  # a brittle/ductile transition between j-1 and j
                    fraction = _fraction(_log_ratio(b0, d0), _log_ratio(brittle, ductile), same)
                    crossing = z0 + fraction * (z - z0)
                    if n_cross < capacity:
                        crossing_values[r, n_cross, 0] = crossing
                        crossing_values[r, n_cross, 1] = t0 + fraction * (T - t0)
                        if same:
                            crossing_values[r, n_cross, 2] = b0 + fraction * (brittle - b0)
                        else:
                            crossing_values[r, n_cross, 2] = strength if wins0 else s0
                        crossing_codes[r, n_cross, 0] = 0 if wins0 else 1
                        crossing_codes[r, n_cross, 1] = l0
                        crossing_codes[r, n_cross, 2] = L
                        crossing_codes[r, n_cross, 3] = 0 if same else 1
                    if wins0:  # brittle above, ductile below
                        last_down = crossing
                        if np.isnan(first_depth):
                            first_depth = crossing
                            first_temperature = t0 + fraction * (T - t0)
                    n_cross += 1
                if plastic and not plastic0 and not wins and not wins0:
                    if same:
                        fraction = _fraction(
                            _log_ratio(e0, d0), _log_ratio(effective, ductile), same
                        )
                        crossing = z0 + fraction * (z - z0)
                    else:
                        crossing = z
                    if n_goetze < capacity:
                        goetze[n_goetze] = crossing
                    n_goetze += 1
            # competent layers for the elastic thickness (Burov & Diament 1995)
            strong = strength > max(competent_stress, competent_fraction * sv)
            if strong and not inside:
                inside = True
                top = 0.0 if j == 0 else 0.5 * (z0 + z)
            elif inside and not strong:
                inside = False
                h = 0.5 * (z0 + z) - top
                if h > 0:
                    n_layers += 1
                    h_sum += h
                    h_cubes += h**3
            z0, l0, t0, b0, d0, e0, s0 = z, L, T, brittle, ductile, effective, strength
            wins0, plastic0 = wins, plastic
        if not want_answers:
            continue
        if inside and z0 - top > 0:
            n_layers += 1
            h_sum += z0 - top
            h_cubes += (z0 - top) ** 3
        base = np.nan
        for k in range(min(n_goetze, capacity)):
            if goetze[k] >= first_depth - 1.0:  # as in the plain-language summary
                base = goetze[k]
                break
        per_column[r, 0] = first_depth
        per_column[r, 1] = first_temperature
        per_column[r, 2] = z0 if wins0 else last_down  # deepest faulting
        per_column[r, 3] = base
        per_column[r, 4] = integrated
        per_column[r, 5] = h_sum if n_layers == 1 else (np.cbrt(h_cubes) if n_layers else 0.0)
        coupled[r] = n_layers <= 1
        counts[r] = n_cross
        most = max(most, n_cross, n_goetze)
    return most


# ------------------------------------------------------------------------ wrappers


def _run_scan(inputs: ColumnInputs, *outputs, competent=(0.0, 0.0)) -> int:
    most = _scan(inputs.size, *inputs.node_arrays(), *competent, *outputs)
    if most < 0:
        row, node = divmod(-1 - most, inputs.depth.shape[1])
        field = inputs.temperature_field()
        value = field[min(row, len(field) - 1), node]
        raise RheologyError(f"temperature: {value} K is not above absolute zero; expected T > 0 K")
    return most


def _no_answers(nz: int):
    """Empty answer outputs (a fields-only scan)."""
    return (
        np.empty((0, 6)),
        np.empty(0, np.bool_),
        np.empty(0, np.int64),
        np.empty((0, CAPACITY, 3)),
        np.empty((0, CAPACITY, 4), np.int64),
        np.zeros(nz, np.int64),
        np.empty((0, nz)),
    )


def scan_fields(inputs: ColumnInputs) -> dict[str, np.ndarray]:
    """Frictional and creep strength and the mechanism at every node, shape (R, nz).

    Returns
    -------
    dict
        ``brittle``, ``ductile`` [Pa] and ``mechanism`` (int8 codes into
        :data:`MECHANISMS`): frictional where brittle <= ductile, else semi-brittle where
        the creep stress exceeds the effective pressure (Goetze criterion; Kohlstedt,
        Evans & Mackwell 1995), else the creep mechanism carrying most of the rate.
    """
    shape = (inputs.size, inputs.depth.shape[1])
    brittle, ductile = np.empty(shape), np.empty(shape)
    mechanism = np.empty(shape, np.int8)
    _run_scan(inputs, brittle, ductile, mechanism, *_no_answers(shape[1]))
    return {"brittle": brittle, "ductile": ductile, "mechanism": mechanism}


@dataclass(frozen=True)
class Crossings:
    """Transitions of many columns as flat arrays (one entry per transition) [SI].

    ``kind`` is 0 for brittle-to-ductile and 1 for ductile-to-brittle; ``occurrence``
    counts transitions of the same kind in the same ``layer_below`` of one column, from
    0, shallow first. Entries are sorted by column (``row``), then depth.
    """

    row: np.ndarray
    depth: np.ndarray
    temperature: np.ndarray
    stress: np.ndarray
    kind: np.ndarray
    layer_above: np.ndarray
    layer_below: np.ndarray
    at_boundary: np.ndarray
    occurrence: np.ndarray


@dataclass(frozen=True)
class ColumnAnswers:
    """Answers of R columns at once [SI]; NaN where an answer does not exist.

    Attributes
    ----------
    size : int
    transitions : Crossings
    first_down_depth, first_down_temperature : ndarray (R,)
        Depth [m] and temperature [K] of the first (shallowest) brittle-to-ductile
        transition; NaN when friction is weaker than creep through the whole column.
    deepest_faulting : ndarray (R,)
        Depth [m] of the last brittle-to-ductile transition; the column base when rock is
        frictional at the base; NaN when no depth is frictional.
    semi_brittle_base : ndarray (R,)
        First Goetze-criterion depth [m] at or below the first brittle-to-ductile
        transition (creep stress falling below the effective pressure).
    integrated : ndarray (R,)
        Depth-integrated strength [N/m].
    elastic_thickness : ndarray (R,)
        Effective elastic thickness [m].
    coupled : ndarray of bool (R,)
        False where several competent layers were combined as decoupled.
    count : ndarray of int (R,)
        Number of transitions.
    """

    size: int
    transitions: Crossings
    first_down_depth: np.ndarray
    first_down_temperature: np.ndarray
    deepest_faulting: np.ndarray
    semi_brittle_base: np.ndarray
    integrated: np.ndarray
    elastic_thickness: np.ndarray
    coupled: np.ndarray
    count: np.ndarray

    @staticmethod
    def concatenate(parts: list[ColumnAnswers]) -> ColumnAnswers:
        """Join the answers of consecutive chunks (column indices are offset)."""
        offsets = np.cumsum([0] + [p.size for p in parts])[:-1]
        crossing_fields = {}
        for name in Crossings.__dataclass_fields__:
            arrays = [getattr(p.transitions, name) for p in parts]
            if name == "row":
                arrays = [a + o for a, o in zip(arrays, offsets)]
            crossing_fields[name] = np.concatenate(arrays)
        values = {
            name: np.concatenate([getattr(p, name) for p in parts])
            for name in ColumnAnswers.__dataclass_fields__
            if name not in ("size", "transitions")
        }
        return ColumnAnswers(
            size=int(sum(p.size for p in parts)), transitions=Crossings(**crossing_fields), **values
        )


@dataclass(frozen=True)
class ScanResult:
    """:func:`scan_answers` output: the answers, frictional counts and kept profiles."""

    answers: ColumnAnswers
    frictional: np.ndarray
    band: np.ndarray


def scan_answers(
    inputs: ColumnInputs,
    competent_stress: float,
    competent_fraction: float,
    band: int | np.ndarray = 0,
) -> ScanResult:
    """Each column's answers, without keeping its (nz,) fields.

    Parameters
    ----------
    inputs : ColumnInputs
    competent_stress, competent_fraction : float
        Competence thresholds of the elastic thickness [Pa] and [-] (see
        :func:`rheology.elastic_thickness`).
    band : int or ndarray (b, nz)
        Keep the strength profile [Pa] of the first b columns: their number (a new
        array), or a C-contiguous array to fill (b <= R).

    Returns
    -------
    ScanResult
        ``answers`` (:class:`ColumnAnswers`), ``frictional`` (nz,) the number of columns
        in which friction is the weaker mechanism at each node, ``band`` (b, nz) the
        strength [Pa] of the first columns.

    Notes
    -----
    A transition lies between nodes j-1 and j where the weaker mechanism switches
    (brittle wins where brittle <= ductile, as in :func:`rheology.find_transitions`).
    Inside a layer its depth is found by linear interpolation of
    g = ln(brittle) - ln(ductile) between the two nodes, with error about
    h^2 max|g''| / (8 |g'|) for node spacing h; a switch between the two copies of a
    layer boundary is placed on the boundary. Temperature and stress are interpolated
    linearly with the same weight. The Goetze-criterion depths (creep stress equal to
    the effective pressure, Kohlstedt, Evans & Mackwell 1995) are found the same way
    from ln(effective pressure) - ln(ductile). The integrated strength is the trapezoid
    rule along depth; the elastic thickness follows :func:`rheology.elastic_thickness`
    (Burov & Diament 1995): one competent layer or coupled layers, Te = sum h_i;
    layers separated by a weak channel, Te = (sum h_i^3)^(1/3).
    """
    size, nz = inputs.size, inputs.depth.shape[1]
    if np.ndim(band) == 0:
        band = np.empty((min(int(band), size), nz))
    if band.shape[0] > size or band.shape[1] != nz or not band.flags.c_contiguous:
        raise RheologyError(f"band: expected a C-contiguous array of <= {size} x {nz}")
    no_fields = (np.empty((0, nz)), np.empty((0, nz)), np.empty((0, nz), np.int8))
    capacity = CAPACITY
    while True:
        per_column = np.empty((size, 6))
        coupled, counts = np.empty(size, np.bool_), np.empty(size, np.int64)
        crossing_values = np.empty((size, capacity, 3))
        crossing_codes = np.empty((size, capacity, 4), np.int64)
        frictional = np.zeros(nz, np.int64)
        most = _run_scan(
            inputs,
            *no_fields,
            per_column,
            coupled,
            counts,
            crossing_values,
            crossing_codes,
            frictional,
            band,
            competent=(float(competent_stress), float(competent_fraction)),
        )
        if most <= capacity:
            break
        capacity = most  # a column with many transitions: scan again with room
    keep = np.arange(capacity)[None, :] < counts[:, None]
    rows = np.nonzero(keep)[0]
    values, codes = crossing_values[keep], crossing_codes[keep]
    kind = codes[:, 0].astype(np.int8)
    below = codes[:, 2]
    n_layers = int(inputs.laws.count.size)
    crossings = Crossings(
        row=rows,
        depth=values[:, 0],
        temperature=values[:, 1],
        stress=values[:, 2],
        kind=kind,
        layer_above=codes[:, 1],
        layer_below=below,
        at_boundary=codes[:, 3].astype(bool),
        occurrence=_occurrence(rows, kind, below, n_layers),
    )
    answers = ColumnAnswers(
        size,
        crossings,
        per_column[:, 0],
        per_column[:, 1],
        per_column[:, 2],
        per_column[:, 3],
        per_column[:, 4],
        per_column[:, 5],
        coupled,
        counts,
    )
    return ScanResult(answers, frictional, band)


def _occurrence(rows, kind, layer_below, n_layers):
    """Rank of each transition among those of the same kind and layer in its column."""
    key = (rows.astype(np.int64) * 2 + kind) * n_layers + layer_below
    order = np.argsort(key, kind="stable")  # entries are already by row, then depth
    ordered = key[order]
    position = np.arange(ordered.size)
    starts = np.r_[True, ordered[1:] != ordered[:-1]] if ordered.size else np.zeros(0, bool)
    first = np.maximum.accumulate(np.where(starts, position, 0)) if ordered.size else position
    occurrence = np.empty(ordered.size, np.int64)
    occurrence[order] = position - first
    return occurrence
