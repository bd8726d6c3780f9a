"""Observation weights: exponential decay and Kish's effective sample size.

Rows are observations in time order, oldest first. With exponential weights
of half-life ``h`` the newest row has weight 1 and a row ``h`` rows older
weight 1/2. Weighted rows carry less information than as many equal ones;
Kish's effective sample size says how many equal rows they are worth, and
it is what rmtclean's estimators hand to the rules as the sample size.
"""

from __future__ import annotations

import numpy as np

from rmtclean._validation import POSITIVE_FINITE, Interval, check_value

__all__ = [
    "effective_sample_size",
    "exponential_weights",
    "half_life_weights",
    "kish_weights",
]


def _check_weights(weights, func: str) -> np.ndarray:
    w = np.asarray(weights, dtype=np.float64)
    if w.ndim != 1 or w.size == 0:
        raise ValueError(
            f"The 'weights' argument of {func} must be a non-empty 1-D array. "
            f"Got shape {w.shape} instead."
        )
    if not np.all(np.isfinite(w)) or np.any(w < 0):
        raise ValueError(
            f"The 'weights' argument of {func} must be finite and non-negative. "
            f"Got a minimum of {float(np.nanmin(w))!r}."
        )
    if not w.sum() > 0:
        raise ValueError(f"The 'weights' argument of {func} sums to zero.")
    return w


def exponential_weights(n_samples: int, half_life: float) -> np.ndarray:
    r"""Exponentially decaying weights, newest (last) row weight 1.

    Parameters
    ----------
    n_samples : int
        Number of rows ``T`` (in time order, oldest first).
    half_life : float
        Number of rows after which a weight halves; positive.

    Returns
    -------
    weights : ndarray of shape (n_samples,)
        :math:`w_t = 2^{-(T - 1 - t)/h}`, ``t = 0, ..., T-1``.

    See Also
    --------
    effective_sample_size : Kish's effective number of rows of these weights.

    Notes
    -----
    With :math:`\lambda = 2^{-1/h}` the weights are :math:`\lambda^{T-1-t}`,
    the usual decay factor of exponentially weighted moving averages
    (RiskMetrics' ``lambda = 0.94`` is a half-life of about 11.2 days).

    Examples
    --------
    >>> from rmtclean.weights import exponential_weights
    >>> exponential_weights(5, half_life=2.0).round(4).tolist()
    [0.25, 0.3536, 0.5, 0.7071, 1.0]
    """
    func = "exponential_weights"
    check_value(n_samples, [Interval(int, 1, None)], "n_samples", func)
    check_value(half_life, [POSITIVE_FINITE], "half_life", func)
    age = np.arange(n_samples - 1, -1, -1, dtype=np.float64)
    return np.exp2(-age / float(half_life))


def effective_sample_size(weights) -> float:
    r"""Kish's effective sample size :math:`(\sum w)^2 / \sum w^2`.

    Parameters
    ----------
    weights : array-like of shape (n_samples,)
        Non-negative weights, not all zero.

    Returns
    -------
    n_eff : float
        Between 1 and the number of positive weights; equal to the latter
        only for equal weights.

    Notes
    -----
    It is the number of equally weighted rows whose mean has the same
    variance as the weighted mean of these rows [1]_. For exponential
    weights with :math:`\lambda = 2^{-1/h}` it has the closed form

    .. math::

        n_\mathrm{eff} = \frac{1 + \lambda}{1 - \lambda}
                         \frac{1 - \lambda^T}{1 + \lambda^T}
        \to \frac{1 + \lambda}{1 - \lambda} \quad (T \to \infty).

    References
    ----------
    .. [1] L. Kish, *Survey Sampling*, Wiley, New York, 1965.

    Examples
    --------
    >>> from rmtclean.weights import effective_sample_size, exponential_weights
    >>> effective_sample_size([1.0, 1.0, 1.0, 1.0])
    4.0
    >>> round(effective_sample_size(exponential_weights(10_000, 60.0)), 2)
    173.13
    """
    w = _check_weights(weights, "effective_sample_size")
    total = w.sum()
    return float(total * total / np.dot(w, w))


def kish_weights(weights, sample_weight=None) -> np.ndarray:
    r"""Rescale weights so that they sum to the Kish effective sample size.

    Used by the estimators with ``half_life``: the decay weights ``a`` (and
    frequency weights ``f``, if any) become ``w = c f a`` with ``c`` chosen
    so that ``sum(w)`` equals :math:`n_\mathrm{eff} = (\sum f a)^2 /
    \sum f a^2`. Read as frequency weights they then give ``n_eff - 1``
    degrees of freedom, and the sample covariance

    .. math::

        S = \frac{\sum_t w_t (x_t - m)(x_t - m)'}{n_\mathrm{eff} - 1}
          = \frac{\sum_t f_t a_t (x_t - m)(x_t - m)'}{V_1 - V_2 / V_1},
        \quad V_1 = \sum f a,\ V_2 = \sum f a^2,

    is the unbiased estimator with reliability weights ``a`` on rows
    repeated ``f`` times (``numpy.cov(..., fweights=f, aweights=a)``).

    Parameters
    ----------
    weights : array-like of shape (n_samples,)
        Reliability (e.g. decay) weights ``a``.
    sample_weight : array-like of shape (n_samples,), default=None
        Frequency weights ``f``; ``None`` means all one.

    Returns
    -------
    weights : ndarray of shape (n_samples,)
        ``c f a``, summing to the Kish effective sample size.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.weights import kish_weights
    >>> w = kish_weights([1.0, 2.0, 3.0])
    >>> round(float(w.sum()), 6), round(36 / 14, 6)
    (2.571429, 2.571429)
    """
    a = _check_weights(weights, "kish_weights")
    if sample_weight is None:
        return a * (np.sum(a) / np.dot(a, a))
    f = _check_weights(sample_weight, "kish_weights")
    if f.shape != a.shape:
        raise ValueError(
            "The 'sample_weight' argument of kish_weights must have shape "
            f"{a.shape} like 'weights'. Got {f.shape} instead."
        )
    fa = f * a
    v1, v2 = np.sum(fa), np.dot(fa, a)
    if not v2 > 0:
        raise ValueError(
            "The product of 'weights' and 'sample_weight' of kish_weights sums to zero."
        )
    return fa * (v1 / v2)


def half_life_weights(n_samples: int, half_life: float, sample_weight=None):
    """The row weights of ``half_life``: exponential decay, at Kish's scale.

    The one rule of the estimators' ``half_life`` and of the ``rmtclean``
    command's ``--half-life``: :func:`exponential_weights` rescaled by
    :func:`kish_weights` (with the frequency weights ``sample_weight``, if
    any), so that read as frequency weights they give Kish's effective
    sample size less one degrees of freedom.

    Parameters
    ----------
    n_samples : int
        Number of rows, oldest first.
    half_life : float
        Rows over which a weight halves.
    sample_weight : array-like of shape (n_samples,), default=None
        Frequency weights.

    Returns
    -------
    weights : ndarray of shape (n_samples,)

    Examples
    --------
    >>> from rmtclean.weights import effective_sample_size, half_life_weights
    >>> w = half_life_weights(500, 60.0)
    >>> round(float(w.sum()), 6) == round(effective_sample_size(w), 6)
    True
    """
    return kish_weights(exponential_weights(n_samples, half_life), sample_weight)
