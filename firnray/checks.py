"""Argument checks shared by every layer (a leaf module: no firnray imports).

Each check raises ``ValueError`` naming the argument, the value received and
what was expected.
"""

import math

import numpy as np


def finite_float(name, value):
    """Return ``value`` as a float, or raise if it is not a finite real number."""
    try:
        out = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a finite number, got {value!r}") from None
    if not math.isfinite(out):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    return out


def positive_float(name, value):
    """Return ``value`` as a float, or raise if it is not finite and > 0."""
    out = finite_float(name, value)
    if out <= 0.0:
        raise ValueError(f"{name} must be > 0, got {value!r}")
    return out


def point(name, value):
    """Return a point (x, z) or (x, y, z) as a float array of length 3 (x, y, z).

    Raises ``ValueError`` for a wrong length or a non-finite coordinate.
    """
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a point (x, z) or (x, y, z) in metres, "
                         f"got {value!r}") from None
    if arr.shape not in ((2,), (3,)):
        raise ValueError(f"{name} must be a point (x, z) or (x, y, z) in metres, "
                         f"got {value!r}")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must have finite coordinates, got {value!r}")
    if arr.shape == (2,):
        return np.array([arr[0], 0.0, arr[1]]), 2
    return arr, 3


def points(name, value):
    """Return an (N, 3) float array of points from (N, 2), (N, 3), (2,) or (3,).

    Rows may hold NaN (those pairs give no ray).  Returns (array, dim) where
    ``dim`` is 2 or 3, the dimension the caller used.
    """
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be an array of points of shape (N, 2) or (N, 3) "
                         f"[m], got {value!r}") from None
    if arr.ndim == 1:
        arr = arr[None, :]
    if arr.ndim != 2 or arr.shape[1] not in (2, 3):
        raise ValueError(f"{name} must have shape (N, 2) or (N, 3), got shape {arr.shape}")
    dim = arr.shape[1]
    if dim == 2:
        full = np.zeros((arr.shape[0], 3))
        full[:, 0] = arr[:, 0]
        full[:, 2] = arr[:, 1]
        arr = full
    return arr, dim
