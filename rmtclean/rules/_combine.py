r"""A cross-validated blend of kernel and linear shrinkage near N/n = 1.

The kernel estimate of Ledoit & Wolf (2020) and the linear shrinkage of
Ledoit & Wolf (2004) are combined as ``d = d_K + t (d_L - d_K)``; the weight
``t = tau(c) w`` is the plateau phase-in :func:`plateau_phase` of the ratio
``c = N/n`` times a weight ``w`` chosen by K-fold cross-validation
(:func:`crossvalidated_linear_weight`). Used by
:class:`rmtclean.estimators.KernelShrink` with
``near_singular="cross-validated"``; the evidence is in
``benchmarks/near_singular_crossvalidated.py``.
"""

from __future__ import annotations

import math

import numpy as np

from rmtclean._data import check_data
from rmtclean._validation import Interval, Options, check_value, numerical_rank
from rmtclean.rules._kernel import (
    HARD_EDGE_ZONE,
    KERNEL_FORMULAS,
    _kernel_rule,
)
from rmtclean.rules._linear import _linear_shrink
from rmtclean.rules._types import CleanedEigenvalues

__all__ = ["blend_linear", "crossvalidated_linear_weight", "plateau_phase"]


def plateau_phase(ratio: float) -> float:
    """Phase-in of the blend: 1 on ``|c - 1| <= 0.1``, linear to 0 at 0.2.

    Parameters
    ----------
    ratio : float
        ``c = n_features / n_samples``.

    Returns
    -------
    float
        ``min(1, max(0, 2 - |c - 1| / 0.1))``; exactly 0 outside the zone
        ``|c - 1| < 0.2`` of the hard-edge floor.

    Examples
    --------
    >>> from rmtclean.rules._combine import plateau_phase
    >>> plateau_phase(1.05), plateau_phase(1.15), plateau_phase(0.8)
    (1.0, 0.5000000000000009, 0.0)
    """
    gap = abs(ratio - 1.0)
    # Exactly 0 on and beyond the border; 1e-12 absorbs the rounding of N/n
    # (100 / 125 - 1 is -0.19999999999999996 in floating point).
    if gap >= HARD_EDGE_ZONE - 1e-12:
        return 0.0
    return min(1.0, max(0.0, 2.0 - gap / (HARD_EDGE_ZONE / 2)))


def _kernel_values(vals, r, n, p, bandwidth, formula, n_jobs, where):
    """Kernel rule on all ``vals``, the first ``r`` positive (the rest zeros).

    With ``r`` below ``min(p, n)`` (collinear rows or columns) the rank
    replaces the degrees of freedom, as in :class:`~rmtclean.estimators.
    KernelShrink`, and the zeros get the null value.
    """
    if r == 0:
        raise ValueError(f"{where}: a training part has a zero sample covariance.")
    return _kernel_rule(
        vals, n, p, rank=r, bandwidth=bandwidth, formula=formula, n_jobs=n_jobs
    )


def _both_rules(Z, dof, p, bandwidth, formula, n_jobs, where):
    """Eigenvectors of rows ``Z`` (divisor ``dof``) and both shrunk spectra."""
    U, s, _ = np.linalg.svd(Z.T, full_matrices=False)
    m = int(min(p, dof))
    lam, U = s[:m] ** 2 / dof, U[:, :m]
    # Numerical rank of the rows, taken on the singular values: the SVD
    # resolves small eigenvalues near the hard edge that the same tolerance
    # on eigenvalues would count as zeros.
    r = min(m, numerical_rank(s, *Z.shape))
    ker = _kernel_values(lam, r, dof, p, bandwidth, formula, n_jobs, where)
    lin = _linear_shrink(
        lam, dof, p, intensity="ledoit-wolf", squared_norms=np.sum(Z**2, axis=1)
    )
    return U, ker, lin


def _centred(rows: np.ndarray, assume_centered: bool) -> tuple[np.ndarray, float]:
    if assume_centered:
        return rows, float(rows.shape[0])
    return rows - rows.mean(0), float(rows.shape[0] - 1)


def _fold_edges(n_rows: int, n_folds: int) -> np.ndarray:
    return np.linspace(0, n_rows, n_folds + 1).round().astype(int)


def _heldout_variances(test: np.ndarray, test_dof: float, U: np.ndarray):
    """``o_i = u_i' S_test u_i`` and ``tr(S_test) - sum_i o_i`` (null space).

    Unbiased for ``u_i' Sigma u_i`` and for the null-space part of
    ``tr(Sigma)`` given training eigenvectors ``U`` independent of the test
    rows (Abadir, Distaso & Zikes 2014; Lam 2016).
    """
    proj = test @ U
    o = np.einsum("ij,ij->j", proj, proj) / test_dof
    null_trace = float(np.sum(test * test)) / test_dof - o.sum()
    return o, null_trace


def _weight_terms(X, n_folds, assume_centered, bandwidth, formula, n_jobs, where):
    """Numerator and denominator of the held-out weight, summed over folds."""
    T, p = X.shape
    edges = _fold_edges(T, n_folds)
    num = den = 0.0
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        test, test_dof = _centred(X[a:b], assume_centered)
        train, dof = _centred(np.concatenate([X[:a], X[b:]]), assume_centered)
        U, ker, lin = _both_rules(train, dof, p, bandwidth, formula, n_jobs, where)
        dk, dl = ker.values, lin.values
        o, null_trace = _heldout_variances(test, test_dof, U)
        diff = dl - dk
        num -= diff @ (dk - o)
        den += diff @ diff
        null_dim = p - U.shape[1]
        if null_dim:
            diff0 = lin.null_value - ker.null_value
            num -= diff0 * (null_dim * ker.null_value - null_trace)
            den += null_dim * diff0 * diff0
    return num, den


def crossvalidated_linear_weight(
    X,
    n_folds: int = 10,
    *,
    assume_centered: bool = False,
    bandwidth: float | None = None,
    formula: str = "stabilized",
    n_jobs: int | None = None,
) -> float:
    r"""Held-out Frobenius weight of linear shrinkage against kernel shrinkage.

    The rows are cut into ``n_folds`` contiguous folds in row order. For
    each fold the other rows (the training part) give the sample
    eigenvectors ``u_i``, the kernel values ``d_K`` (Ledoit & Wolf 2020, with
    ``formula``) and the linear values ``d_L`` (Ledoit & Wolf 2004); the
    held-out rows give ``o_i = u_i' S_test u_i``, unbiased for the oracle
    ``u_i' Sigma u_i`` when rows are independent. The weight minimises

    .. math:: \sum_{\text{folds}} \Big[\sum_i (d_{K,i} + w (d_{L,i} -
              d_{K,i}) - o_i)^2 + (p - m)\big(d_{K,0} + w(d_{L,0} -
              d_{K,0})\big)^2 - 2\big(d_{K,0} + w(d_{L,0} - d_{K,0})\big)
              \big(\mathrm{tr}\,S_{test} - \textstyle\sum_i o_i\big)\Big],

    which is ``sum ||C(w) - S_test||_F^2`` over the folds up to a constant
    (``C(w)`` the blended training estimate, its null space of dimension
    ``p - m`` included through the trace of ``S_test``); the closed-form
    minimiser is clipped to [0, 1].

    Parameters
    ----------
    X : array_like of shape (n_rows, n_features)
        Data rows in time order (centred or not: each part is demeaned with
        its own mean unless ``assume_centered``).
    n_folds : int, default=10
        Number of contiguous folds, at least 2.
    assume_centered : bool, default=False
        Do not demean the parts; the divisors are then their row counts
        (else the row counts less one).
    bandwidth : float or None, default=None
        Global kernel bandwidth; ``None`` is each training part's
        ``dof^(-1/3)``.
    formula : {"stabilized", "published"}, default="stabilized"
        The kernel formula (see :func:`rmtclean.rules.kernel_shrink`).
    n_jobs : int or None, default=None
        Numba threads for the kernel sums.

    Returns
    -------
    float
        The weight ``w`` of linear shrinkage, in [0, 1] (0 when the two
        rules agree on every fold).

    Raises
    ------
    ValueError
        For malformed ``X`` or ``n_folds``, a test fold with fewer than two
        rows (one with ``assume_centered``), or a training part too small
        for the kernel rule with more features than samples.

    See Also
    --------
    rmtclean.estimators.KernelShrink : applies it with
        ``near_singular="cross-validated"``.

    Notes
    -----
    Each training part has the larger ratio ``N / (n (K - 1) / K)``. The
    number of folds trades that bias against the noise of small test parts:
    ``benchmarks/near_singular_crossvalidated.py`` measured ``K = 10``
    closer to the infeasible optimal weight than ``K = 5``.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Analytical nonlinear shrinkage of
       large-dimensional covariance matrices", Ann. Statist. 48(5),
       3043-3065, 2020.
    .. [2] O. Ledoit and M. Wolf, "A well-conditioned estimator for
       large-dimensional covariance matrices", J. Multivariate Anal. 88(2),
       365-411, 2004.
    .. [3] C. Lam, "Nonparametric eigenvalue-regularized precision or
       covariance matrix estimator", Ann. Statist. 44(3), 928-953, 2016.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules._combine import crossvalidated_linear_weight
    >>> X = np.random.default_rng(0).standard_normal((101, 100))
    >>> w = crossvalidated_linear_weight(X, n_folds=5)
    >>> 0.0 <= w <= 1.0
    True
    """
    owner = "crossvalidated_linear_weight"
    X = check_data(X, "X", owner)
    check_value(n_folds, [Interval(int, 2, None)], "n_folds", owner)
    check_value(formula, [Options(KERNEL_FORMULAS)], "formula", owner)
    return _crossvalidated_linear_weight(
        X, int(n_folds), assume_centered, bandwidth, formula, n_jobs, owner
    )


def _crossvalidated_linear_weight(
    X, n_folds, assume_centered, bandwidth, formula, n_jobs, owner
) -> float:
    """Core of :func:`crossvalidated_linear_weight` (``X`` float64, 2-D)."""
    smallest = int(np.min(np.diff(_fold_edges(X.shape[0], n_folds))))
    needed = 1 if assume_centered else 2
    if smallest < needed:
        raise ValueError(
            f"{owner}: n_folds={n_folds} leaves a test fold of {smallest} row(s) "
            f"out of {X.shape[0]}; each needs at least {needed}. Use fewer folds."
        )
    num, den = _weight_terms(
        X, n_folds, assume_centered, bandwidth, formula, n_jobs, owner
    )
    if not (den > 0 and math.isfinite(num)):
        return 0.0
    return min(max(num / den, 0.0), 1.0)


def blend_linear(
    kernel: CleanedEigenvalues, linear: CleanedEigenvalues, weight: float
) -> CleanedEigenvalues:
    """``d_K + weight (d_L - d_K)`` for the values and the null value.

    Parameters
    ----------
    kernel, linear : CleanedEigenvalues
        The two rules on the same sample eigenvalues (same length; both or
        neither with a null value).
    weight : float
        The applied weight ``t`` in [0, 1].

    Returns
    -------
    CleanedEigenvalues
        The blend, with the kernel's ``details`` and ``n_signal``.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import CleanedEigenvalues
    >>> from rmtclean.rules._combine import blend_linear
    >>> k = CleanedEigenvalues(np.array([3.0, 1.0]), 0.5)
    >>> lin = CleanedEigenvalues(np.array([2.0, 1.5]), 1.0)
    >>> out = blend_linear(k, lin, 0.5)
    >>> out.values, out.null_value
    (array([2.5 , 1.25]), 0.75)
    """
    a, b = kernel.values, linear.values
    values = a + weight * (b - a)
    a0, b0 = kernel.null_value, linear.null_value
    null = None if a0 is None else a0 + weight * (b0 - a0)
    return CleanedEigenvalues(values, null, kernel.n_signal, kernel.details)
