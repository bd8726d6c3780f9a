"""Covariance estimates from data with missing values (NaN entries).

Two estimates, each returned with the means used and the number of rows
behind every entry:

- :func:`pairwise_covariance` (pairwise deletion): entry ``(i, j)`` is the
  sample covariance of columns ``i`` and ``j`` over the rows where both are
  observed, with the means of those rows. Fast, no model, but the matrix
  need not be positive semi-definite.
- :func:`em_covariance`: the Gaussian maximum-likelihood estimate by the EM
  algorithm; positive semi-definite by construction, valid when values are
  missing at random, slower (a solve per missingness pattern and iteration).

The estimators' ``missing="pairwise"`` / ``missing="em"`` decompose such an
estimate instead of a complete-data sample covariance; see
:func:`missing_sample_spectrum` for what that implies.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg

from rmtclean._validation import POSITIVE_FINITE, Interval, check_value, numeric_array
from rmtclean.spectrum import SampleSpectrum
from rmtclean.spectrum._sample import column_scale

__all__ = [
    "MISSING_METHODS",
    "MissingCovariance",
    "em_covariance",
    "missing_sample_spectrum",
    "pairwise_covariance",
]

MISSING_METHODS = ("pairwise", "em")


@dataclass(frozen=True, eq=False)
class MissingCovariance:
    """A covariance estimated from incomplete data.

    Attributes
    ----------
    covariance : ndarray of shape (n_features, n_features)
        The estimate, with the divisor ``n - 1`` of each entry's rows
        (``n`` with ``assume_centered``) for ``"pairwise"`` and ``T / (T - 1)``
        times the maximum-likelihood estimate for ``"em"`` (``T`` rows), so
        that both equal ``numpy.cov`` on complete data.
    location : ndarray of shape (n_features,)
        Column means over the observed entries (``"pairwise"``) or the
        maximum-likelihood mean (``"em"``); zeros with ``assume_centered``.
    counts : ndarray of shape (n_features, n_features)
        Number of rows in which both columns are observed.
    degrees_of_freedom : float
        The effective sample size handed to the rules: the mean of
        ``counts`` over pairs of distinct columns (over the diagonal when
        there is one column), less one unless ``assume_centered``.
    method : {"pairwise", "em"}
    n_iter : int
        EM iterations run (0 for ``"pairwise"``).
    converged : bool
        Whether EM met its tolerance (True for ``"pairwise"``).
    """

    covariance: np.ndarray
    location: np.ndarray
    counts: np.ndarray
    degrees_of_freedom: float
    method: str
    n_iter: int = 0
    converged: bool = True

    def __str__(self) -> str:
        n = self.covariance.shape[0]
        extra = (
            ""
            if self.method == "pairwise"
            else f", {self.n_iter} EM iterations"
            + ("" if self.converged else " (not converged)")
        )
        return (
            f"MissingCovariance({self.method}: {n} features, "
            f"{self.degrees_of_freedom:.1f} effective degrees of freedom{extra})"
        )


def _check_incomplete(X, func: str) -> np.ndarray:
    if hasattr(X, "to_numpy") and hasattr(X, "columns"):
        X = X.to_numpy(dtype=np.float64, na_value=np.nan)
    X = numeric_array(X, "X", func)
    if X.ndim != 2 or X.shape[0] < 2 or X.shape[1] < 1:
        raise ValueError(
            f"The 'X' argument of {func} must be 2-D with at least 2 rows and "
            f"1 column. Got shape {X.shape} instead."
        )
    if np.any(np.isinf(X)):
        raise ValueError(
            f"The 'X' argument of {func} contains infinity; only NaN marks a "
            "missing value."
        )
    return X


def _counts(mask: np.ndarray) -> np.ndarray:
    m = mask.astype(np.float64)
    return m.T @ m


def _effective_dof(counts: np.ndarray, assume_centered: bool) -> float:
    n = counts.shape[0]
    if n == 1:
        mean = float(counts[0, 0])
    else:
        mean = float((counts.sum() - np.trace(counts)) / (n * (n - 1)))
    return mean if assume_centered else mean - 1.0


def _check_overlap(counts: np.ndarray, need: int, func: str) -> None:
    bad = np.argwhere(counts < need)
    if bad.size:
        i, j = (int(v) for v in bad[0])
        shared = (
            f"column {i} has {int(counts[i, i])} observed row(s)"
            if i == j
            else f"columns {i} and {j} share {int(counts[i, j])}"
        )
        raise ValueError(
            f"{func} needs at least {need} rows in which both columns of every "
            f"pair are observed; {shared}."
        )


def pairwise_covariance(X, *, assume_centered: bool = False) -> MissingCovariance:
    r"""Pairwise-deletion covariance of data with NaN entries.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Data; NaN marks a missing value.
    assume_centered : bool, default=False
        If True, use zero means and divide by the number of shared rows.

    Returns
    -------
    MissingCovariance

    Notes
    -----
    With :math:`R_{ij}` the rows where columns ``i`` and ``j`` are both
    observed, :math:`n_{ij} = |R_{ij}|` and :math:`\bar x^{(ij)}_i` the mean
    of column ``i`` over them,

    .. math::

        \hat\sigma_{ij} = \frac{1}{n_{ij} - 1} \sum_{t \in R_{ij}}
            (x_{ti} - \bar x^{(ij)}_i)(x_{tj} - \bar x^{(ij)}_j),

    as ``pandas.DataFrame.cov``. Each entry is unbiased (values missing
    completely at random), but the matrix mixes different rows and can have
    negative eigenvalues.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.missing import pairwise_covariance
    >>> X = np.array([[1.0, 2.0], [2.0, np.nan], [3.0, 5.0], [4.0, 4.0]])
    >>> est = pairwise_covariance(X)
    >>> est.counts.tolist()
    [[4.0, 3.0], [3.0, 3.0]]
    >>> round(float(est.covariance[0, 1]), 6)
    1.833333
    """
    func = "pairwise_covariance"
    X = _check_incomplete(X, func)
    mask = ~np.isnan(X)
    counts = _counts(mask)
    need = 1 if assume_centered else 2
    _check_overlap(counts, need, func)
    m = mask.astype(np.float64)
    if assume_centered:
        location = np.zeros(X.shape[1])
        Z = np.where(mask, X, 0.0)
        cov = (Z.T @ Z) / counts
    else:
        # Shift by the column means first: the formula is shift invariant and
        # the shifted sums cancel far less.
        location = np.nanmean(X, axis=0)
        Z = np.where(mask, X - location, 0.0)
        sums = Z.T @ m  # sums[i, j] = sum of column i over rows in R_ij
        cross = Z.T @ Z
        cov = (cross - sums * sums.T / counts) / (counts - 1.0)
    cov = (cov + cov.T) / 2
    return MissingCovariance(
        covariance=cov,
        location=location,
        counts=counts,
        degrees_of_freedom=_effective_dof(counts, assume_centered),
        method="pairwise",
    )


def _solve_psd(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    try:
        return scipy.linalg.cho_solve(scipy.linalg.cho_factor(A), B)
    except np.linalg.LinAlgError:
        return scipy.linalg.pinvh(A) @ B


def _em_step(X, patterns, mu, S, assume_centered):
    """One EM iteration: the expected sufficient statistics, then the ML update."""
    n_rows, n_features = X.shape
    total = np.zeros(n_features)
    scatter = np.zeros((n_features, n_features))
    for observed, rows in patterns:
        block = X[rows]
        if observed.all():
            total += block.sum(axis=0)
            scatter += block.T @ block
            continue
        miss = ~observed
        filled = block.copy()
        if observed.any():
            coef = _solve_psd(S[np.ix_(observed, observed)], S[np.ix_(observed, miss)])
            filled[:, miss] = mu[miss] + (block[:, observed] - mu[observed]) @ coef
            cond = S[np.ix_(miss, miss)] - S[np.ix_(miss, observed)] @ coef
        else:
            filled[:, miss] = mu[miss]
            cond = S[np.ix_(miss, miss)]
        total += filled.sum(axis=0)
        scatter += filled.T @ filled
        scatter[np.ix_(miss, miss)] += rows.size * cond
    new_mu = np.zeros(n_features) if assume_centered else total / n_rows
    new_S = scatter / n_rows - np.outer(new_mu, new_mu)
    return new_mu, (new_S + new_S.T) / 2


def _patterns(mask: np.ndarray):
    keys, inverse = np.unique(mask, axis=0, return_inverse=True)
    inverse = np.asarray(inverse).reshape(-1)
    return [(keys[k], np.flatnonzero(inverse == k)) for k in range(keys.shape[0])]


def em_covariance(
    X, *, assume_centered: bool = False, max_iter: int = 200, tol: float = 1e-8
) -> MissingCovariance:
    r"""Gaussian maximum-likelihood covariance of incomplete data by EM.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Data; NaN marks a missing value. Rows with no observed value carry
        no information and are dropped.
    assume_centered : bool, default=False
        If True, the mean is fixed at zero.
    max_iter : int, default=200
        Maximum number of EM iterations.
    tol : float, default=1e-8
        Stop when the largest change of a covariance entry, relative to the
        largest variance, falls below ``tol``.

    Returns
    -------
    MissingCovariance
        ``covariance`` is ``T / (T - 1)`` times the ML estimate (``T`` rows
        kept; no factor with ``assume_centered``), so that complete data give
        ``numpy.cov``.

    Notes
    -----
    Each iteration fills the missing part of every row with its conditional
    mean given the observed part, adds the conditional covariance
    :math:`\Sigma_{mm} - \Sigma_{mo}\Sigma_{oo}^{-1}\Sigma_{om}` to the
    scatter, and re-estimates mean and covariance [1]_ [2]_. The observed-data
    likelihood never decreases. Valid when values are missing at random; each
    iteration costs one solve per distinct missingness pattern, up to
    O(T N^3). Starts from the observed means and variances.

    References
    ----------
    .. [1] A. P. Dempster, N. M. Laird and D. B. Rubin, "Maximum likelihood
       from incomplete data via the EM algorithm", J. Roy. Statist. Soc. B
       39(1), 1-38, 1977.
    .. [2] R. J. A. Little and D. B. Rubin, *Statistical Analysis with
       Missing Data*, 2nd ed., Wiley, 2002, Ch. 11.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.missing import em_covariance
    >>> X = np.random.default_rng(0).standard_normal((200, 3))
    >>> X[::7, 1] = np.nan
    >>> est = em_covariance(X)
    >>> est.converged, bool(np.all(np.linalg.eigvalsh(est.covariance) > 0))
    (True, True)
    """
    func = "em_covariance"
    check_value(max_iter, [Interval(int, 1, None)], "max_iter", func)
    check_value(tol, [POSITIVE_FINITE], "tol", func)
    X = _check_incomplete(X, func)
    mask = ~np.isnan(X)
    keep = mask.any(axis=1)
    X, mask = X[keep], mask[keep]
    n_rows = X.shape[0]
    counts = _counts(mask)
    if np.any(np.diag(counts) < 2):
        j = int(np.argmin(np.diag(counts)))
        raise ValueError(
            f"{func} needs at least 2 observed values in every column; "
            f"column {j} has {int(counts[j, j])}."
        )
    # Work on data shifted by the observed means (EM is shift equivariant),
    # so that the raw second moments do not cancel.
    shift = np.zeros(X.shape[1]) if assume_centered else np.nanmean(X, axis=0)
    X = X - shift
    mu = np.zeros(X.shape[1])
    S = np.diag(np.nanmean(X * X, axis=0))
    patterns = _patterns(mask)
    n_iter, converged = 0, False
    for n_iter in range(1, max_iter + 1):  # noqa: B007 - n_iter is reported
        new_mu, new_S = _em_step(X, patterns, mu, S, assume_centered)
        change = np.max(np.abs(new_S - S)) / max(np.max(np.diag(new_S)), 1e-300)
        mu, S = new_mu, new_S
        if change < tol:
            converged = True
            break
    factor = 1.0 if assume_centered else n_rows / (n_rows - 1.0)
    return MissingCovariance(
        covariance=S * factor,
        location=mu + shift,
        counts=counts,
        degrees_of_freedom=_effective_dof(counts, assume_centered),
        method="em",
        n_iter=n_iter,
        converged=converged,
    )


def missing_sample_spectrum(
    X, *, method: str, assume_centered: bool = False, standardize: bool = False
) -> SampleSpectrum:
    r"""The sample spectrum of incomplete data, for the estimators' ``missing=``.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Data with NaN for missing values.
    method : {"pairwise", "em"}
        :func:`pairwise_covariance` or :func:`em_covariance`.
    assume_centered, standardize : bool, default=False
        As for the estimators; ``standardize`` decomposes the correlation
        matrix of the estimate.

    Returns
    -------
    SampleSpectrum
        Decomposition of the estimate (route ``"dense"``, no ``samples``),
        with ``n_samples`` the estimate's ``degrees_of_freedom``.

    Notes
    -----
    Caveats, which the estimators' documentation repeats:

    - The rules were derived for complete samples. The degrees of freedom
      given to them (the mean number of rows shared by two columns, less
      one) is a heuristic: pairwise deletion mixes rows, and EM's fill-in
      carries less information than observed values.
    - Negative eigenvalues of a pairwise estimate are set to zero before
      cleaning.
    - Like a complete sample of ``n`` rows, only the ``min(N, floor(dof))``
      largest eigenvalues are kept; the rest form the null space that the
      rule fills. The estimators then floor the cleaned eigenvalues at
      ``1e-8`` times the mean eigenvalue, which guarantees a positive
      definite result.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.missing import missing_sample_spectrum
    >>> X = np.random.default_rng(1).standard_normal((100, 4))
    >>> X[3, 2] = np.nan
    >>> spec = missing_sample_spectrum(X, method="pairwise")
    >>> spec.n_components, round(spec.n_samples, 3)
    (4, 98.5)
    """
    if method == "pairwise":
        est = pairwise_covariance(X, assume_centered=assume_centered)
    elif method == "em":
        est = em_covariance(X, assume_centered=assume_centered)
    else:
        raise ValueError(
            f"The 'method' parameter of missing_sample_spectrum must be one of "
            f"{MISSING_METHODS}. Got {method!r} instead."
        )
    cov = est.covariance
    n_features = cov.shape[0]
    dof = est.degrees_of_freedom
    if not dof > 0:
        raise ValueError(
            f"The data passed with missing={method!r} leave {dof!r} degrees of "
            "freedom; more overlapping observations are needed."
        )
    scale = None
    if standardize:
        var = np.diag(cov).copy()
        scale = column_scale(var, location=est.location, n_rows=np.shape(X)[0])
        cov = cov / np.outer(scale, scale)
    vals, vecs = np.linalg.eigh(cov)
    n_components = max(1, min(n_features, int(math.floor(dof))))
    vals = np.maximum(vals[::-1][:n_components], 0.0)
    vecs = vecs[:, ::-1][:, :n_components]
    return SampleSpectrum(
        eigenvalues=np.ascontiguousarray(vals),
        eigenvectors=np.ascontiguousarray(vecs),
        n_samples=float(dof),
        n_features=n_features,
        location=est.location,
        scale=scale,
        route="dense",
    )
