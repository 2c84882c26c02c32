"""Small helpers shared by the physics modules: numeric input checks and "same kind out".

A physics function takes a scalar, a numpy array or a pandas Series and returns the same
kind: a float for scalar inputs, an array for arrays, and a Series (keeping its index)
when an input is a Series of the result's shape.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def as_float_array(value, name):
    """``value`` as a float array; a ValueError naming ``name`` if it is not numeric."""
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name} must be numeric; got {value!r}") from exc


def require(condition, name, expected, value):
    """Raise a ValueError naming ``name`` unless ``condition`` holds everywhere."""
    if not np.all(condition):
        raise ValueError(f"{name} must be {expected}; got {value!r}")


def same_kind(result, *inputs):
    """``result`` as a float, an ndarray, or a Series following the kind of ``inputs``.

    A Series comes back when an input is a Series of the result's shape (a reduction over
    a Series, such as a sum along a route, gives a float).
    """
    result = np.asarray(result, dtype=float)
    for item in inputs:
        if isinstance(item, pd.Series) and result.shape == item.shape:
            return pd.Series(result, index=item.index)
    if result.ndim == 0:
        return float(result)
    return result


def checked_array(name, value, *, positive=False, nonnegative=False, unit=""):
    """``value`` as a float array, checked finite (and positive or non-negative)."""
    arr = np.asarray(value, dtype=float)
    if np.any(~np.isfinite(arr)):
        raise ValueError(f"{name} must be finite [{unit}].")
    if positive and np.any(arr <= 0.0):
        raise ValueError(f"{name} must be positive [{unit}], got min {arr.min()}.")
    if nonnegative and np.any(arr < 0.0):
        raise ValueError(f"{name} must be >= 0 [{unit}], got min {arr.min()}.")
    return arr
