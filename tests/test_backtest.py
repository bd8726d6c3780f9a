"""Rolling-window backtests, portfolio rules, and model selection on time series."""

import numpy as np
import pandas as pd
import pytest
from sklearn.covariance import EmpiricalCovariance, LedoitWolf
from sklearn.model_selection import GridSearchCV, TimeSeriesSplit

from rmtclean.backtest import (
    BASELINE,
    backtest,
    evaluate_window,
    portfolio_weights,
)
from rmtclean.estimators import LinearShrink
from rmtclean.metrics import minimum_variance_scorer
from rmtclean.synthetic import make_design


def _market(rng, T=300, N=40):
    design = make_design("block-factor", N, n_blocks=4, random_state=rng)
    return 0.01 * design.sample(T, random_state=rng), design


# -- portfolio rules ------------------------------------------------------------------
def test_min_variance_closed_form(rng):
    A = rng.standard_normal((6, 6))
    cov = A @ A.T + np.eye(6)
    w = portfolio_weights(cov, "min_variance")
    # Markowitz's global minimum-variance portfolio (common practice):
    # w = S^-1 1 / 1'S^-1 1, recomputed with numpy.
    ref = np.linalg.solve(cov, np.ones(6))
    np.testing.assert_allclose(w, ref / ref.sum(), rtol=1e-12)
    # It has the least variance among fully invested portfolios.
    for _ in range(20):
        other = w + 0.01 * rng.standard_normal(6)
        other /= other.sum()
        assert other @ cov @ other >= w @ cov @ w


def test_long_only_min_variance_meets_kkt(rng):
    # Karush-Kuhn-Tucker conditions of min w'Sw s.t. 1'w = 1, w >= 0
    # (Boyd & Vandenberghe 2004, Convex Optimization, Sec. 5.5.3; common
    # practice): with lam = w'Sw, (Sw)_i = lam where w_i > 0 and >= lam where
    # w_i = 0.
    A = rng.standard_normal((12, 12))
    cov = A @ A.T / 12 + 0.1 * np.eye(12)
    assert np.any(portfolio_weights(cov, "min_variance") < 0)  # constraint binds
    w = portfolio_weights(cov, "min_variance_long_only")
    assert np.all(w >= 0) and w.sum() == pytest.approx(1.0, abs=1e-12)
    grad = cov @ w
    lam = w @ cov @ w
    active = w > 1e-6
    assert 0 < active.sum() < 12
    np.testing.assert_allclose(grad[active], lam, rtol=1e-5)
    assert np.all(grad[~active] >= lam * (1 - 1e-5))


def test_simple_rules():
    cov = np.diag([1.0, 2.0, 4.0])
    # With a diagonal covariance minimum variance is inverse variance, long
    # only or not [computed by hand: weights 4/7, 2/7, 1/7].
    expected = np.array([4.0, 2.0, 1.0]) / 7.0
    for rule in ("min_variance", "min_variance_long_only", "inverse_variance"):
        np.testing.assert_allclose(portfolio_weights(cov, rule), expected, atol=1e-9)
    np.testing.assert_allclose(portfolio_weights(cov, "equal_weight"), 1 / 3)
    with pytest.raises(ValueError, match="'rule' parameter of portfolio_weights"):
        portfolio_weights(cov, "max_sharpe")


# -- the unit of work --------------------------------------------------------------
def test_evaluate_window_realises_the_weights(rng):
    X, _ = _market(rng, T=120, N=10)
    train, test = X[:90], X[90:]
    out = evaluate_window(
        train, test, {"LW": LedoitWolf()}, ["min_variance", "inverse_variance"]
    )
    # Direct reference: fit here, form weights, multiply.
    cov = LedoitWolf().fit(train).covariance_
    w = np.linalg.solve(cov, np.ones(10))
    w /= w.sum()
    np.testing.assert_allclose(out.realised[("LW", "min_variance")], test @ w)
    np.testing.assert_allclose(out.realised[(BASELINE, "equal_weight")], test.mean(1))
    assert out.log_likelihood["LW"] == pytest.approx(
        LedoitWolf().fit(train).score(test)
    )


# -- the backtest ---------------------------------------------------------------------
def test_backtest_layout_and_no_look_ahead(rng):
    X, _ = _market(rng, T=205, N=8)
    idx = pd.date_range("2020-01-01", periods=205, freq="B")
    frame = pd.DataFrame(X, index=idx)
    result = backtest(
        frame,
        {"LW": LedoitWolf()},
        window=60,
        step=25,
        rules=["min_variance", "equal_weight"],
    )
    assert list(result.returns.index) == list(idx[60:])
    assert set(result.returns.columns) == {
        ("LW", "min_variance"),
        (BASELINE, "equal_weight"),
    }
    # The last holding period (rows 185..204) is fitted on rows 125..184 only.
    cov = LedoitWolf().fit(X[125:185]).covariance_
    w = np.linalg.solve(cov, np.ones(8))
    w /= w.sum()
    np.testing.assert_allclose(
        result.returns[("LW", "min_variance")].to_numpy()[-20:], X[185:] @ w
    )
    assert list(result.log_likelihood.index) == list(idx[60::25])
    held = result.weights[("LW", "min_variance")]
    assert list(held.index) == list(idx[60::25])
    np.testing.assert_allclose(held.iloc[-1].to_numpy(), w)
    table = result.summary()
    assert list(table.columns) == [
        "volatility",
        "variance",
        "mean",
        "turnover",
        "n_periods",
    ]
    assert (table["n_periods"] == 145).all()
    np.testing.assert_allclose(
        table.loc[("LW", "min_variance"), "volatility"],
        result.returns[("LW", "min_variance")].std() * np.sqrt(252),
    )


def test_parallel_equals_serial(rng):
    X, _ = _market(rng, T=160, N=12)
    cleaners = {"LS": LinearShrink(), "sample": EmpiricalCovariance()}
    kwargs = dict(window=50, step=20, rules=["min_variance", "min_variance_long_only"])
    serial = backtest(X, cleaners, n_jobs=1, **kwargs)
    parallel = backtest(X, cleaners, n_jobs=2, **kwargs)
    pd.testing.assert_frame_equal(serial.returns, parallel.returns)
    pd.testing.assert_series_equal(serial.turnover, parallel.turnover)


def test_shrinkage_beats_the_sample_covariance_out_of_sample(rng):
    # Ledoit & Wolf (2004), "Honey, I shrunk the sample covariance matrix",
    # J. Portfolio Management 30(4) (from memory): with N close to the window
    # the sample minimum-variance portfolio is far riskier out of sample than
    # a shrunk one. Invented market, N = 60, window = 80.
    X, _ = _market(rng, T=480, N=60)
    result = backtest(
        X,
        {"LinearShrink": LinearShrink(), "sample": EmpiricalCovariance()},
        window=80,
        step=20,
    )
    vol = result.realised_volatility
    assert vol[("LinearShrink", "min_variance")] < vol[("sample", "min_variance")]
    assert (
        result.turnover[("LinearShrink", "min_variance")]
        < result.turnover[("sample", "min_variance")]
    )


def test_backtest_validation(rng):
    X = rng.standard_normal((50, 3))
    with pytest.raises(ValueError, match="'window' parameter of backtest must be less"):
        backtest(X, [LedoitWolf()], window=50)
    with pytest.raises(TypeError, match="'step' parameter of backtest must be an int"):
        backtest(X, [LedoitWolf()], window=10, step=2.5)
    with pytest.raises(ValueError, match="'rules' parameter of backtest"):
        backtest(X, [LedoitWolf()], window=10, rules=["magic"])
    with pytest.raises(ValueError, match="repeated class names"):
        backtest(X, [LedoitWolf(), LedoitWolf()], window=10)
    with pytest.raises(TypeError, match="must be an estimator"):
        backtest(X, {"x": 3}, window=10)
    bad = X.copy()
    bad[3, 1] = np.nan
    with pytest.raises(ValueError, match="NaN"):
        backtest(bad, [LedoitWolf()], window=10)


# -- model selection on time series ---------------------------------------------------
def test_grid_search_with_time_series_split(rng):
    X, _ = _market(rng, T=240, N=30)
    grid = {"intensity": [0.0, 0.2, 0.5, 0.9]}
    cv = TimeSeriesSplit(n_splits=4)
    search = GridSearchCV(LinearShrink(), grid, cv=cv, scoring=minimum_variance_scorer)
    search.fit(X)
    # Recompute one cell directly: the realised variance of the minimum-variance
    # portfolio on the held-out fold, negated (rmtclean.metrics).
    train, test = list(cv.split(X))[2]
    est = LinearShrink(intensity=0.5).fit(X[train])
    w = np.linalg.solve(est.covariance_, np.ones(30))
    w /= w.sum()
    r = (X[test] - est.location_) @ w
    assert search.cv_results_["split2_test_score"][2] == pytest.approx(-np.mean(r * r))
    assert search.best_params_["intensity"] in grid["intensity"]
    # The held-out log-likelihood (score) works as a scorer too.
    by_likelihood = GridSearchCV(LinearShrink(), grid, cv=cv).fit(X)
    assert np.all(np.isfinite(by_likelihood.cv_results_["mean_test_score"][1:]))
