"""Monte Carlo uncertainty of a strength envelope and of its answers.

Pipeline: a :class:`SpreadSpec` (which inputs vary and how) -> :func:`sample_inputs`
draws R realisations with one seeded :class:`numpy.random.Generator` -> the inputs of
every realisation are prepared once (:func:`rheology.envelope.column_inputs`, the
geotherm chunk by chunk) -> the compiled scan :func:`rheology.columns.scan_answers`
finds, for every realisation, the brittle/ductile transitions, the base of the
semi-brittle band, the integrated strength and the effective elastic thickness ->
:func:`run_monte_carlo` gathers percentiles, strength bands, the chance of frictional
sliding at each depth and a sensitivity ranking.

How each input is distributed, how transitions are matched between realisations and
what the ranking means are set out in ``docs/uncertainty.md``. Everything inside is SI
(m, K, Pa, s, W, J/mol, m^3/mol); stresses are differential stresses sigma1 - sigma3.

The results are screening estimates: laboratory flow laws extrapolated over many orders
of magnitude in strain rate (see :data:`rheology.CAUTION`).
"""

from __future__ import annotations

import concurrent.futures
import contextlib
import math
import os
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import stats

from rheology.answers.integrated import COMPETENT_FRACTION, COMPETENT_STRESS
from rheology.answers.transitions import BRITTLE_TO_DUCTILE, DUCTILE_TO_BRITTLE
from rheology.columns import ColumnAnswers, ScanResult, scan_answers
from rheology.constants import SECONDS_PER_MYR
from rheology.envelope import Variation, column_inputs, depth_grid, geotherm_profile
from rheology.errors import RheologyError
from rheology.model import Scenario
from rheology.uncertainty.bands import column_percentiles

#: Upper limit of sampled pore-pressure ratios (lithostatic fluid pressure, ratio 1, would
#: leave faults with no strength at all).
PORE_RATIO_MAX = 0.95
#: Percentiles reported for every answer and for the strength bands.
PERCENTILES = (10.0, 50.0, 90.0)
#: At most this many realisations are kept whole for the strength bands (the first ones:
#: realisations are independent and identically distributed, so they are a random subset).
#: A sample P10 of 2000 lies within about 0.7 percentile points of the true 10th percentile
#: (one binomial standard error, sqrt(0.1 x 0.9 / 2000)): finer than a drawn band needs,
#: and the kept profiles stay small (16 MB for 1000 nodes).
BAND_SAMPLES = 2_000
#: At most this many depth nodes x realisations per chunk (bounded memory: 16 MB for a
#: (chunk, nz) field; a Monte Carlo of a geotherm linear in its surface value has none).
CHUNK_ELEMENTS = 2**21
#: Rounds of redrawing for truncated distributions before giving up.
_MAX_REDRAWS = 200
#: Geotherm parameters a spread can vary, with their display unit and its size in SI.
_GEOTHERM_INPUTS = {
    "surface_heat_flow": ("surface heat flow", "mW/m^2", 1e-3),
    "age": ("plate age", "Myr", SECONDS_PER_MYR),
    "gradient": ("temperature gradient", "K/km", 1e-3),
}
_SPREAD_OF = {"surface_heat_flow": "heat_flow_sd", "age": "age_sd", "gradient": "gradient_sd"}
_LAW_PARAMETERS = {
    "log10_A": ("log10 A offset", "dex", 1.0),
    "n": ("n", "", 1.0),
    "Q": ("Q", "kJ/mol", 1e3),
    "V": ("V", "cm^3/mol", 1e-6),
}
#: Size in Pa of the stress units a published pre-factor may use.
_STRESS_UNITS = {"Pa": 1.0, "kPa": 1e3, "MPa": 1e6, "GPa": 1e9}
_PUBLISHED_STRESS_UNIT = re.compile(r"(?<![A-Za-z])([kMG]?Pa)\^")
#: Stress unit assumed when the published pre-factor does not show one (common practice:
#: laboratory laws are fitted with stress in MPa).
_DEFAULT_PIVOT = 1e6


# --------------------------------------------------------------------------- the spec


@dataclass(frozen=True)
class SpreadSpec:
    """Which inputs a Monte Carlo run varies, and how [SI].

    Attributes
    ----------
    heat_flow_sd : float, optional
        Standard deviation [W/m^2] of a normal surface heat flow about the scenario's
        (geotherm kinds ``layered-steady`` and ``exponential-heat``).
    age_sd : float, optional
        Standard deviation [s] of a normal plate age about the scenario's (``half-space``
        and ``plate`` geotherms).
    gradient_sd : float, optional
        Standard deviation [K/m] of a normal temperature gradient (``linear`` geotherm).
    strain_rate_range : (float, float), optional
        Bounds [1/s] of a log-uniform strain rate.
    friction_sd : float, optional
        Standard deviation of a normal multiplier (mean 1) of the friction coefficients:
        both Byerlee branches, or the constant mu.
    pore_ratio_range : (float, float), optional
        Bounds of a uniform pore-pressure ratio, within [0, :data:`PORE_RATIO_MAX`].
    pore_ratio_sd : float, optional
        Standard deviation of a normal pore-pressure ratio about the scenario's ratio,
        clipped to [0, :data:`PORE_RATIO_MAX`] (not with ``pore_ratio_range``).
    law_spread : bool
        Draw each flow law's A, n, Q, V from its published one-sigma uncertainties.
    """

    heat_flow_sd: float | None = None
    age_sd: float | None = None
    gradient_sd: float | None = None
    strain_rate_range: tuple[float, float] | None = None
    friction_sd: float | None = None
    pore_ratio_range: tuple[float, float] | None = None
    pore_ratio_sd: float | None = None
    law_spread: bool = True

    def __post_init__(self):
        for name in ("heat_flow_sd", "age_sd", "gradient_sd", "friction_sd", "pore_ratio_sd"):
            value = getattr(self, name)
            if value is not None and not (_finite(value) and value >= 0):
                raise RheologyError(f"{name}: got {value!r}; expected a standard deviation >= 0")
        if self.strain_rate_range is not None:
            low, high = _pair(self.strain_rate_range, "strain_rate_range")
            if not (low > 0 and high >= low):
                raise RheologyError(
                    f"strain_rate_range: got ({low!r}, {high!r}) 1/s; expected "
                    "two rates > 0, the lower first"
                )
        if self.pore_ratio_range is not None:
            low, high = _pair(self.pore_ratio_range, "pore_ratio_range")
            if not (0 <= low <= high <= PORE_RATIO_MAX):
                raise RheologyError(
                    f"pore_ratio_range: got ({low!r}, {high!r}); expected "
                    f"0 <= lower <= upper <= {PORE_RATIO_MAX}"
                )
            if self.pore_ratio_sd is not None:
                raise RheologyError(
                    "pore_ratio_sd: give either pore_ratio_range (uniform) or "
                    "pore_ratio_sd (normal), not both"
                )
        if not isinstance(self.law_spread, bool):
            raise RheologyError(f"law_spread: got {self.law_spread!r}; expected true or false")


def _finite(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)


def _pair(values, name: str) -> tuple[float, float]:
    if len(values) != 2 or not all(_finite(v) for v in values):
        raise RheologyError(f"{name}: got {values!r}; expected two finite numbers")
    return float(values[0]), float(values[1])


_SPREAD_QUANTITIES = {
    "heat_flow_sd": ("W/m^2", "5 mW/m^2"),
    "age_sd": ("s", "5 Myr"),
    "gradient_sd": ("K/m", "2 K/km"),
}
_SPREAD_NUMBERS = ("friction_sd", "pore_ratio_sd")


def spread_from_mapping(data: Mapping[str, Any], source: str = "uncertainty") -> SpreadSpec:
    """Build a :class:`SpreadSpec` from a mapping (the ``[uncertainty]`` table of a file).

    Parameters
    ----------
    data : mapping
        Keys ``heat_flow_sd`` (e.g. ``"5 mW/m^2"``), ``age_sd`` (``"5 Myr"``),
        ``gradient_sd`` (``"2 K/km"``), ``strain_rate_range`` (two rates, e.g.
        ``["1e-16 1/s", "1e-14 1/s"]``), ``friction_sd`` (number), ``pore_ratio_range``
        (two numbers), ``pore_ratio_sd`` (number), ``law_spread`` (true/false).
    source : str, optional
        Prefix of the field paths in error messages.

    Returns
    -------
    SpreadSpec

    Raises
    ------
    RheologyError
        Unknown key, missing units, wrong dimension or an impossible value; the message
        starts with the field path.
    """
    from rheology.units import to_si

    allowed = (
        *_SPREAD_QUANTITIES,
        *_SPREAD_NUMBERS,
        "strain_rate_range",
        "pore_ratio_range",
        "law_spread",
    )
    if not isinstance(data, Mapping):
        raise RheologyError(f"{source}: expected a table of spreads, got {data!r}")
    values: dict[str, Any] = {}
    for key, value in data.items():
        path = f"{source}.{key}"
        if key not in allowed:
            raise RheologyError(f"{path}: unknown key; expected one of {', '.join(allowed)}")
        if key in _SPREAD_QUANTITIES:
            unit, example = _SPREAD_QUANTITIES[key]
            values[key] = _quantity(value, unit, example, path, to_si)
        elif key == "strain_rate_range":
            if not isinstance(value, list | tuple) or len(value) != 2:
                raise RheologyError(
                    f'{path}: got {value!r}; expected two rates such as ["1e-16 1/s", "1e-14 1/s"]'
                )
            values[key] = tuple(
                _quantity(v, "1/s", "1e-16 1/s", f"{path}[{i}]", to_si) for i, v in enumerate(value)
            )
        elif key == "pore_ratio_range":
            if (
                not isinstance(value, list | tuple)
                or len(value) != 2
                or not all(_finite(v) for v in value)
            ):
                raise RheologyError(
                    f"{path}: got {value!r}; expected two plain numbers such as [0.3, 0.45]"
                )
            values[key] = (float(value[0]), float(value[1]))
        elif key == "law_spread":
            values[key] = value
        else:
            if not _finite(value):
                raise RheologyError(f"{path}: got {value!r}; expected a plain number such as 0.05")
            values[key] = float(value)
    try:
        return SpreadSpec(**values)
    except RheologyError as exc:
        raise RheologyError(f"{source}.{exc}") from None


def _quantity(value, unit, example, path, to_si) -> float:
    if not isinstance(value, str):
        raise RheologyError(
            f"{path}: got {value!r}; expected a string with units such as {example!r}"
        )
    return float(to_si(value, unit, path, nonnegative=True))


def load_spread(path) -> SpreadSpec:
    """Read the ``[uncertainty]`` table of a TOML file into a :class:`SpreadSpec`.

    Parameters
    ----------
    path : str or os.PathLike
        A TOML file with an ``[uncertainty]`` table (see :func:`spread_from_mapping`).

    Returns
    -------
    SpreadSpec

    Raises
    ------
    RheologyError
        Unreadable or malformed file, no ``[uncertainty]`` table, or an invalid value.
    """
    import pathlib

    path = pathlib.Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise RheologyError(f"{path}: no such spread file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise RheologyError(f"{path}: cannot read the spread file ({exc})") from None
    except tomllib.TOMLDecodeError as exc:
        raise RheologyError(f"{path}: malformed TOML ({exc})") from None
    if "uncertainty" not in data:
        raise RheologyError(
            f"{path}: no [uncertainty] table; expected e.g. [uncertainty] "
            'with heat_flow_sd = "5 mW/m^2"'
        )
    return spread_from_mapping(data["uncertainty"], source=f"{path}: uncertainty")


# -------------------------------------------------------------------------- sampling


@dataclass(frozen=True)
class SampledInput:
    """One sampled input: its values in every realisation [SI] and how they were drawn.

    ``key`` names the input (``"surface_heat_flow"``, ``"strain_rate"``,
    ``"friction_scale"``, ``"pore_pressure_ratio"`` or ``"law:<law id>:<parameter>"``
    with parameter ``log10_A`` (an offset in dex from the published value), ``n``, ``Q``
    or ``V``); ``unit`` is the display unit and ``scale`` its size in SI.
    """

    key: str
    label: str
    unit: str
    scale: float
    values: np.ndarray
    nominal: float
    distribution: str

    def display(self, value: float) -> float:
        """``value`` [SI] in the display unit."""
        return value / self.scale


@dataclass(frozen=True)
class Draws:
    """The sampled inputs of a run, turned into batch-engine variations on demand."""

    scenario: Scenario
    inputs: tuple[SampledInput, ...]
    size: int

    def columns(self, index=slice(None)) -> dict[str, np.ndarray]:
        """Sampled values by input key, for the realisations in ``index``."""
        return {item.key: item.values[index] for item in self.inputs}

    def variation(self, index=slice(None)) -> Variation:
        """The :class:`rheology.envelope.Variation` of the realisations in ``index``."""
        size = len(range(self.size)[index])
        return variation_from_columns(self.scenario, self.columns(index), size)


def published_stress_unit(law) -> float:
    """Size [Pa] of the stress unit in which the law's pre-factor A was published.

    Parameters
    ----------
    law : rheology.library.FlowLaw

    Returns
    -------
    float
        1e6 for ``"1.1e-4 MPa^-4 s^-1"``; 1e6 (MPa, the usual unit of laboratory fits)
        when the published text shows no stress unit.
    """
    match = _PUBLISHED_STRESS_UNIT.search(law.A_published or "")
    return _STRESS_UNITS[match.group(1)] if match else _DEFAULT_PIVOT


def variation_from_columns(
    scenario: Scenario, columns: Mapping[str, np.ndarray], size: int
) -> Variation:
    """A :class:`rheology.envelope.Variation` from per-realisation input columns [SI].

    Parameters
    ----------
    scenario : Scenario
    columns : mapping
        Input key (see :class:`SampledInput`) -> values, shape (size,).
    size : int
        Number of realisations R.

    Returns
    -------
    Variation

    Notes
    -----
    A law's n is varied with its pre-factor held fixed in the stress unit it was
    published in (S, e.g. 1 MPa): ``A_SI = A_SI,0 10^dlog10A S^-(n - n_0)``, because
    the published A and n come from one fit of stress in S. Holding A fixed in Pa^-n
    instead would pivot the law about 1 Pa and change creep strengths by orders of
    magnitude for a small change of n. A law used in several layers is one draw.
    """
    geotherm = {key: np.asarray(columns[key], float) for key in _GEOTHERM_INPUTS if key in columns}
    laws = {}
    for i, layer in enumerate(scenario.layers):
        for j, law in enumerate(layer.rock.laws):
            given = {p: columns.get(f"law:{law.id}:{p}") for p in _LAW_PARAMETERS}
            if all(value is None for value in given.values()):
                continue
            entry = {}
            factor = np.ones(size)
            if given["log10_A"] is not None:
                factor = factor * 10.0 ** np.asarray(given["log10_A"], float)
            if given["n"] is not None:
                n = np.asarray(given["n"], float)
                entry["n"] = n
                factor = factor * published_stress_unit(law) ** (law.n - n)
            if given["log10_A"] is not None or given["n"] is not None:
                entry["A"] = law.A * factor
            for p in ("Q", "V"):
                if given[p] is not None:
                    entry[p] = np.asarray(given[p], float)
            laws[(i, j)] = entry

    def pick(key):
        return None if key not in columns else np.asarray(columns[key], float)

    return Variation(
        size=size,
        strain_rate=pick("strain_rate"),
        geotherm=geotherm,
        pore_pressure_ratio=pick("pore_pressure_ratio"),
        friction_scale=pick("friction_scale"),
        laws=laws,
    )


def minimum_heat_flow(scenario: Scenario) -> float:
    """Lowest surface heat flow [W/m^2] for which the scenario's geotherm stays possible.

    Parameters
    ----------
    scenario : Scenario

    Returns
    -------
    float
        For ``layered-steady``: the heat produced between the surface and ``max_depth``
        (below it the flux would turn negative, heat flowing down); for
        ``exponential-heat``: H0 h_r (a negative mantle heat flow otherwise); 0 else.
    """
    g = scenario.geotherm
    if g.kind == "exponential-heat":
        return g.surface_heat_production * g.decay_depth  # q0 >= H0 h_r
    if g.kind != "layered-steady":
        return 0.0
    tops = scenario.layer_tops
    bases = np.append(tops[1:], np.inf)  # the last layer extends downwards
    inside = np.clip(np.minimum(bases, scenario.max_depth) - tops, 0.0, None)
    return float(np.sum([ly.heat_production for ly in scenario.layers] * inside))


def _normal(rng, mean, sd, size, label, *, above=None, at_least=None):
    """Normal draws, redrawn (truncated normal) until all are above / at least a limit."""
    values = rng.normal(mean, sd, size)
    for _ in range(_MAX_REDRAWS):
        bad = np.zeros(size, bool)
        if above is not None:
            bad |= values <= above
        if at_least is not None:
            bad |= values < at_least
        if not bad.any():
            return values
        values[bad] = rng.normal(mean, sd, int(bad.sum()))
    limit = above if above is not None else at_least
    raise RheologyError(
        f"{label}: a normal spread with mean {mean:g} and sd {sd:g} (SI) puts "
        f"almost no draws above the physical limit {limit:g}; expected a "
        "spread that keeps most values possible (narrow it)"
    )


def sample_inputs(
    scenario: Scenario, spread: SpreadSpec, size: int, rng: np.random.Generator
) -> Draws:
    """Draw ``size`` realisations of the inputs that ``spread`` varies.

    Parameters
    ----------
    scenario : Scenario
        Supplies the central values.
    spread : SpreadSpec
    size : int
        Number of realisations R.
    rng : numpy.random.Generator
        The only source of randomness; inputs are drawn in a fixed order (geotherm,
        strain rate, friction, pore pressure, then laws from the top layer down, each
        law's log10 A, n, Q, V), so a seeded generator reproduces a run bit for bit.

    Returns
    -------
    Draws

    Raises
    ------
    RheologyError
        A spread of a parameter the scenario's geotherm or pore-pressure model does not
        have, or a spread so wide that truncation cannot keep values possible.

    Notes
    -----
    Truncation is by redrawing (values follow the normal law conditioned on the
    physical range): heat flow above :func:`minimum_heat_flow` (and > 0), age and
    gradient > 0, friction multiplier > 0, n > 0 (>= 0 for low-temperature plasticity),
    Q >= 0, V >= 0. Pore-pressure ratios from ``pore_ratio_sd`` are clipped to
    [0, :data:`PORE_RATIO_MAX`] instead. Strain rates are log-uniform:
    ``low (high/low)^u`` with u uniform on [0, 1).
    """
    inputs = []
    g = scenario.geotherm
    for key, (label, unit, scale) in _GEOTHERM_INPUTS.items():
        sd = getattr(spread, _SPREAD_OF[key])
        if sd is None:
            continue
        nominal = getattr(g, key)
        if nominal is None:
            raise RheologyError(
                f"{_SPREAD_OF[key]}: the scenario's {g.kind!r} geotherm has no "
                f"{key}; expected a spread of a parameter it uses (heat flow "
                "for layered-steady and exponential-heat, age for half-space "
                "and plate, gradient for linear)"
            )
        floor = minimum_heat_flow(scenario) if key == "surface_heat_flow" else None
        values = _normal(rng, nominal, sd, size, _SPREAD_OF[key], above=0.0, at_least=floor)
        how = f"normal, sd {sd / scale:.4g} {unit}, redrawn at or below 0"
        if floor:
            how += f" and below {floor / scale:.4g} {unit} (heat produced in the column)"
        inputs.append(SampledInput(key, label, unit, scale, values, nominal, how))
    if spread.strain_rate_range is not None:
        low, high = spread.strain_rate_range
        values = low * (high / low) ** rng.uniform(0.0, 1.0, size)  # log-uniform
        inputs.append(
            SampledInput(
                "strain_rate",
                "strain rate",
                "1/s",
                1.0,
                values,
                scenario.strain_rate,
                f"log-uniform, {low:.3g} to {high:.3g} 1/s",
            )
        )
    if spread.friction_sd is not None:
        values = _normal(rng, 1.0, spread.friction_sd, size, "friction_sd", above=0.0)
        inputs.append(
            SampledInput(
                "friction_scale",
                "friction-coefficient multiplier",
                "",
                1.0,
                values,
                1.0,
                f"normal, mean 1, sd {spread.friction_sd:.4g}, redrawn at or below 0",
            )
        )
    inputs += _pore_inputs(scenario, spread, size, rng)
    if spread.law_spread:
        inputs += _law_inputs(scenario, size, rng)
    return Draws(scenario, tuple(inputs), size)


def _pore_inputs(scenario, spread, size, rng):
    if spread.pore_ratio_range is not None:
        low, high = spread.pore_ratio_range
        values = rng.uniform(low, high, size) if high > low else np.full(size, low)
        nominal = (
            scenario.pore_pressure.ratio
            if scenario.pore_pressure.kind == "ratio"
            else (0.5 * (low + high))
        )
        return [
            SampledInput(
                "pore_pressure_ratio",
                "pore-pressure ratio",
                "",
                1.0,
                values,
                nominal,
                f"uniform, {low:g} to {high:g} (replaces the "
                f"scenario's {scenario.pore_pressure.kind} model)",
            )
        ]
    if spread.pore_ratio_sd is None:
        return []
    if scenario.pore_pressure.kind != "ratio":
        raise RheologyError(
            f"pore_ratio_sd: the scenario's pore pressure is "
            f"{scenario.pore_pressure.kind!r}, with no ratio to centre a normal "
            "spread on; expected pore_pressure_ratio in the scenario, or use "
            "pore_ratio_range"
        )
    nominal = scenario.pore_pressure.ratio
    values = np.clip(rng.normal(nominal, spread.pore_ratio_sd, size), 0.0, PORE_RATIO_MAX)
    return [
        SampledInput(
            "pore_pressure_ratio",
            "pore-pressure ratio",
            "",
            1.0,
            values,
            nominal,
            f"normal, sd {spread.pore_ratio_sd:.4g}, clipped to [0, {PORE_RATIO_MAX}]",
        )
    ]


def _law_inputs(scenario, size, rng):
    inputs, seen = [], set()
    for layer in scenario.layers:
        for law in layer.rock.laws:
            if law.id in seen or not law.uncertainty:
                continue
            seen.add(law.id)
            for parameter, (name, unit, scale) in _LAW_PARAMETERS.items():
                sd = law.uncertainty.get(parameter)
                if sd is None or not sd > 0:
                    continue
                label = f"{law.id}: {name}"
                key = f"law:{law.id}:{parameter}"
                if parameter == "log10_A":
                    values = rng.normal(0.0, sd, size)  # A log-normal about the published A
                    how = f"normal offset of log10 A, sd {sd:.3g} dex"
                    nominal = 0.0
                else:
                    nominal = float(getattr(law, parameter))
                    if parameter == "n" and law.mechanism != "peierls":
                        values = _normal(rng, nominal, sd, size, key, above=0.0)
                        limit = "at or below 0"
                    else:
                        values = _normal(rng, nominal, sd, size, key, at_least=0.0)
                        limit = "below 0"
                    how = f"normal, sd {sd / scale:.4g} {unit}".rstrip() + f", redrawn {limit}"
                inputs.append(SampledInput(key, label, unit, scale, values, nominal, how))
    return inputs


# ---------------------------------------------------------------- batch answers


def column_answers(
    scenario: Scenario, depth, layer=None, variation: Variation | None = None, band_rows: int = 0
) -> ScanResult:
    """Transitions, semi-brittle base, integrated strength and Te of every realisation.

    Parameters
    ----------
    scenario : Scenario
    depth : array_like
        Depth nodes [m], (nz,) or (R, nz).
    layer : array_like of int, optional
        Layer of each node (default: from the thicknesses).
    variation : Variation, optional
        Per-realisation inputs; R = ``variation.size`` (1 without one).
    band_rows : int
        Keep the strength profiles of the first ``band_rows`` realisations.

    Returns
    -------
    rheology.columns.ScanResult
        ``answers`` (:class:`ColumnAnswers`), ``frictional`` (number of realisations in
        which friction is the weaker mechanism at each node) and ``band`` (the kept
        strength profiles [Pa]).

    Notes
    -----
    The fields come from the same physics and the same compiled node function as
    :func:`rheology.envelope.evaluate`; see :func:`rheology.columns.scan_answers` for how
    transitions are interpolated between nodes. Te uses the competence thresholds of
    :func:`rheology.elastic_thickness` (Burov & Diament 1995).
    """
    inputs, _ = column_inputs(scenario, depth, layer, variation=variation)
    return scan_answers(inputs, COMPETENT_STRESS, COMPETENT_FRACTION, band_rows)


def _check_workers(workers) -> int:
    """``workers`` as an int; None means one thread per CPU core."""
    if workers is None:
        return os.cpu_count() or 1
    if isinstance(workers, bool) or not isinstance(workers, int | np.integer) or workers < 1:
        raise RheologyError(f"workers: got {workers!r}; expected a whole number >= 1")
    return int(workers)


@contextlib.contextmanager
def chunk_map(workers: int | None = 1):
    """A ``map(function, chunks)`` that keeps the order, on ``workers`` threads (1: no thread).

    Parameters
    ----------
    workers : int or None
        Number of threads (None: one per CPU core).

    Yields
    ------
    callable
        ``mapper(function, items)`` returning an iterator of results in item order.
    """
    workers = _check_workers(workers)
    if workers == 1:
        yield map
        return
    with concurrent.futures.ThreadPoolExecutor(max_workers=workers) as pool:
        yield pool.map


def default_chunk(nz: int, samples: int = 0, workers: int = 1) -> int:
    """Realisations per chunk for ``nz`` depth nodes.

    At most :data:`CHUNK_ELEMENTS` per (chunk, nz) field; with ``samples`` given, the
    number of chunks is a multiple of ``workers``, so the threads share them evenly.
    """
    largest = max(1, CHUNK_ELEMENTS // max(int(nz), 1))
    if samples <= 0:
        return largest
    count = math.ceil(math.ceil(samples / largest) / workers) * workers
    return max(1, math.ceil(samples / count))


# ------------------------------------------------------------------ summaries


@dataclass(frozen=True)
class Quantiles:
    """P10, P50, P90 and mean of an answer over the realisations where it exists [SI]."""

    p10: float
    p50: float
    p90: float
    mean: float
    count: int

    @staticmethod
    def of(values) -> Quantiles:
        """Quantiles of the finite values (NaN and count 0 when there are none)."""
        values = np.asarray(values, float)
        values = values[np.isfinite(values)]
        if values.size == 0:
            return Quantiles(np.nan, np.nan, np.nan, np.nan, 0)
        p10, p50, p90 = np.percentile(values, PERCENTILES)
        return Quantiles(float(p10), float(p50), float(p90), float(values.mean()), int(values.size))

    @property
    def width(self) -> float:
        """P90 - P10."""
        return self.p90 - self.p10

    def as_dict(self, scale: float = 1.0, offset: float = 0.0) -> dict[str, float | None]:
        """In a display unit: value_display = value / scale - offset (None for NaN)."""

        def show(x):
            return None if not math.isfinite(x) else x / scale - offset

        return {
            "p10": show(self.p10),
            "p50": show(self.p50),
            "p90": show(self.p90),
            "mean": show(self.mean),
            "count": self.count,
        }


@dataclass(frozen=True)
class MatchedTransition:
    """One transition matched across realisations by (kind, layer, occurrence)."""

    kind: str
    layer: str
    occurrence: int
    fraction: float
    at_boundary_fraction: float
    depth: Quantiles
    temperature: Quantiles


@dataclass(frozen=True)
class Sensitivity:
    """Rank correlation of one input with the first brittle-to-ductile depth, and its swing.

    ``rho`` and ``p_value`` are Spearman's (scipy.stats.spearmanr); ``low`` and ``high``
    are the input's P10 and P90 [SI]; ``depth_at_low`` and ``depth_at_high`` the first
    brittle-to-ductile depth [m] with that input at P10 or P90 and every other input at
    its central value (one at a time).
    """

    key: str
    label: str
    unit: str
    scale: float
    rho: float
    p_value: float
    low: float
    high: float
    depth_at_low: float
    depth_at_high: float

    @property
    def swing(self) -> float:
        """depth_at_high - depth_at_low [m]."""
        return self.depth_at_high - self.depth_at_low


@dataclass(frozen=True)
class MonteCarloResult:
    """Outcome of :func:`run_monte_carlo` [SI].

    Attributes
    ----------
    scenario, spread, samples, seed
        The inputs of the run (``seed`` as given, or the one drawn when none was).
    inputs : tuple of SampledInput
    answers : ColumnAnswers
        Every realisation's answers.
    nominal : ColumnAnswers
        The answers of the scenario itself (one realisation, central values).
    depth, layer : ndarray (nz,)
        The depth grid [m] (the scenario's) and the layer of each node.
    nominal_strength : ndarray (nz,)
        Envelope strength [Pa] of the scenario itself.
    bands : dict
        Percentile (10, 50, 90) -> envelope strength [Pa] at each node, over the first
        ``band_count`` realisations.
    frictional_probability : ndarray (nz,)
        Share of realisations in which frictional sliding is the weaker mechanism at
        each node (the chance that faults reach that depth).
    first_down_depth, first_down_temperature, deepest_faulting, semi_brittle_base,
    integrated, elastic_thickness : Quantiles
    transitions : tuple of MatchedTransition
    sensitivity : tuple of Sensitivity
        Sorted by decreasing |rho|.
    """

    scenario: Scenario
    spread: SpreadSpec
    samples: int
    seed: int | None
    inputs: tuple[SampledInput, ...]
    answers: ColumnAnswers
    nominal: ColumnAnswers
    depth: np.ndarray
    layer: np.ndarray
    nominal_strength: np.ndarray
    bands: dict[float, np.ndarray]
    band_count: int
    frictional_probability: np.ndarray
    first_down_depth: Quantiles
    first_down_temperature: Quantiles
    deepest_faulting: Quantiles
    semi_brittle_base: Quantiles
    integrated: Quantiles
    elastic_thickness: Quantiles
    transitions: tuple[MatchedTransition, ...]
    sensitivity: tuple[Sensitivity, ...] = field(default=())

    def as_dict(self) -> dict[str, Any]:
        """JSON-ready dict in display units (km, degC, TN/m, MPa); None for missing values."""
        from rheology.constants import ZERO_CELSIUS

        km = 1e3

        def rows(values, scale=1.0):
            return [None if not math.isfinite(v) else float(v) / scale for v in values]

        return {
            "scenario": self.scenario.title,
            "samples": self.samples,
            "seed": self.seed,
            "inputs": [
                {
                    "key": i.key,
                    "label": i.label,
                    "unit": i.unit,
                    "distribution": i.distribution,
                    "central": i.display(i.nominal),
                    **Quantiles.of(i.values).as_dict(i.scale),
                }
                for i in self.inputs
            ],
            "first_brittle_to_ductile_depth_km": self.first_down_depth.as_dict(km),
            "first_brittle_to_ductile_temperature_degC": self.first_down_temperature.as_dict(
                1.0, ZERO_CELSIUS
            ),
            "deepest_faulting_km": self.deepest_faulting.as_dict(km),
            "semi_brittle_base_km": self.semi_brittle_base.as_dict(km),
            "integrated_strength_TN_per_m": self.integrated.as_dict(1e12),
            "elastic_thickness_km": self.elastic_thickness.as_dict(km),
            "transitions": [
                {
                    "kind": t.kind,
                    "layer": t.layer,
                    "occurrence": t.occurrence,
                    "fraction_of_realisations": t.fraction,
                    "fraction_at_boundary": t.at_boundary_fraction,
                    "depth_km": t.depth.as_dict(km),
                    "temperature_degC": t.temperature.as_dict(1.0, ZERO_CELSIUS),
                }
                for t in self.transitions
            ],
            "sensitivity": [
                {
                    "key": s.key,
                    "label": s.label,
                    "unit": s.unit,
                    "spearman_rho": None if not math.isfinite(s.rho) else s.rho,
                    "p_value": None if not math.isfinite(s.p_value) else s.p_value,
                    "p10": s.low / s.scale,
                    "p90": s.high / s.scale,
                    "depth_at_p10_km": rows([s.depth_at_low], km)[0],
                    "depth_at_p90_km": rows([s.depth_at_high], km)[0],
                }
                for s in self.sensitivity
            ],
            "profile": {
                "depth_km": rows(self.depth, km),
                "strength_p10_MPa": rows(self.bands[10.0], 1e6),
                "strength_p50_MPa": rows(self.bands[50.0], 1e6),
                "strength_p90_MPa": rows(self.bands[90.0], 1e6),
                "strength_central_MPa": rows(self.nominal_strength, 1e6),
                "frictional_probability": rows(self.frictional_probability),
                "band_realisations": self.band_count,
            },
        }


def _matched(answers: ColumnAnswers, layer_names) -> tuple[MatchedTransition, ...]:
    """Group transitions by (kind, layer below, occurrence) and summarise each group."""
    c = answers.transitions
    if c.row.size == 0:
        return ()
    n_layers = len(layer_names)
    key = (c.kind.astype(np.int64) * n_layers + c.layer_below) * (c.occurrence.max() + 1) + (
        c.occurrence
    )
    groups = []
    for value in np.unique(key):
        at = key == value
        first = np.flatnonzero(at)[0]
        groups.append(
            MatchedTransition(
                kind=BRITTLE_TO_DUCTILE if c.kind[first] == 0 else DUCTILE_TO_BRITTLE,
                layer=layer_names[c.layer_below[first]],
                occurrence=int(c.occurrence[first]) + 1,
                fraction=float(np.count_nonzero(at)) / answers.size,
                at_boundary_fraction=float(np.mean(c.at_boundary[at])),
                depth=Quantiles.of(c.depth[at]),
                temperature=Quantiles.of(c.temperature[at]),
            )
        )
    return tuple(sorted(groups, key=lambda t: (t.depth.p50, t.kind)))


def _rank_correlations(inputs, y) -> tuple[np.ndarray, np.ndarray]:
    """Spearman's rho (and p-value) of each input with ``y``, NaN where one is constant.

    One ``scipy.stats.spearmanr`` call over all the columns ranks each of them once.
    """
    rho, p_value = np.full(len(inputs), np.nan), np.full(len(inputs), np.nan)
    usable = [k for k, x in enumerate(inputs) if np.ptp(x) > 0]
    if y.size < 3 or np.ptp(y) == 0 or not usable:
        return rho, p_value
    result = stats.spearmanr(np.column_stack([*(inputs[k] for k in usable), y]))
    statistic = np.asarray(result.statistic)
    if statistic.ndim == 0:  # two columns: scipy returns the one coefficient
        rho[usable], p_value[usable] = float(statistic), float(result.pvalue)
    else:
        rho[usable], p_value[usable] = statistic[-1, :-1], np.asarray(result.pvalue)[-1, :-1]
    return rho, p_value


def _sensitivity(scenario, draws, answers, depth, layer) -> tuple[Sensitivity, ...]:
    """Spearman rho of each varied input with the first brittle-to-ductile depth, and swings."""
    y = answers.first_down_depth
    finite = np.isfinite(y)
    varied = [item for item in draws.inputs if np.ptp(item.values) > 0]
    if not varied:
        return ()
    central = {item.key: item.nominal for item in draws.inputs}
    size = 2 * len(varied)
    columns = {key: np.full(size, value) for key, value in central.items()}
    lows, highs = [], []
    for k, item in enumerate(varied):
        low, high = np.percentile(item.values, [10.0, 90.0])
        lows.append(float(low))
        highs.append(float(high))
        columns[item.key][2 * k] = low
        columns[item.key][2 * k + 1] = high
    variation = variation_from_columns(scenario, columns, size)
    swings = column_answers(scenario, depth, layer, variation).answers
    rho, p_value = _rank_correlations([item.values[finite] for item in varied], y[finite])
    out = []
    for k, item in enumerate(varied):
        out.append(
            Sensitivity(
                item.key,
                item.label,
                item.unit,
                item.scale,
                rho[k],
                p_value[k],
                lows[k],
                highs[k],
                float(swings.first_down_depth[2 * k]),
                float(swings.first_down_depth[2 * k + 1]),
            )
        )
    return tuple(sorted(out, key=lambda s: -abs(s.rho) if math.isfinite(s.rho) else 1.0))


def run_monte_carlo(
    scenario: Scenario,
    spread: SpreadSpec | None = None,
    samples: int = 1000,
    seed: int | None = None,
    *,
    chunk: int | None = None,
    band_samples: int = BAND_SAMPLES,
    sensitivity: bool = True,
    workers: int | None = None,
) -> MonteCarloResult:
    """Monte Carlo run of the envelope of ``scenario`` over the inputs ``spread`` varies.

    Parameters
    ----------
    scenario : Scenario
        The central values and the depth grid.
    spread : SpreadSpec, optional
        Which inputs vary (default: only the flow laws, from their published
        uncertainties).
    samples : int
        Number of realisations R (>= 2).
    seed : int, optional
        Seed of :func:`numpy.random.default_rng`; the same seed gives the same result bit
        for bit, whatever the chunk size. None draws a fresh seed, reported in the result.
    chunk : int, optional
        Realisations evaluated at once (default :func:`default_chunk`, shared evenly by
        the workers); bounds memory.
    band_samples : int
        At most this many realisations are kept for the strength percentile bands.
    sensitivity : bool
        Compute the sensitivity ranking (Spearman rho and one-at-a-time swings).
    workers : int, optional
        Threads evaluating chunks at once (the compiled scans and numpy release the
        interpreter lock); default one per CPU core. The result does not depend on it.

    Returns
    -------
    MonteCarloResult

    Raises
    ------
    RheologyError
        Bad ``samples``, ``seed`` or ``chunk``, or a spread the scenario cannot take.

    Notes
    -----
    Every realisation is a full envelope on the scenario's depth grid, evaluated by
    :func:`rheology.envelope.evaluate` with a leading realisation axis; its answers come
    from :func:`column_answers`. Transitions are matched between realisations by
    (kind, layer in which they happen, occurrence of that kind in that layer); see
    ``docs/uncertainty.md``. Percentiles use numpy's linear interpolation between order
    statistics.
    """
    spread = SpreadSpec() if spread is None else spread
    if isinstance(samples, bool) or not isinstance(samples, int | np.integer) or samples < 2:
        raise RheologyError(f"samples: got {samples!r}; expected a whole number >= 2")
    if seed is None:
        seed = int(np.random.SeedSequence().entropy % 2**63)
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise RheologyError(f"seed: got {seed!r}; expected a whole number >= 0")
    rng = np.random.default_rng(int(seed))
    draws = sample_inputs(scenario, spread, int(samples), rng)
    depth, layer = depth_grid(scenario)
    workers = _check_workers(workers)
    if chunk is None:
        chunk = default_chunk(depth.size, int(samples), workers)
    if isinstance(chunk, bool) or not isinstance(chunk, int | np.integer) or chunk < 1:
        raise RheologyError(f"chunk: got {chunk!r}; expected a whole number >= 1")
    band_samples = max(1, min(int(band_samples), int(samples)))

    # everything but the geotherm is small per realisation: prepare it once, and compute
    # the (chunk, nz) temperatures chunk by chunk
    base, _ = column_inputs(scenario, depth, layer, variation=draws.variation(), temperature=False)

    kept = np.empty((band_samples, depth.size))  # the strength profiles for the bands

    def work(index):
        geotherm = geotherm_profile(scenario, depth, draws.variation(index), split=True)
        part = base.rows(index.start, index.stop, geotherm)
        band = kept[index.start : min(index.stop, band_samples)]  # empty past the kept ones
        return scan_answers(part, COMPETENT_STRESS, COMPETENT_FRACTION, band)

    chunks = [slice(start, min(start + chunk, samples)) for start in range(0, samples, chunk)]
    with chunk_map(workers) as mapper:
        outcomes = list(mapper(work, chunks))
    answers = ColumnAnswers.concatenate([outcome.answers for outcome in outcomes])
    frictional = np.sum([outcome.frictional for outcome in outcomes], axis=0)
    bands = dict(zip(PERCENTILES, column_percentiles(kept, PERCENTILES, workers)))
    centre = column_answers(scenario, depth, layer, band_rows=1)  # the scenario itself
    names = [ly.name for ly in scenario.layers]
    ranking = _sensitivity(scenario, draws, answers, depth, layer) if sensitivity else ()
    return MonteCarloResult(
        scenario=scenario,
        spread=spread,
        samples=int(samples),
        seed=int(seed),
        inputs=draws.inputs,
        answers=answers,
        nominal=centre.answers,
        depth=depth,
        layer=layer,
        nominal_strength=centre.band[0],
        bands=bands,
        band_count=int(kept.shape[0]),
        frictional_probability=frictional / samples,
        first_down_depth=Quantiles.of(answers.first_down_depth),
        first_down_temperature=Quantiles.of(answers.first_down_temperature),
        deepest_faulting=Quantiles.of(answers.deepest_faulting),
        semi_brittle_base=Quantiles.of(answers.semi_brittle_base),
        integrated=Quantiles.of(answers.integrated),
        elastic_thickness=Quantiles.of(answers.elastic_thickness),
        transitions=_matched(answers, names),
        sensitivity=ranking,
    )
