"""The value every rule returns."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["CleanedEigenvalues"]


@dataclass(frozen=True)
class CleanedEigenvalues:
    """Cleaned eigenvalues returned by a rule.

    Attributes
    ----------
    values : ndarray of shape (n_components,)
        Cleaned eigenvalues, in the order of the sample eigenvalues given to
        the rule (descending throughout rmtclean).
    null_value : float or None
        Value given to the ``n_features - n_components`` directions of the
        null space when the sample spectrum is rank deficient
        (``n_features > n_samples``); ``None`` when there is no null space.
    n_signal : int or None
        Number of eigenvalues the rule treats as signal (above the bulk
        edge), where the rule computes one.
    details : dict
        Rule-specific by-products (shrinkage intensity, fitted noise
        variance, ...), for reports.
    """

    values: np.ndarray
    null_value: float | None = None
    n_signal: int | None = None
    details: dict = field(default_factory=dict)
