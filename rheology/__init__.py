"""rheology: strength envelopes and brittle-ductile transitions from cited laboratory laws.

Quick use::

    import rheology
    scenario = rheology.load_scenario(rheology.bundled_example("demo"))
    analysis = rheology.analyse(scenario)
    print(analysis.summary())

Inside the numeric core every quantity is SI (m, K, Pa, s, W, J/mol, m^3/mol);
stresses are differential stresses sigma1 - sigma3 in the triaxial convention.
"""

from rheology.answers.integrated import elastic_thickness, integrated_strength
from rheology.answers.point import point_answer
from rheology.answers.report import CAUTION, Analysis, analyse
from rheology.answers.transitions import find_transitions, goetze_depths, regime_bands
from rheology.envelope import MECHANISMS, Envelope, compute_envelope
from rheology.errors import RheologyError, RheologyWarning, ScenarioError, TableError
from rheology.model import Friction, Geotherm, Layer, PorePressure, Scenario
from rheology.units import Q_, ureg

__version__ = "0.1.0"


def __getattr__(name):
    # scenario files and the reference tables load lazily (they read files)
    if name in (
        "load_scenario",
        "parse_scenario",
        "dump_scenario",
        "save_scenario",
        "bundled_example",
        "list_examples",
        "scenario_from_mapping",
        "scenario_to_mapping",
    ):
        from rheology import scenario

        return getattr(scenario, name)
    if name in ("get_rock", "get_flow_law", "load_flow_laws", "load_rocks"):
        from rheology.library import tables

        return getattr(tables, name)
    raise AttributeError(f"module 'rheology' has no attribute {name!r}")


__all__ = [
    "CAUTION",
    "MECHANISMS",
    "Analysis",
    "Envelope",
    "Friction",
    "Geotherm",
    "Layer",
    "PorePressure",
    "Q_",
    "RheologyError",
    "RheologyWarning",
    "Scenario",
    "ScenarioError",
    "TableError",
    "analyse",
    "compute_envelope",
    "elastic_thickness",
    "find_transitions",
    "goetze_depths",
    "integrated_strength",
    "point_answer",
    "regime_bands",
    "ureg",
]
