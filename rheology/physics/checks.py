"""Input checks shared by the physics modules: finite numbers, signs, layer arrays."""

from __future__ import annotations

from typing import Any

import numpy as np

from rheology.errors import RheologyError


def as_float_array(value: Any, name: str) -> np.ndarray:
    """``value`` as a float array; pint quantities are refused (convert with to_si first)."""
    if hasattr(value, "units") and hasattr(value, "magnitude"):
        raise RheologyError(
            f"{name}: got a quantity with units ({value!r}); the physics functions take plain "
            "numbers in SI units - convert first with rheology.units.to_si"
        )
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise RheologyError(
            f"{name}: got {value!r}; expected a number or an array of numbers"
        ) from None
    return array


def first_bad(array: np.ndarray, bad: np.ndarray, unit: str = "") -> str:
    """The first offending value (and its index) for an error message."""
    index = tuple(int(i) for i in np.argwhere(bad)[0])
    value = array[index] if array.ndim else array
    where = f" at index {index}" if array.ndim else ""
    unit = f" {unit}" if unit else ""
    return f"{float(value):g}{unit}{where}"


def checked(
    value: Any,
    name: str,
    unit: str,
    *,
    positive: bool = False,
    nonnegative: bool = False,
    what: str = "value",
    hint: str = "",
) -> np.ndarray:
    """Return ``value`` as a float array after checking it is finite (and its sign)."""
    array = as_float_array(value, name)
    a = "an" if what[0] in "aeiou" else "a"
    brackets = f" [{unit}]" if unit else ""
    finite = np.isfinite(array)
    if not np.all(finite):
        raise RheologyError(
            f"{name}: got {first_bad(array, ~finite)}; expected a finite {what}{brackets}{hint}"
        )
    if positive and np.any(array <= 0):
        raise RheologyError(
            f"{name}: got {first_bad(array, array <= 0, unit)}; expected {a} {what} greater "
            f"than zero{brackets}{hint}"
        )
    if nonnegative and np.any(array < 0):
        raise RheologyError(
            f"{name}: got {first_bad(array, array < 0, unit)}; expected {a} {what} of zero or "
            f"more{brackets}{hint}"
        )
    return array


def depth_array(depth: Any) -> np.ndarray:
    """Depth [m] as a checked array (finite, >= 0)."""
    return checked(depth, "depth", "m", nonnegative=True, what="depth")


def temperature_array(value: Any, name: str) -> np.ndarray:
    """Temperature [K] as a checked array (finite, > 0)."""
    return checked(
        value, name, "K", positive=True, what="temperature", hint=" (kelvin, above absolute zero)"
    )


def layers_checked(
    thickness: Any, **named: Any
) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
    """Check layer arrays (layer axis last) and return thickness, layer tops and the rest."""
    h = np.atleast_1d(checked(thickness, "thickness", "m", positive=True, what="layer thickness"))
    arrays = {}
    for name, (value, unit, what, positive) in named.items():
        arrays[name] = np.atleast_1d(
            checked(value, name, unit, positive=positive, nonnegative=not positive, what=what)
        )
    for name, array in arrays.items():
        if array.shape[-1] != h.shape[-1]:
            raise RheologyError(
                f"{name}: got {array.shape[-1]} layers (shape {array.shape}); expected one value "
                f"per layer, as in thickness ({h.shape[-1]} layers, shape {h.shape})"
            )
    tops = np.cumsum(h, axis=-1) - h
    return h, tops, arrays
