"""Exponential weights, Kish's effective sample size, and half_life in the base."""

import numpy as np
import pytest

from rmtclean.exceptions import InvalidParameterError
from rmtclean.weights import (
    effective_sample_size,
    exponential_weights,
    half_life_weights,
    kish_weights,
)
from tests._identity_rule import KeepSample


class RecordSizes(KeepSample):
    """Keeps the sample eigenvalues and records the sizes the rule was given."""

    def _clean(self, spectrum):
        self.seen_ = (spectrum.n_samples, spectrum.n_features, spectrum.ratio)
        return super()._clean(spectrum)


def test_exponential_weights_definition():
    # Definition (common practice): the newest row weighs 1, a row half_life
    # rows older 1/2, two half-lives older 1/4.
    w = exponential_weights(25, half_life=4.0)
    assert w.shape == (25,)
    assert w[-1] == 1.0
    assert w[-1 - 4] == pytest.approx(0.5, rel=1e-15)
    assert w[-1 - 8] == pytest.approx(0.25, rel=1e-15)
    assert np.all(np.diff(w) > 0)


@pytest.mark.parametrize("T, h", [(500, 30.0), (60, 5.0), (2000, 126.0), (10, 1e6)])
def test_effective_sample_size_matches_textbook(T, h):
    w = exponential_weights(T, h)
    # Kish (1965), Survey Sampling, the design-effect chapter (from memory):
    # n_eff = (sum w)^2 / sum w^2, evaluated here by an explicit loop.
    s1 = s2 = 0.0
    for value in w.tolist():
        s1 += value
        s2 += value * value
    assert effective_sample_size(w) == pytest.approx(s1 * s1 / s2, rel=1e-12)
    # Closed form of the geometric sums [memory+checked: the loop above]:
    # n_eff = (1 + lam)/(1 - lam) * (1 - lam^T)/(1 + lam^T), lam = 2^(-1/h).
    lam = 2.0 ** (-1.0 / h)
    closed = (1 + lam) / (1 - lam) * (1 - lam**T) / (1 + lam**T)
    assert effective_sample_size(w) == pytest.approx(closed, rel=1e-9)
    assert 1.0 <= effective_sample_size(w) <= T


def test_effective_sample_size_extremes():
    assert effective_sample_size(np.ones(17)) == pytest.approx(17.0, rel=1e-15)
    assert effective_sample_size([0.0, 0.0, 3.0]) == pytest.approx(1.0)
    # Kish (1965) formula by hand [computed]: (1+1+2)^2 / (1+1+4) = 16/6.
    assert effective_sample_size([1.0, 1.0, 2.0]) == pytest.approx(16 / 6)


def test_kish_weights_sum_to_the_effective_size(rng):
    a = rng.uniform(0.1, 2.0, 40)
    f = rng.integers(0, 4, 40).astype(float)
    assert kish_weights(a).sum() == pytest.approx(effective_sample_size(a), rel=1e-12)
    assert kish_weights(a, f).sum() == pytest.approx(
        np.sum(f * a) ** 2 / np.sum(f * a * a), rel=1e-12
    )


@pytest.mark.parametrize("standardize", [False, True])
def test_half_life_gives_numpy_reliability_weighted_covariance(rng, standardize):
    T, N, h = 120, 6, 20.0
    X = rng.standard_normal((T, N)) @ rng.standard_normal((N, N)) + 3.0
    a = exponential_weights(T, h)
    est = RecordSizes(half_life=h, standardize=standardize).fit(X)
    n_eff = np.sum(a) ** 2 / np.sum(a * a)
    # numpy reference: np.cov with aweights divides by V1 - V2/V1, the unbiased
    # reliability-weighted estimator; it equals sum w (x-m)(x-m)' / (n_eff - 1)
    # with w rescaled to sum n_eff [computed here].
    np.testing.assert_allclose(
        est.covariance_, np.cov(X, rowvar=False, aweights=a), rtol=1e-11
    )
    np.testing.assert_allclose(
        est.location_, np.average(X, axis=0, weights=a), rtol=1e-12
    )
    assert est.degrees_of_freedom_ == pytest.approx(n_eff - 1.0, rel=1e-12)
    dof, n_features, ratio = est.seen_
    assert dof == pytest.approx(n_eff - 1.0, rel=1e-12)
    assert ratio == pytest.approx(N / (n_eff - 1.0), rel=1e-12)
    assert n_features == N


def test_half_life_with_frequency_weights(rng):
    T, N, h = 80, 4, 15.0
    X = rng.standard_normal((T, N))
    f = rng.integers(0, 3, T)
    a = exponential_weights(T, h)
    est = RecordSizes(half_life=h).fit(X, sample_weight=f)
    # numpy reference with both kinds: fweights repeat rows, aweights decay.
    np.testing.assert_allclose(
        est.covariance_, np.cov(X, rowvar=False, fweights=f, aweights=a), rtol=1e-11
    )
    n_eff = np.sum(f * a) ** 2 / np.sum(f * a * a)
    assert est.seen_[0] == pytest.approx(n_eff - 1.0, rel=1e-12)


def test_half_life_assume_centered_dof_is_n_eff(rng):
    T, N, h = 90, 5, 10.0
    X = rng.standard_normal((T, N))
    a = exponential_weights(T, h)
    est = RecordSizes(half_life=h, assume_centered=True).fit(X)
    n_eff = np.sum(a) ** 2 / np.sum(a * a)
    assert est.seen_[0] == pytest.approx(n_eff, rel=1e-12)
    # sum w x x' / n_eff with w summing to n_eff: the normalised weighted
    # second moment sum a x x' / sum a [computed].
    ref = (X * a[:, None]).T @ X / a.sum()
    np.testing.assert_allclose(est.covariance_, ref, rtol=1e-11)
    np.testing.assert_array_equal(est.location_, np.zeros(N))


def test_very_long_half_life_is_unweighted(rng):
    X = rng.standard_normal((50, 3))
    est = RecordSizes(half_life=1e13).fit(X)
    np.testing.assert_allclose(est.covariance_, np.cov(X, rowvar=False), rtol=1e-9)
    assert est.degrees_of_freedom_ == pytest.approx(49.0, rel=1e-9)


def test_half_life_validation():
    with pytest.raises(
        InvalidParameterError,
        match=r"The 'half_life' parameter of KeepSample must be None or a float "
        r"in the range \(0, inf\). Got 0.0 instead.",
    ):
        KeepSample(half_life=0.0).fit(np.eye(3))
    with pytest.raises(ValueError, match="'half_life' parameter of exponential"):
        exponential_weights(5, half_life=-1.0)
    with pytest.raises(TypeError, match="'n_samples' parameter of exponential"):
        exponential_weights(5.0, half_life=1.0)
    with pytest.raises(ValueError, match="'weights' argument of effective_sample"):
        effective_sample_size([1.0, -1.0])
    with pytest.raises(ValueError, match="sums to zero"):
        effective_sample_size([0.0, 0.0])


def test_half_life_does_not_modify_inputs(rng):
    X = rng.standard_normal((30, 3))
    f = rng.uniform(0.5, 2.0, 30)
    X0, f0 = X.copy(), f.copy()
    KeepSample(half_life=5.0).fit(X, sample_weight=f)
    np.testing.assert_array_equal(X, X0)
    np.testing.assert_array_equal(f, f0)


def test_half_life_weights_are_the_decay_at_kish_scale():
    # One rule for half_life (estimators) and --half-life (analyze, clean):
    # decay 2^(-(T-1-t)/h), rescaled to sum to Kish's effective sample size
    # (sum a)^2 / sum a^2 (Kish 1965, Survey Sampling).
    a = exponential_weights(500, 60.0)
    w = half_life_weights(500, 60.0)
    np.testing.assert_array_equal(w, kish_weights(a))
    assert w.sum() == pytest.approx(a.sum() ** 2 / (a**2).sum(), rel=1e-12)
    f = np.arange(500) % 3 + 1.0
    np.testing.assert_array_equal(half_life_weights(500, 60.0, f), kish_weights(a, f))
