"""Validation of data matrices for the public functions (not estimators).

Estimators use scikit-learn's ``validate_data``; the functions of rmtclean
use :func:`check_data`, which gives the same guarantees with messages that
name the function.
"""

from __future__ import annotations

import numpy as np

__all__ = ["check_data", "check_eigenvalues"]


def check_data(X, name: str, owner: str, *, min_samples: int = 2) -> np.ndarray:
    """Return ``X`` as a finite 2-D float64 array (a copy only if needed).

    Raises
    ------
    TypeError
        For complex, object or string data.
    ValueError
        For non-2-D data, fewer than ``min_samples`` rows, no columns, NaN or
        infinity.
    """
    if hasattr(X, "to_numpy") and hasattr(X, "columns"):
        X = X.to_numpy()
    arr = np.asarray(X)
    if arr.dtype.kind == "c":
        raise TypeError(f"{name} of {owner} is complex; only real data are supported.")
    if arr.dtype.kind in "OUSV":
        try:
            arr = arr.astype(np.float64)
        except (TypeError, ValueError) as exc:
            raise TypeError(
                f"{name} of {owner} must be numeric; got dtype {arr.dtype} "
                "with entries that are not numbers."
            ) from exc
    if arr.dtype.kind not in "biuf":
        raise TypeError(f"{name} of {owner} has unsupported dtype {arr.dtype}.")
    if arr.ndim != 2:
        raise ValueError(
            f"{name} of {owner} must be 2-D (n_samples, n_features); "
            f"got {arr.ndim}-D input of shape {arr.shape}."
        )
    if arr.shape[0] < min_samples:
        raise ValueError(
            f"{name} of {owner} has {arr.shape[0]} sample(s); "
            f"at least {min_samples} are needed."
        )
    if arr.shape[1] < 1:
        raise ValueError(f"{name} of {owner} has no features (0 columns).")
    arr = arr.astype(np.float64, copy=False)
    if not np.all(np.isfinite(arr)):
        n_bad = int(np.count_nonzero(~np.isfinite(arr)))
        raise ValueError(
            f"{name} of {owner} contains NaN or infinity ({n_bad} entries)."
        )
    return arr


def check_eigenvalues(eigenvalues, owner: str) -> np.ndarray:
    """Return sample eigenvalues as a finite, non-negative 1-D float64 array.

    Tiny negative values from rounding (above ``-1e-12`` times the largest)
    are set to zero; anything more negative is an error.
    """
    vals = np.asarray(eigenvalues)
    if vals.dtype.kind == "c":
        raise TypeError(f"eigenvalues of {owner} are complex; they must be real.")
    if vals.dtype.kind not in "biuf":
        raise TypeError(
            f"eigenvalues of {owner} must be numeric; got dtype {vals.dtype}."
        )
    vals = vals.astype(np.float64)
    if vals.ndim != 1:
        raise ValueError(
            f"eigenvalues of {owner} must be a 1-D array; got shape {vals.shape}."
        )
    if vals.size == 0:
        raise ValueError(f"eigenvalues of {owner} is empty.")
    if not np.all(np.isfinite(vals)):
        raise ValueError(f"eigenvalues of {owner} contain NaN or infinity.")
    top = float(np.max(np.abs(vals)))
    if np.any(vals < -1e-12 * top):
        raise ValueError(
            f"eigenvalues of {owner} must be non-negative (a covariance spectrum); "
            f"got a minimum of {float(vals.min())!r}."
        )
    return np.maximum(vals, 0.0)
