"""What an average over sample splits reports: tied values pooled, and the
Monte-Carlo error of the average when the splits are random.

Used by :func:`rmtclean.rules.split_shrink` (Abadir, Distaso & Zikes 2014;
Lam 2016).
"""

from __future__ import annotations

import numpy as np

__all__ = ["monte_carlo_error", "pool_ties"]


def monte_carlo_error(
    per_split: np.ndarray,
    values: np.ndarray,
    null_value: float | None,
    n_features: int,
    n_rows: int,
    shuffle: bool,
    leave_one_out: bool,
) -> float | None:
    """Relative Frobenius standard error of the average over random splits.

    Given the data, random permutations are independent draws, so the
    average of ``M`` splits has variance ``s^2 / M`` per coordinate (``s^2``
    the variance between splits, ddof 1); distinct rows held out one at a
    time are drawn without replacement from the ``T`` rows, which adds the
    finite-population factor ``1 - M / T`` (Cochran 1977, Sampling
    Techniques, 3rd ed., Theorem 2.2; from memory). Coordinates are the cleaned
    eigenvalues and, ``n_features - n_components`` times over, the null
    value; the result is divided by the Frobenius norm of the cleaned
    matrix. 0.0 when the splits are not random (``shuffle=False``, or every
    row held out once); None for one random split (no spread to measure).
    """
    n_splits = per_split.shape[0]
    factor = 1.0
    if leave_one_out:
        factor = max(1.0 - n_splits / n_rows, 0.0)
    if not shuffle or factor == 0.0:
        return 0.0
    if n_splits < 2:
        return None
    # In units of the largest value: squares of 1e200 or 1e-200 stay finite.
    unit = float(np.max(np.abs(per_split), initial=0.0))
    if not unit > 0:
        return 0.0
    var = (per_split / unit).var(axis=0, ddof=1) * (factor / n_splits)
    values = values / unit
    n_null = n_features - values.size
    norm2 = float(values @ values)
    total = float(var[: values.size].sum())
    if n_null:
        norm2 += n_null * ((null_value or 0.0) / unit) ** 2
        total += n_null * float(var[-1])
    if not norm2 > 0:
        return 0.0 if total == 0 else None
    return float(np.sqrt(total / norm2))


def pool_ties(
    values: np.ndarray,
    null_value: float | None,
    eigenvalues: np.ndarray,
    n_features: int,
) -> tuple[np.ndarray, float | None]:
    """Give tied sample eigenvalues one value: the mean of theirs.

    The eigenvectors of a repeated eigenvalue are any basis of its
    eigenspace, and ``u_i' Sigma_{m,M} u_i`` depends on the basis the solver
    picks; the mean over the group is ``tr(P Sigma_{m,M}) / dim`` for the
    eigenspace's projector ``P``, which does not (the rotation-invariant
    estimator closest to ``Sigma_{m,M}`` when eigenvalues repeat). Ties are
    gaps within rounding of the largest eigenvalue; zero eigenvalues also
    tie with the null space, which they join.
    """
    values = np.array(values, dtype=np.float64)
    if values.size == 0:
        return values, null_value
    tol = 8.0 * max(n_features, values.size) * np.finfo(np.float64).eps
    tol *= float(eigenvalues[0])
    start = 0
    for stop in range(1, values.size + 1):
        if stop == values.size or eigenvalues[stop - 1] - eigenvalues[stop] > tol:
            values[start:stop] = values[start:stop].mean()
            start = stop
    n_null = n_features - values.size
    zero = eigenvalues <= tol
    if n_null and null_value is not None and np.any(zero):
        pooled = (values[zero].sum() + n_null * null_value) / (zero.sum() + n_null)
        values[zero] = pooled
        null_value = float(pooled)
    return values, null_value
