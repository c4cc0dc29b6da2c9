"""Warnings for input values far outside what rocks and geology make plausible.

A value outside these ranges is not impossible, so it is not an error; but it most
often comes from a units slip (a density of 2.7 kg/m^3 typed for 2.7 g/cm^3, a grain
size of 5 m for 5 mm), so it gets a :class:`rheology.errors.RheologyWarning` naming
the field, the value as typed and the plausible range.

The ranges are wide on purpose and are common practice, not published limits:

* density 1000-4500 kg/m^3: from water-saturated sediment to dense mantle rock;
* strain rate 1e-20 to 1e-2 1/s: from the slowest geological rates to fast
  laboratory tests;
* grain size 1 um to 0.1 m: from ultramylonite to very coarse rock;
* surface temperature -60 to 100 degC: from polar to hot-spring ground.
"""

from __future__ import annotations

import math
import warnings
from typing import Any, NamedTuple

from rheology.constants import ZERO_CELSIUS
from rheology.errors import RheologyWarning


class PlausibleRange(NamedTuple):
    """Plausible SI bounds of one field, and how to word a warning about it."""

    low: float
    high: float
    si: str  # SI unit of low and high
    what: str  # "rock densities"
    shown: str  # the range as a reader writes it, e.g. "1000-4500 kg/m^3"
    hint_low: str = ""  # a likely units slip for a value far below, e.g. "was it g/cm^3?"
    hint_high: str = ""


#: Plausible ranges by field name of the scenario file (SI bounds; common practice,
#: see the module docstring).
RANGES = {
    "density": PlausibleRange(
        1000.0, 4500.0, "kg/m^3", "rock densities", "1000-4500 kg/m^3", hint_low="was it g/cm^3?"
    ),
    "strain_rate": PlausibleRange(
        1e-20, 1e-2, "1/s", "geological and laboratory strain rates", "1e-20 to 1e-2 1/s"
    ),
    "grain_size": PlausibleRange(
        1e-6, 0.1, "m", "rock grain sizes", "1 um to 100 mm", hint_high="was it mm or um?"
    ),
    "surface_temperature": PlausibleRange(
        ZERO_CELSIUS - 60.0,
        ZERO_CELSIUS + 100.0,
        "K",
        "surface temperatures",
        "-60 to 100 degC",
        hint_low="was it degC rather than K?",
        hint_high="was it K rather than degC?",
    ),
}


def check_plausible(field: str, value: float, where: str, shown: Any = None) -> None:
    """Warn if ``value`` [SI] lies outside the plausible range of ``field``.

    Parameters
    ----------
    field : str
        A key of :data:`RANGES` (other names are not checked).
    value : float
        The value in SI units (kg/m^3, 1/s, m, K).
    where : str
        The name shown to the user: a field path (``layers[0].density``) or an option
        (``--grain-size``).
    shown : object, optional
        The value as the user typed it (e.g. ``"2.7 kg/m^3"``); default the SI value.

    Warns
    -----
    RheologyWarning
        ``<where>: <shown> is far below <what> (<range>); <hint>``, or "far above".
    """
    limits = RANGES.get(field)
    if limits is None or not math.isfinite(value):
        return
    if limits.low <= value <= limits.high:
        return
    side, hint = ("below", limits.hint_low) if value < limits.low else ("above", limits.hint_high)
    text = f"{value:g} {limits.si}" if shown is None else str(shown)
    message = f"{where}: {text} is far {side} {limits.what} ({limits.shown})"
    warnings.warn(message + (f"; {hint}" if hint else ""), RheologyWarning, stacklevel=3)
