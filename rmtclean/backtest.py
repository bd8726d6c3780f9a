"""Rolling-window evaluation of covariance cleaners on a returns panel.

At each rebalance date ``s`` every cleaner is fitted to the ``window`` rows
before ``s``; each portfolio rule turns the cleaned covariance into weights,
held over the next ``step`` rows. The realised returns of all holding
periods, strung together, give each (cleaner, rule) its realised
out-of-sample risk. Equal weighting needs no covariance and is the
baseline.

The unit of work is :func:`evaluate_window` (one rebalance date: fit, form
weights, realise), a top-level function of arrays, so that the dates can be
farmed out to joblib workers (``n_jobs``) or another executor.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg
import scipy.optimize

from rmtclean._validation import Interval, check_value

__all__ = [
    "BASELINE",
    "PORTFOLIO_RULES",
    "BacktestResult",
    "WindowResult",
    "backtest",
    "evaluate_window",
    "portfolio_weights",
]

#: Row label of the covariance-free equal-weight portfolio in the results.
BASELINE = "equal weight"


# ------------------------------------------------------------------ portfolio rules
def _covariance_of(estimator):
    cov = getattr(estimator, "covariance_", None)
    if cov is None and hasattr(estimator, "spectrum_"):
        cov = estimator.spectrum_.to_dense()
    return np.asarray(cov, dtype=np.float64)


def _solve_ones(cov: np.ndarray) -> np.ndarray:
    ones = np.ones(cov.shape[0])
    try:
        return scipy.linalg.solve(cov, ones, assume_a="pos")
    except (np.linalg.LinAlgError, ValueError):
        return scipy.linalg.pinvh(cov) @ ones


def _min_variance(cov: np.ndarray) -> np.ndarray:
    x = _solve_ones(cov)
    total = x.sum()
    if not abs(total) > 0:
        raise ValueError(
            "The minimum-variance rule cannot normalise the weights: the "
            "precision matrix sums to zero."
        )
    return x / total


def _min_variance_long_only(cov: np.ndarray) -> np.ndarray:
    n = cov.shape[0]
    start = np.clip(_min_variance(cov), 0.0, None)
    start = start / start.sum() if start.sum() > 0 else np.full(n, 1.0 / n)
    scale = float(np.trace(cov)) / n  # objective of order 1 for the tolerance
    result = scipy.optimize.minimize(
        lambda w: w @ cov @ w / scale,
        start,
        jac=lambda w: 2.0 * (cov @ w) / scale,
        method="SLSQP",
        bounds=[(0.0, None)] * n,
        constraints=[
            {"type": "eq", "fun": lambda w: w.sum() - 1.0, "jac": lambda w: np.ones(n)}
        ],
        options={"ftol": 1e-15, "maxiter": 1000},
    )
    w = np.clip(result.x, 0.0, None)
    return w / w.sum()


def _inverse_variance(cov: np.ndarray) -> np.ndarray:
    inv = 1.0 / np.diag(cov)
    return inv / inv.sum()


def _equal_weight(cov: np.ndarray) -> np.ndarray:
    return np.full(cov.shape[0], 1.0 / cov.shape[0])


#: Portfolio rules by name: covariance (N x N) -> weights summing to one.
PORTFOLIO_RULES: Mapping[str, Callable[[np.ndarray], np.ndarray]] = {
    "min_variance": _min_variance,
    "min_variance_long_only": _min_variance_long_only,
    "inverse_variance": _inverse_variance,
    "equal_weight": _equal_weight,
}


def portfolio_weights(covariance, rule: str = "min_variance") -> np.ndarray:
    r"""Fully invested portfolio weights from a covariance matrix.

    Parameters
    ----------
    covariance : array-like of shape (n_assets, n_assets)
        Symmetric positive definite (semi-definite: a pseudo-inverse is used
        by ``"min_variance"``).
    rule : {"min_variance", "min_variance_long_only", "inverse_variance", \
"equal_weight"}, default="min_variance"
        ``"min_variance"``: :math:`w = \Sigma^{-1}\mathbf 1 / \mathbf 1'
        \Sigma^{-1}\mathbf 1`, the global minimum-variance portfolio;
        ``"min_variance_long_only"``: the same with :math:`w \ge 0` (a
        quadratic programme, solved by SLSQP); ``"inverse_variance"``:
        :math:`w_i \propto 1/\Sigma_{ii}`; ``"equal_weight"``: :math:`1/N`.

    Returns
    -------
    weights : ndarray of shape (n_assets,)
        Summing to one.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.backtest import portfolio_weights
    >>> portfolio_weights(np.diag([1.0, 4.0])).tolist()
    [0.8, 0.2]
    """
    if rule not in PORTFOLIO_RULES:
        raise ValueError(
            f"The 'rule' parameter of portfolio_weights must be one of "
            f"{sorted(PORTFOLIO_RULES)}. Got {rule!r} instead."
        )
    cov = np.asarray(covariance, dtype=np.float64)
    if cov.ndim != 2 or cov.shape[0] != cov.shape[1] or cov.shape[0] == 0:
        raise ValueError(
            "The 'covariance' argument of portfolio_weights must be a non-empty "
            f"square matrix. Got shape {cov.shape} instead."
        )
    if not np.all(np.isfinite(cov)):
        raise ValueError(
            "The 'covariance' argument of portfolio_weights must be finite."
        )
    return PORTFOLIO_RULES[rule](cov)


# ------------------------------------------------------------------ unit of work
@dataclass(frozen=True, eq=False)
class WindowResult:
    """What one rebalance date produced.

    Attributes
    ----------
    start : int
        Row of the first holding-period return (the rebalance date).
    realised : dict
        ``(cleaner, rule) -> ndarray`` of realised portfolio returns over the
        holding rows; the baseline is ``(BASELINE, "equal_weight")``.
    weights : dict
        ``(cleaner, rule) -> ndarray`` of the weights held.
    log_likelihood : dict
        ``cleaner -> float``: mean Gaussian log-likelihood of the holding
        rows under the fitted model (``score``; ``nan`` if it fails).
    """

    start: int
    realised: dict
    weights: dict
    log_likelihood: dict = field(default_factory=dict)


def evaluate_window(train, test, cleaners, rules, *, start: int = 0) -> WindowResult:
    """Fit every cleaner on ``train`` and realise every rule on ``test``.

    Parameters
    ----------
    train : ndarray of shape (window, n_assets)
        Returns before the rebalance date.
    test : ndarray of shape (horizon, n_assets)
        Returns over the holding period.
    cleaners : mapping of str to estimator
        Unfitted covariance estimators (cloned here, so the originals are
        untouched); anything with ``fit`` and ``covariance_`` (or an
        rmtclean ``spectrum_``).
    rules : sequence of str
        Names in :data:`PORTFOLIO_RULES` (``"equal_weight"`` is computed
        once, as the baseline).
    start : int, default=0
        Row index of the first test row, stored in the result.

    Returns
    -------
    WindowResult

    Examples
    --------
    >>> import numpy as np
    >>> from sklearn.covariance import LedoitWolf
    >>> from rmtclean.backtest import evaluate_window
    >>> X = 0.01 * np.random.default_rng(0).standard_normal((80, 5))
    >>> out = evaluate_window(X[:60], X[60:], {"LW": LedoitWolf()}, ["min_variance"])
    >>> sorted(out.realised)
    [('LW', 'min_variance'), ('equal weight', 'equal_weight')]
    """
    from sklearn.base import clone

    train = np.asarray(train, dtype=np.float64)
    test = np.asarray(test, dtype=np.float64)
    n_assets = train.shape[1]
    realised, weights, loglik = {}, {}, {}
    base = np.full(n_assets, 1.0 / n_assets)
    realised[(BASELINE, "equal_weight")] = test @ base
    weights[(BASELINE, "equal_weight")] = base
    for name, template in cleaners.items():
        est = clone(template).fit(train)
        cov = _covariance_of(est)
        try:
            loglik[name] = float(est.score(test))
        except (ValueError, np.linalg.LinAlgError):
            loglik[name] = float("nan")
        for rule in rules:
            if rule == "equal_weight":
                continue
            w = PORTFOLIO_RULES[rule](cov)
            realised[(name, rule)] = test @ w
            weights[(name, rule)] = w
    return WindowResult(start, realised, weights, loglik)


# ------------------------------------------------------------------ the backtest
@dataclass(frozen=True, eq=False)
class BacktestResult:
    """Realised out-of-sample performance of every (cleaner, rule).

    Attributes
    ----------
    returns : pandas.DataFrame
        Realised portfolio returns, one row per holding-period row (indexed
        like the input's rows from ``window`` on), columns a MultiIndex
        ``(cleaner, rule)``.
    turnover : pandas.Series
        Mean one-way turnover ``sum |w_new - w_old| / 2`` per rebalance
        (weights drift ignored), by ``(cleaner, rule)``.
    log_likelihood : pandas.DataFrame
        Mean held-out Gaussian log-likelihood of each holding period (rows:
        rebalance dates, columns: cleaners).
    weights : dict
        ``(cleaner, rule) -> pandas.DataFrame`` of the weights held from each
        rebalance date (rows) in each asset (columns).
    window, step : int
    periods_per_year : float
    """

    returns: object
    turnover: object
    log_likelihood: object
    weights: dict
    window: int
    step: int
    periods_per_year: float

    @property
    def realised_volatility(self):
        """Annualised standard deviation of the realised returns, by (cleaner, rule)."""
        return self.returns.std(ddof=1) * np.sqrt(self.periods_per_year)

    def summary(self):
        """A table of realised risk per (cleaner, rule), lowest volatility first.

        Returns
        -------
        pandas.DataFrame
            Columns: ``volatility`` (annualised), ``variance`` (per period),
            ``mean`` (annualised), ``turnover``, ``n_periods``.
        """
        import pandas as pd

        table = pd.DataFrame(
            {
                "volatility": self.realised_volatility,
                "variance": self.returns.var(ddof=1),
                "mean": self.returns.mean() * self.periods_per_year,
                "turnover": self.turnover,
                "n_periods": self.returns.count(),
            }
        )
        table.index.names = ["cleaner", "rule"]
        return table.sort_values("volatility")

    def __str__(self) -> str:
        table = self.summary()
        head = f"{'cleaner':<22}{'rule':<24}{'vol (ann.)':>11}{'turnover':>10}"
        lines = [head, "-" * len(head)]
        for (cleaner, rule), row in table.iterrows():
            lines.append(
                f"{cleaner:<22}{rule:<24}{row['volatility']:>11.4g}"
                f"{row['turnover']:>10.3f}"
            )
        return "\n".join(lines)


def _as_cleaners(cleaners) -> dict:
    if isinstance(cleaners, Mapping):
        out = dict(cleaners)
    else:
        out = {type(c).__name__: c for c in cleaners}
        if len(out) != len(cleaners):
            raise ValueError(
                "The 'cleaners' of backtest have repeated class names; pass a "
                "dict name -> estimator instead."
            )
    if not out:
        raise ValueError("The 'cleaners' argument of backtest is empty.")
    if BASELINE in out:
        raise ValueError(f"{BASELINE!r} is reserved for the baseline portfolio.")
    for name, est in out.items():
        if not hasattr(est, "fit"):
            raise TypeError(
                f"The cleaner {name!r} of backtest must be an estimator with a "
                f"fit method. Got {type(est).__name__} instead."
            )
    return out


def _window_task(train, test, start, cleaners, rules):
    return evaluate_window(train, test, cleaners, rules, start=start)


def _run_on_dask(client, X, cleaners, rules, starts, window, step):
    if isinstance(client, str):
        if client != "current":
            raise ValueError(
                "The 'client' parameter of backtest must be a dask.distributed "
                f"Client, 'current' or None. Got {client!r} instead."
            )
        from distributed import get_client

        client = get_client()
    if not hasattr(client, "map") or not hasattr(client, "gather"):
        raise TypeError(
            "The 'client' parameter of backtest must be a dask.distributed "
            f"Client, 'current' or None. Got {type(client).__name__} instead."
        )
    starts = list(starts)
    futures = client.map(
        _window_task,
        [X[s - window : s] for s in starts],
        [X[s : s + step] for s in starts],
        starts,
        cleaners=cleaners,
        rules=rules,
        pure=False,
    )
    return client.gather(futures)


def backtest(
    returns,
    cleaners,
    *,
    window: int,
    step: int = 21,
    rules: Sequence[str] = ("min_variance",),
    n_jobs: int | None = None,
    client=None,
    periods_per_year: float = 252.0,
) -> BacktestResult:
    r"""Rolling-window backtest of covariance cleaners.

    Parameters
    ----------
    returns : array-like or pandas.DataFrame of shape (n_periods, n_assets)
        Returns in time order, oldest first; finite.
    cleaners : mapping of str to estimator, or sequence of estimators
        Unfitted covariance estimators (rmtclean's or scikit-learn's); a
        sequence is named by class names.
    window : int
        Rows in each estimation window (at least 2).
    step : int, default=21
        Rows between rebalance dates, i.e. the holding period (21 trading
        days is about a month).
    rules : sequence of str, default=("min_variance",)
        Portfolio rules of :data:`PORTFOLIO_RULES`. The equal-weight
        baseline is always included.
    n_jobs : int or None, default=None
        joblib workers over rebalance dates (``None``: one, ``-1``: all
        cores). Ignored when ``client`` is given.
    client : dask.distributed.Client, "current" or None, default=None
        Run the windows on a dask cluster instead of joblib: a ``Client``,
        or ``"current"`` for the default client of this process
        (``distributed.get_client()``). Each window is one task
        (:func:`evaluate_window`); results equal the local run.
    periods_per_year : float, default=252
        For annualising (252 for daily returns, 12 for monthly).

    Returns
    -------
    BacktestResult

    Notes
    -----
    Rebalance dates are ``s = window, window + step, ...`` while ``s <
    n_periods``; the last holding period may be shorter. Weights formed
    at ``s`` use rows ``s - window, ..., s - 1`` only (no look-ahead) and
    earn the returns of rows ``s, ..., s + step - 1``. The realised
    volatility of the minimum-variance portfolio is the usual out-of-sample
    yardstick of a covariance estimator [1]_.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Honey, I shrunk the sample covariance
       matrix", J. Portfolio Management 30(4), 110-119, 2004.

    Examples
    --------
    >>> import numpy as np
    >>> from sklearn.covariance import LedoitWolf
    >>> from rmtclean.backtest import backtest
    >>> X = 0.01 * np.random.default_rng(0).standard_normal((150, 10))
    >>> result = backtest(X, {"LW": LedoitWolf()}, window=60, step=30)
    >>> result.returns.shape
    (90, 2)
    """
    import pandas as pd
    from joblib import Parallel, delayed

    from rmtclean._data import check_data

    index = returns.index if isinstance(returns, pd.DataFrame) else None
    X = check_data(returns, "returns", "backtest")
    n_periods = X.shape[0]
    window = int(check_value(window, [Interval(int, 2, None)], "window", "backtest"))
    step = int(check_value(step, [Interval(int, 1, None)], "step", "backtest"))
    if window >= n_periods:
        raise ValueError(
            f"The 'window' parameter of backtest must be less than the number of "
            f"periods ({n_periods}) to leave rows to hold. Got {window} instead."
        )
    rules = [rules] if isinstance(rules, str) else list(rules)
    unknown = [r for r in rules if r not in PORTFOLIO_RULES]
    if unknown or not rules:
        raise ValueError(
            f"The 'rules' parameter of backtest must list rules among "
            f"{sorted(PORTFOLIO_RULES)}. Got {rules!r} instead."
        )
    cleaners = _as_cleaners(cleaners)
    starts = range(window, n_periods, step)
    if client is not None:
        results = _run_on_dask(client, X, cleaners, rules, starts, window, step)
    else:
        results = Parallel(n_jobs=n_jobs)(
            delayed(evaluate_window)(
                X[s - window : s], X[s : s + step], cleaners, rules, start=s
            )
            for s in starts
        )
    keys = list(results[0].realised)
    rows = np.arange(window, n_periods)
    frame = pd.DataFrame(
        {key: np.concatenate([r.realised[key] for r in results]) for key in keys},
        index=rows if index is None else index[window:],
    )
    frame.columns = pd.MultiIndex.from_tuples(keys, names=["cleaner", "rule"])
    dates = [r.start for r in results] if index is None else index[list(starts)]
    columns = returns.columns if isinstance(returns, pd.DataFrame) else None
    turnover, weights = {}, {}
    for key in keys:
        w = np.array([r.weights[key] for r in results])
        weights[key] = pd.DataFrame(
            w, index=pd.Index(dates, name="rebalance"), columns=columns
        )
        turnover[key] = (
            float(np.mean(np.abs(np.diff(w, axis=0)).sum(axis=1)) / 2)
            if len(w) > 1
            else 0.0
        )
    loglik = pd.DataFrame(
        [r.log_likelihood for r in results], index=pd.Index(dates, name="rebalance")
    )
    return BacktestResult(
        returns=frame,
        turnover=pd.Series(turnover).rename_axis(["cleaner", "rule"]),
        log_likelihood=loglik,
        weights=weights,
        window=window,
        step=step,
        periods_per_year=float(periods_per_year),
    )
