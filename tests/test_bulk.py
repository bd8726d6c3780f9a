"""Tests of the Marchenko-Pastur bulk fit (rmtclean.spectrum.fit_bulk)."""

import dataclasses

import numpy as np
import pytest

from rmtclean.spectrum import BulkFit, fit_bulk, sample_spectrum
from tests._spectra import one_blas_thread, spiked_spectrum

S2 = 2.5

__all__ = ["one_blas_thread"]  # the autouse fixture, imported


def noise_spectrum(rng, n_rows, n_features, variance=S2, spikes=()):
    return spiked_spectrum(rng, n_rows, n_features, variance, spikes)


def trace_sd(variance, n_samples, n_features, reps):
    # The trace of white Wishart data is s2 chi^2_{nN} / n, so the mean
    # eigenvalue has sd s2 sqrt(2 / (n N)) [computed: chi-squared variance].
    return variance * np.sqrt(2.0 / (n_samples * n_features)) / np.sqrt(reps)


def test_moments_fixed_ratio_is_the_trace_formula(rng):
    # [computed] direct formula: s2 = n sum_{j>k} lambda_j / ((N - k)(n - k)).
    eig, dof = noise_spectrum(rng, 301, 60, spikes=(40.0, 30.0))
    fit = fit_bulk(eig, dof, 60, n_signal=2, method="moments")
    expected = dof * eig[2:].sum() / ((60 - 2) * (dof - 2))
    assert fit.noise_variance == pytest.approx(expected, rel=1e-12)
    assert fit.ratio == pytest.approx(58 / (dof - 2), rel=1e-12)
    # Marchenko-Pastur edges s2' (1 +- sqrt q)^2 of the bulk law, with
    # s2' = s2 (n - k)/n (Marchenko & Pastur 1967 [memory+checked]).
    bulk_var = expected * (dof - 2) / dof
    q = fit.ratio
    assert fit.upper_edge == pytest.approx(bulk_var * (1 + np.sqrt(q)) ** 2)
    assert fit.lower_edge == pytest.approx(bulk_var * (1 - np.sqrt(q)) ** 2)


@pytest.mark.parametrize("method", ["cvm", "moments"])
def test_pure_noise_recovers_variance(rng, method):
    # Marchenko & Pastur 1967, Math. USSR-Sbornik 1(4): white noise, known s2.
    reps, n_rows, n_features = 20, 401, 200
    fits = [
        fit_bulk(*noise_spectrum(rng, n_rows, n_features), n_features, method=method)
        for _ in range(reps)
    ]
    estimates = np.array([f.noise_variance for f in fits])
    # 4 standard errors of the (efficient) trace estimate, x1.5 for the
    # distance fit's lower efficiency (common practice).
    tol = 4 * 1.5 * trace_sd(S2, n_rows - 1, n_features, reps)
    assert abs(estimates.mean() - S2) < tol
    assert all(f.ratio == pytest.approx(n_features / (n_rows - 1)) for f in fits)


@pytest.mark.parametrize("n_rows, n_features", [(401, 200), (101, 300)])
def test_free_ratio_recovers_ratio_and_variance(rng, n_rows, n_features):
    # Marchenko-Pastur law (Marchenko & Pastur 1967); the second case has N > T,
    # where only the n nonzero eigenvalues are given.
    reps = 10
    fits = [
        fit_bulk(*noise_spectrum(rng, n_rows, n_features), n_features, fix_ratio=False)
        for _ in range(reps)
    ]
    q = n_features / (n_rows - 1)
    ratios = np.array([f.ratio for f in fits])
    variances = np.array([f.noise_variance for f in fits])
    # 4 standard errors from the replicates, plus a finite-size allowance of
    # q / min(N, n) for the difference between the finite-N spectrum and its
    # limit law (common practice).
    allowance = q / min(n_features, n_rows - 1)
    se = ratios.std(ddof=1) / np.sqrt(reps)
    assert abs(ratios.mean() - q) < 4 * se + allowance
    se = variances.std(ddof=1) / np.sqrt(reps)
    assert abs(variances.mean() - S2) < 4 * se + S2 * allowance
    assert all(not f.fix_ratio for f in fits)


def test_n_greater_than_t_fixed_ratio(rng):
    # N > T: MP with ratio > 1 has an atom at 0 (Marchenko & Pastur 1967); the fit
    # uses the nonzero eigenvalues only.
    reps, n_rows, n_features = 20, 101, 300
    fits = [
        fit_bulk(*noise_spectrum(rng, n_rows, n_features), n_features)
        for _ in range(reps)
    ]
    estimates = np.array([f.noise_variance for f in fits])
    assert fits[0].n_used == n_rows - 1
    assert fits[0].ratio == pytest.approx(3.0)
    tol = 4 * 1.5 * trace_sd(S2, n_rows - 1, n_features, reps)
    assert abs(estimates.mean() - S2) < tol
    # The nonzero eigenvalues fill the continuous support
    # s2 (sqrt q -+ 1)^2 (Marchenko & Pastur 1967 [memory+checked]).
    fit = fits[0]
    assert fit.lower_edge == pytest.approx(S2 * (np.sqrt(3) - 1) ** 2, rel=0.05)
    assert fit.upper_edge == pytest.approx(S2 * (np.sqrt(3) + 1) ** 2, rel=0.05)


def test_spikes_set_aside_give_unbiased_variance(rng):
    # Strong spikes take a share k/n of the sample space: the bulk model
    # MP((N-k)/(n-k), s2 (n-k)/n) (derived in fit_bulk's Notes) keeps the
    # estimate unbiased, while ignoring that share biases it low by k/n.
    reps, n_rows, n_features, k = 20, 401, 200, 4
    spikes = (200.0, 150.0, 120.0, 100.0)  # far above the BBP threshold
    moments, cvm, naive = [], [], []
    for _ in range(reps):
        eig, dof = noise_spectrum(rng, n_rows, n_features, spikes=spikes)
        moments.append(fit_bulk(eig, dof, n_features, n_signal=k, method="moments"))
        cvm.append(fit_bulk(eig, dof, n_features, n_signal=k))
        naive.append(eig[k:].sum() / (n_features - k))
    tol = 4 * 1.5 * trace_sd(S2, n_rows - 1, n_features - k, reps)
    assert abs(np.mean([f.noise_variance for f in moments]) - S2) < tol
    assert abs(np.mean([f.noise_variance for f in cvm]) - S2) < tol
    # The test can fail: the naive bulk mean is off by about s2 k/n.
    assert S2 - np.mean(naive) > tol
    assert moments[0].n_used == n_features - k
    assert moments[0].n_signal == k


def test_statistic_small_for_mp_large_otherwise(rng):
    n_rows, n_features = 601, 200
    eig, dof = noise_spectrum(rng, n_rows, n_features)
    mp_fit = fit_bulk(eig, dof, n_features)
    # Ledoit & Wolf (2020) design: 20% of population eigenvalues at 1, 40% at
    # 3, 40% at 10 (Ledoit & Wolf 2020, Ann. Statist. 48(5) [memory]): clearly not MP.
    pop = np.repeat([1.0, 3.0, 10.0], [40, 80, 80])
    X = rng.standard_normal((n_rows, n_features)) * np.sqrt(pop)
    spec = sample_spectrum(X)
    lw_fit = fit_bulk(spec.eigenvalues, spec.n_samples, n_features)
    # Kolmogorov 1% critical value 1.63/sqrt(m) for m iid points (common
    # practice); eigenvalues are more rigid than iid, so MP data sit well below.
    critical = 1.63 / np.sqrt(n_features)
    assert mp_fit.statistic < critical
    assert lw_fit.statistic > critical


def test_volatility_clustering_inflates_free_ratio(rng):
    # Rows with a common random scale (multivariate Student-t(5), the usual
    # model of heavy-tailed returns) have a wider bulk than Gaussian noise; a
    # free fit reads it as a larger effective ratio. With iid heavy-tailed
    # entries the bulk would stay MP (universality), so the scale is per row.
    # Theory is not quoted here: a direct simulation check (common practice).
    n_rows, n_features, nu = 801, 200, 5
    scale = np.sqrt((nu - 2) / rng.chisquare(nu, size=(n_rows, 1)))
    X = rng.standard_normal((n_rows, n_features)) * scale
    spec = sample_spectrum(X)
    fit = fit_bulk(spec.eigenvalues, spec.n_samples, n_features, fix_ratio=False)
    assert fit.ratio > 1.2 * n_features / spec.n_samples


def test_input_not_modified_and_frozen(rng):
    eig, dof = noise_spectrum(rng, 101, 40)
    copy = eig.copy()
    fit = fit_bulk(eig, dof, 40)
    np.testing.assert_array_equal(eig, copy)
    assert isinstance(fit, BulkFit)
    with pytest.raises(dataclasses.FrozenInstanceError):
        fit.noise_variance = 1.0


def test_str_contains_numbers(rng):
    eig, dof = noise_spectrum(rng, 101, 40)
    fit = fit_bulk(eig, dof, 40, n_signal=1)
    text = str(fit)
    assert f"{fit.noise_variance:.6g}" in text
    assert f"{fit.upper_edge:.6g}" in text
    assert f"{fit.statistic:.4g}" in text
    assert "1 largest set aside" in text


def test_tiny_negative_eigenvalues_are_rounding(rng):
    eig, dof = noise_spectrum(rng, 41, 40)
    eig = eig.copy()
    eig[-1] = -1e-15 * eig[0]
    fit = fit_bulk(eig, dof, 40)
    assert np.isfinite(fit.noise_variance)


@pytest.mark.parametrize(
    "eigenvalues, kwargs, error, match",
    [
        ([3.0, np.nan, 1.0], {}, ValueError, "finite"),
        ([3.0, 2.0, -0.5], {}, ValueError, "non-negative"),
        ([1.0, 2.0, 3.0], {}, ValueError, "descending"),
        ([[3.0, 2.0]], {}, ValueError, "1-D"),
        (["a", "b"], {}, TypeError, "real numbers"),
        ([3.0, 2.0, 1.0], {"n_signal": 2}, ValueError, "'n_signal' parameter"),
        ([3.0, 2.0, 1.0], {"n_signal": -1}, ValueError, "'n_signal' parameter"),
        ([3.0, 2.0, 1.0], {"method": "ks"}, ValueError, "'method' parameter"),
        ([3.0, 2.0, 1.0], {"fix_ratio": "yes"}, ValueError, "'fix_ratio'"),
        ([3.0, 2.0, 1.0], {"n_samples": 0}, ValueError, "'n_samples' parameter"),
        ([3.0, 2.0, 1.0], {"n_features": 2}, ValueError, "more than n_features"),
        # rounding-level zeros are null space: one eigenvalue left, no bulk
        ([3.0, 0.0, 0.0], {"n_signal": 1}, ValueError, "'n_signal' parameter"),
    ],
)
def test_validation(eigenvalues, kwargs, error, match):
    params = {"n_samples": 50, "n_features": 10, **kwargs}
    with pytest.raises(error, match=match):
        fit_bulk(eigenvalues, **params)


def test_n_signal_must_stay_below_n_samples():
    with pytest.raises(ValueError, match="fit_bulk must be an int in the range"):
        fit_bulk(np.linspace(5, 1, 10), n_samples=3, n_features=10, n_signal=3)
