"""Machine-readable outputs of an analysis: a JSON-safe dict, JSON text, a table, a CSV file.

The numeric core works in SI; these outputs use the units people read and write:
depth in km, temperature in degC, stresses and pressures in MPa, heat flow in mW/m^2,
integrated strength in TN/m (10^12 N per metre of along-strike length). Every key or
column name carries its unit. Stresses are differential stresses sigma1 - sigma3 in the
triaxial convention.

JSON cannot hold NaN or infinity. A value that is not finite (for example a creep
strength that overflows in cold rock near the surface) is written as ``null``; the
``notes`` entry of the JSON object says so and counts them.
"""

from __future__ import annotations

import csv
import json
import math
from typing import Any

import numpy as np

from rheology.constants import ZERO_CELSIUS

#: Version of the JSON layout written by :func:`analysis_to_dict`.
FORMAT_VERSION = 1

_KM = 1e3
_MPA = 1e6
_TN_PER_M = 1e12
_MW = 1e-3
_YEAR = 3.15576e7  # Julian year [s]

#: Conventions stated in every JSON object and in the CSV header comment.
CONVENTIONS = {
    "stress": (
        "differential stress sigma1 - sigma3 [MPa], triaxial (axisymmetric) convention; "
        "compression and extension strengths are both given as positive magnitudes"
    ),
    "strain_rate": "axial strain rate of the triaxial convention [1/s]",
    "viscosity": (
        "effective viscosity eta = tau_II / (2 edot_II) = sigma_d / (3 edot_ax) [Pa s], "
        "with tau_II = sigma_d / sqrt(3) and edot_II = (sqrt(3)/2) edot_ax "
        "(second invariants, tau_II = sqrt(tau_ij tau_ij / 2)), evaluated with the "
        "envelope strength sigma_d at the scenario strain rate edot_ax; null (JSON) or "
        "empty (CSV) where the envelope strength is zero (e.g. the surface of a "
        "cohesionless column), since a zero viscosity means nothing there"
    ),
    "pressure": "pressure_MPa is the lithostatic pressure (overburden weight), in MPa",
    "depth_grid": (
        "layer boundaries appear twice in the profile, once as the base of the upper layer "
        "and once as the top of the lower layer, so strength jumps at boundaries are kept; "
        "depth_km is therefore non-decreasing, not strictly increasing"
    ),
    "strength": "strength_MPa = min(brittle_MPa, ductile_MPa) at every depth",
    "integrated_strength": (
        "integral of the envelope strength over depth [TN/m = 1e12 N/m], trapezoid rule, "
        "each layer over its own nodes"
    ),
}

_NULL_NOTE = (
    "Values that are not finite (e.g. a creep strength that overflows in cold rock near "
    "the surface, meaning creep is effectively impossible there) are written as null."
)


def _finite_or_none(values, counter: list[int]) -> list[float | None]:
    """A list of floats with non-finite entries replaced by None (counted in ``counter``)."""
    array = np.asarray(values, dtype=float)
    finite = np.isfinite(array)
    counter[0] += int(array.size - np.count_nonzero(finite))
    return [float(v) if ok else None for v, ok in zip(array.tolist(), finite.tolist())]


def profile_viscosity(envelope) -> np.ndarray:
    """Effective viscosity of the envelope [Pa s], NaN where the strength is zero.

    Parameters
    ----------
    envelope : rheology.Envelope

    Returns
    -------
    numpy.ndarray
        ``envelope.viscosity``, except NaN at nodes whose envelope strength is not
        above zero (there sigma_d / (3 edot) = 0, which a numerical model must not take
        for a viscosity).
    """
    strength = np.asarray(envelope.strength, dtype=float)
    return np.where(strength > 0, envelope.viscosity, np.nan)


def _viscosity_or_none(envelope, counter: list[int]) -> list[float | None]:
    """Viscosities for JSON: None at zero strength (not counted as non-finite) or overflow."""
    viscosity = profile_viscosity(envelope)
    undefined = np.isnan(viscosity)
    values = _finite_or_none(np.where(undefined, 0.0, viscosity), counter)
    return [None if u else v for v, u in zip(values, undefined.tolist())]


def _scalar(value: float, counter: list[int]) -> float | None:
    value = float(value)
    if math.isfinite(value):
        return value
    counter[0] += 1
    return None


def semi_brittle_intervals(analysis) -> list[dict[str, Any]]:
    """Depth ranges of semi-brittle rock [m], with their top and base refined where known.

    Parameters
    ----------
    analysis : rheology.Analysis

    Returns
    -------
    list of dict
        ``top`` and ``bottom`` [m] and ``layer`` (name) of each semi-brittle band,
        shallow first. Band edges come from the regime bands (grid resolution); an edge
        within one depth step of a brittle-to-ductile transition (top) or of a Goetze
        depth (base; Kohlstedt, Evans & Mackwell 1995) is moved to that refined depth.
    """
    step = analysis.scenario.depth_step
    tops = [t.depth for t in analysis.transitions if t.kind == "brittle-to-ductile"]
    bases = list(analysis.goetze)
    result = []
    for band in analysis.bands:
        if band.mechanism != "semi-brittle":
            continue
        top, bottom = band.top, band.bottom
        near_top = [z for z in tops if abs(z - top) <= step]
        near_base = [z for z in bases if abs(z - bottom) <= step]
        if near_top:
            top = min(near_top, key=lambda z: abs(z - band.top))
        if near_base:
            bottom = min(near_base, key=lambda z: abs(z - band.bottom))
        if result and result[-1]["layer"] == band.layer and abs(result[-1]["bottom"] - top) < 1:
            result[-1]["bottom"] = bottom
        else:
            result.append({"top": float(top), "bottom": float(bottom), "layer": band.layer})
    return result


def _layers(scenario) -> list[dict[str, Any]]:
    tops = scenario.layer_tops
    out = []
    for index, (layer, top) in enumerate(zip(scenario.layers, tops)):
        last = index == len(scenario.layers) - 1
        bottom = scenario.max_depth if last else min(top + layer.thickness, scenario.max_depth)
        if top >= scenario.max_depth:
            continue
        out.append(
            {
                "name": layer.name,
                "rock_id": layer.rock_id,
                "rock": layer.rock.name,
                "flow_laws": [law.id for law in layer.rock.laws],
                "top_km": float(top) / _KM,
                "bottom_km": float(bottom) / _KM,
                "density_kg_per_m3": float(layer.density),
            }
        )
    return out


def _summary_without_caution(analysis, caution: str) -> str:
    text = analysis.summary()
    lines = [line for line in text.splitlines() if line.strip() != caution.strip()]
    return "\n".join(lines)


def analysis_to_dict(analysis) -> dict[str, Any]:
    """The analysis as a JSON-safe dict (km, degC, MPa, TN/m; no NaN or infinity).

    Parameters
    ----------
    analysis : rheology.Analysis
        The envelope and its answers, from :func:`rheology.analyse`.

    Returns
    -------
    dict
        Keys ``title``, ``faulting``, ``strain_rate_per_s``, ``transitions`` (shallow
        first; each with ``depth_km``, ``temperature_C``, ``stress_MPa``, ``kind``,
        ``layer_above``, ``layer_below``, ``at_boundary``), ``semi_brittle_base_km``
        (Goetze depths), ``semi_brittle_bands``, ``regime_bands``,
        ``integrated_strength_TN_per_m``, ``integrated_strength_by_layer_TN_per_m``,
        ``elastic_thickness_km``, ``elastic_thickness_coupled``, ``competent_layers``,
        ``layers``, ``profile`` (arrays of equal length: ``depth_km``, ``layer``,
        ``temperature_C``, ``pressure_MPa`` (lithostatic), ``pore_pressure_MPa``,
        ``heat_flow_mW_per_m2``, ``brittle_MPa``, ``ductile_MPa``, ``strength_MPa``,
        ``mechanism``, ``viscosity_Pa_s``), ``summary``, ``caution``, ``conventions``
        and ``notes``.

    Notes
    -----
    Non-finite numbers become ``None`` (JSON ``null``); a ``notes`` entry says so and
    gives their count. Numbers are not rounded, so ``strength_MPa`` equals
    ``min(brittle_MPa, ductile_MPa)`` exactly (a null ductile strength counts as
    infinite).
    """
    from rheology import __version__
    from rheology.answers.report import CAUTION

    env = analysis.envelope
    scenario = analysis.scenario
    names = [layer.name for layer in scenario.layers]
    nulls = [0]

    transitions = [
        {
            "depth_km": t.depth / _KM,
            "temperature_C": t.temperature - ZERO_CELSIUS,
            "stress_MPa": _scalar(t.stress / _MPA, nulls),
            "kind": t.kind,
            "layer_above": t.layer_above,
            "layer_below": t.layer_below,
            "at_boundary": bool(t.at_boundary),
        }
        for t in sorted(analysis.transitions, key=lambda t: t.depth)
    ]
    profile = {
        "depth_km": _finite_or_none(env.depth / _KM, nulls),
        "layer": [names[i] for i in env.layer.tolist()],
        "temperature_C": _finite_or_none(env.temperature - ZERO_CELSIUS, nulls),
        "pressure_MPa": _finite_or_none(env.lithostatic / _MPA, nulls),
        "pore_pressure_MPa": _finite_or_none(env.pore_pressure / _MPA, nulls),
        "heat_flow_mW_per_m2": _finite_or_none(env.heat_flow / _MW, nulls),
        "brittle_MPa": _finite_or_none(env.brittle / _MPA, nulls),
        "ductile_MPa": _finite_or_none(env.ductile / _MPA, nulls),
        "strength_MPa": _finite_or_none(env.strength / _MPA, nulls),
        "mechanism": list(env.mechanism_names),
        "viscosity_Pa_s": _viscosity_or_none(env, nulls),
    }
    elastic = analysis.elastic
    result = {
        "format": "rheology analysis",
        "format_version": FORMAT_VERSION,
        "rheology_version": __version__,
        "title": scenario.title,
        "faulting": scenario.faulting,
        "strain_rate_per_s": float(scenario.strain_rate),
        "max_depth_km": float(scenario.max_depth) / _KM,
        "geotherm": scenario.geotherm.kind,
        "pore_pressure": scenario.pore_pressure.kind,
        "layers": _layers(scenario),
        "transitions": transitions,
        "semi_brittle_base_km": [float(z) / _KM for z in analysis.goetze],
        "semi_brittle_bands": [
            {"top_km": b["top"] / _KM, "bottom_km": b["bottom"] / _KM, "layer": b["layer"]}
            for b in semi_brittle_intervals(analysis)
        ],
        "regime_bands": [
            {
                "top_km": b.top / _KM,
                "bottom_km": b.bottom / _KM,
                "mechanism": b.mechanism,
                "layer": b.layer,
            }
            for b in analysis.bands
        ],
        "integrated_strength_TN_per_m": _scalar(analysis.integrated / _TN_PER_M, nulls),
        "integrated_strength_by_layer_TN_per_m": {
            name: _scalar(value / _TN_PER_M, nulls)
            for name, value in analysis.integrated_by_layer.items()
        },
        "elastic_thickness_km": _scalar(elastic.te / _KM, nulls),
        "elastic_thickness_coupled": bool(elastic.coupled),
        "competent_layers": [
            {"top_km": top / _KM, "bottom_km": bottom / _KM, "thickness_km": (bottom - top) / _KM}
            for top, bottom in elastic.competent
        ],
        "profile": profile,
        "summary": _summary_without_caution(analysis, CAUTION),
        "caution": CAUTION,
        "conventions": dict(CONVENTIONS),
    }
    notes = [_NULL_NOTE + f" This object has {nulls[0]} such value(s)."]
    result["notes"] = notes
    return result


def analysis_to_json(analysis, indent: int | None = 2) -> str:
    """The analysis as JSON text (see :func:`analysis_to_dict`).

    Parameters
    ----------
    analysis : rheology.Analysis
    indent : int or None, optional
        Indentation of the JSON text; None for one line.

    Returns
    -------
    str
        Standard JSON (no NaN or Infinity tokens).
    """
    return json.dumps(
        analysis_to_dict(analysis), indent=indent, allow_nan=False, ensure_ascii=False
    )


#: Column names of :func:`profile_frame`, with their units.
PROFILE_COLUMNS = (
    "depth [km]",
    "layer",
    "temperature [degC]",
    "lithostatic pressure [MPa]",
    "pore pressure [MPa]",
    "heat flow [mW/m^2]",
    "brittle strength [MPa]",
    "ductile strength [MPa]",
    "strength [MPa]",
    "mechanism",
    "effective viscosity [Pa s]",
)


def profile_frame(analysis):
    """The envelope profile as a table, one row per depth node (units in column names).

    Parameters
    ----------
    analysis : rheology.Analysis

    Returns
    -------
    pandas.DataFrame
        Columns :data:`PROFILE_COLUMNS`. Layer boundaries appear twice (once per layer).
        Non-finite strengths stay as ``inf`` here (a DataFrame can hold them); the
        viscosity is NaN where the envelope strength is zero (:func:`profile_viscosity`).
    """
    import pandas as pd

    env = analysis.envelope
    names = [layer.name for layer in analysis.scenario.layers]
    columns = dict(
        zip(
            PROFILE_COLUMNS,
            (
                env.depth / _KM,
                [names[i] for i in env.layer.tolist()],
                env.temperature - ZERO_CELSIUS,
                env.lithostatic / _MPA,
                env.pore_pressure / _MPA,
                env.heat_flow / _MW,
                env.brittle / _MPA,
                env.ductile / _MPA,
                env.strength / _MPA,
                list(env.mechanism_names),
                profile_viscosity(env),
            ),
        )
    )
    return pd.DataFrame(columns)


def csv_header_comment(analysis) -> str:
    """The first line of the CSV file: title, regime, conventions and caution, after '#'."""
    from rheology.answers.report import CAUTION

    scenario = analysis.scenario
    title = " ".join(str(scenario.title).split())
    return (
        f"# {title} | {scenario.faulting} faulting, strain rate {scenario.strain_rate:.3g} 1/s"
        " | units in column names; stresses are differential stress sigma1-sigma3 "
        "(triaxial convention); layer boundaries appear twice (once per layer); "
        "viscosity = sigma_d/(3 edot_ax), empty where the strength is zero | "
        + " ".join(CAUTION.split())
    )


def write_profile_csv(analysis, path) -> None:
    """Write the profile table to a CSV file that pandas reads back with ``comment='#'``.

    Parameters
    ----------
    analysis : rheology.Analysis
    path : str or os.PathLike
        Destination file (overwritten).

    Notes
    -----
    The first line is a comment (``# title | regime | conventions | caution``); then a
    header row with units in the names and one row per depth node. Text cells are
    quoted, so a ``#`` in a layer name is not taken for a comment. Numbers are written
    with full precision (they read back to the same floats); an infinite strength is
    written ``inf``. Read it with ``pandas.read_csv(path, comment="#")``.
    """
    frame = profile_frame(analysis)
    with open(path, "w", encoding="utf-8", newline="") as handle:
        handle.write(csv_header_comment(analysis) + "\n")
        frame.to_csv(handle, index=False, quoting=csv.QUOTE_NONNUMERIC, lineterminator="\n")


# ------------------------------------------------------------------ other answers


def point_to_dict(answer) -> dict[str, Any]:
    """A point answer (:func:`rheology.point_answer`) as a JSON-safe dict.

    Parameters
    ----------
    answer : rheology.answers.point.PointAnswer

    Returns
    -------
    dict
        ``depth_km``, ``layer``, ``rock``, ``temperature_C``, ``pressure_MPa``
        (lithostatic), ``pore_pressure_MPa``, ``strain_rate_per_s``, ``brittle_MPa``,
        ``ductile_MPa``, ``strength_MPa``, ``mechanism``, ``margin``,
        ``creep_strength_by_law_MPa``, ``load`` (None, or ``stress_MPa``,
        ``duration_yr``, ``outcome``, ``maxwell_time_yr``, ``creep_rate_per_s``,
        ``reason``), ``sentence``, ``caution`` and ``notes``; non-finite numbers are None.
    """
    from rheology.answers.report import CAUTION

    nulls = [0]
    load = None
    if answer.load is not None:
        verdict = answer.load
        load = {
            "stress_MPa": _scalar(verdict.stress / _MPA, nulls),
            "duration_yr": _scalar(verdict.duration / _YEAR, nulls),
            "outcome": verdict.outcome,
            "maxwell_time_yr": _scalar(verdict.maxwell_time / _YEAR, nulls),
            "creep_rate_per_s": _scalar(verdict.creep_rate, nulls),
            "reason": verdict.reason,
        }
    result = {
        "depth_km": None if answer.depth is None else answer.depth / _KM,
        "layer": answer.layer,
        "rock": answer.rock,
        "temperature_C": answer.temperature - ZERO_CELSIUS,
        "pressure_MPa": _scalar(answer.lithostatic / _MPA, nulls),
        "pore_pressure_MPa": _scalar(answer.pore_pressure / _MPA, nulls),
        "strain_rate_per_s": float(answer.strain_rate),
        "brittle_MPa": _scalar(answer.brittle / _MPA, nulls),
        "ductile_MPa": _scalar(answer.ductile / _MPA, nulls),
        "strength_MPa": _scalar(answer.strength / _MPA, nulls),
        "mechanism": answer.mechanism,
        "margin": _scalar(answer.margin, nulls),
        "creep_strength_by_law_MPa": {
            law_id: _scalar(value / _MPA, nulls) for law_id, value in answer.creep_by_law.items()
        },
        "load": load,
        "sentence": answer.sentence(),
        "caution": CAUTION,
        "conventions": {key: CONVENTIONS[key] for key in ("stress", "strain_rate")},
    }
    result["notes"] = [_NULL_NOTE + f" This object has {nulls[0]} such value(s)."]
    return result


def law_units(law) -> str:
    """SI units of a flow law's pre-factor A, e.g. ``'Pa^-3 m^3 s^-1'``.

    Parameters
    ----------
    law : rheology.library.FlowLaw

    Returns
    -------
    str
        Pa^-(n+r) m^p s^-1, with r counted only for ``water_form == "fugacity"``.
    """
    pressure_exponent = law.n + (law.water_exponent if law.water_form == "fugacity" else 0.0)
    parts = [f"Pa^{-pressure_exponent:g}"] if pressure_exponent else []
    if law.grain_size_exponent:
        parts.append(f"m^{law.grain_size_exponent:g}")
    parts.append("s^-1")
    return " ".join(parts)


def law_to_dict(law) -> dict[str, Any]:
    """One flow law as published, in SI, and in tensor-invariant form (JSON-safe).

    Parameters
    ----------
    law : rheology.library.FlowLaw

    Returns
    -------
    dict
        ``id``, ``rock``, ``mechanism``, ``published`` (A as published, n, p, r,
        water form, Q [kJ/mol], V [cm^3/mol]), ``si`` (A and its units, Q [J/mol],
        V [m^3/mol], Peierls stress [Pa] where relevant), ``invariant`` (A_II, its
        units, the equation, the viscosity factor F2 for power laws), ``conventions``,
        ``uncertainty``, ``experimental_range``, ``citation``, ``location``,
        ``status`` and ``notes``.

    Notes
    -----
    For a triaxial law edot_ax = A sigma_d^n (sigma_d = sigma1 - sigma3) the same law in
    second invariants (tau_II = sigma_d / sqrt(3), edot_II = (sqrt(3)/2) edot_ax) reads
    edot_II = A_II tau_II^n with A_II = (1/2) 3^((n+1)/2) A, and the effective viscosity
    is eta = F2 A^(-1/n) edot_II^((1-n)/n) exp((Q + PV)/(nRT)) with
    F2 = 2^((1-n)/n) / 3^((n+1)/(2n)) (the standard conversion; see e.g. Gerya 2019,
    ch. 6, from memory). For low-temperature plasticity the same A_II holds and the
    Peierls stress in invariant form is sigma_P / sqrt(3).

    References
    ----------
    Gerya, T. (2019). *Introduction to Numerical Geodynamic Modelling*, 2nd ed.,
    Cambridge University Press, ch. 6 (from memory).
    Ranalli, G. (1995). *Rheology of the Earth*, 2nd ed., Chapman & Hall (from memory).
    """
    from rheology.physics.viscosity import invariant_prefactor, viscosity_factor

    nulls = [0]
    peierls = law.mechanism == "peierls"
    units = law_units(law)
    a_ii = float(invariant_prefactor(law.A, law.n))
    water = {
        "none": "no water term",
        "folded": "water folded into A",
        "fugacity": "water fugacity [Pa] to the power r",
        "OH": "OH content [H/10^6 Si] to the power r",
    }.get(law.water_form, law.water_form)
    if peierls:
        equation = (
            "edot_II = A_II tau_II^n exp(-(Q + P V)/(R T) (1 - (tau_II/tau_P)^p)^q), "
            "tau_P = sigma_P / sqrt(3)"
        )
    else:
        terms = ["A_II", "tau_II^n"]
        if law.grain_size_exponent:
            terms.append("d^-m")  # m: grain-size exponent (p, q belong to Peierls laws)
        if law.water_form in ("fugacity", "OH"):
            terms.append("w^r")
        equation = "edot_II = " + " ".join(terms) + " exp(-(Q + P V)/(R T))"
    invariant = {
        "A_II": a_ii,
        "A_II_units": units,
        "factor_A_II_over_A": float(invariant_prefactor(1.0, law.n)),
        "equation": equation,
        "viscosity_factor_F2": None if peierls else float(viscosity_factor(law.n)),
        "viscosity_equation": None
        if peierls
        else (
            "eta = F2 A^(-1/n) edot_II^((1-n)/n) exp((Q + P V)/(n R T)) "
            "(grain size and water folded into A)"
        ),
    }
    si = {
        "A": _scalar(law.A, nulls),
        "A_units": units,
        "Q_J_per_mol": float(law.Q),
        "V_m3_per_mol": float(law.V),
    }
    published = {
        "A": law.A_published,
        "n": float(law.n),
        "p": float(law.grain_size_exponent),
        "r": float(law.water_exponent),
        "water_form": law.water_form,
        "water": water,
        "Q_kJ_per_mol": float(law.Q) / 1e3,
        "V_cm3_per_mol": float(law.V) / 1e-6,
    }
    if peierls:
        si["peierls_stress_Pa"] = _scalar(law.peierls_stress, nulls)
        si["min_stress_Pa"] = _scalar(law.min_stress, nulls)
        published["peierls_stress_GPa"] = _scalar(law.peierls_stress / 1e9, nulls)
        published["peierls_p"] = float(law.peierls_p)
        published["peierls_q"] = float(law.peierls_q)
        invariant["peierls_stress_II_Pa"] = _scalar(law.peierls_stress / math.sqrt(3.0), nulls)
    return {
        "id": law.id,
        "rock": law.rock,
        "mechanism": law.mechanism,
        "published": published,
        "si": si,
        "invariant": invariant,
        "conventions": {
            "triaxial": (
                "edot_ax = A sigma_d^n ...: sigma_d = sigma1 - sigma3 the differential "
                "stress, edot_ax the axial strain rate of a triaxial test"
            ),
            "invariants": (
                "tau_II = sqrt(tau_ij tau_ij / 2) = sigma_d / sqrt(3); "
                "edot_II = sqrt(edot_ij edot_ij / 2) = (sqrt(3)/2) edot_ax"
            ),
            "conversion": "A_II = 0.5 * 3^((n+1)/2) * A, same units as A",
            "viscosity": CONVENTIONS["viscosity"].split(", evaluated")[0],
        },
        "uncertainty": {k: float(v) for k, v in law.uncertainty.items()},
        "experimental_range": law.experimental_range,
        "citation": law.citation,
        "location": law.location,
        "status": law.status,
        "notes": law.notes,
    }


def rock_to_dict(rock) -> dict[str, Any]:
    """One rock of the library as a JSON-safe dict (id, name, laws, needs, description)."""
    return {
        "id": rock.id,
        "name": rock.name,
        "laws": [law.id for law in rock.laws],
        "mechanisms": [law.mechanism for law in rock.laws],
        "needs_grain_size": bool(rock.needs_grain_size),
        "needs_water": bool(rock.needs_water),
        "properties": rock.properties,
        "description": rock.description,
    }
