"""Tests of the KernelShrink and StieltjesShrink estimators."""

import numpy as np
import pytest
from sklearn.utils.estimator_checks import parametrize_with_checks

from rmtclean.estimators import KernelShrink, StieltjesShrink, TylerShrink
from rmtclean.exceptions import InvalidParameterError, WeakEstimateWarning
from rmtclean.rules import kernel_shrink, stieltjes_shrink
from rmtclean.spectrum import SampleSpectrum
from rmtclean.synthetic import make_design
from tests._spectra import report_count


@parametrize_with_checks(
    [
        KernelShrink(),
        KernelShrink(formula="published"),
        StieltjesShrink(),
        StieltjesShrink(regularize=False, preserve_trace=False),
    ]
)
def test_sklearn_checks(estimator, check):
    check(estimator)


def _data(rng, T, N):
    return (
        make_design("mixture", N, rotate=True, random_state=1).sample(
            T, random_state=rng
        )
        + 3.0
    )


CASES = [
    (KernelShrink, kernel_shrink, {}),
    (KernelShrink, kernel_shrink, {"formula": "published"}),
    (KernelShrink, kernel_shrink, {"bandwidth": 0.2}),
    (StieltjesShrink, stieltjes_shrink, {}),
    (StieltjesShrink, stieltjes_shrink, {"eta": 0.05, "regularize": False}),
    (StieltjesShrink, stieltjes_shrink, {"preserve_trace": False}),
]


@pytest.mark.parametrize("shape", [(300, 80), (81, 80), (50, 150)])
@pytest.mark.parametrize("klass, rule, params", CASES)
def test_class_equals_function(rng, shape, klass, rule, params):
    X = _data(rng, *shape)
    est = klass(**params).fit(X)
    spectrum = SampleSpectrum.from_data(X)
    out = rule(spectrum.eigenvalues, spectrum.n_samples, spectrum.n_features, **params)
    k = spectrum.n_components
    np.testing.assert_allclose(est.eigenvalues_[:k], out.values, rtol=1e-12)
    if k < shape[1]:
        np.testing.assert_allclose(est.eigenvalues_[k:], out.null_value, rtol=1e-12)
    U = spectrum.eigenvectors
    dense = (U * out.values) @ U.T
    if out.null_value is not None:
        dense += out.null_value * (np.eye(shape[1]) - U @ U.T)
    np.testing.assert_allclose(est.covariance_, dense, rtol=0, atol=1e-10)


@pytest.mark.parametrize("klass", [KernelShrink, StieltjesShrink])
def test_gram_route_without_dense_matrix(rng, klass):
    # T < N: the gram route and store_covariance=False keep no N x N array.
    T, N = 60, 3000
    X = rng.standard_normal((T, N))
    est = klass(route="gram", store_covariance=False).fit(X)
    assert est.covariance_ is None and est.precision_ is None
    assert est.eigenvectors_.shape == (N, T - 1)
    assert est.eigenvalues_.shape == (N,)
    # Pure noise: the null directions get nearly the noise variance 1.
    assert est.eigenvalues_[-1] == pytest.approx(1.0, abs=0.15)
    small = klass().fit(X[:, :200])  # dense route, same rule
    gram = klass(route="gram").fit(X[:, :200])
    np.testing.assert_allclose(small.eigenvalues_, gram.eigenvalues_, rtol=1e-8)
    assert np.isfinite(est.score(rng.standard_normal((5, N))))


def test_fitted_attributes(rng):
    X = _data(rng, 121, 100)
    est = KernelShrink().fit(X)
    assert est.bandwidth_ == pytest.approx(120 ** (-1 / 3))
    assert est.n_floored_ >= 0
    # one count per data set: the spectrum report's, on the same spectrum
    assert est.n_signal_ == report_count(est)
    st = StieltjesShrink().fit(X)
    assert st.eta_ > 0 and st.noise_variance_ > 0


def test_collinear_columns_are_null_space(rng):
    # Duplicated columns: zero eigenvalues beyond the sample size are given
    # the null value instead of failing.
    Z = rng.standard_normal((200, 30))
    X = np.hstack([Z, Z[:, :10]])
    for klass in (KernelShrink, StieltjesShrink):
        est = klass().fit(X)
        assert np.all(np.isfinite(est.eigenvalues_)) and est.eigenvalues_.min() > 0


def test_parameter_validation(rng):
    X = rng.standard_normal((30, 5))
    with pytest.raises(InvalidParameterError, match="'formula' parameter of Kernel"):
        KernelShrink(formula="exact").fit(X)
    with pytest.raises(InvalidParameterError, match="'bandwidth' parameter"):
        KernelShrink(bandwidth=-1.0).fit(X)
    with pytest.raises(InvalidParameterError, match="'eta' parameter of Stieltjes"):
        StieltjesShrink(eta=0.0).fit(X)
    with pytest.raises(InvalidParameterError, match="'n_jobs' parameter"):
        StieltjesShrink(n_jobs=0).fit(X)


def test_fractional_dof_at_full_rank(rng):
    # Frequency weights (1, 0.7, 0.7) on three rows give sum(w) - 1 = 1.4
    # degrees of freedom for two columns of full rank: p > n with no null
    # direction, so OAS's null value (Chen et al. 2010, eq. 23) is not needed;
    # the fit used to fail asking for it.
    X = rng.standard_normal((3, 2))
    w = np.array([1.0, 0.7, 0.7])
    for klass in (KernelShrink, TylerShrink):
        with pytest.warns(WeakEstimateWarning):
            est = klass().fit(X, sample_weight=w)
        assert est.degrees_of_freedom_ == pytest.approx(1.4)
        assert np.all(np.isfinite(est.eigenvalues_)) and est.eigenvalues_.min() > 0
