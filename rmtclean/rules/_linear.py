r"""Linear shrinkage of a sample covariance towards a structured target.

Every estimator here is the convex combination

.. math:: \hat\Sigma = (1 - \delta) S + \delta F

of the sample covariance ``S`` and a target ``F`` (``mu I``, ``diag(S)`` or
the constant-correlation matrix), with an intensity ``delta`` in [0, 1]
chosen by Ledoit-Wolf, by OAS, or given. Every intensity costs O(N T) time
and memory beyond ``||S||_F^2`` (read from ``S``, from the eigenvalues, or
from the smaller of the two Gram matrices ``X'X`` and ``XX'``).

Three layers: the private cores ``_identity_intensity`` (on scalars),
``_intensity`` (on centred data) and ``_target``; the public
:func:`linear_shrink` (a rule on eigenvalues, identity target),
:func:`shrinkage_intensity`, :func:`shrinkage_target` and
:func:`linear_shrink_covariance`; and the estimator
:class:`rmtclean.estimators.LinearShrink`.

Conventions (as scikit-learn's and the papers'): a covariance is always paired
with the divisor ``n`` it was formed with, ``S = sum_t w_t x_t x_t' / n`` for
the (centred) rows ``x_t`` with frequency weights ``w_t`` (all one by
default). The public data functions use ``n = T`` (the number of rows, even
after demeaning), which is what ``sklearn.covariance`` does.
"""

from __future__ import annotations

import numpy as np

from rmtclean._data import check_data, check_eigenvalues
from rmtclean._validation import (
    Interval,
    Options,
    check_sample_weight,
    check_sizes,
    check_value,
)
from rmtclean.rules._types import CleanedEigenvalues, LinearDetails
from rmtclean.spectrum._sample import column_scale

__all__ = [
    "INTENSITY_METHODS",
    "SHRINKAGE_TARGETS",
    "linear_shrink",
    "linear_shrink_covariance",
    "shrinkage_intensity",
    "shrinkage_target",
]

#: Targets ``F`` of :func:`linear_shrink_covariance`.
SHRINKAGE_TARGETS = ("identity", "diagonal", "constant-correlation")

#: Data-driven intensities. "oas" is Chen et al. (2010) eq. (23);
#: "oas-sklearn" is scikit-learn's variant of it (the 2/p terms dropped).
INTENSITY_METHODS = ("ledoit-wolf", "oas", "oas-sklearn")


# -- private cores (no validation) -----------------------------------------
def _ratio(num: float, den: float, noise: float = 0.0) -> float:
    """``min(num, den) / den``, and 0 when that minimum is not positive.

    ``noise`` is the size of the terms whose difference gave ``num``: a
    ``num`` within their rounding error is zero. (Two rows centre to +x and
    -x, so every ``x_t x_t'`` equals ``S`` and the dispersion is exactly 0,
    but the difference of sums leaves ~1e-16 of ``noise``.)
    """
    if num <= _ROUNDING * noise:
        return 0.0
    top = min(num, den)
    return float(top / den) if top > 0 else 0.0


#: Relative rounding error allowed in a difference of accumulated sums.
_ROUNDING = 64.0 * np.finfo(np.float64).eps


def _unit_scale(values: np.ndarray, power: int) -> float:
    """A power of two taking ``max |values|`` near 1 when raising it to ``power``
    would leave the float64 range (about 1e+-300); else 1.

    The intensities are scale free, so they are computed in these units:
    multiplying by a power of two is exact, and ordinary data are untouched.
    """
    top = float(np.max(np.abs(values))) if values.size else 0.0
    limit = 2.0 ** (960 // power)
    if top == 0.0 or 1.0 / limit <= top <= limit:
        return 1.0
    return float(2.0 ** -np.frexp(top)[1])


def _identity_intensity(
    method: str,
    *,
    trace: float,
    frob2: float,
    gamma: float,
    n_samples: float,
    n_features: int,
    fourth: float | None = None,
    n_rows: float | None = None,
) -> float:
    """Intensity towards ``mu I`` from scalar moments of ``S``.

    ``trace = tr S``, ``frob2 = ||S||_F^2``, ``gamma = ||S - mu I||_F^2``,
    ``n_samples`` the divisor ``n`` of ``S``; for Ledoit-Wolf also
    ``fourth = sum_t w_t ||x_t||^4`` and ``n_rows = sum_t w_t``.
    """
    p, n = n_features, float(n_samples)
    if p == 1:  # the target is S itself; sklearn reports 0
        return 0.0
    if method == "ledoit-wolf":
        # sum_ij pi_ij = (1/n) sum_t w_t ||x_t x_t' - S||_F^2, expanded with
        # sum_t w_t x_t x_t' = n S; the LW (2004) ratio b^2/d^2 is
        # min(sum pi / n, gamma) / gamma (the 1/p normalisations cancel).
        pi_sum = (fourth - (2.0 * n - n_rows) * frob2) / n
        noise = (fourth + abs(2.0 * n - n_rows) * frob2) / (n * n)
        return _ratio(pi_sum / n, gamma, noise)
    if method == "oas-sklearn":
        num = frob2 + trace**2
        den = (n + 1.0) * gamma
    else:  # "oas": Chen et al. (2010) eq. (23)
        num = (1.0 - 2.0 / p) * frob2 + trace**2
        den = (n + 1.0 - 2.0 / p) * gamma
    if den <= 0:  # S is already a multiple of I: any intensity gives S
        return 1.0
    return float(min(max(num / den, 0.0), 1.0))


def _frobenius_sq(Xc: np.ndarray, n: float, weights: np.ndarray | None) -> float:
    """``||S||_F^2`` from the smaller Gram matrix (no N x N array if N > T)."""
    Z = Xc if weights is None else Xc * np.sqrt(weights)[:, None]
    G = Z.T @ Z if Z.shape[1] <= Z.shape[0] else Z @ Z.T
    return float(np.vdot(G, G)) / (n * n)


def _intensity(
    Xc: np.ndarray,
    n: float,
    target: str,
    method: str,
    *,
    weights: np.ndarray | None = None,
    frob2: float | None = None,
) -> float:
    r"""Data-driven intensity for centred rows ``Xc`` and divisor ``n``.

    O(N T) time and memory, plus ``||S||_F^2`` (``frob2``; computed from
    the smaller Gram matrix when not given).
    """
    n_rows_arr, p = Xc.shape
    scale = _unit_scale(Xc, 4)
    if scale != 1.0:  # fourth moments of the data would over- or underflow
        Xc = Xc * scale
        frob2 = None
    w = np.ones(n_rows_arr) if weights is None else weights
    m = float(w.sum())
    X2 = Xc * Xc
    d = (w @ X2) / n  # diag(S)
    trace = float(d.sum())
    if frob2 is None:
        frob2 = _frobenius_sq(Xc, n, weights)
    sq = X2.sum(axis=1)  # ||x_t||^2
    fourth = float(w @ (sq * sq))
    if target == "identity":
        gamma = frob2 - trace * trace / p
        return _identity_intensity(
            method,
            trace=trace,
            frob2=frob2,
            gamma=gamma,
            n_samples=n,
            n_features=p,
            fourth=fourth,
            n_rows=m,
        )
    if p == 1:
        return 0.0
    # pi_ij = (1/n) sum_t w_t (x_ti x_tj - s_ij)^2 summed over all (i, j) and
    # over the diagonal; Ledoit & Wolf (2003, 2004 [3, 4]).
    dd = float(d @ d)
    x4 = float(w @ np.einsum("ij,ij->i", X2, X2))
    pi_sum = (fourth - (2.0 * n - m) * frob2) / n
    pi_diag = (x4 - (2.0 * n - m) * dd) / n
    off2 = frob2 - dd  # sum_{i != j} s_ij^2
    noise = (fourth + x4 + abs(2.0 * n - m) * (frob2 + dd)) / (n * n)
    if target == "diagonal":
        # F = diag(S): rho = sum_i pi_ii exactly, gamma = sum_{i != j} s_ij^2.
        return _ratio((pi_sum - pi_diag) / n, off2, noise)
    sig = column_scale(d, "The constant-correlation target")
    u = Xc @ (1.0 / sig)
    v = Xc @ sig
    rsum = float(w @ (u * u)) / n  # sum_ij s_ij / (sig_i sig_j)
    sSs_off = float(w @ (v * v)) / n - dd  # sum_{i != j} sig_i sig_j s_ij
    rbar = (rsum - p) / (p * (p - 1))
    gamma = off2 - 2.0 * rbar * sSs_off + rbar**2 * (trace**2 - dd)
    # sum_{i != j} (sig_j / sig_i) theta_{ii,ij} with
    # theta_{ii,ij} = (1/n) sum_t w_t (x_ti^2 - s_ii)(x_ti x_tj - s_ij).
    cube = (X2 * Xc) @ (1.0 / sig)
    cross = float(w @ (cube * v))
    theta = (cross - x4) / n - (2.0 - m / n) * sSs_off
    rho = pi_diag + rbar * theta
    noise += abs(rbar) * ((abs(cross) + x4) / n + abs(2.0 - m / n) * abs(sSs_off)) / n
    return _ratio((pi_sum - rho) / n, gamma, noise)


def _target(S: np.ndarray, target: str) -> np.ndarray:
    """The target ``F`` built from ``S`` (a new array)."""
    p = S.shape[0]
    d = np.diagonal(S).copy()
    if target == "identity":
        return np.diag(np.full(p, d.sum() / p))
    if target == "diagonal" or p == 1:
        return np.diag(d)
    sig = column_scale(d, "The constant-correlation target")
    rbar = (float(np.sum(S / sig[:, None] / sig[None, :])) - p) / (p * (p - 1))
    F = rbar * np.outer(sig, sig)
    np.fill_diagonal(F, d)
    return F


def _combine(S: np.ndarray, F: np.ndarray, delta: float) -> np.ndarray:
    out = (1.0 - delta) * S
    out += delta * F
    return out


# -- validation helpers ----------------------------------------------------
def _check_intensity(value, name: str, owner: str):
    """A method name or a real number in [0, 1] (returned as a float)."""
    check_value(
        value, [Options(INTENSITY_METHODS), Interval(float, 0.0, 1.0)], name, owner
    )
    return value if isinstance(value, str) else float(value)


def _check_combination(target: str, intensity, owner: str) -> None:
    if target != "identity" and intensity in ("oas", "oas-sklearn"):
        raise ValueError(
            f"{owner}: the OAS intensity is derived for the identity target only; "
            f"got intensity={intensity!r} with target={target!r}. Use "
            "intensity='ledoit-wolf' or a float for this target."
        )


def _centre(X: np.ndarray, assume_centered: bool) -> np.ndarray:
    return X.copy() if assume_centered else X - X.mean(axis=0)


# -- public functions ------------------------------------------------------
def linear_shrink(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    intensity: str | float = "ledoit-wolf",
    squared_norms=None,
    sample_weight=None,
) -> CleanedEigenvalues:
    r"""Shrink sample eigenvalues linearly towards their mean.

    The rule form of linear shrinkage towards ``mu I``, ``mu = tr(S)/p``,
    which keeps the sample eigenvectors:

    .. math:: d_k = (1 - \delta)\lambda_k + \delta\mu,\qquad
              \text{null space: } \delta\mu.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_components,)
        Nonzero sample eigenvalues of ``S = sum_t w_t x_t x_t' / n_samples``
        (any order; descending in rmtclean). When ``n_components <
        n_features`` the remaining eigenvalues are zeros.
    n_samples : float
        The divisor ``n`` of ``S`` (``T`` in scikit-learn's convention,
        ``T - 1`` for rmtclean's degrees of freedom).
    n_features : int
        Dimension ``p``.
    intensity : {"ledoit-wolf", "oas", "oas-sklearn"} or float, default="ledoit-wolf"
        ``"ledoit-wolf"`` [1]_ (needs ``squared_norms``), ``"oas"``: Chen et
        al.'s eq. (23) [2]_, ``"oas-sklearn"``: the variant of
        ``sklearn.covariance.OAS`` (eq. (23) without its ``2/p`` terms), or
        a fixed ``delta`` in [0, 1].
    squared_norms : array_like of shape (n_rows,), optional
        ``||x_t||^2`` of the centred rows that formed ``S``; required by
        ``"ledoit-wolf"``, whose intensity depends on fourth moments and is
        not a function of the eigenvalues alone.
    sample_weight : array_like of shape (n_rows,), optional
        Frequency weights ``w_t`` of those rows (all one by default).

    Returns
    -------
    CleanedEigenvalues
        ``values`` (same order as the input), ``null_value`` (``delta mu``
        when ``n_components < n_features``, else None) and ``details`` a
        :class:`LinearDetails`: ``intensity`` (delta), ``target`` (mu) and
        ``method``.

    See Also
    --------
    linear_shrink_covariance : the same on data, with any target.

    Notes
    -----
    With ``m = sum_t w_t`` rows, Ledoit-Wolf's [1]_ intensity is
    ``min(b^2, d^2) / d^2`` with ``d^2 = ||S - mu I||_F^2 / p`` and

    .. math:: \bar b^2 = \frac{1}{p n^2}\sum_t w_t\|x_t x_t' - S\|_F^2
              = \frac{\sum_t w_t\|x_t\|^4 - (2n - m)\|S\|_F^2}{p n^2},

    which for ``m = n`` is scikit-learn's ``ledoit_wolf_shrinkage``. OAS [2]_:

    .. math:: \rho = \min\left(\frac{(1 - 2/p)\,\mathrm{tr}(S^2) +
              \mathrm{tr}^2(S)}{(n + 1 - 2/p)(\mathrm{tr}(S^2) -
              \mathrm{tr}^2(S)/p)}, 1\right),

    and ``"oas-sklearn"`` drops both ``2/p``. ``tr S`` and ``tr S^2`` come
    from the eigenvalues, so the cost is O(n_components + n_rows).

    "oas" is the published eq. (23) because the name refers to that
    estimator; scikit-learn drops the ``2/p`` terms as negligible for large
    ``p``, but at ``p = 10`` they move ``rho`` by about 1e-2. Use
    ``"oas-sklearn"`` to reproduce ``sklearn.covariance.OAS``.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "A well-conditioned estimator for
       large-dimensional covariance matrices", J. Multivariate Anal. 88(2),
       365-411, 2004.
    .. [2] Y. Chen, A. Wiesel, Y. C. Eldar and A. O. Hero, "Shrinkage
       algorithms for MMSE covariance estimation", IEEE Trans. Signal
       Process. 58(10), 5016-5029, 2010, eq. (23).

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import linear_shrink
    >>> out = linear_shrink(np.array([3.0, 1.0, 0.5]), 100, 4, intensity=0.5)
    >>> out.values, out.null_value
    (array([2.0625, 1.0625, 0.8125]), 0.5625)
    """
    owner = "linear_shrink"
    # The values in any order, zeros allowed: check_eigenvalues' messages.
    vals = check_eigenvalues(eigenvalues, owner)
    intensity = _check_intensity(intensity, "intensity", owner)
    n_samples, n_features = check_sizes(n_samples, n_features, owner)
    if n_features < vals.size:
        raise ValueError(
            f"The 'n_features' parameter of {owner} must be an int of at least "
            f"len(eigenvalues) = {vals.size}. Got {n_features!r} instead."
        )
    sq = w = None
    if intensity == "ledoit-wolf":
        if squared_norms is None:
            raise ValueError(
                f"{owner}: intensity='ledoit-wolf' needs squared_norms (the "
                "squared norms of the centred rows); pass them, or choose "
                "intensity='oas', 'oas-sklearn' or a float."
            )
        sq = check_eigenvalues(squared_norms, owner + " (squared_norms)")
        if sample_weight is not None:
            w = check_sample_weight(sample_weight, sq.size, owner)
    return _linear_shrink(
        vals,
        n_samples,
        n_features,
        intensity=intensity,
        squared_norms=sq,
        sample_weight=w,
    )


def _linear_shrink(
    vals: np.ndarray,
    n_samples: float,
    n_features: int,
    *,
    intensity,
    squared_norms=None,
    sample_weight=None,
) -> CleanedEigenvalues:
    """Core of :func:`linear_shrink` (no validation)."""
    p = n_features
    trace = float(vals.sum())
    mu = trace / p
    if isinstance(intensity, str):
        # Scale free: in units where squared eigenvalues stay in range.
        scale = _unit_scale(vals, 2)
        v, mu_v = vals * scale, mu * scale
        frob2 = float(v @ v)
        dev = v - mu_v
        gamma = float(dev @ dev) + (p - v.size) * mu_v * mu_v  # ||S - mu I||_F^2
        fourth = n_rows = None
        if intensity == "ledoit-wolf":
            sq = squared_norms * scale
            w = np.ones(sq.size) if sample_weight is None else sample_weight
            fourth, n_rows = float(w @ (sq * sq)), float(w.sum())
        delta = _identity_intensity(
            intensity,
            trace=trace * scale,
            frob2=frob2,
            gamma=gamma,
            n_samples=n_samples,
            n_features=p,
            fourth=fourth,
            n_rows=n_rows,
        )
        method = intensity
    else:
        delta, method = float(intensity), "fixed"
    values = (1.0 - delta) * vals + delta * mu
    null = delta * mu if vals.size < p else None
    return CleanedEigenvalues(
        values,
        null_value=null,
        n_signal=None,
        details=LinearDetails(intensity=delta, target=mu, method=method),
    )


def shrinkage_intensity(
    X,
    *,
    target: str = "identity",
    method: str = "ledoit-wolf",
    assume_centered: bool = False,
) -> float:
    r"""Data-driven linear-shrinkage intensity, in O(N T) memory.

    Never forms an N x N matrix when N > T: ``||S||_F^2`` is read from the
    T x T Gram matrix.

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Data, rows are observations.
    target : {"identity", "diagonal", "constant-correlation"}, default="identity"
    method : {"ledoit-wolf", "oas", "oas-sklearn"}, default="ledoit-wolf"
        OAS is defined for the identity target only.
    assume_centered : bool, default=False
        If False the column means are removed first.

    Returns
    -------
    float
        The intensity ``delta`` in [0, 1] for ``S = X_c' X_c / T`` (divisor
        T, as scikit-learn): ``ledoit_wolf_shrinkage(X)`` for the defaults.

    See Also
    --------
    linear_shrink_covariance : the shrunk matrix itself.

    Notes
    -----
    Non-identity targets use Ledoit & Wolf's general optimal intensity [3]_
    [4]_ (from memory):

    .. math:: \delta = \max\left(0, \min\left(1,
              \frac{\pi - \rho}{n\,\gamma}\right)\right),\quad
              \pi = \sum_{ij}\pi_{ij},\quad \gamma = \|F - S\|_F^2,

    ``pi_ij = (1/n) sum_t (x_ti x_tj - s_ij)^2`` estimating ``n Var(s_ij)``
    and ``rho`` the sum of ``n Cov(f_ij, s_ij)``. For the
    constant-correlation target [3]_ (``f_ii = s_ii``,
    ``f_ij = rbar sqrt(s_ii s_jj)``, ``rbar`` the mean off-diagonal sample
    correlation)

    .. math:: \rho = \sum_i \pi_{ii} + \bar r \sum_{i \ne j}
              \sqrt{s_{jj}/s_{ii}}\;\theta_{ii,ij},\quad
              \theta_{ii,ij} = \tfrac{1}{n}\sum_t (x_{ti}^2 - s_{ii})
              (x_{ti}x_{tj} - s_{ij}).

    The diagonal target ``F = diag(S)`` is the same formula with ``rbar = 0``:
    ``rho = sum_i pi_ii`` (exact, as ``f_ii = s_ii``) and ``gamma =
    sum_{i != j} s_ij^2``. Each double sum is expanded into products of
    row sums (``sum_ij (X^2' X^2)_ij = sum_t ||x_t||^4``, and
    ``sum_{ij} (X^3' X)_ij sig_j / sig_i`` as a product of two matrix-vector
    products), so only O(N T) work remains. For the identity target
    Ledoit-Wolf (2004) [1]_ takes ``rho = 0``.

    The intensity is scale free and is computed in units of the largest
    entry when fourth moments of the data would leave the float64 range.
    With two rows the centred rows are ``+x`` and ``-x``, every
    ``x_t x_t'`` equals ``S``, and the Ledoit-Wolf intensity is 0 (a
    difference within rounding error of its terms counts as 0): the
    estimate is ``S`` itself, of rank one.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "A well-conditioned estimator for
       large-dimensional covariance matrices", J. Multivariate Anal. 88(2),
       365-411, 2004.
    .. [3] O. Ledoit and M. Wolf, "Honey, I shrunk the sample covariance
       matrix", J. Portfolio Management 30(4), 110-119, 2004.
    .. [4] O. Ledoit and M. Wolf, "Improved estimation of the covariance
       matrix of stock returns with an application to portfolio selection",
       J. Empirical Finance 10(5), 603-621, 2003.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import shrinkage_intensity
    >>> X = np.random.default_rng(0).standard_normal((40, 100))
    >>> delta = shrinkage_intensity(X)
    >>> bool(0.0 <= delta <= 1.0)
    True
    """
    owner = "shrinkage_intensity"
    target = check_value(target, [Options(SHRINKAGE_TARGETS)], "target", owner)
    method = check_value(method, [Options(INTENSITY_METHODS)], "method", owner)
    _check_combination(target, method, owner)
    X = check_data(X, "X", owner)
    Xc = _centre(X, assume_centered)
    return _intensity(Xc, float(X.shape[0]), target, method)


def shrinkage_target(covariance, target: str = "identity") -> np.ndarray:
    """The shrinkage target ``F`` of a covariance matrix.

    Parameters
    ----------
    covariance : array_like of shape (n_features, n_features)
        A symmetric sample covariance.
    target : {"identity", "diagonal", "constant-correlation"}, default="identity"
        ``"identity"``: ``mu I`` with ``mu = tr(S)/p``; ``"diagonal"``:
        ``diag(S)``; ``"constant-correlation"``: ``f_ii = s_ii``,
        ``f_ij = rbar sqrt(s_ii s_jj)`` with ``rbar`` the average off-diagonal
        correlation (Ledoit & Wolf 2004, "Honey, I shrunk the sample
        covariance matrix").

    Returns
    -------
    ndarray of shape (n_features, n_features)

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import shrinkage_target
    >>> S = np.array([[4.0, 1.0, 0.0], [1.0, 1.0, 0.5], [0.0, 0.5, 1.0]])
    >>> shrinkage_target(S, "constant-correlation").round(4)
    array([[4.    , 0.6667, 0.6667],
           [0.6667, 1.    , 0.3333],
           [0.6667, 0.3333, 1.    ]])
    """
    owner = "shrinkage_target"
    target = check_value(target, [Options(SHRINKAGE_TARGETS)], "target", owner)
    S = check_data(covariance, "covariance", owner, min_samples=1)
    if S.shape[0] != S.shape[1]:
        raise ValueError(f"covariance of {owner} must be square; got shape {S.shape}.")
    return _target(S, target)


def linear_shrink_covariance(
    X,
    *,
    target: str = "identity",
    intensity: str | float = "ledoit-wolf",
    assume_centered: bool = False,
) -> tuple[np.ndarray, float]:
    r"""Linearly shrunk covariance ``(1 - delta) S + delta F`` of data.

    ``S = X_c' X_c / T`` (divisor T, demeaned unless ``assume_centered``),
    exactly as ``sklearn.covariance``: with the defaults the result equals
    ``sklearn.covariance.ledoit_wolf(X)``; with ``intensity="oas-sklearn"``
    ``sklearn.covariance.oas(X)``.

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Data, rows are observations.
    target : {"identity", "diagonal", "constant-correlation"}, default="identity"
        See :func:`shrinkage_target`.
    intensity : {"ledoit-wolf", "oas", "oas-sklearn"} or float, default="ledoit-wolf"
        See :func:`linear_shrink` and :func:`shrinkage_intensity`; a float is
        a fixed ``delta`` in [0, 1].
    assume_centered : bool, default=False
        If False the column means are removed first.

    Returns
    -------
    covariance : ndarray of shape (n_features, n_features)
    intensity : float
        The ``delta`` used.

    See Also
    --------
    rmtclean.estimators.LinearShrink : the estimator.

    Notes
    -----
    One product ``X_c' X_c`` plus O(N T) work for the intensity
    (:func:`shrinkage_intensity`) and O(N^2) for the target and the sum.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import linear_shrink_covariance
    >>> X = np.random.default_rng(0).standard_normal((50, 5))
    >>> cov, delta = linear_shrink_covariance(X, target="diagonal")
    >>> cov.shape, bool(0.0 <= delta <= 1.0)
    ((5, 5), True)
    """
    owner = "linear_shrink_covariance"
    target = check_value(target, [Options(SHRINKAGE_TARGETS)], "target", owner)
    intensity = _check_intensity(intensity, "intensity", owner)
    _check_combination(target, intensity, owner)
    X = check_data(X, "X", owner)
    Xc = _centre(X, assume_centered)
    n = float(X.shape[0])
    S = Xc.T @ Xc
    S /= n
    if isinstance(intensity, str):
        delta = _intensity(Xc, n, target, intensity, frob2=float(np.vdot(S, S)))
    else:
        delta = intensity
    return _combine(S, _target(S, target), delta), delta
