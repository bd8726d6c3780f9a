"""Causal EWMA volatilities and the estimators' ``vol_half_life``.

The recursion is RiskMetrics' (J.P. Morgan/Reuters 1996, RiskMetrics
Technical Document, exponentially weighted variance with zero mean; common
practice), checked against a plain Python loop; the devolatilised fit is
Engle, Ledoit & Wolf's (2019, J. Business & Economic Statistics 37(2))
scheme with an EWMA in place of GARCH (from memory): clean the correlation
of the devolatilised series, scale it back by the volatility forecast.
"""

from __future__ import annotations

import numpy as np
import pytest

import rmtclean
from rmtclean.exceptions import InvalidParameterError
from rmtclean.volatility import VOL_SEED_ROWS, ewma_volatility
from tests._registry import CASES, sample_data

CASE_IDS = [case.id for case in CASES]


def _loop_reference(X, half_life, location):
    """sigma_t^2 by the recursion written out, one row at a time."""
    R = X - location
    lam = 0.5 ** (1.0 / half_life)
    m = min(len(R), VOL_SEED_ROWS)
    var = np.mean(R[:m] ** 2, axis=0)
    out = []
    for r in R:
        out.append(np.sqrt(var))
        var = lam * var + (1.0 - lam) * r**2
    return np.array(out), np.sqrt(var)


@pytest.mark.parametrize("n_rows", [5, 20, 137])
def test_recursion_matches_a_direct_loop(rng, n_rows):
    X = rng.standard_normal((n_rows, 4)) * np.array([1e-3, 1.0, 1e3, 1e150])
    location = X.mean(axis=0)
    vol = ewma_volatility(X, 7.5, location=location)
    ref, forecast = _loop_reference(X, 7.5, location)
    np.testing.assert_allclose(vol.volatility, ref, rtol=1e-13)
    np.testing.assert_allclose(vol.forecast, forecast, rtol=1e-13)
    assert vol.seed_rows == min(n_rows, VOL_SEED_ROWS)
    assert vol.decay == 0.5 ** (1 / 7.5)


def test_volatility_uses_earlier_rows_only(rng):
    # Changing row t leaves sigma_0..sigma_t unchanged once t is past the
    # seed rows, and changes sigma_{t+1}.
    X = rng.standard_normal((60, 3))
    base = ewma_volatility(X, 10.0)
    t = 40
    Y = X.copy()
    Y[t] *= 5.0
    moved = ewma_volatility(Y, 10.0)
    np.testing.assert_array_equal(moved.volatility[: t + 1], base.volatility[: t + 1])
    assert np.all(moved.volatility[t + 1] > base.volatility[t + 1])


def test_forecast_follows_a_volatility_regime(rng):
    # Volatility triples halfway: the forecast sees the new regime, and the
    # scaled series has unit variance in both halves (to sampling error).
    level = np.r_[np.ones(400), 3.0 * np.ones(400)][:, None]
    X = rng.standard_normal((800, 5)) * level
    vol = ewma_volatility(X, 11.2)
    assert np.all(np.abs(vol.forecast / 3.0 - 1.0) < 0.35)
    Z = vol.scaled(X)
    for half in (Z[50:400], Z[450:]):
        assert np.all(np.abs(half.std(axis=0) - 1.0) < 0.15)


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_constant_volatility_gives_the_standardized_fit(case):
    # |x_tj| = c_j on every row (random signs), centred data: the EWMA
    # volatility is exactly c_j throughout, so the devolatilised series are
    # X / c and their correlation is that of X. The fit must be the plain
    # standardized fit, with covariance diag(c) R diag(c).
    rng = np.random.default_rng(5)
    c = np.exp(rng.standard_normal(12))
    X = rng.choice([-1.0, 1.0], size=(80, 12)) * c
    plain = case.make(standardize=True, assume_centered=True).fit(X)
    vol = case.make(vol_half_life=4.0, assume_centered=True).fit(X)
    np.testing.assert_allclose(vol.volatility_, c, rtol=1e-13)
    np.testing.assert_allclose(vol.scale_, c, rtol=1e-13)
    corr_plain = plain.covariance_ / np.outer(plain.scale_, plain.scale_)
    corr_vol = vol.covariance_ / np.outer(c, c)
    assert np.abs(corr_vol - corr_plain).max() <= 1e-10 * np.abs(corr_plain).max()


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_long_half_life_is_the_standardized_fit(case):
    # A half-life of 1e12 rows keeps sigma_t at the seed (to ~1e-10): the
    # correlation is the plain standardized one, demeaned data included.
    X = sample_data(3, 70, 10) + 5.0
    plain = case.make(standardize=True).fit(X)
    vol = case.make(vol_half_life=1e12).fit(X)
    np.testing.assert_allclose(vol.location_, X.mean(axis=0), rtol=1e-13)
    corr_plain = plain.covariance_ / np.outer(plain.scale_, plain.scale_)
    corr_vol = vol.covariance_ / np.outer(vol.volatility_, vol.volatility_)
    assert np.abs(corr_vol - corr_plain).max() <= 1e-9 * np.abs(corr_plain).max()
    assert plain.volatility_ is None


def test_devolatilised_fit_is_built_from_the_scaled_series(rng):
    # The pieces by hand: scale by the EWMA volatility, fit the correlation,
    # scale back by the forecast.
    level = np.r_[np.ones(100), 2.5 * np.ones(100)][:, None]
    X = rng.standard_normal((200, 15)) * level + 0.1
    est = rmtclean.KernelShrink(vol_half_life=11.2).fit(X)
    mean = X.mean(axis=0)
    vol = ewma_volatility(X, 11.2, location=mean)
    ref = rmtclean.KernelShrink(standardize=True).fit(vol.scaled(X - mean))
    R = ref.covariance_ / np.outer(ref.scale_, ref.scale_)
    np.testing.assert_allclose(
        est.covariance_, R * np.outer(vol.forecast, vol.forecast), rtol=1e-12
    )
    np.testing.assert_allclose(est.volatility_, vol.forecast, rtol=1e-14)
    # score and mahalanobis read the same covariance.
    Z = X - mean
    quad = np.einsum("ij,ij->i", Z, np.linalg.solve(est.covariance_, Z.T).T)
    np.testing.assert_allclose(est.mahalanobis(X), quad, rtol=1e-9)


def test_zero_volatility_in_the_seed_rows_names_the_column(rng):
    pd = pytest.importorskip("pandas")
    X = rng.standard_normal((50, 4))
    X[:VOL_SEED_ROWS, 2] = 0.0
    frame = pd.DataFrame(X, columns=["AA", "BB", "CC", "DD"])
    est = rmtclean.KernelShrink(vol_half_life=10.0, assume_centered=True)
    with pytest.raises(
        ValueError, match=r"column 'CC' \(index 2\) is constant there: zero volatility"
    ):
        est.fit(frame)
    with pytest.raises(ValueError, match="KernelShrink.fit: .*column 2 is constant"):
        est.fit(X)
    # Constant in the seed rows at any level, with demeaning: the same error.
    X[:VOL_SEED_ROWS, 1] = 3.0
    with pytest.raises(ValueError, match="column 1 is constant"):
        rmtclean.LinearShrink(vol_half_life=10.0).fit(X)


@pytest.mark.parametrize("value", [0.0, -3.0, "fast"])
def test_bad_half_life_is_refused(rng, value):
    with pytest.raises(InvalidParameterError, match="'vol_half_life' parameter"):
        rmtclean.EigenClip(vol_half_life=value).fit(rng.standard_normal((30, 4)))


def test_routes_without_time_order_are_refused(rng):
    X = rng.standard_normal((40, 5))
    X[3, 1] = np.nan
    est = rmtclean.KernelShrink(vol_half_life=10.0, missing="em")
    with pytest.raises(ValueError, match="vol_half_life does not support missing"):
        est.fit(X)
    da = pytest.importorskip("dask.array")
    with pytest.raises(ValueError, match="vol_half_life does not support dask"):
        rmtclean.KernelShrink(vol_half_life=10.0).fit(da.from_array(X[4:]))


def test_gram_route_and_weights(rng):
    # N > T: the gram route; weights combine as in the plain fit.
    X = rng.standard_normal((40, 60))
    w = rng.uniform(0.5, 2.0, 40)
    dense = rmtclean.StieltjesShrink(vol_half_life=8.0, route="dense")
    gram = rmtclean.StieltjesShrink(vol_half_life=8.0, route="gram")
    a = dense.fit(X, sample_weight=w).covariance_
    b = gram.fit(X, sample_weight=w).covariance_
    np.testing.assert_allclose(a, b, rtol=1e-8, atol=1e-10 * np.abs(a).max())
