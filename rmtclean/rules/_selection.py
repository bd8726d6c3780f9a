r"""Held-out scores of cleaned spectra, and convex blends fitted on them.

Every rotation-invariant cleaner of a training part shares that part's
sample eigenvectors ``V`` (N x r): it differs from the others only in its
cleaned eigenvalues ``d`` and null value ``c``. What the held-out rows say
about *any* such estimate ``C = D (V diag(d) V' + c (I - V V')) D`` (``D``
the column scales of a standardised fit, else the identity) is summarised
once per fold by a :class:`HeldOutFold`; scoring a candidate then costs
O(r) (log-likelihood) or O(r n_test) (minimum-variance) instead of a new
decomposition. :func:`blend_weights` fits the convex combination of the
candidates' eigenvalues with the best mean held-out score.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import scipy.optimize

__all__ = [
    "HeldOutFold",
    "SCORINGS",
    "blend_weights",
    "heldout_fold",
    "heldout_score",
    "variances_in_basis",
]

#: The built-in held-out scores (greater is better).
SCORINGS = ("loglik", "min-variance", "frobenius")

_LOG_2PI = float(np.log(2.0 * np.pi))


@dataclass(frozen=True, eq=False)
class HeldOutFold:
    r"""Held-out rows projected on a training eigenbasis.

    With ``y_t = D^{-1} (x_t - m)`` the held-out rows whitened by the
    training location ``m`` and column scales ``D``:

    Attributes
    ----------
    variances : ndarray of shape (r,)
        ``o_i = mean_t (u_i' y_t)^2`` along the training eigenvectors.
    null_variance : float
        ``mean_t |y_t|^2 - sum_i o_i``: the held-out variance in the null
        space of ``V`` (0 when ``r = N``).
    n_null : int
        ``N - r``.
    n_features : int
    log_scale : float
        ``sum_j log D_jj`` (0 without scales).
    projections : ndarray of shape (r, n_test) or None
        ``V' y_t`` (kept for the minimum-variance score).
    ones_coef : ndarray of shape (r,) or None
        ``a = V' D^{-1} 1``.
    ones_null : float
        ``|D^{-1} 1|^2 - |a|^2``.
    ones_residual : ndarray of shape (n_test,) or None
        ``(D^{-1} 1)' y_t - a' V' y_t``: the held-out rows in the null space,
        seen by the minimum-variance portfolio.
    test_norm2 : float
        ``||S_test||_F^2`` of ``S_test = mean_t y_t y_t'`` (for the Frobenius
        score).
    """

    variances: np.ndarray
    null_variance: float
    n_null: int
    n_features: int
    log_scale: float = 0.0
    projections: np.ndarray | None = None
    ones_coef: np.ndarray | None = None
    ones_null: float = 0.0
    ones_residual: np.ndarray | None = None
    test_norm2: float = 0.0


def heldout_fold(
    eigenvectors, location, X_test, *, scale=None, scoring: str = "loglik"
) -> HeldOutFold:
    """Summarise held-out rows ``X_test`` in the training eigenbasis.

    Parameters
    ----------
    eigenvectors : ndarray of shape (n_features, r)
        Orthonormal training eigenvectors ``V``.
    location : ndarray of shape (n_features,)
        The training location the held-out rows are centred at.
    X_test : ndarray of shape (n_test, n_features)
        Held-out rows.
    scale : ndarray of shape (n_features,) or None, default=None
        Column scales ``D`` of a standardised (correlation) fit.
    scoring : {"loglik", "min-variance", "frobenius"}, default="loglik"
        The score the summary must serve (``"min-variance"`` keeps the
        projections of every held-out row).

    Returns
    -------
    HeldOutFold

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules._selection import heldout_fold
    >>> V = np.eye(3)[:, :2]
    >>> fold = heldout_fold(V, np.zeros(3), np.array([[1.0, 2.0, 3.0]]))
    >>> fold.variances.tolist(), fold.null_variance, fold.n_null
    ([1.0, 4.0], 9.0, 1)
    """
    V = np.asarray(eigenvectors, dtype=np.float64)
    Y = (np.asarray(X_test, dtype=np.float64) - location).T
    log_scale = 0.0
    if scale is not None:
        Y = Y / scale[:, None]
        log_scale = float(np.sum(np.log(scale)))
    n_features, r = V.shape
    n_test = Y.shape[1]
    Q = V.T @ Y
    variances = np.einsum("ij,ij->i", Q, Q) / n_test
    null_variance = 0.0
    if r < n_features:
        total = float(np.einsum("ij,ij->", Y, Y)) / n_test
        null_variance = max(total - float(variances.sum()), 0.0)
    common = (variances, null_variance, n_features - r, n_features, log_scale)
    if scoring == "frobenius":
        gram = Y.T @ Y
        norm2 = float(np.einsum("ij,ij->", gram, gram)) / n_test**2
        return HeldOutFold(*common, test_norm2=norm2)
    if scoring != "min-variance":
        return HeldOutFold(*common)
    e = np.ones(n_features) if scale is None else 1.0 / scale
    a = V.T @ e
    residual = e @ Y - a @ Q if r < n_features else np.zeros(n_test)
    ones_null = max(float(e @ e - a @ a), 0.0) if r < n_features else 0.0
    return HeldOutFold(
        *common,
        projections=Q,
        ones_coef=a,
        ones_null=ones_null,
        ones_residual=residual,
    )


def _pinv(values: np.ndarray) -> np.ndarray:
    out = np.zeros_like(values, dtype=np.float64)
    pos = values > 0
    out[pos] = 1.0 / values[pos]
    return out


def heldout_score(
    fold: HeldOutFold, values, null_value=None, scoring: str = "loglik"
) -> float:
    r"""Held-out score of cleaned eigenvalues in the fold's training basis.

    Parameters
    ----------
    fold : HeldOutFold
    values : ndarray of shape (r,)
        Cleaned eigenvalues ``d`` paired with the fold's eigenvectors.
    null_value : float or None
        Value ``c`` on the null space (needed when ``fold.n_null > 0``).
    scoring : {"loglik", "min-variance", "frobenius"}, default="loglik"

    Returns
    -------
    float
        ``"loglik"``: the mean Gaussian log-likelihood of the held-out rows,

        .. math:: -\tfrac12\Big[N\log 2\pi + 2\sum_j\log D_{jj}
                  + \sum_i\big(\log d_i + o_i/d_i\big)
                  + (N - r)\log c + o_0/c\Big],

        ``-inf`` if an eigenvalue is not positive (as
        ``SpectralCovariance.score``); ``"min-variance"``: minus the mean
        squared held-out return of the minimum-variance portfolio
        ``h = C^+ 1 / (1' C^+ 1)`` (``C^+`` the pseudo-inverse), as
        :func:`rmtclean.metrics.minimum_variance_scorer`; ``"frobenius"``:
        minus the squared Frobenius distance to the held-out sample
        covariance ``S_test = mean_t y_t y_t'``, normalised by ``N``,

        .. math:: -\tfrac1N\Big[\sum_i\big(d_i^2 - 2 d_i o_i\big)
                  + (N - r) c^2 - 2 c\, o_0 + \|S_{test}\|_F^2\Big],

        whose expectation is minus the Frobenius loss
        :func:`rmtclean.metrics.frobenius_loss` (in the units of ``y``) less
        a term that no estimate changes, when the held-out rows are
        independent of the training rows.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules._selection import heldout_fold, heldout_score
    >>> fold = heldout_fold(np.eye(2), np.zeros(2), np.array([[1.0, 0.0]]))
    >>> round(heldout_score(fold, np.array([1.0, 1.0])), 6)  # N(0, I) at (1, 0)
    -2.337877
    """
    d = np.asarray(values, dtype=np.float64)
    has_null = fold.n_null > 0
    if has_null and null_value is None:
        raise ValueError(
            f"heldout_score needs a null_value: the fold's basis leaves "
            f"{fold.n_null} null directions."
        )
    c = float(null_value) if has_null else 1.0
    if scoring == "loglik":
        if np.any(~(d > 0)) or not c > 0:
            return -np.inf
        quad = float(np.sum(np.log(d) + fold.variances / d))
        if has_null:
            quad += fold.n_null * np.log(c) + fold.null_variance / c
        return -0.5 * (fold.n_features * _LOG_2PI + 2.0 * fold.log_scale + quad)
    if scoring == "frobenius":
        total = float(d @ d - 2.0 * d @ fold.variances) + fold.test_norm2
        if has_null:
            total += fold.n_null * c * c - 2.0 * c * fold.null_variance
        return -total / fold.n_features
    if scoring == "min-variance":
        if fold.projections is None:
            raise ValueError(
                "heldout_score(scoring='min-variance') needs a fold built with "
                "scoring='min-variance'."
            )
        inv = _pinv(d)
        inv_c = _pinv(np.array([c]))[0] if has_null else 0.0
        a = fold.ones_coef
        total = float(a * a @ inv) + inv_c * fold.ones_null
        if not abs(total) > 0:
            return -np.inf
        returns = (a * inv) @ fold.projections + inv_c * fold.ones_residual
        returns = returns / total
        return -float(np.mean(returns * returns))
    raise ValueError(
        f"The 'scoring' argument of heldout_score must be one of {SCORINGS}. "
        f"Got {scoring!r} instead."
    )


def variances_in_basis(eigenvectors, cleaned) -> tuple[np.ndarray, float | None]:
    r"""A cleaned covariance seen in another eigenbasis: its variances there.

    For ``C = W diag(e) W' + c (I - W W')`` (a
    :class:`~rmtclean.spectrum.CleanedSpectrum`, its scales ignored) and an
    orthonormal basis ``V`` (N x r), returns ``d_i = v_i' C v_i`` and, when
    ``r < N``, the mean variance ``(tr C - sum_i d_i) / (N - r)`` on the
    orthogonal complement: the rotation-invariant estimate in the basis
    ``V`` nearest to ``C`` in Frobenius norm.

    Parameters
    ----------
    eigenvectors : ndarray of shape (n_features, r)
    cleaned : CleanedSpectrum

    Returns
    -------
    values : ndarray of shape (r,)
    null_value : float or None

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules._selection import variances_in_basis
    >>> from rmtclean.spectrum import CleanedSpectrum
    >>> C = CleanedSpectrum(np.eye(2), np.array([3.0, 1.0]))
    >>> V = np.array([[1.0], [1.0]]) / np.sqrt(2.0)
    >>> d, c = variances_in_basis(V, C)
    >>> d.tolist(), c
    ([2.0], 2.0)
    """
    V = np.asarray(eigenvectors, dtype=np.float64)
    n_features, r = V.shape
    M = cleaned.eigenvectors.T @ V
    weight = np.einsum("ij,ij->j", M, M)
    values = cleaned.eigenvalues @ (M * M)
    null_c = cleaned.null_value if cleaned.has_null_space else 0.0
    values = values + null_c * np.maximum(1.0 - weight, 0.0)
    if r == n_features:
        return values, None
    trace = float(cleaned.eigenvalues.sum()) + null_c * (
        n_features - cleaned.n_components
    )
    return values, max(trace - float(values.sum()), 0.0) / (n_features - r)


def _combine(weights, values, nulls):
    d = weights @ values
    c = None if nulls is None else float(weights @ nulls)
    return d, c


def blend_weights(
    scorers: Sequence[Callable],
    values: Sequence[np.ndarray],
    null_values: Sequence[np.ndarray | None],
) -> tuple[np.ndarray, float]:
    r"""Convex weights of candidates' eigenvalues with the best held-out score.

    Maximises the mean over folds ``k`` of
    ``scorers[k](w @ values[k], w @ null_values[k])`` over the simplex
    ``w >= 0, sum w = 1`` (the stacking of Wolpert 1992 with Breiman's
    1996 non-negativity and unit sum, here on eigenvalues).

    Parameters
    ----------
    scorers : sequence of callables
        ``scorers[k](d, c) -> float`` scores eigenvalues ``d`` and null value
        ``c`` on fold ``k`` (greater is better; ``-inf`` allowed).
    values : sequence of ndarray of shape (n_candidates, r_k)
        Each candidate's cleaned eigenvalues on fold ``k``.
    null_values : sequence of ndarray of shape (n_candidates,) or None
        Their null values (``None`` for a fold without null space).

    Returns
    -------
    weights : ndarray of shape (n_candidates,)
        Non-negative, summing to one; a vertex (one candidate) when no blend
        scores better.
    score : float
        The mean held-out score of the blend.

    Notes
    -----
    The weights are found by L-BFGS-B on ``w = v / sum(v)``, ``v`` in
    ``[0, 1]^m``, started at the best single candidate and at equal weights;
    the best point met (a vertex included) is returned, so the blend never
    scores below the best candidate on the folds it was fitted on. The
    log-likelihood is not concave in ``w`` (``-log d - o/d`` is concave only
    for ``d < 2 o``), so the optimum is local.

    References
    ----------
    .. [1] D. H. Wolpert, "Stacked generalization", Neural Networks 5(2),
       241-259, 1992.
    .. [2] L. Breiman, "Stacked regressions", Machine Learning 24(1),
       49-64, 1996.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules._selection import blend_weights
    >>> target = np.array([2.0, 1.0])
    >>> def score(d, c):
    ...     return -float(np.sum((d - target) ** 2))
    >>> values = [np.array([[3.0, 1.0], [1.0, 1.0]])]
    >>> w, s = blend_weights([score], values, [None])
    >>> np.round(w, 3).tolist(), bool(abs(s) < 1e-9)
    ([0.5, 0.5], True)
    """
    m = values[0].shape[0]

    def mean_score(weights):
        total = 0.0
        for score, vals, nulls in zip(scorers, values, null_values, strict=True):
            total += score(*_combine(weights, vals, nulls))
        out = total / len(scorers)
        return out if np.isfinite(out) else -np.inf

    vertices = np.eye(m)
    vertex_scores = np.array([mean_score(v) for v in vertices])
    best = int(np.argmax(vertex_scores))
    best_w, best_s = vertices[best], float(vertex_scores[best])
    if m == 1:
        return best_w, best_s
    # A finite stand-in for -inf keeps the line search defined; it is worse
    # than any point met, so the search backs off.
    floor = -abs(best_s) * 10.0 - 1e6 if np.isfinite(best_s) else -1e300

    def loss(v):
        s = v.sum()
        w = v / s if s > 0 else np.full(m, 1.0 / m)
        out = mean_score(w)
        return -(out if np.isfinite(out) else floor)

    starts = [vertices[best], np.full(m, 1.0 / m)]
    for start in starts:
        res = scipy.optimize.minimize(
            loss, start, method="L-BFGS-B", bounds=[(0.0, 1.0)] * m
        )
        v = np.clip(res.x, 0.0, 1.0)
        if v.sum() <= 0:
            continue
        w = v / v.sum()
        s = mean_score(w)
        if s > best_s:
            best_w, best_s = w, s
    return best_w, best_s
