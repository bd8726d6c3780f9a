"""Tests of the EigenClip estimator."""

import numpy as np
import pytest
from sklearn.utils.estimator_checks import parametrize_with_checks

from rmtclean.estimators import EigenClip
from rmtclean.exceptions import InvalidParameterError
from rmtclean.rules import eigen_clip
from rmtclean.spectrum import SampleSpectrum


def spiked_data(rng, n_samples, n_features, spikes=(40.0, 20.0, 10.0), s2=2.0):
    variances = np.full(n_features, s2)
    variances[: len(spikes)] = spikes
    return rng.standard_normal((n_samples, n_features)) * np.sqrt(variances)


@parametrize_with_checks(
    [EigenClip(), EigenClip(edge="tracy-widom", alpha=0.01), EigenClip(n_keep=1)]
)
def test_sklearn_checks(estimator, check):
    check(estimator)


@pytest.mark.parametrize("shape", [(300, 80), (50, 150)])
@pytest.mark.parametrize(
    "params",
    [{}, {"edge": "tracy-widom"}, {"edge": 5.0}, {"n_keep": 2}],
)
@pytest.mark.parametrize("assume_centered", [False, True])
def test_equals_function(rng, shape, params, assume_centered):
    # The estimator is the rule applied to the sample spectrum.
    X = spiked_data(rng, *shape)
    est = EigenClip(assume_centered=assume_centered, **params).fit(X)
    # The default fit reads the eigenvalues of one tridiagonal reduction (the
    # same numbers as eigh's to rounding) and computes the leading vectors.
    spectrum = SampleSpectrum.from_data(
        X, assume_centered=assume_centered, eigenvectors="leading"
    )
    out = eigen_clip(
        spectrum.eigenvalues, spectrum.n_samples, spectrum.n_features, **params
    )
    k = spectrum.n_components
    np.testing.assert_allclose(est.eigenvalues_[:k], out.values, rtol=1e-12)
    assert est.n_signal_ == out.n_signal
    assert est.bulk_mean_ == out.details.bulk_mean
    U = SampleSpectrum.from_data(X, assume_centered=assume_centered).eigenvectors
    dense = (U * out.values) @ U.T
    if out.null_value is not None:
        dense += out.null_value * (np.eye(shape[1]) - U @ U.T)
    np.testing.assert_allclose(est.covariance_, dense, rtol=0, atol=1e-10)


@pytest.mark.parametrize("shape", [(300, 80), (50, 150)])
def test_trace_preserved_and_signal_found(rng, shape):
    # Laloux, Cizeau, Bouchaud & Potters 1999, PRL 83(7) (from
    # memory): trace kept to 1e-12 relative; spikes far above (4x) the BBP
    # threshold s2 (1 + sqrt q) (Baik, Ben Arous & Peche 2005, Ann. Probab. 33(5)) are
    # the ones kept.
    spikes, s2 = (90.0, 60.0, 40.0), 2.0
    assert min(spikes) > 4 * s2 * (1 + np.sqrt(shape[1] / (shape[0] - 1)))
    X = spiked_data(rng, *shape, spikes=spikes, s2=s2)
    sample_trace = np.trace(np.cov(X, rowvar=False))  # [computed] numpy
    for edge in ("bulk-fit", "tracy-widom"):
        est = EigenClip(edge=edge).fit(X)
        assert np.trace(est.covariance_) == pytest.approx(sample_trace, rel=1e-12)
        assert est.n_signal_ == 3
        np.testing.assert_allclose(
            est.eigenvalues_[:3], est.sample_eigenvalues_[:3], rtol=1e-12
        )
        assert np.all(est.eigenvalues_[3:] == est.bulk_mean_)
        assert est.noise_variance_ is not None


def test_standardize_keeps_correlation_trace(rng):
    X = spiked_data(rng, 200, 40) * rng.uniform(0.5, 3.0, size=40)
    est = EigenClip(standardize=True).fit(X)
    # correlation trace N, restored variances on the diagonal [computed]
    assert est.eigenvalues_.sum() == pytest.approx(40, rel=1e-12)
    np.testing.assert_allclose(
        np.diag(est.covariance_), np.var(X, axis=0, ddof=1), rtol=1e-10
    )


def test_pure_noise_gives_scaled_identity(rng):
    X = rng.standard_normal((400, 50)) * 1.5
    est = EigenClip(n_keep=0).fit(X)
    # [computed] all eigenvalues replaced by tr(S)/N: covariance = mean * I
    mean = np.trace(np.cov(X, rowvar=False)) / 50
    np.testing.assert_allclose(est.covariance_, mean * np.eye(50), atol=1e-12)


@pytest.mark.parametrize(
    "params, match",
    [
        ({"alpha": 2.0}, "'alpha' parameter of EigenClip"),
        ({"edge": "median"}, "'edge' parameter of EigenClip"),
        ({"edge": -1.0}, "'edge' parameter of EigenClip"),
        ({"n_keep": -1}, "'n_keep' parameter of EigenClip"),
    ],
)
def test_parameter_errors(rng, params, match):
    with pytest.raises(InvalidParameterError, match=match):
        EigenClip(**params).fit(rng.standard_normal((30, 5)))


def test_n_keep_capped(rng):
    # n_keep >= N with N <= n keeps the sample covariance [computed: np.cov]
    X = rng.standard_normal((30, 5))
    est = EigenClip(n_keep=5).fit(X)
    np.testing.assert_allclose(est.covariance_, np.cov(X, rowvar=False), atol=1e-12)
