"""Losses, the finite-sample oracle, PRIAL and model-selection scorers.

Every loss takes ``(estimate, truth)`` in that order, both dense
``(n_features, n_features)`` symmetric arrays, and is normalised by the
dimension ``p = n_features`` as in Ledoit & Wolf's papers, so that values are
comparable across dimensions.
"""

from __future__ import annotations

import numpy as np
import scipy.linalg

from rmtclean._data import check_data
from rmtclean._validation import check_finite, numeric_array

__all__ = [
    "TERMS",
    "frobenius_loss",
    "gaussian_log_likelihood",
    "minimum_variance_loss",
    "minimum_variance_scorer",
    "oracle_covariance",
    "prial",
    "stein_loss",
]

_ORACLE_LOSSES = ("frobenius", "stein")

#: One line per word that tables, reports and figures print beside scores
#: (the demo, ``rmtclean bench``): the same words, the same meaning.
TERMS = {
    "oracle": "oracle: the sample eigenvectors with the true variances along "
    "them, U diag(u_i' Sigma u_i) U'; the best any cleaner that keeps the "
    "sample eigenvectors can do (it needs the truth: a bound, not an estimator)",
    "sample": "sample: the sample covariance (divisor T - 1), i.e. no cleaning",
    "sk.": "sk.*: scikit-learn's estimators of that name, as baselines",
    "PRIAL": "PRIAL: percentage relative improvement in average loss; 0% is "
    "the sample covariance, 100% the oracle, below 0% worse than no cleaning",
    "loss ratio": "loss ratio: a cleaner's loss divided by the sample "
    "covariance's; below 1 is closer to the truth than no cleaning",
}


# --------------------------------------------------------------------- checks
def _check_square(a, name: str, func: str) -> np.ndarray:
    a = numeric_array(a, name, func)
    if a.ndim != 2 or a.shape[0] != a.shape[1] or a.shape[0] == 0:
        raise ValueError(
            f"The '{name}' argument of {func} must be a non-empty square 2-D "
            f"array. Got shape {a.shape} instead."
        )
    check_finite(a, name, func)
    scale = max(np.max(np.abs(a)), np.finfo(np.float64).tiny)
    asym = np.max(np.abs(a - a.T))
    if asym > 1e-10 * scale:
        raise ValueError(
            f"The '{name}' argument of {func} must be symmetric. Got a maximum "
            f"asymmetry |a - a.T| of {asym:.3g} instead."
        )
    return a


def _check_pair(estimate, truth, func: str) -> tuple[np.ndarray, np.ndarray]:
    estimate = _check_square(estimate, "estimate", func)
    truth = _check_square(truth, "truth", func)
    if estimate.shape != truth.shape:
        raise ValueError(
            f"The 'estimate' and 'truth' arguments of {func} must have the same "
            f"shape. Got {estimate.shape} and {truth.shape} instead."
        )
    return estimate, truth


def _cholesky(a: np.ndarray, name: str, func: str) -> np.ndarray:
    try:
        return scipy.linalg.cholesky(a, lower=True)
    except np.linalg.LinAlgError:
        raise ValueError(
            f"The '{name}' argument of {func} must be positive definite."
        ) from None


# --------------------------------------------------------------------- losses
def frobenius_loss(estimate, truth) -> float:
    r"""Squared Frobenius loss normalised by the dimension.

    Parameters
    ----------
    estimate : array-like of shape (n_features, n_features)
        Estimated covariance matrix :math:`\hat\Sigma`.
    truth : array-like of shape (n_features, n_features)
        Population covariance matrix :math:`\Sigma`.

    Returns
    -------
    loss : float
        :math:`\operatorname{tr}((\hat\Sigma - \Sigma)^2) / p`.

    See Also
    --------
    stein_loss, minimum_variance_loss

    Notes
    -----
    This is Ledoit & Wolf's normalisation of the Frobenius norm and equals
    ``sklearn.covariance.EmpiricalCovariance.error_norm`` with its defaults.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.metrics import frobenius_loss
    >>> frobenius_loss(np.diag([2.0, 1.0]), np.eye(2))
    0.5
    """
    estimate, truth = _check_pair(estimate, truth, "frobenius_loss")
    diff = estimate - truth
    return float(np.sum(diff * diff) / truth.shape[0])


def stein_loss(estimate, truth) -> float:
    r"""Stein's loss normalised by the dimension.

    Parameters
    ----------
    estimate : array-like of shape (n_features, n_features)
        Estimated covariance matrix :math:`\hat\Sigma`, positive
        semi-definite. A singular estimate has infinite loss.
    truth : array-like of shape (n_features, n_features)
        Population covariance matrix :math:`\Sigma`, positive definite.

    Returns
    -------
    loss : float
        :math:`\operatorname{tr}(\Sigma^{-1}\hat\Sigma)/p
        - \log\det(\Sigma^{-1}\hat\Sigma)/p - 1 \ge 0`, zero only at
        :math:`\hat\Sigma = \Sigma`; ``inf`` when ``estimate`` is singular.

    Raises
    ------
    ValueError
        If ``truth`` is not positive definite or ``estimate`` has a negative
        eigenvalue.

    Notes
    -----
    The normalisation is that of Ledoit & Wolf (2018) [1]_ (Donoho, Gavish &
    Johnstone use the same expression without the :math:`1/p`). It is
    computed from the eigenvalues :math:`\mu_i` of
    :math:`L^{-1}\hat\Sigma L^{-\top}` with :math:`\Sigma = LL^\top`, as
    :math:`\frac1p\sum_i(\mu_i - \log\mu_i - 1)`.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Optimal estimation of a large-dimensional
       covariance matrix under Stein's loss", Bernoulli 24(4B), 2018.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.metrics import stein_loss
    >>> round(stein_loss(np.diag([np.e, 1.0]), np.eye(2)), 6)
    0.359141
    """
    estimate, truth = _check_pair(estimate, truth, "stein_loss")
    lower = _cholesky(truth, "truth", "stein_loss")
    half = scipy.linalg.solve_triangular(lower, estimate, lower=True)
    whitened = scipy.linalg.solve_triangular(lower, half.T, lower=True)
    mu = np.linalg.eigvalsh((whitened + whitened.T) / 2)
    p = truth.shape[0]
    tol = p * np.finfo(np.float64).eps * max(abs(mu[-1]), 1.0)
    if mu[0] < -tol:
        raise ValueError(
            "The 'estimate' argument of stein_loss must be positive "
            f"semi-definite. Got an eigenvalue {mu[0]:.3g} of "
            "truth^-1 estimate instead."
        )
    if mu[0] <= tol:
        return float("inf")
    return float(np.sum(mu - np.log(mu) - 1.0) / p)


def minimum_variance_loss(estimate, truth) -> float:
    r"""Minimum-variance loss of Ledoit & Wolf (2017).

    Parameters
    ----------
    estimate : array-like of shape (n_features, n_features)
        Estimated covariance matrix :math:`E`, positive definite.
    truth : array-like of shape (n_features, n_features)
        Population covariance matrix :math:`\Sigma`, positive definite.

    Returns
    -------
    loss : float
        .. math::

            \frac{\operatorname{tr}(E^{-1}\Sigma E^{-1})/p}
                 {(\operatorname{tr}(E^{-1})/p)^2}
            - \frac{1}{\operatorname{tr}(\Sigma^{-1})/p} \ge 0.

    Notes
    -----
    The first term is the true variance of the global minimum-variance
    portfolio built from :math:`E` (with the vector of ones replaced by a
    random direction and averaged, as in [1]_), the second its lowest
    possible value, reached when :math:`E` is proportional to
    :math:`\Sigma`. The loss is invariant to rescaling ``estimate``; by
    Cauchy-Schwarz it is non-negative.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Nonlinear shrinkage of the covariance
       matrix for portfolio selection: Markowitz meets Goldilocks", Review of
       Financial Studies 30(12), 4349-4388, 2017.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.metrics import minimum_variance_loss
    >>> round(minimum_variance_loss(np.eye(2), np.diag([1.0, 3.0])), 6)
    0.5
    """
    estimate, truth = _check_pair(estimate, truth, "minimum_variance_loss")
    p = truth.shape[0]
    identity = np.eye(p)
    est_inv = scipy.linalg.cho_solve(
        (_cholesky(estimate, "estimate", "minimum_variance_loss"), True), identity
    )
    truth_inv = scipy.linalg.cho_solve(
        (_cholesky(truth, "truth", "minimum_variance_loss"), True), identity
    )
    numerator = np.sum((est_inv @ truth) * est_inv) / p
    return float(
        numerator / (np.trace(est_inv) / p) ** 2 - 1.0 / (np.trace(truth_inv) / p)
    )


def gaussian_log_likelihood(X_test, covariance, location=None) -> float:
    r"""Mean Gaussian log-density of held-out samples.

    Parameters
    ----------
    X_test : array-like of shape (n_samples, n_features)
        Held-out samples.
    covariance : array-like of shape (n_features, n_features)
        Covariance of the Gaussian model, positive definite.
    location : array-like of shape (n_features,), default=None
        Mean of the Gaussian model; ``None`` means zero.

    Returns
    -------
    log_likelihood : float
        :math:`\frac1n\sum_t \log\phi(x_t; \mu, C)` with :math:`\phi` the
        multivariate normal density.

    Notes
    -----
    Equal to ``scipy.stats.multivariate_normal(location, covariance)
    .logpdf(X_test).mean()`` and, with ``location`` set to an estimator's
    ``location_``, to scikit-learn's ``EmpiricalCovariance.score`` for a
    positive definite ``covariance_``.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.metrics import gaussian_log_likelihood
    >>> round(gaussian_log_likelihood(np.zeros((1, 1)), np.eye(1)), 6)
    -0.918939
    """
    func = "gaussian_log_likelihood"
    X_test = check_data(X_test, "X_test", func, min_samples=1)
    covariance = _check_square(covariance, "covariance", func)
    n_features = X_test.shape[1]
    if covariance.shape[0] != n_features:
        raise ValueError(
            f"The 'covariance' argument of {func} must have shape "
            f"({n_features}, {n_features}) to match X_test. Got "
            f"{covariance.shape} instead."
        )
    if location is None:
        centred = X_test
    else:
        location = np.asarray(location, dtype=np.float64)
        if location.shape != (n_features,):
            raise ValueError(
                f"The 'location' argument of {func} must have shape "
                f"({n_features},). Got {location.shape} instead."
            )
        centred = X_test - location
    lower = _cholesky(covariance, "covariance", func)
    white = scipy.linalg.solve_triangular(lower, centred.T, lower=True)
    logdet = 2.0 * np.sum(np.log(np.diag(lower)))
    mahalanobis = np.sum(white * white) / X_test.shape[0]
    return float(-0.5 * (n_features * np.log(2 * np.pi) + logdet + mahalanobis))


# --------------------------------------------------------------------- oracle
def _oracle_eigenvalues(
    eigenvectors: np.ndarray, truth: np.ndarray, loss: str
) -> tuple[np.ndarray, float | None]:
    """Oracle values on the columns of ``eigenvectors`` and the null space."""
    n_features, n_components = eigenvectors.shape
    if loss == "frobenius":
        quad = np.einsum("ij,ij->j", eigenvectors, truth @ eigenvectors)
        values = quad
        total = np.trace(truth)
    else:
        lower = scipy.linalg.cholesky(truth, lower=True)
        truth_inv = scipy.linalg.cho_solve((lower, True), np.eye(n_features))
        quad = np.einsum("ij,ij->j", eigenvectors, truth_inv @ eigenvectors)
        values = 1.0 / quad
        total = np.trace(truth_inv)
    if n_components == n_features:
        return values, None
    # The null space is one block with one common value, so the result does
    # not depend on the (arbitrary) basis a solver picks for it.
    null_mean = (total - np.sum(quad)) / (n_features - n_components)
    null_value = null_mean if loss == "frobenius" else 1.0 / null_mean
    return values, float(null_value)


def oracle_covariance(
    X,
    true_covariance,
    *,
    assume_centered: bool = False,
    loss: str = "frobenius",
    return_eigenvalues: bool = False,
):
    r"""Finite-sample optimal rotation-equivariant covariance (the oracle).

    Keeps the sample eigenvectors and gives each the eigenvalue that
    minimises the loss against the known truth; no estimator of that form
    can do better, so it is the 100% mark of :func:`prial`.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Data.
    true_covariance : array-like of shape (n_features, n_features)
        Population covariance :math:`\Sigma`, symmetric (positive definite
        for ``loss="stein"``).
    assume_centered : bool, default=False
        If False, the sample covariance is that of the demeaned data with
        divisor ``n_samples - 1``; if True, ``X'X / n_samples``.
    loss : {"frobenius", "stein"}, default="frobenius"
        ``"frobenius"``: :math:`d_i = u_i'\Sigma u_i`, optimal for the
        Frobenius and the minimum-variance losses. ``"stein"``:
        :math:`d_i = 1/(u_i'\Sigma^{-1}u_i)`, optimal for Stein's loss.
    return_eigenvalues : bool, default=False
        Also return the oracle eigenvalues.

    Returns
    -------
    covariance : ndarray of shape (n_features, n_features)
        :math:`U\operatorname{diag}(d)U'`.
    eigenvalues : ndarray of shape (n_features,)
        Only if ``return_eigenvalues``. The :math:`d_i`, in the order of the
        sample eigenvalues (descending); they need not be sorted themselves.

    Notes
    -----
    :math:`U` holds the eigenvectors of the sample covariance. When the
    sample covariance has rank :math:`r = \min(p, \text{dof}) < p`
    (dof = ``n_samples - 1``, or ``n_samples`` if ``assume_centered``), its
    null space has no preferred basis; as everywhere in rmtclean it gets one
    common value, the optimum over that block:
    :math:`\operatorname{tr}(P_0\Sigma)/(p - r)` (Frobenius) or
    :math:`(p - r)/\operatorname{tr}(P_0\Sigma^{-1})` (Stein), with
    :math:`P_0` the projector on the null space. The last ``p - r``
    eigenvalues returned are then all equal to it.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Nonlinear shrinkage estimation of
       large-dimensional covariance matrices", Annals of Statistics 40(2),
       1024-1060, 2012.
    .. [2] O. Ledoit and M. Wolf, "Optimal estimation of a large-dimensional
       covariance matrix under Stein's loss", Bernoulli 24(4B), 2018.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.metrics import oracle_covariance
    >>> X = np.random.default_rng(0).standard_normal((50, 3))
    >>> oracle = oracle_covariance(X, np.eye(3))
    >>> bool(np.allclose(oracle, np.eye(3)))
    True
    """
    func = "oracle_covariance"
    X = check_data(X, "X", func, min_samples=1)
    truth = _check_square(true_covariance, "true_covariance", func)
    n_samples, n_features = X.shape
    if truth.shape[0] != n_features:
        raise ValueError(
            f"The 'true_covariance' argument of {func} must have shape "
            f"({n_features}, {n_features}) to match X. Got {truth.shape} instead."
        )
    if loss not in _ORACLE_LOSSES:
        raise ValueError(
            f"The 'loss' parameter of {func} must be one of {_ORACLE_LOSSES}. "
            f"Got {loss!r} instead."
        )
    dof = n_samples if assume_centered else n_samples - 1
    if dof < 1:
        raise ValueError(
            f"The 'X' argument of {func} needs at least 2 samples unless "
            f"assume_centered=True. Got {n_samples} instead."
        )
    if loss == "stein":
        _cholesky(truth, "true_covariance", func)
    centred = X if assume_centered else X - X.mean(axis=0)
    sample = centred.T @ centred / dof
    eigenvalues, eigenvectors = np.linalg.eigh(sample)
    n_components = min(n_features, dof)
    basis = eigenvectors[:, ::-1][:, :n_components]
    values, null_value = _oracle_eigenvalues(basis, truth, loss)
    covariance = (basis * values) @ basis.T
    if null_value is not None:
        covariance += null_value * (np.eye(n_features) - basis @ basis.T)
        values = np.concatenate(
            [values, np.full(n_features - n_components, null_value)]
        )
    covariance = (covariance + covariance.T) / 2
    if return_eigenvalues:
        return covariance, values
    return covariance


# ---------------------------------------------------------------------- PRIAL
def prial(losses_estimator, losses_sample, losses_oracle) -> float:
    r"""Percentage relative improvement in average loss (PRIAL).

    Parameters
    ----------
    losses_estimator : array-like of shape (n_repetitions,)
        Loss of the estimator in each repetition.
    losses_sample : array-like of shape (n_repetitions,)
        Loss of the sample covariance in the same repetitions.
    losses_oracle : array-like of shape (n_repetitions,)
        Loss of the oracle (:func:`oracle_covariance`) in the same
        repetitions.

    Returns
    -------
    prial : float
        In percent: 0 for the sample covariance, 100 for the oracle;
        negative when the estimator is worse than the sample covariance.

    Notes
    -----
    .. math::

        \mathrm{PRIAL} = 100\,\frac{\bar L_S - \bar L_{\hat\Sigma}}
                              {\bar L_S - \bar L_{S^*}}

    with bars the averages over repetitions, taken separately in numerator
    and denominator (an estimate of the ratio of expectations [1]_), not an
    average of per-repetition ratios.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Nonlinear shrinkage estimation of
       large-dimensional covariance matrices", Annals of Statistics 40(2),
       1024-1060, 2012.

    Examples
    --------
    >>> from rmtclean.metrics import prial
    >>> prial([2.0, 4.0], [5.0, 7.0], [1.0, 3.0])
    75.0
    """
    arrays = []
    for name, value in (
        ("losses_estimator", losses_estimator),
        ("losses_sample", losses_sample),
        ("losses_oracle", losses_oracle),
    ):
        arr = np.atleast_1d(np.asarray(value, dtype=np.float64))
        if arr.ndim != 1 or arr.size == 0:
            raise ValueError(
                f"The '{name}' argument of prial must be a non-empty 1-D array "
                f"of losses. Got shape {np.shape(value)} instead."
            )
        check_finite(arr, name, "prial")
        arrays.append(arr)
    if len({arr.shape for arr in arrays}) != 1:
        raise ValueError(
            "The loss arrays given to prial must have the same length (one "
            f"value per repetition). Got lengths {[a.size for a in arrays]}."
        )
    est, sample, oracle = (float(np.mean(arr)) for arr in arrays)
    gap = sample - oracle
    if not gap > 0:
        raise ValueError(
            "prial needs the mean loss of the sample covariance to exceed that "
            f"of the oracle. Got {sample!r} and {oracle!r} instead."
        )
    return 100.0 * (sample - est) / gap


# -------------------------------------------------------------------- scorers
def minimum_variance_scorer(estimator, X_test, y=None) -> float:
    r"""Scorer: minus the realised variance of the minimum-variance portfolio.

    For ``sklearn.model_selection`` (``GridSearchCV(..., scoring=
    minimum_variance_scorer)``): greater is better.

    Parameters
    ----------
    estimator : fitted covariance estimator
        Anything with a ``covariance_`` attribute (and optionally
        ``location_``); an rmtclean estimator fitted with
        ``store_covariance=False`` is served by its ``spectrum_``.
    X_test : array-like of shape (n_samples, n_features)
        Held-out returns.
    y : None
        Ignored.

    Returns
    -------
    score : float
        :math:`-\frac1n\sum_t (w'(x_t - \mu))^2` with
        :math:`w = P\mathbf 1/(\mathbf 1'P\mathbf 1)`, :math:`P` the
        pseudo-inverse of ``covariance_`` and :math:`\mu` the estimator's
        ``location_`` (zero if it has none).

    Notes
    -----
    The test returns are centred at the fitted ``location_``, as in
    ``EmpiricalCovariance.score``, so both scorers judge the fitted model on
    the same footing. The pseudo-inverse equals the inverse for a positive
    definite ``covariance_`` and matches scikit-learn's ``precision_`` for a
    singular one.

    Examples
    --------
    >>> import numpy as np
    >>> from sklearn.covariance import EmpiricalCovariance
    >>> from rmtclean.metrics import minimum_variance_scorer
    >>> X = np.random.default_rng(0).standard_normal((200, 4))
    >>> est = EmpiricalCovariance().fit(X[:100])
    >>> bool(minimum_variance_scorer(est, X[100:]) < 0)
    True
    """
    func = "minimum_variance_scorer"
    covariance = getattr(estimator, "covariance_", None)
    spectrum = getattr(estimator, "spectrum_", None)
    if covariance is None and not hasattr(spectrum, "solve"):
        raise TypeError(
            f"The 'estimator' argument of {func} must be a fitted covariance "
            "estimator with a 'covariance_' attribute (or an rmtclean "
            f"'spectrum_'). Got {type(estimator).__name__} instead."
        )
    if covariance is not None:
        covariance = _check_square(covariance, "covariance_", func)
        n_features = covariance.shape[0]
    else:
        n_features = spectrum.n_features
    X_test = check_data(X_test, "X_test", func, min_samples=1)
    if X_test.shape[1] != n_features:
        raise ValueError(
            f"The 'X_test' argument of {func} must have {n_features} features "
            f"to match the estimator. Got {X_test.shape[1]} instead."
        )
    location = getattr(estimator, "location_", None)
    centred = X_test if location is None else X_test - np.asarray(location)
    ones = np.ones(n_features)
    if covariance is not None:
        weights = scipy.linalg.pinvh(covariance) @ ones
    else:  # rmtclean fit with store_covariance=False: no N x N matrix
        weights = np.asarray(spectrum.solve(ones[:, None])).ravel()
    total = np.sum(weights)
    if not abs(total) > 0:
        raise ValueError(
            f"{func} cannot build a minimum-variance portfolio: the estimator's "
            "precision sums to zero."
        )
    returns = centred @ (weights / total)
    return -float(np.mean(returns * returns))
