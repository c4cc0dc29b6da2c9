"""What the page shows of an analysis: tables with units, words, figure bytes, file payloads.

Every function takes the objects of the public API (:class:`rheology.Analysis`, a
point answer) and rearranges them for display; the numbers come from the API
unchanged (stresses divided by 1e6 for MPa, depths by 1e3 for km, temperatures less
273.15 for degC). No streamlit import, so each piece can be tested on its own.
"""

from __future__ import annotations

import io
import pathlib
import re
import tempfile

import pandas as pd

from rheology.answers.report import CAUTION
from rheology.constants import SECONDS_PER_MYR, ZERO_CELSIUS

_KM = 1e3
_MPA = 1e6
_TN_PER_M = 1e12
_YEAR = SECONDS_PER_MYR / 1e6  # Julian year [s]

#: Resolution of the downloaded PNG figure [dots per inch] (the page itself shows the
#: browser-drawn chart of :mod:`ui.chart`).
DOWNLOAD_DPI = 150

#: Source name used in messages about the page's own set-up.
PAGE_SOURCE = "page set-up"

TRANSITION_COLUMNS = (
    "depth [km]",
    "temperature [°C]",
    "stress [MPa]",
    "change",
    "layer above",
    "layer below",
    "on a layer boundary",
)
BAND_COLUMNS = ("from [km]", "to [km]", "layer", "mechanism", "what to expect")
LAYER_STRENGTH_COLUMNS = ("layer", "integrated strength [TN/m]", "share of the column [%]")
COMPETENT_COLUMNS = ("top [km]", "base [km]", "thickness [km]")

_CHANGE_WORDS = {
    "brittle-to-ductile": "faulting gives way to flow",
    "ductile-to-brittle": "flow gives way to faulting",
}
_EXPECT_WORDS = {
    "frictional sliding": "faults: slip on fractures (brittle)",
    "semi-brittle": "mixed: distributed cracking with flow",
    "dislocation creep": "flow (ductile)",
    "diffusion creep": "flow (ductile)",
    "low-temperature plasticity": "flow (ductile), stiff",
}


# ------------------------------------------------------------------------ formatting


def km(metres: float, digits: int = 2) -> str:
    """A depth in metres written in km, e.g. ``10314.5 -> "10.31 km"``."""
    return f"{metres / _KM:.{digits}f} km"


def slug(title: str) -> str:
    """A file-name stem from a scenario title (lower case, dashes)."""
    text = re.sub(r"[^a-z0-9]+", "-", str(title).lower()).strip("-")
    return text or "scenario"


# ----------------------------------------------------------------------- the analysis


def run_analysis(scenario_text: str):
    """Parse scenario TOML text and analyse it (what the page caches on that text).

    Raises
    ------
    rheology.errors.RheologyError
        Invalid set-up (field path in the message) or an impossible column, e.g. a
        geotherm whose heat production exceeds the surface heat flow.
    """
    from rheology import analyse
    from rheology.scenario import parse_scenario

    return analyse(parse_scenario(scenario_text, source=PAGE_SOURCE))


def run_companion(analysis, faulting: str):
    """The same column analysed in another faulting regime."""
    from rheology import analyse

    return analyse(analysis.scenario, faulting=faulting)


def first_faulting_base(analysis):
    """The first brittle-to-ductile transition (None if faults reach the base)."""
    return next((t for t in analysis.transitions if t.kind == "brittle-to-ductile"), None)


def headline(analysis) -> dict[str, str]:
    """The three figures shown beside the envelope, formatted with units."""
    first = first_faulting_base(analysis)
    reach = (
        km(first.depth)
        if first is not None
        else (f"whole column ({km(analysis.envelope.depth[-1])})")
    )
    return {
        "faults reach": reach,
        "effective elastic thickness": km(analysis.elastic.te, 1),
        "integrated strength": f"{analysis.integrated / _TN_PER_M:.3g} TN/m",
    }


def summary_lines(analysis) -> list[str]:
    """The plain-words answer of :meth:`rheology.Analysis.summary`, without the caution."""
    return [
        line for line in analysis.summary().splitlines() if line.strip() and line.strip() != CAUTION
    ]


def transition_lines(analysis) -> list[str]:
    """One sentence per transition, shallow first, e.g. '10.31 km: faulting gives way ...'."""
    lines = []
    for t in sorted(analysis.transitions, key=lambda t: t.depth):
        where = f"at the top of the {t.layer_below}" if t.at_boundary else f"in the {t.layer_above}"
        lines.append(
            f"{km(t.depth)}: {_CHANGE_WORDS.get(t.kind, t.kind)} ({where}; "
            f"{t.temperature - ZERO_CELSIUS:.0f} °C, {t.stress / _MPA:.0f} MPa)"
        )
    return lines


def transitions_frame(analysis) -> pd.DataFrame:
    """Transitions, shallow first: depth [km], temperature [°C], stress [MPa], change..."""
    rows = [
        (
            t.depth / _KM,
            t.temperature - ZERO_CELSIUS,
            t.stress / _MPA,
            f"{t.kind}: {_CHANGE_WORDS.get(t.kind, t.kind)}",
            t.layer_above,
            t.layer_below,
            bool(t.at_boundary),
        )
        for t in sorted(analysis.transitions, key=lambda t: t.depth)
    ]
    return pd.DataFrame.from_records(rows, columns=list(TRANSITION_COLUMNS))


def bands_frame(analysis) -> pd.DataFrame:
    """Depth ranges of one mechanism, with what a geologist would expect to see there."""
    rows = [
        (
            b.top / _KM,
            b.bottom / _KM,
            b.layer,
            b.mechanism,
            _EXPECT_WORDS.get(b.mechanism, b.mechanism),
        )
        for b in analysis.bands
    ]
    return pd.DataFrame.from_records(rows, columns=list(BAND_COLUMNS))


def layer_strength_frame(analysis) -> pd.DataFrame:
    """Integrated strength of each layer and of the whole column [TN/m]."""
    total = analysis.integrated
    rows = [
        (name, value / _TN_PER_M, 100.0 * value / total if total > 0 else float("nan"))
        for name, value in analysis.integrated_by_layer.items()
    ]
    rows.append(("whole column", total / _TN_PER_M, 100.0 if total > 0 else float("nan")))
    return pd.DataFrame.from_records(rows, columns=list(LAYER_STRENGTH_COLUMNS))


def competent_frame(analysis) -> pd.DataFrame:
    """Mechanically strong depth ranges behind the effective elastic thickness."""
    rows = [
        (top / _KM, bottom / _KM, (bottom - top) / _KM)
        for top, bottom in analysis.elastic.competent
    ]
    return pd.DataFrame.from_records(rows, columns=list(COMPETENT_COLUMNS))


def point_frame(answer) -> pd.DataFrame:
    """A point answer as (quantity, value, unit) rows, values already formatted."""
    rows = [
        ("depth", f"{answer.depth / _KM:.3g}", "km"),
        ("layer", answer.layer, "–"),
        ("rock", answer.rock, "–"),
        ("temperature", f"{answer.temperature - ZERO_CELSIUS:.0f}", "°C"),
        ("overburden (lithostatic) pressure", f"{answer.lithostatic / _MPA:.4g}", "MPa"),
        ("pore-fluid pressure", f"{answer.pore_pressure / _MPA:.4g}", "MPa"),
        ("strain rate", f"{answer.strain_rate:.3g}", "1/s"),
        ("frictional strength (faulting)", f"{answer.brittle / _MPA:.4g}", "MPa"),
        ("creep strength (flow)", f"{answer.ductile / _MPA:.4g}", "MPa"),
        ("governing mechanism", answer.mechanism, "–"),
        ("stronger / weaker mechanism", f"{answer.margin:.3g}", "times"),
    ]
    rows += [
        (f"creep strength of law {law_id}", f"{value / _MPA:.4g}", "MPa")
        for law_id, value in answer.creep_by_law.items()
    ]
    if answer.load is not None:
        load = answer.load
        rows += [
            ("applied load", f"{load.stress / _MPA:.4g}", "MPa"),
            ("load held for", f"{load.duration / _YEAR:.3g}", "years"),
            ("outcome", load.outcome, "–"),
            ("Maxwell time", f"{load.maxwell_time / _YEAR:.3g}", "years"),
            ("creep rate under the load", f"{load.creep_rate:.3g}", "1/s"),
        ]
    return pd.DataFrame.from_records(rows, columns=["quantity", "value", "unit"])


def library_frame() -> pd.DataFrame:
    """Every flow law of the library with its parameters, units, citation and status."""
    from rheology.library.tables import flow_law_frame

    frame = flow_law_frame()
    return frame.rename(
        columns={
            "n": "n [–]",
            "p": "grain-size exponent m [–]",
            "r": "water exponent r [–]",
            "water_form": "water term",
            "experimental_range": "experimental range",
            "status": "verification",
        }
    )


def rock_library_frame() -> pd.DataFrame:
    """Rocks a layer can name, with their laws and what extra inputs they need."""
    from rheology.library.tables import rock_frame

    return rock_frame().rename(
        columns={
            "needs_grain_size": "needs a grain size",
            "needs_water": "needs a water value",
            "properties": "typical properties row",
        }
    )


# -------------------------------------------------------------------------- payloads


def scenario_toml(analysis) -> str:
    """The analysed scenario as TOML (:func:`rheology.scenario.dump_scenario`)."""
    from rheology.scenario import dump_scenario

    return dump_scenario(analysis.scenario)


def profile_csv(analysis) -> str:
    """The profile CSV exactly as :func:`rheology.outputs.write_profile_csv` writes it."""
    from rheology.outputs import write_profile_csv

    with tempfile.TemporaryDirectory() as folder:
        path = pathlib.Path(folder) / "profile.csv"
        write_profile_csv(analysis, path)
        return path.read_text(encoding="utf-8")


def result_json(analysis) -> str:
    """The analysis as JSON (:func:`rheology.outputs.analysis_to_json`)."""
    from rheology.outputs import analysis_to_json

    return analysis_to_json(analysis)


def figure_png(analysis, companion=None, dpi: int = DOWNLOAD_DPI) -> bytes:
    """The envelope figure (:func:`rheology.plotting.strength_figure`) as PNG bytes."""
    from rheology.plotting import strength_figure

    figure = strength_figure(analysis, companion=companion)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()


def payload_names(analysis) -> dict[str, str]:
    """File names of the four downloads, from the scenario title."""
    stem = slug(analysis.scenario.title)
    return {
        "toml": f"{stem}.toml",
        "csv": f"{stem}-profile.csv",
        "json": f"{stem}-result.json",
        "png": f"{stem}-envelope.png",
    }
