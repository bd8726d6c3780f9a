"""Covariances from incomplete data, and missing= in the estimator base."""

import numpy as np
import pandas as pd
import pytest
from scipy.stats import multivariate_normal

from rmtclean.exceptions import InvalidParameterError
from rmtclean.missing import (
    em_covariance,
    missing_sample_spectrum,
    pairwise_covariance,
)
from tests._identity_rule import KeepSample


def _with_holes(rng, T=150, N=5, frac=0.15):
    A = rng.standard_normal((N, N))
    X = rng.standard_normal((T, N)) @ A + rng.standard_normal(N) * 5
    holes = rng.random((T, N)) < frac
    Xm = X.copy()
    Xm[holes] = np.nan
    return X, Xm


def _observed_loglik(X, mean, cov):
    """Observed-data Gaussian log-likelihood, row by row (naive reference)."""
    total = 0.0
    for row in X:
        o = ~np.isnan(row)
        if o.any():
            total += multivariate_normal(mean[o], cov[np.ix_(o, o)]).logpdf(row[o])
    return total


def test_pairwise_matches_pandas(rng):
    _, Xm = _with_holes(rng)
    est = pairwise_covariance(Xm)
    # Reference library: pandas.DataFrame.cov excludes NaN pairwise, with the
    # means of the shared rows and divisor n_ij - 1 [computed].
    ref = pd.DataFrame(Xm).cov().to_numpy()
    np.testing.assert_allclose(est.covariance, ref, rtol=1e-11, atol=1e-12)
    mask = (~np.isnan(Xm)).astype(float)
    np.testing.assert_array_equal(est.counts, mask.T @ mask)
    np.testing.assert_allclose(est.location, np.nanmean(Xm, axis=0), rtol=1e-13)
    off = est.counts[~np.eye(5, dtype=bool)]
    assert est.degrees_of_freedom == pytest.approx(off.mean() - 1.0)


def test_pairwise_assume_centered(rng):
    _, Xm = _with_holes(rng, N=3)
    est = pairwise_covariance(Xm, assume_centered=True)
    Z = np.nan_to_num(Xm)
    mask = (~np.isnan(Xm)).astype(float)
    # Direct evaluation: sum over shared rows of x_i x_j, divided by n_ij.
    for i in range(3):
        for j in range(3):
            ref = np.sum(Z[:, i] * Z[:, j]) / np.sum(mask[:, i] * mask[:, j])
            assert est.covariance[i, j] == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("func", [pairwise_covariance, em_covariance])
def test_complete_data_give_numpy_cov(rng, func):
    X, _ = _with_holes(rng)
    est = func(X)
    np.testing.assert_allclose(est.covariance, np.cov(X, rowvar=False), rtol=1e-10)
    np.testing.assert_allclose(est.location, X.mean(axis=0), rtol=1e-12)
    assert est.degrees_of_freedom == X.shape[0] - 1


def test_em_matches_anderson_closed_form(rng):
    # Anderson (1957), JASA 52, "Maximum likelihood estimates for a
    # multivariate normal distribution when some observations are missing"
    # (from memory): bivariate, x1 always observed, x2 missing in some rows
    # (monotone pattern). ML: mu1, s11 from all rows; regress x2 on x1 in the
    # complete rows (ML divisors) and carry the regression to all rows.
    T = 400
    x1 = rng.standard_normal(T) * 2 + 1
    x2 = 0.7 * x1 + rng.standard_normal(T) + 3
    X = np.column_stack([x1, x2])
    X[rng.random(T) < 0.3, 1] = np.nan
    c = ~np.isnan(X[:, 1])
    mu1, s11 = x1.mean(), x1.var()
    m1c, m2c = x1[c].mean(), x2[c].mean()
    b = np.mean((x1[c] - m1c) * (x2[c] - m2c)) / x1[c].var()
    resid = x2[c].var() - b * b * x1[c].var()
    mu2 = m2c + b * (mu1 - m1c)
    s12 = b * s11
    s22 = resid + b * b * s11
    est = em_covariance(X, tol=1e-13, max_iter=2000)
    assert est.converged
    ml = est.covariance * (T - 1) / T
    np.testing.assert_allclose(est.location, [mu1, mu2], rtol=1e-9)
    np.testing.assert_allclose(ml, [[s11, s12], [s12, s22]], rtol=1e-8)


def test_em_likelihood_never_decreases(rng):
    _, Xm = _with_holes(rng, T=120, N=4, frac=0.25)
    T = Xm.shape[0]
    # Dempster, Laird & Rubin (1977), Theorem 1 (from memory): each EM step
    # does not decrease the observed-data likelihood.
    values = []
    for k in range(1, 8):
        est = em_covariance(Xm, max_iter=k, tol=1e-300)
        values.append(_observed_loglik(Xm, est.location, est.covariance * (T - 1) / T))
    assert np.all(np.diff(values) >= -1e-9 * abs(values[0]))
    assert values[-1] > values[0]


def test_indefinite_pairwise_is_cleaned_to_positive_definite(rng):
    # Three columns observed in pairs only, with incompatible correlations:
    # corr(1,2) ~ corr(2,3) ~ +0.95 but corr(1,3) ~ -0.95.
    n = 40
    z = rng.standard_normal((3, n))
    e = 0.3 * rng.standard_normal((6, n))
    X = np.full((3 * n, 3), np.nan)
    X[:n, 0], X[:n, 1] = z[0] + e[0], z[0] + e[1]
    X[n : 2 * n, 1], X[n : 2 * n, 2] = z[1] + e[2], z[1] + e[3]
    X[2 * n :, 0], X[2 * n :, 2] = z[2] + e[4], -z[2] + e[5]
    raw = pairwise_covariance(X).covariance
    assert np.linalg.eigvalsh(raw).min() < 0
    est = KeepSample(missing="pairwise").fit(X)
    assert np.linalg.eigvalsh(est.covariance_).min() > 0
    assert np.all(np.isfinite(est.precision_))
    assert np.isfinite(est.score(np.zeros((2, 3))))


@pytest.mark.parametrize("method", ["pairwise", "em"])
def test_estimator_uses_the_missing_estimate(rng, method):
    _, Xm = _with_holes(rng, T=200, N=6, frac=0.1)
    est = KeepSample(missing=method).fit(Xm)
    ref = (pairwise_covariance if method == "pairwise" else em_covariance)(Xm)
    # KeepSample changes nothing; the estimate here is positive definite, so
    # the floor is inactive and the estimator returns the estimate itself.
    np.testing.assert_allclose(est.covariance_, ref.covariance, rtol=1e-9)
    np.testing.assert_allclose(est.location_, ref.location, rtol=1e-12)
    assert est.degrees_of_freedom_ == pytest.approx(ref.degrees_of_freedom)


def test_missing_with_standardize(rng):
    _, Xm = _with_holes(rng, T=200, N=4, frac=0.1)
    est = KeepSample(missing="em", standardize=True).fit(Xm)
    ref = em_covariance(Xm).covariance
    np.testing.assert_allclose(est.covariance_, ref, rtol=1e-9)
    np.testing.assert_allclose(est.scale_, np.sqrt(np.diag(ref)), rtol=1e-12)


def test_more_features_than_effective_rows_keeps_the_top_part(rng):
    X = rng.standard_normal((12, 30))
    X[0, 0] = np.nan
    spec = missing_sample_spectrum(X, method="pairwise")
    # Like a complete sample of about 11 degrees of freedom: rank 10.
    assert spec.n_components == int(np.floor(spec.n_samples)) == 10
    est = KeepSample(missing="pairwise").fit(X)
    # KeepSample gives the null space 0: the floor lifts it, so it is PD.
    assert np.linalg.eigvalsh(est.covariance_).min() > 0


def test_complete_data_with_missing_option_equal_default(rng):
    X, _ = _with_holes(rng)
    a = KeepSample(missing="em").fit(X)
    b = KeepSample().fit(X)
    np.testing.assert_array_equal(a.covariance_, b.covariance_)


def test_default_is_a_clear_error(rng):
    _, Xm = _with_holes(rng)
    with pytest.raises(ValueError, match=r"KeepSample.fit: .*NaN.*missing='pairwise'"):
        KeepSample().fit(Xm)
    with pytest.raises(
        InvalidParameterError, match=r"The 'missing' parameter of KeepSample"
    ):
        KeepSample(missing="drop").fit(Xm)
    inf = np.ones((5, 2))
    inf[0, 0] = np.inf
    with pytest.raises(ValueError, match="infinity"):
        KeepSample(missing="pairwise").fit(inf)


def test_unsupported_combinations(rng):
    _, Xm = _with_holes(rng)

    class NeedsRows(KeepSample):
        _needs_samples = True

    with pytest.raises(ValueError, match="needs the complete data rows"):
        NeedsRows(missing="em").fit(Xm)
    with pytest.raises(ValueError, match="does not support sample_weight"):
        KeepSample(missing="em").fit(Xm, sample_weight=np.ones(Xm.shape[0]))
    with pytest.raises(ValueError, match="does not support sample_weight"):
        KeepSample(missing="pairwise", half_life=10.0).fit(Xm)


def test_no_overlap_is_an_error():
    X = np.array([[1.0, np.nan], [2.0, np.nan], [np.nan, 1.0], [np.nan, 3.0]])
    with pytest.raises(ValueError, match="columns 0 and 1 share 0"):
        pairwise_covariance(X)
    # a column observed once is named once ("columns 1 and 1 share 1" before)
    X = np.array([[np.nan, 1.0], [np.nan, 2.0], [3.0, 1.0], [np.nan, 4.0]])
    with pytest.raises(ValueError, match=r"; column 0 has 1 observed row\(s\)\.$"):
        pairwise_covariance(X)
    with pytest.raises(ValueError, match="'max_iter' parameter of em_covariance"):
        em_covariance(X, max_iter=0)


@pytest.mark.parametrize("method", ["pairwise", "em"])
def test_a_real_cleaner_with_missing_values_is_positive_definite(rng, method):
    from rmtclean import SpikeShrink

    _, Xm = _with_holes(rng, T=60, N=40, frac=0.2)
    est = SpikeShrink(missing=method).fit(Xm)
    assert np.linalg.eigvalsh(est.covariance_).min() > 0
    assert np.isfinite(est.score(np.nan_to_num(Xm)))
