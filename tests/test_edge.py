"""Tests of the sequential Tracy-Widom edge test (rmtclean.spectrum.detect_signal)."""

import dataclasses

import numpy as np
import pytest
import scipy.stats

from rmtclean.laws import TracyWidom
from rmtclean.laws._wishart import largest_eigenvalue_scaling
from rmtclean.spectrum import EdgeTest, detect_signal
from tests._spectra import one_blas_thread
from tests._spectra import spiked_spectrum as _spiked_spectrum

S2 = 2.5

__all__ = ["one_blas_thread"]  # the autouse fixture, imported


def spiked_spectrum(rng, n_rows, n_features, variance=S2, spikes=()):
    return _spiked_spectrum(rng, n_rows, n_features, variance, spikes)


def binomial_band(p, reps, z=3.0):
    # Normal approximation to the binomial count (common practice).
    half = z * np.sqrt(p * (1 - p) / reps)
    return p - half, p + half


@pytest.mark.parametrize("n_rows, n_features", [(50, 10), (40, 80)])
def test_false_alarm_rate_near_alpha(rng, n_rows, n_features):
    # On pure noise P(n_signal >= 1) must sit near alpha, with the noise
    # variance estimated (Johnstone 2001, Ann. Statist. 29(2), scaling; the
    # estimated-variance adjustment of detect_signal's Notes). Without the
    # adjustment the rate at (50, 10) is about 0.025 (benchmarks/
    # edge_false_alarm.py), below the band: the test can fail.
    alpha, reps = 0.05, 1000
    alarms = 0
    for _ in range(reps):
        eig, dof = spiked_spectrum(rng, n_rows, n_features)
        alarms += detect_signal(
            eig, dof, n_features, alpha=alpha, max_signal=1
        ).n_signal
    low, high = binomial_band(alpha, reps)
    assert low < alarms / reps < high


def test_p_values_roughly_uniform_under_null(rng):
    # Under the null the first p-value is approximately U(0, 1) (the TW1 limit,
    # Johnstone 2001, Ann. Statist. 29(2)); compared with scipy's KS test.
    reps, n_rows, n_features = 400, 201, 100
    p = np.empty(reps)
    for r in range(reps):
        eig, dof = spiked_spectrum(rng, n_rows, n_features)
        p[r] = detect_signal(eig, dof, n_features, max_signal=1).p_values[0]
    assert scipy.stats.kstest(p, "uniform").pvalue > 1e-3
    # and the lower tail, where the decision is taken, holds its level
    low, high = binomial_band(0.1, reps)
    assert low < np.mean(p < 0.1) < high


@pytest.mark.parametrize(
    "n_rows, n_features, spikes",
    [
        (401, 100, (30.0, 20.0, 12.0)),  # q = 1/4: BBP threshold s2 (1 + 1/2)
        (101, 300, (400.0, 250.0)),  # q = 3: threshold s2 (1 + sqrt 3)
    ],
)
def test_planted_spikes_all_detected_and_no_more(rng, n_rows, n_features, spikes):
    # Spikes far above the BBP threshold s2 (1 + sqrt q) (Baik, Ben Arous &
    # Peche 2005, Ann. Probab. 33(5)) separate from the bulk.
    q = n_features / (n_rows - 1)
    assert min(spikes) > 3 * S2 * (1 + np.sqrt(q))
    eig, dof = spiked_spectrum(rng, n_rows, n_features, spikes=spikes)
    test = detect_signal(eig, dof, n_features)
    assert test.n_signal == len(spikes)
    assert test.p_values.shape == (len(spikes) + 1,)
    assert np.all(test.p_values[:-1] < 0.05) and test.p_values[-1] >= 0.05
    # noise variance re-estimated without the spikes: 4 se of the trace
    # estimate s2 sqrt(2 / (n N)) [computed: chi-squared variance]
    k = len(spikes)
    se = S2 * np.sqrt(2 / ((dof - k) * (n_features - k)))
    assert abs(test.noise_variance - S2) < 4 * se
    # bulk edge s2 (sqrt(n-k) + sqrt(N-k))^2 / n: MP edge of the bulk model
    expected = test.noise_variance * (np.sqrt(dof - k) + np.sqrt(n_features - k)) ** 2
    assert test.bulk_edge == pytest.approx(expected / dof, rel=1e-12)
    assert eig[k] < test.threshold < eig[k - 1]


def test_known_variance_statistic_is_johnstone_formula(rng):
    # [computed] with s2 given: s = (n lambda_1 / s2 - mu) / sigma, with mu and
    # sigma from largest_eigenvalue_scaling (Johnstone 2001, Ann. Statist. 29(2)).
    eig, dof = spiked_spectrum(rng, 120, 30, spikes=(40.0,))
    for constants in ("johnstone", "half-integer"):
        test = detect_signal(eig, dof, 30, noise_variance=S2, constants=constants)
        mu, sigma = largest_eigenvalue_scaling(dof, 30, constants=constants)
        assert test.statistics[0] == pytest.approx((dof * eig[0] / S2 - mu) / sigma)
        mu, sigma = largest_eigenvalue_scaling(dof - 1, 29, constants=constants)
        assert test.statistics[1] == pytest.approx((dof * eig[1] / S2 - mu) / sigma)
        tw = TracyWidom(1)
        np.testing.assert_allclose(test.p_values, tw.sf(test.statistics), rtol=1e-12)
        assert test.noise_variance == S2 and not test.adjusted


def test_adjusted_statistic_formula(rng):
    # [computed] the two-moment adjustment of detect_signal's Notes, written out.
    eig, dof = spiked_spectrum(rng, 60, 12)
    test = detect_signal(eig, dof, 12, max_signal=1, constants="johnstone")
    plain = detect_signal(
        eig, dof, 12, max_signal=1, constants="johnstone", adjust=False
    )
    tw = TracyWidom(1)
    s2_hat = eig.sum() / 12
    mu, sigma = largest_eigenvalue_scaling(dof, 12, constants="johnstone")
    reduced = np.sqrt(sigma**2 - 2 * mu**2 / (12 * dof * tw.var()))
    expected = tw.mean() + (dof * eig[0] / s2_hat - mu - sigma * tw.mean()) / reduced
    assert test.statistics[0] == pytest.approx(expected, rel=1e-12)
    assert plain.statistics[0] == pytest.approx((dof * eig[0] / s2_hat - mu) / sigma)
    assert test.noise_variance == pytest.approx(s2_hat, rel=1e-12)
    assert test.adjusted and not plain.adjusted


def test_threshold_has_p_value_alpha(rng):
    # [computed] the threshold maps back to the 1 - alpha TW1 quantile.
    eig, dof = spiked_spectrum(rng, 200, 50, spikes=(30.0,))
    test = detect_signal(eig, dof, 50, alpha=0.1, noise_variance=S2)
    k = test.n_signal
    mu, sigma = largest_eigenvalue_scaling(dof - k, 50 - k, constants=test.constants)
    stat = (dof * test.threshold / S2 - mu) / sigma
    assert TracyWidom(1).sf(stat) == pytest.approx(0.1, rel=1e-9)


def test_max_signal_caps_the_count(rng):
    eig, dof = spiked_spectrum(rng, 401, 100, spikes=(30.0, 20.0, 12.0))
    test = detect_signal(eig, dof, 100, max_signal=2)
    assert test.n_signal == 2
    assert test.p_values.shape == (2,)
    zero = detect_signal(eig, dof, 100, max_signal=0)
    assert zero.n_signal == 0 and zero.p_values.size == 0


def test_str_table_and_frozen(rng):
    eig, dof = spiked_spectrum(rng, 401, 100, spikes=(30.0,))
    test = detect_signal(eig, dof, 100)
    text = str(test)
    assert "signal" in text and "noise" in text
    assert f"{test.noise_variance:.6g}" in text
    assert f"{test.statistics[0]:.4f}" in text
    assert f"{test.eigenvalues[1]:.6g}" in text
    assert isinstance(test, EdgeTest)
    with pytest.raises(dataclasses.FrozenInstanceError):
        test.n_signal = 3


def test_input_not_modified(rng):
    eig, dof = spiked_spectrum(rng, 101, 30)
    copy = eig.copy()
    detect_signal(eig, dof, 30)
    np.testing.assert_array_equal(eig, copy)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"alpha": 0.0}, "'alpha' parameter of detect_signal"),
        ({"alpha": 1.5}, "'alpha' parameter of detect_signal"),
        ({"constants": "exact"}, "'constants' parameter"),
        ({"max_signal": 10}, "'max_signal' parameter"),
        ({"max_signal": -1}, "'max_signal' parameter"),
        ({"noise_variance": 0.0}, "'noise_variance' parameter"),
        ({"noise_variance": np.nan}, "'noise_variance' parameter"),
        ({"adjust": "yes"}, "'adjust' parameter"),
        ({"n_samples": -3}, "'n_samples' parameter"),
    ],
)
def test_validation(kwargs, match):
    params = {"n_samples": 50, "n_features": 10, **kwargs}
    with pytest.raises(ValueError, match=match):
        detect_signal(np.linspace(5, 1, 10), **params)


def test_validation_of_eigenvalues():
    with pytest.raises(ValueError, match="finite"):
        detect_signal([5.0, np.inf, 1.0], 50, 10)
    with pytest.raises(ValueError, match="non-negative"):
        detect_signal([5.0, 2.0, -1.0], 50, 10)
