"""Argument checking at the Python edge: every error names the argument and says what is wrong.

These helpers convert inputs to float64 NumPy arrays (or keep float32 where a stage asks for it), strip
``astropy.units.Quantity`` to plain CGS values, and broadcast like a ufunc.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._errors import InputError

__all__ = [
    "as_float",
    "strip_units",
    "check_finite",
    "check_positive",
    "check_non_negative",
    "check_increasing",
    "broadcast",
    "scalar_or_array",
]


def strip_units(name: str, value: Any, unit: str | None) -> Any:
    """Convert an ``astropy.units.Quantity`` to a plain number in the CGS ``unit``; pass others through.

    Parameters
    ----------
    name : str
        Argument name, for the error message.
    value : object
        A number, array or Quantity.
    unit : str or None
        The CGS unit the core expects (for example ``"g"``, ``"cm"``, ``"g / s"``, ``"G"``); ``None`` for
        dimensionless arguments.
    """
    if hasattr(value, "unit") and hasattr(value, "to_value"):
        try:
            if unit is None:
                return value.to_value("")
            return value.to_value(unit)
        except Exception as exc:  # astropy raises UnitConversionError (a ValueError subclass) and others
            raise InputError(f"{name}: cannot convert {value!r} to {unit or 'a dimensionless number'}") from exc
    return value


def as_float(name: str, value: Any, *, unit: str | None = None, dtype: Any = np.float64) -> NDArray[Any]:
    """Return ``value`` as a NumPy array of ``dtype`` (float64 by default), naming ``name`` on failure."""
    value = strip_units(name, value, unit)
    try:
        arr = np.asarray(value)
    except Exception as exc:
        raise InputError(f"{name}: cannot be read as a numeric array ({exc})") from exc
    if arr.dtype.kind not in "biuf":
        raise InputError(f"{name}: must be real numbers, got dtype {arr.dtype}")
    return np.asarray(arr, dtype=dtype)


def as_scalar(name: str, value: Any, unit: str | None = None, *, positive: bool = False) -> float:
    """Return ``value`` as a finite Python float (positive with ``positive=True``), naming ``name`` on failure."""
    arr = as_float(name, value, unit=unit)
    if arr.ndim != 0:
        raise InputError(f"{name}: must be a scalar, got shape {arr.shape}")
    if positive:
        check_positive(name, arr)
    else:
        check_finite(name, arr)
    return float(arr)


def check_finite(name: str, arr: NDArray[Any]) -> None:
    """Raise `InputError` if ``arr`` holds NaN or infinity."""
    bad = ~np.isfinite(arr)
    if np.any(bad):
        idx = np.argwhere(bad)[0]
        raise InputError(f"{name}: must be finite, found {arr[tuple(idx)]} at index {tuple(int(i) for i in idx)}")


def check_positive(name: str, arr: NDArray[Any]) -> None:
    """Raise `InputError` unless every element is finite and strictly positive."""
    check_finite(name, arr)
    bad = arr <= 0
    if np.any(bad):
        idx = np.argwhere(bad)[0]
        raise InputError(f"{name}: must be positive, found {arr[tuple(idx)]} at index {tuple(int(i) for i in idx)}")


def check_non_negative(name: str, arr: NDArray[Any]) -> None:
    """Raise `InputError` unless every element is finite and not negative."""
    check_finite(name, arr)
    bad = arr < 0
    if np.any(bad):
        idx = np.argwhere(bad)[0]
        raise InputError(
            f"{name}: must be non-negative, found {arr[tuple(idx)]} at index {tuple(int(i) for i in idx)}"
        )


def check_increasing(name: str, arr: NDArray[Any], *, min_len: int = 2) -> None:
    """Raise `InputError` unless ``arr`` is one-dimensional, finite and strictly increasing."""
    if arr.ndim != 1:
        raise InputError(f"{name}: must be one-dimensional, got shape {arr.shape}")
    if arr.size < min_len:
        raise InputError(f"{name}: needs at least {min_len} points, got {arr.size}")
    check_finite(name, arr)
    steps = np.diff(arr)
    if np.any(steps <= 0):
        i = int(np.argmax(steps <= 0)) + 1
        raise InputError(
            f"{name}: must be strictly increasing (non-monotonic grid), element {i} ({arr[i]}) "
            f"<= element {i - 1} ({arr[i - 1]})"
        )


def broadcast(**named: NDArray[Any]) -> list[NDArray[Any]]:
    """Broadcast the named arrays together; on failure say which shapes clash."""
    try:
        return [np.ascontiguousarray(a) for a in np.broadcast_arrays(*named.values())]
    except ValueError as exc:
        shapes = ", ".join(f"{k} {np.shape(v)}" for k, v in named.items())
        raise InputError(f"{', '.join(named)}: shapes do not broadcast together ({shapes})") from exc


def scalar_or_array(result: NDArray[Any], *inputs: Any) -> Any:
    """Return a Python float when every input was a scalar, else the array (ufunc convention)."""
    if all(np.ndim(x) == 0 for x in inputs):
        return float(np.asarray(result).reshape(()))
    return result
