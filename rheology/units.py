"""The package's single pint registry and the helpers that bring values into SI.

Pint lives at the edges: public functions and file readers call :func:`to_si` (or
:func:`to_kelvin`) and hand plain floats or numpy arrays in SI units to the numeric
core. Inside the core every quantity is SI: metres, kelvin, pascals, seconds, watts,
joules per mole, cubic metres per mole.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np
import pint

from rheology.errors import RheologyError

ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
ureg.define("H_per_1e6Si = [] = H/10^6Si")
Q_ = ureg.Quantity

_NUMBER_THEN_UNIT = re.compile(
    r"^\s*(?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>.*?)\s*$"
)

#: Unit aliases accepted in strings that pint does not spell the same way.
_ALIASES = {"uW": "microW", "µW": "microW", "μW": "microW", "um": "micrometer", "µm": "micrometer"}


def _parse_string(text: str, field: str) -> pint.Quantity:
    match = _NUMBER_THEN_UNIT.match(text)
    if match is None:
        raise RheologyError(
            f"{field}: could not read {text!r}; expected a number followed by a unit, "
            "such as '15 km' or '10 degC'"
        )
    unit = match["unit"]
    for alias, name in _ALIASES.items():
        unit = re.sub(rf"(?<![A-Za-z]){re.escape(alias)}(?![A-Za-z])", name, unit)
    try:
        return Q_(float(match["num"]), unit or "dimensionless")
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, ValueError) as exc:
        raise RheologyError(f"{field}: unknown unit in {text!r} ({exc})") from None
    except Exception as exc:  # pint raises a handful of parser errors
        raise RheologyError(f"{field}: could not read the unit in {text!r} ({exc})") from None


def as_quantity(value: Any, unit: str, field: str) -> pint.Quantity:
    """Return ``value`` as a pint quantity, reading strings; bare numbers take ``unit``."""
    if isinstance(value, pint.Quantity):
        return value
    if isinstance(value, str):
        return _parse_string(value, field)
    if isinstance(value, bool) or value is None:
        raise RheologyError(f"{field}: expected a number with units of {unit}, got {value!r}")
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise RheologyError(
            f"{field}: expected a number with units of {unit}, got {value!r}"
        ) from None
    return Q_(array if array.ndim else float(array), unit)


def to_si(
    value: Any, unit: str, field: str, *, positive: bool = False, nonnegative: bool = False
) -> float | np.ndarray:
    """Convert ``value`` to the SI magnitude of ``unit``'s dimension.

    Parameters
    ----------
    value : pint.Quantity, str, float or array_like
        A quantity, a string such as ``"15 km"``, or a bare number already in ``unit``.
    unit : str
        The unit a bare number is taken to be in; its dimension is the one expected.
    field : str
        Name used in error messages (an argument name or a scenario field path).
    positive, nonnegative : bool
        Require every value to be > 0 (or >= 0).

    Returns
    -------
    float or numpy.ndarray
        Magnitude in SI base units of the expected dimension.

    Raises
    ------
    RheologyError
        Wrong dimension, not finite, or outside the required sign.
    """
    quantity = as_quantity(value, unit, field)
    expected = Q_(1.0, unit)
    if quantity.dimensionality != expected.dimensionality:
        raise RheologyError(
            f"{field}: {_show(quantity)} has the wrong dimension; expected a value in {unit} "
            f"(dimension {expected.dimensionality}), got {quantity.dimensionality}"
        )
    magnitude = quantity.to_base_units().magnitude
    magnitude = float(magnitude) if np.ndim(magnitude) == 0 else np.asarray(magnitude, float)
    _check_finite_and_sign(magnitude, quantity, unit, field, positive, nonnegative)
    return magnitude


def to_kelvin(value: Any, field: str, *, default_unit: str = "K") -> float | np.ndarray:
    """Convert a temperature (quantity, string such as ``"10 degC"``, or number) to kelvin.

    Bare numbers are taken in ``default_unit``. The result must be above absolute zero.
    """
    if isinstance(value, str):
        quantity = _parse_string(value, field)
    elif isinstance(value, pint.Quantity):
        quantity = value
    else:
        quantity = as_quantity(value, default_unit, field)
    if quantity.dimensionality != ureg.kelvin.dimensionality:
        raise RheologyError(
            f"{field}: {_show(quantity)} is not a temperature; expected e.g. '10 degC' or '283 K'"
        )
    kelvin = quantity.to("K").magnitude
    kelvin = float(kelvin) if np.ndim(kelvin) == 0 else np.asarray(kelvin, float)
    _check_finite_and_sign(
        kelvin,
        quantity,
        "K",
        field,
        positive=True,
        nonnegative=False,
        sign_text="above absolute zero (> 0 K)",
    )
    return kelvin


def _check_finite_and_sign(magnitude, quantity, unit, field, positive, nonnegative, sign_text=None):
    values = np.asarray(magnitude)
    if not np.all(np.isfinite(values)):
        raise RheologyError(f"{field}: {_show(quantity)} is not a finite number")
    if positive and np.any(values <= 0):
        raise RheologyError(
            f"{field}: {_show(quantity)} must be {sign_text or 'greater than zero'}"
        )
    if nonnegative and np.any(values < 0):
        raise RheologyError(f"{field}: {_show(quantity)} must be zero or greater")


def _show(quantity: pint.Quantity) -> str:
    magnitude = quantity.magnitude
    if np.ndim(magnitude) == 0:
        number = float(magnitude)
        text = "nan" if math.isnan(number) else f"{number:g}"
        return f"'{text} {quantity.units:~}'".replace(" '", "'").strip()
    return f"array of {np.size(magnitude)} values in {quantity.units:~}"


#: Exponents of A's units may differ from n, p, r by rounding of fractional exponents only.
_EXPONENT_TOLERANCE = 1e-9


def prefactor_to_si(quantity: pint.Quantity, n: float, p: float = 0.0, r: float = 0.0) -> float:
    """A flow law's pre-factor in SI [Pa^-(n+r) m^p s^-1], after checking its units.

    A law edot = A sigma^n d^-p f^r (stress and fugacity as pressures, grain size as a
    length) needs A in [pressure]^-(n+r) [length]^p [time]^-1, in any pressure and length
    units (MPa, GPa, um...). A pressure is M L^-1 T^-2, so P^a L^b T^c is
    M^a L^(b - a) T^(c - 2a): the exponents follow from the mass, length and time ones.

    Raises
    ------
    RheologyError
        The units do not match n, p and r (the message says what they are and need).
    """
    dims = quantity.dimensionality
    a = float(dims.get("[mass]", 0.0))
    b = float(dims.get("[length]", 0.0)) + a
    c = float(dims.get("[time]", 0.0)) + 2.0 * a
    rebuilt = Q_(1.0, ureg.Pa**a * ureg.m**b * ureg.s**c).dimensionality
    need = -(n + r)
    if rebuilt != dims or any(
        abs(x - y) > _EXPONENT_TOLERANCE for x, y in ((a, need), (b, p), (c, -1.0))
    ):
        example = f"MPa^{need:g}" + (f" um^{p:g}" if p else "") + " s^-1"
        raise RheologyError(
            f"units of A are [pressure]^{a:g} [length]^{b:g} [time]^{c:g}, but n = {n:g}, "
            f"p = {p:g} and r = {r:g} need [pressure]^{need:g} [length]^{p:g} [time]^-1, "
            f"e.g. {example!r}"
        )
    return float(quantity.to(ureg.Pa**need * ureg.m**p / ureg.s).magnitude)
