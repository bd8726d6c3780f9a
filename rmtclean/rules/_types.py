"""The value every rule returns, and the typed by-products of each rule family."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from rmtclean._validation import numerical_rank

if TYPE_CHECKING:  # the spectrum layer sits below the rules
    from rmtclean.spectrum._spikes import SpikeInversion

__all__ = [
    "CleanedEigenvalues",
    "ClipDetails",
    "KernelDetails",
    "LinearDetails",
    "RuleDetails",
    "SpikeDetails",
    "SplitDetails",
    "StieltjesDetails",
    "expand_zeros",
    "positive_rank",
]


@dataclass(frozen=True)
class ClipDetails:
    """By-products of :func:`rmtclean.rules.eigen_clip`.

    Attributes
    ----------
    edge : float or "n_keep"
        Value above which eigenvalues were kept (the fitted Marchenko-Pastur
        upper edge, the Tracy-Widom threshold or the given float), or
        ``"n_keep"`` when a count was given.
    bulk_mean : float
        Value given to every clipped eigenvalue (their mean; keeps the trace).
    noise_variance : float or None
        Fitted noise variance, for the fitted edges.
    p_values : ndarray or None
        P-values of the sequential Tracy-Widom tests, when they ran.
    """

    edge: float | str
    bulk_mean: float
    noise_variance: float | None = None
    p_values: np.ndarray | None = None


@dataclass(frozen=True)
class LinearDetails:
    """By-products of :func:`rmtclean.rules.linear_shrink`.

    Attributes
    ----------
    intensity : float
        Shrinkage intensity ``delta`` in ``[0, 1]``.
    target : float
        Value ``mu`` of the scaled-identity target.
    method : str
        How the intensity was chosen (an intensity method or ``"fixed"``).
    """

    intensity: float
    target: float
    method: str


@dataclass(frozen=True)
class KernelDetails:
    """By-products of :func:`rmtclean.rules.kernel_shrink`.

    Attributes
    ----------
    bandwidth : float
        Global bandwidth ``h`` used.
    formula : str
        ``"published"`` or ``"stabilized"``.
    ratio : float
        ``n_features / n_samples``.
    n_floored : int
        Values raised by the stabilized formula's hard-edge floor.
    null_method : str
        How the null directions' value was found: ``"closed-form"`` or
        ``"oas"`` (below 12 degrees of freedom).
    """

    bandwidth: float
    formula: str
    ratio: float
    n_floored: int
    null_method: str


@dataclass(frozen=True)
class StieltjesDetails:
    """By-products of :func:`rmtclean.rules.stieltjes_shrink`.

    Attributes
    ----------
    eta : float
        Absolute imaginary offset of the resolvent, in the spectrum's units.
    width : str
        ``"relative"`` or ``"uniform"``.
    ratio : float
        ``n_features / n_samples``.
    hard_edge_weight : float
        Weight ``tau`` of the relative width's floor.
    noise_variance : float or None
        Noise variance of the small-eigenvalue regularisation, when it ran.
    trace_factor : float or None
        Factor that restored the trace, when it was preserved.
    """

    eta: float
    width: str
    ratio: float
    hard_edge_weight: float
    noise_variance: float | None = None
    trace_factor: float | None = None


@dataclass(frozen=True)
class SpikeDetails:
    """By-products of :func:`rmtclean.rules.spike_shrink`.

    Attributes
    ----------
    noise_variance : float
        Noise variance ``s2`` used.
    noise_variance_method : str
        Where it came from (``"given"``, ``"bulk-fit"``, ``"median"``, ...).
    loss : str
        The loss whose optimal shrinker was applied.
    bulk_edge : float
        Upper edge ``s2 (1 + sqrt(q))^2`` of the noise bulk.
    inversion : SpikeInversion
        The spike inversion used (spikes, overlaps, signal flags).
    """

    noise_variance: float
    noise_variance_method: str
    loss: str
    bulk_edge: float
    inversion: SpikeInversion


@dataclass(frozen=True)
class SplitDetails:
    """By-products of :func:`rmtclean.rules.split_shrink`.

    Attributes
    ----------
    train_size : int
        Rows used for the eigenvectors in each split.
    n_splits : int
        Splits actually drawn.
    shuffle : bool
        Whether the rows were permuted.
    null_space : str
        How the null directions' value was chosen.
    train_size_criterion : dict or None
        Held-out criterion per candidate train size, when
        ``train_size="auto"``.
    split_error : float or None
        Monte-Carlo standard error of the average over random splits,
        relative to the cleaned matrix in Frobenius norm: how far the
        values sit from the average over all splits, so two seeds differ
        by about ``sqrt(2)`` times it. 0.0 for splits that are not random,
        None for one random split.
    """

    train_size: int
    n_splits: int
    shuffle: bool
    null_space: str
    train_size_criterion: dict | None = None
    split_error: float | None = None


RuleDetails = (
    ClipDetails
    | KernelDetails
    | LinearDetails
    | SpikeDetails
    | SplitDetails
    | StieltjesDetails
)


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
    details : ClipDetails, LinearDetails, KernelDetails, StieltjesDetails, \
SpikeDetails, SplitDetails or None
        The rule family's by-products (shrinkage intensity, fitted noise
        variance, ...), for reports and estimator attributes; ``None`` when
        a rule has none.
    """

    values: np.ndarray
    null_value: float | None = None
    n_signal: int | None = None
    details: RuleDetails | None = None


def positive_rank(eigenvalues: np.ndarray, n_samples: float, n_features: int):
    """``(r, n_eff)``: the positive eigenvalues' count and the sample size.

    ``eigenvalues`` is a full descending sample spectrum. Values within
    :func:`rmtclean._validation.numerical_rank`'s tolerance (numpy's
    ``matrix_rank`` tolerance with the sizes N and dof) count as zeros
    (collinear columns, repeated rows); when ``r`` is below
    ``min(N, dof)`` the rank replaces the
    degrees of freedom as the effective sample size, so that the zeros are
    the null space of a rank-``r`` sample.
    """
    n = float(n_samples)
    r = numerical_rank(eigenvalues, n_features, n)
    return r, (float(r) if r < min(n_features, n) else n)


def expand_zeros(out: CleanedEigenvalues, k: int, p: int) -> CleanedEigenvalues:
    """Give the ``k - r`` zero sample eigenvalues the null value."""
    r = out.values.size
    if r == k:
        return out
    values = np.concatenate([out.values, np.full(k - r, out.null_value)])
    null = out.null_value if k < p else None
    return CleanedEigenvalues(values, null, out.n_signal, out.details)
