"""Published flow laws, rock types and rock properties, loaded from the reference tables.

The tables keep each value as published (with its units, source, location in the paper,
uncertainty and verification status); :mod:`rheology.library.tables` validates them and
converts them to SI.
"""

from rheology.library.flowlaw import FlowLaw, Rock, RockProperties
from rheology.library.tables import (
    flow_law_frame,
    get_flow_law,
    get_rock,
    get_rock_properties,
    load_flow_laws,
    load_rock_properties,
    load_rocks,
    rock_frame,
    table_dir,
)

__all__ = [
    "FlowLaw",
    "Rock",
    "RockProperties",
    "flow_law_frame",
    "get_flow_law",
    "get_rock",
    "get_rock_properties",
    "load_flow_laws",
    "load_rock_properties",
    "load_rocks",
    "rock_frame",
    "table_dir",
]
