"""Tests of the SpikeShrink estimator."""

import numpy as np
import pytest
from sklearn.model_selection import GridSearchCV
from sklearn.utils.estimator_checks import parametrize_with_checks

from rmtclean import analyze_spectrum
from rmtclean.estimators import SpikeShrink
from rmtclean.exceptions import InvalidParameterError
from rmtclean.rules import SPIKE_SHRINKERS, spike_shrink
from rmtclean.spectrum import SampleSpectrum


def _spiked_data(rng, n_samples, n_features, spikes=(25.0, 12.0, 6.0), s2=1.5):
    variances = np.full(n_features, s2)
    variances[: len(spikes)] = np.asarray(spikes) * s2
    return rng.standard_normal((n_samples, n_features)) * np.sqrt(variances)


@parametrize_with_checks(
    [
        SpikeShrink(),
        SpikeShrink(loss="stein", noise_variance=1.0),
        SpikeShrink(loss="operator", noise_variance="median"),
    ]
)
def test_sklearn_checks(estimator, check):
    check(estimator)


@pytest.mark.parametrize("shape", [(300, 80), (60, 150)])
@pytest.mark.parametrize("loss", ["frobenius", "stein", "operator", "frechet"])
@pytest.mark.parametrize("assume_centered", [False, True])
def test_equals_function(rng, shape, loss, assume_centered):
    # The estimator is the rule applied to the sample spectrum.
    X = _spiked_data(rng, *shape)
    est = SpikeShrink(loss=loss, assume_centered=assume_centered).fit(X)
    # The default fit reads the eigenvalues of one tridiagonal reduction (the
    # same numbers as eigh's to rounding) and computes the leading vectors.
    spectrum = SampleSpectrum.from_data(
        X, assume_centered=assume_centered, eigenvectors="leading"
    )
    out = spike_shrink(
        spectrum.eigenvalues, spectrum.n_samples, spectrum.n_features, loss=loss
    )
    k = spectrum.n_components
    np.testing.assert_allclose(est.eigenvalues_[:k], out.values, rtol=1e-10)
    np.testing.assert_array_equal(est.eigenvalues_[k:], out.details.noise_variance)
    # The default count is the spectrum report's: the three planted spikes at
    # T = 300. At T = 60, N = 150 the weakest (6 s2) gives a sample eigenvalue
    # near the edge of the law fitted to the whole spectrum (10.68 against
    # 10.70 for this seed), and the report may leave it out.
    report = analyze_spectrum(X, assume_centered=assume_centered)
    assert est.n_signal_ == out.n_signal == report.n_signal
    assert out.n_signal == 3 if shape[0] == 300 else out.n_signal >= 2
    assert est.noise_variance_ == pytest.approx(out.details.noise_variance)
    assert est.degrees_of_freedom_ == shape[0] - (0 if assume_centered else 1)
    U = SampleSpectrum.from_data(X, assume_centered=assume_centered).eigenvectors
    dense = (U * out.values) @ U.T
    if out.null_value is not None:
        dense += out.null_value * (np.eye(shape[1]) - U @ U.T)
    np.testing.assert_allclose(est.covariance_, dense, rtol=0, atol=1e-10)


def test_more_features_than_samples(rng):
    # N > T: gram route, null space at the noise variance, positive definite.
    X = _spiked_data(rng, 40, 120)
    est = SpikeShrink().fit(X)
    assert est.spectrum_.null_value == est.noise_variance_
    assert est.eigenvalues_.shape == (120,)
    np.testing.assert_array_equal(est.eigenvalues_[39:], est.noise_variance_)
    assert est.n_signal_ >= 2
    assert np.all(np.linalg.eigvalsh(est.covariance_) > 0)
    np.testing.assert_allclose(est.precision_ @ est.covariance_, np.eye(120), atol=1e-8)
    dense = SpikeShrink(route="dense").fit(X)
    np.testing.assert_allclose(dense.covariance_, est.covariance_, atol=1e-10)
    assert dense.n_signal_ == est.n_signal_


def test_given_noise_variance(rng):
    X = _spiked_data(rng, 400, 100, s2=2.0)
    est = SpikeShrink(noise_variance=2.0).fit(X)
    assert est.noise_variance_ == 2.0
    assert est.n_signal_ == 3
    np.testing.assert_array_equal(est.eigenvalues_[3:], 2.0)
    # The spikes, read off the top eigenvalues: the BBP inversion
    # (Baik, Ben Arous & Peche 2005, Ann. Probab. 33(5)) recovers the planted 50, 24, 12
    # within 3.5 standard errors, about spike * sqrt(2/T) = 7% each at T = 400 (the
    # Gaussian limit of a separated eigenvalue, common practice).
    np.testing.assert_allclose(
        est.spike_inversion_.spikes[:3], [50.0, 24.0, 12.0], rtol=0.25
    )


@pytest.mark.parametrize("given", [None, "median"])
def test_estimated_noise_variance_is_close(rng, given):
    # Bulk fit and median matching: within a few percent of the truth (their
    # relative standard errors are about 0.3% and 0.6% at this size
    # [computed, Monte Carlo as in test_rule_spiked.py]).
    X = _spiked_data(rng, 800, 200, s2=3.0)
    est = SpikeShrink(noise_variance=given).fit(X)
    assert est.noise_variance_ == pytest.approx(3.0, rel=0.03)
    assert est.n_signal_ == 3


def test_standardize(rng):
    # One common factor with loading^2 = 0.3 on every standardised column:
    # the correlation matrix is 0.3 11' + 0.7 I, a single spike over noise
    # variance 0.7 [computed]. Column scales must not matter.
    T, N = 400, 80
    factor = rng.standard_normal((T, 1))
    Z = np.sqrt(0.3) * factor + np.sqrt(0.7) * rng.standard_normal((T, N))
    scales = np.linspace(1, 10, N)
    est = SpikeShrink(standardize=True).fit(Z * scales)
    assert est.n_signal_ == 1
    assert est.noise_variance_ == pytest.approx(0.7, rel=0.05)
    # Cleaning the correlation, then restoring the variances.
    plain = SpikeShrink(standardize=True).fit(Z)
    np.testing.assert_allclose(est.scale_, plain.scale_ * scales, rtol=1e-12)
    np.testing.assert_allclose(
        est.covariance_, plain.covariance_ * np.outer(scales, scales), rtol=1e-8
    )


def test_invalid_parameters(rng):
    X = _spiked_data(rng, 50, 10)
    with pytest.raises(InvalidParameterError, match="'loss' parameter of SpikeShrink"):
        SpikeShrink(loss="wasserstein").fit(X)
    with pytest.raises(
        InvalidParameterError, match="'noise_variance' parameter of SpikeShrink"
    ):
        SpikeShrink(noise_variance=-1.0).fit(X)


def test_every_loss_fits(rng):
    X = _spiked_data(rng, 200, 50)
    for loss in SPIKE_SHRINKERS:
        est = SpikeShrink(loss=loss).fit(X)
        assert est.n_signal_ == 3
        assert np.all(est.eigenvalues_[:3] >= est.noise_variance_)


def test_grid_search_over_losses(rng):
    # score is the Gaussian log-likelihood, so a grid search can choose a loss.
    X = _spiked_data(rng, 240, 40)
    search = GridSearchCV(
        SpikeShrink(), {"loss": ["frobenius", "stein", "operator"]}, cv=3
    ).fit(X)
    assert search.best_params_["loss"] in {"frobenius", "stein", "operator"}
    assert np.isfinite(search.best_score_)
