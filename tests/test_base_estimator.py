"""The estimator base class, checked through a rule that changes nothing."""

import numpy as np
import pytest
from scipy.stats import multivariate_normal
from sklearn.covariance import EmpiricalCovariance

from rmtclean.exceptions import InvalidParameterError
from tests._identity_rule import KeepSample


def test_covariance_is_the_sample_covariance(rng):
    X = rng.standard_normal((60, 7))
    est = KeepSample().fit(X)
    # numpy reference with T - 1 degrees of freedom.
    np.testing.assert_allclose(est.covariance_, np.cov(X, rowvar=False), rtol=1e-12)
    np.testing.assert_allclose(
        est.precision_, np.linalg.inv(est.covariance_), rtol=1e-9
    )
    np.testing.assert_allclose(est.location_, X.mean(axis=0), rtol=1e-12)
    assert est.degrees_of_freedom_ == 59.0
    assert np.all(np.diff(est.sample_eigenvalues_) <= 0)
    np.testing.assert_allclose(est.eigenvalues_, est.sample_eigenvalues_)


def test_score_is_mean_gaussian_log_density(rng):
    # scikit-learn 1.9.1 source [paper + checked]: sklearn's score is the mean Gaussian
    # log-density; compare with scipy.stats.multivariate_normal.logpdf.
    X = rng.standard_normal((80, 5))
    X_test = rng.standard_normal((30, 5))
    est = KeepSample().fit(X)
    ref = multivariate_normal(est.location_, est.covariance_).logpdf(X_test).mean()
    assert est.score(X_test) == pytest.approx(ref, rel=1e-12)
    # ... and sklearn's own formula on the same covariance.
    emp = EmpiricalCovariance().fit(X)
    emp._set_covariance(est.covariance_)
    emp.location_ = est.location_
    assert est.score(X_test) == pytest.approx(emp.score(X_test), rel=1e-12)
    np.testing.assert_allclose(
        est.mahalanobis(X_test), emp.mahalanobis(X_test), rtol=1e-10
    )


def test_transform_whitens_and_inverts(rng):
    X = rng.standard_normal((100, 6)) @ rng.standard_normal((6, 6))
    est = KeepSample().fit(X)
    Z = est.transform(X)
    np.testing.assert_allclose(np.cov(Z, rowvar=False), np.eye(6), atol=1e-10)
    np.testing.assert_allclose(est.inverse_transform(Z), X, atol=1e-10)


def test_standardize_restores_variances(rng):
    X = rng.standard_normal((90, 5)) * np.array([1.0, 10.0, 0.1, 3.0, 7.0])
    est = KeepSample(standardize=True).fit(X)
    np.testing.assert_allclose(est.covariance_, np.cov(X, rowvar=False), rtol=1e-10)
    np.testing.assert_allclose(est.scale_, X.std(axis=0, ddof=1), rtol=1e-12)
    Z = est.transform(X)
    np.testing.assert_allclose(np.cov(Z, rowvar=False), np.eye(5), atol=1e-10)


def test_gram_route_without_dense_storage(rng):
    X = rng.standard_normal((20, 50))
    sparse = KeepSample(store_covariance=False).fit(X)
    dense = KeepSample(store_covariance=True, route="dense").fit(X)
    assert sparse.covariance_ is None and sparse.precision_ is None
    np.testing.assert_allclose(
        sparse.spectrum_.to_dense(), dense.covariance_, atol=1e-12
    )
    np.testing.assert_allclose(
        sparse.eigenvalues_[:19], dense.eigenvalues_[:19], rtol=1e-10
    )


def test_float32_keeps_float32(rng):
    X = rng.standard_normal((40, 4)).astype(np.float32)
    est = KeepSample().fit(X)
    assert est.covariance_.dtype == np.float32
    assert est.transform(X).dtype == np.float32


def test_sample_weight_validation(rng):
    X = rng.standard_normal((10, 3))
    with pytest.raises(
        ValueError, match=r"sample_weight of KeepSample must have shape \(10,\)"
    ):
        KeepSample().fit(X, sample_weight=np.ones(9))
    with pytest.raises(ValueError, match="non-negative"):
        KeepSample().fit(X, sample_weight=-np.ones(10))
    with pytest.raises(ValueError, match="NaN"):
        KeepSample().fit(X, sample_weight=np.full(10, np.nan))


def test_parameter_validation_message():
    with pytest.raises(
        InvalidParameterError,
        match=r"The 'route' parameter of KeepSample must be a str among "
        r"\{'auto', 'dense', 'gram'\}. Got 'fast' instead.",
    ):
        KeepSample(route="fast").fit(np.eye(3))


@pytest.mark.parametrize(
    "bad, match",
    [
        (np.ones(5), "2D array"),
        (np.array([[1.0, np.nan], [2.0, 3.0]]), "NaN"),
        (np.ones((1, 3)), "1 sample"),
        (np.ones((3, 2), dtype=complex), "[Cc]omplex"),
    ],
)
def test_fit_bad_input(bad, match):
    with pytest.raises(ValueError, match=match):
        KeepSample().fit(bad)


def test_fit_does_not_modify_input(rng):
    X = rng.standard_normal((15, 4))
    w = rng.uniform(0.5, 2.0, 15)
    X0, w0 = X.copy(), w.copy()
    KeepSample(standardize=True).fit(X, sample_weight=w)
    np.testing.assert_array_equal(X, X0)
    np.testing.assert_array_equal(w, w0)
