"""Input validation shared by the physics modules (private)."""

from __future__ import annotations

import numpy as np

from eddyphone.errors import ParameterError


def as_array(name: str, value: float | np.ndarray) -> np.ndarray:
    """Return ``value`` as a float array, refusing NaN and non-numbers."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ParameterError(f"{name}={value!r} is not a number; give a real number") from exc
    if np.any(np.isnan(arr)):
        raise ParameterError(f"{name} is NaN; give a finite number")
    return arr


def _first_bad(arr: np.ndarray, bad: np.ndarray) -> float:
    return float(arr[bad].flat[0]) if arr.ndim else float(arr)


def positive(name: str, value: float | np.ndarray, unit: str) -> np.ndarray:
    """Return ``value`` as an array after checking it is finite and > 0."""
    arr = as_array(name, value)
    bad = ~np.isfinite(arr) | (arr <= 0)
    if np.any(bad):
        raise ParameterError(
            f"{name}={_first_bad(arr, bad):g} {unit} is not allowed; "
            f"give a finite value greater than 0 {unit}"
        )
    return arr


def non_negative(name: str, value: float | np.ndarray, unit: str) -> np.ndarray:
    """Return ``value`` as an array after checking it is finite and >= 0."""
    arr = as_array(name, value)
    bad = ~np.isfinite(arr) | (arr < 0)
    if np.any(bad):
        raise ParameterError(
            f"{name}={_first_bad(arr, bad):g} {unit} is not allowed; "
            f"give a finite value of 0 {unit} or more"
        )
    return arr


def finite(name: str, value: float | np.ndarray, unit: str) -> np.ndarray:
    """Return ``value`` as an array after checking it is finite (any sign)."""
    arr = as_array(name, value)
    bad = ~np.isfinite(arr)
    if np.any(bad):
        raise ParameterError(f"{name}={_first_bad(arr, bad):g} {unit} is not finite; give a number")
    return arr


def in_range(
    name: str, value: float | np.ndarray, low: float, high: float, unit: str = ""
) -> np.ndarray:
    """Return ``value`` as an array after checking ``low <= value <= high``."""
    arr = as_array(name, value)
    bad = ~np.isfinite(arr) | (arr < low) | (arr > high)
    if np.any(bad):
        u = f" {unit}" if unit else ""
        raise ParameterError(
            f"{name}={_first_bad(arr, bad):g}{u} is outside the valid range "
            f"{low:g}-{high:g}{u}; give a value in that range"
            + (" (a fraction, e.g. 0.45, not a percentage)" if name == "hematocrit" else "")
        )
    return arr


def out(arr: np.ndarray) -> float | np.ndarray:
    """Return a Python float for 0-d results, the array otherwise."""
    return float(arr) if np.ndim(arr) == 0 else arr
