r"""Causal exponentially weighted volatilities, to devolatilise return series.

Daily returns change volatility over time; a covariance estimated over a
window mixes calm and turbulent days. :func:`ewma_volatility` divides each
series by its exponentially weighted moving average (EWMA) volatility,
computed from earlier rows only, and forecasts the volatility of the next
row. The estimators' ``vol_half_life`` parameter cleans the correlation of
the scaled series and scales it back by that forecast (the devolatilised
correlation of Engle, Ledoit & Wolf 2019, with an EWMA in place of their
univariate GARCH models).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.signal

from rmtclean._validation import Interval, check_value

__all__ = ["VOL_SEED_ROWS", "EwmaVolatility", "devolatilise", "ewma_volatility"]

#: The EWMA recursion starts from the mean square of this many first rows
#: (fewer when the data have fewer rows): about a trading month of days.
VOL_SEED_ROWS = 20


@dataclass(frozen=True)
class EwmaVolatility:
    """Volatilities of each row and the forecast for the next row.

    Attributes
    ----------
    volatility : ndarray of shape (n_samples, n_features)
        ``sigma_t``: the volatility row ``t`` is divided by, from rows
        ``0, ..., t - 1`` and the seed.
    forecast : ndarray of shape (n_features,)
        ``sigma_T``: the volatility forecast for the row after the last.
    seed_rows : int
        Number of first rows whose mean square starts the recursion.
    decay : float
        ``lambda = 2 ** (-1 / half_life)``.
    """

    volatility: np.ndarray
    forecast: np.ndarray
    seed_rows: int
    decay: float

    def scaled(self, X) -> np.ndarray:
        """``X / volatility`` (a new array)."""
        return np.asarray(X, dtype=np.float64) / self.volatility


def ewma_volatility(
    X,
    half_life: float,
    *,
    location=None,
    feature_names=None,
    owner: str = "ewma_volatility",
) -> EwmaVolatility:
    r"""Causal EWMA volatility of each column of ``X`` (rows in time order).

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Finite data, oldest row first.
    half_life : float
        Half-life of the weights in rows; positive. RiskMetrics' daily decay
        ``lambda = 0.94`` is a half-life of ``log(0.5) / log(0.94) = 11.2``.
    location : array_like of shape (n_features,), optional
        Subtracted from ``X`` before squaring (the column means, when the
        data are not centred); zeros by default, as for returns.
    feature_names : sequence of str, optional
        Column names for the error message.
    owner : str, default="ewma_volatility"
        The caller, named in error messages.

    Returns
    -------
    EwmaVolatility

    Raises
    ------
    ValueError
        When a column is constant over the seed rows (no volatility to
        start from); the message names the column.

    Notes
    -----
    With ``r_t = x_t - location``, ``lambda = 2^{-1/h}`` and
    ``m = min(T, VOL_SEED_ROWS)`` seed rows:

    .. math::

        \sigma_0^2 = \frac1m \sum_{t<m} r_t^2, \qquad
        \sigma_t^2 = \lambda \sigma_{t-1}^2 + (1 - \lambda) r_{t-1}^2
        \quad (1 \le t \le T).

    Row ``t`` is scaled by ``sigma_t``, which uses rows before ``t`` only,
    except that the seed ``sigma_0^2`` averages the first ``m`` rows (the
    one look-ahead, confined to them). ``sigma_T`` is the forecast. This is
    the RiskMetrics (1996) exponentially weighted variance with a zero mean
    (common practice).

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.volatility import ewma_volatility
    >>> rng = np.random.default_rng(0)
    >>> level = np.r_[np.ones(250), 3 * np.ones(250)][:, None]
    >>> X = rng.standard_normal((500, 3)) * level
    >>> vol = ewma_volatility(X, 11.2)
    >>> bool(np.all((vol.forecast > 2) & (vol.forecast < 4)))
    True
    >>> bool(abs(vol.scaled(X)[300:].std() - 1) < 0.1)
    True
    """
    check_value(
        half_life, [Interval(float, 0.0, None, closed="neither")], "half_life", owner
    )
    R = np.asarray(X, dtype=np.float64)
    if location is not None:
        R = R - np.asarray(location, dtype=np.float64)
    n_rows, n_features = R.shape
    m = min(n_rows, VOL_SEED_ROWS)
    # Squares of rows scaled by a power of two near the column's largest
    # magnitude (exact, so the result does not depend on it): no overflow or
    # underflow whatever the units; the scale comes back at the end.
    top = np.max(np.abs(R), axis=0)
    unit = np.ldexp(1.0, np.frexp(np.where(top > 0, top, 1.0))[1])
    sq = np.square(R / unit)
    seed = sq[:m].mean(axis=0)
    # A series constant over the seed rows (a security not yet trading, say)
    # has no volatility to start from, whatever its level or the mean.
    bad = np.flatnonzero(~(seed > 0) | (np.ptp(R[:m], axis=0) == 0))
    if bad.size:
        j = int(bad[0])
        name = f"{feature_names[j]!r} (index {j})" if feature_names is not None else j
        raise ValueError(
            f"{owner}: vol_half_life needs every column to vary over the first "
            f"{m} rows (the seed of its volatility), but column {name} is "
            f"constant there: zero volatility ({bad.size} column(s) in all)."
        )
    decay = 2.0 ** (-1.0 / float(half_life))
    # v_t = decay v_{t-1} + (1 - decay) sq_t with v_{-1} = seed: the variance
    # after row t, i.e. the forecast for row t + 1.
    after, _ = scipy.signal.lfilter(
        [1.0 - decay], [1.0, -decay], sq, axis=0, zi=(decay * seed)[None, :]
    )
    var = np.empty_like(sq)
    var[0] = seed
    var[1:] = after[:-1]
    volatility = np.sqrt(var) * unit
    forecast = np.sqrt(after[-1]) * unit
    return EwmaVolatility(volatility, forecast, m, decay)


def devolatilise(
    X,
    half_life: float,
    *,
    sample_weight=None,
    assume_centered: bool = False,
    feature_names=None,
    owner: str = "devolatilise",
) -> tuple[np.ndarray, np.ndarray, EwmaVolatility]:
    """The demeaned rows over their causal EWMA volatility.

    What the estimators' ``vol_half_life`` cleans (the correlation of these
    rows) and ``rmtclean analyze --vol-half-life`` analyses.

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Finite data, oldest row first.
    half_life : float
        Half-life of the EWMA weights in rows (see :func:`ewma_volatility`).
    sample_weight : array_like of shape (n_samples,), optional
        Non-negative row weights of the column means.
    assume_centered : bool, default=False
        Take zero means instead of the (weighted) column means.
    feature_names, owner
        As in :func:`ewma_volatility`; ``owner`` defaults to
        ``"devolatilise"``.

    Returns
    -------
    scaled : ndarray of shape (n_samples, n_features)
        ``(X - location) / volatility``.
    location : ndarray of shape (n_features,)
        The means subtracted.
    volatility : EwmaVolatility
        The volatilities and the forecast for the next row.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.volatility import devolatilise
    >>> X = np.random.default_rng(0).standard_normal((250, 3)) * [1.0, 2.0, 5.0]
    >>> scaled, location, vol = devolatilise(X, 42.0)
    >>> np.round(vol.forecast, 1)  # the columns' scales, forecast
    array([0.9, 2. , 5. ])
    >>> bool(np.all(np.abs(scaled.std(axis=0) - 1.0) < 0.15))
    True
    """
    X = np.asarray(X, dtype=np.float64)
    location = np.zeros(X.shape[1])
    if not assume_centered:
        total = X.shape[0] if sample_weight is None else np.sum(sample_weight)
        if total > 0:
            location = np.average(X, axis=0, weights=sample_weight)
    vol = ewma_volatility(
        X, half_life, location=location, feature_names=feature_names, owner=owner
    )
    return vol.scaled(X - location), location, vol
