"""Numerical robustness: hard but legal inputs, and the laws at extreme arguments.

Every test turns RuntimeWarning (division by zero, overflow, invalid value)
into an error inside its body, so none may escape a fit or a law. Cleaned
eigenvalues must be non-negative and at least the documented floor; the
degenerate-but-legal inputs (rank deficient, T barely above 1, duplicated
or collinear columns) must fit and say so with rmtclean's warning classes.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy.linalg import hadamard

from rmtclean.estimators import (
    EigenClip,
    KernelShrink,
    LinearShrink,
    SpikeShrink,
    StieltjesShrink,
)
from rmtclean.exceptions import RankDeficientWarning, WeakEstimateWarning
from rmtclean.laws import MarchenkoPastur, TracyWidom, WignerSemicircle
from tests._registry import CASES

CASE_IDS = [case.id for case in CASES]


def _haar(n, seed):
    # Haar orthogonal matrix: QR of a Gaussian with the sign fix (Mezzadri
    # 2007, Notices AMS 54(5), from memory).
    q, r = np.linalg.qr(np.random.default_rng(seed).standard_normal((n, n)))
    return q * np.sign(np.diag(r))


def _population_sample(eigenvalues, n_rows, seed):
    """Gaussian rows with population covariance Q diag(eigenvalues) Q'."""
    n = len(eigenvalues)
    root = _haar(n, seed) * np.sqrt(eigenvalues)
    Z = np.random.default_rng(seed + 1).standard_normal((n_rows, n))
    return Z @ root.T


def _fit_strict(case, X, **params):
    """Fit with every RuntimeWarning an error; other warnings recorded."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        warnings.simplefilter("error", RuntimeWarning)
        est = case.make(**params).fit(X)
    return est, [w.category for w in caught]


def _floor(case, est) -> float:
    """The documented lower bound of the cleaned eigenvalues."""
    if case.cls is SpikeShrink:  # bulk and null space at the noise variance
        return est.noise_variance_
    if case.cls is EigenClip:  # clipped eigenvalues become the bulk mean
        return min(
            est.bulk_mean_, est.eigenvalues_[: est.n_signal_].min(initial=np.inf)
        )
    if case.cls is LinearShrink and case.params.get("target", "identity") == "identity":
        # (1 - delta) lambda + delta mu >= delta mu (Ledoit & Wolf 2004).
        return est.shrinkage_ * est.sample_eigenvalues_.mean()
    return 0.0


def _check_sound(case, est):
    vals = est.eigenvalues_
    for name in ("covariance_", "precision_", "eigenvalues_"):
        assert np.all(np.isfinite(getattr(est, name))), name
    assert np.all(vals >= 0), vals.min()
    assert vals.min() >= _floor(case, est) * (1 - 1e-12)
    if not case.semidefinite:
        assert vals.min() > 0
        cond = vals.max() / vals.min()
        n = vals.size
        err = np.abs(est.precision_ @ est.covariance_ - np.eye(n)).max()
        assert err <= 64 * n * np.finfo(float).eps * cond, (err, cond)


# -- ill-conditioned and clustered populations -----------------------------------
@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@pytest.mark.parametrize("shape", [(200, 40), (30, 60)], ids=["T>N", "N>T"])
def test_condition_number_1e12(case, shape):
    n_rows, n_features = shape
    X = _population_sample(np.logspace(0, -12, n_features), n_rows, seed=11)
    est, _ = _fit_strict(case, X)
    _check_sound(case, est)


def _orthogonal_design(n_rows, n_features):
    # Columns 1.. of a Sylvester-Hadamard matrix: mean zero, mutually
    # orthogonal, so X'X = n_rows I and every sample eigenvalue is tied
    # (Sylvester 1867; checked by the test's own X'X).
    H = hadamard(n_rows).astype(float)[:, 1 : n_features + 1]
    assert np.array_equal(H.T @ H, n_rows * np.eye(n_features))
    return H


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@pytest.mark.parametrize(
    "scales", [[1.0] * 12, [3.0] * 4 + [1.0] * 8], ids=["all tied", "two clusters"]
)
def test_tied_and_clustered_eigenvalues(case, scales):
    X = _orthogonal_design(32, len(scales)) * np.asarray(scales)
    est, _ = _fit_strict(case, X)
    # X'X = 32 diag(scales^2), divided by the fit's divisor (T - 1, or T for
    # LinearShrink's default bias=True).
    expected = np.sort(np.asarray(scales) ** 2 * 32 / est.degrees_of_freedom_)[::-1]
    assert np.allclose(est.sample_eigenvalues_, expected, rtol=1e-12)
    _check_sound(case, est)
    if case.rotation_invariant and len(set(scales)) == 1:
        # A multiple of the identity has no preferred direction: whatever the
        # cleaner does, it must give one value to all tied eigenvalues.
        assert np.ptp(est.eigenvalues_) <= 1e-10 * est.eigenvalues_.max()


# -- exactly zero eigenvalues: degenerate but legal --------------------------------
def _base(n_rows=60, n_features=10, seed=3):
    return np.random.default_rng(seed).standard_normal((n_rows, n_features))


def _duplicated():
    X = _base()
    return np.c_[X, X[:, :2]]


def _collinear():
    X = _base()
    return np.c_[X, X[:, 0] + 2.0 * X[:, 1] - X[:, 2]]


def _low_rank():
    rng = np.random.default_rng(4)
    return rng.standard_normal((60, 4)) @ rng.standard_normal((4, 12))


def _repeated_rows():
    X = _base(5, 8)
    return np.tile(X, (6, 1))  # 30 rows, 5 distinct: rank 4 < min(8, 29)


DEGENERATE = {
    "duplicated columns": _duplicated,
    "collinear features": _collinear,
    "rank 4 of 12": _low_rank,
}


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@pytest.mark.parametrize("make_data", list(DEGENERATE.values()), ids=list(DEGENERATE))
def test_zero_eigenvalues_fit_and_warn(case, make_data):
    X = make_data()
    est, caught = _fit_strict(case, X)
    _check_sound(case, est)
    n_zero = np.count_nonzero(
        est.sample_eigenvalues_ <= 1e-12 * est.sample_eigenvalues_[0]
    )
    assert n_zero >= 1
    if case.warns_rank_deficient:
        assert RankDeficientWarning in caught


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_repeated_rows_warn(case):
    est, caught = _fit_strict(case, _repeated_rows())
    _check_sound(case, est)
    if case.warns_rank_deficient:
        assert RankDeficientWarning in caught


@pytest.mark.parametrize(
    "case", [c for c in CASES if c.min_rows <= 3], ids=lambda c: c.id
)
@pytest.mark.parametrize("n_rows", [2, 3])
@pytest.mark.parametrize("n_features", [1, 2, 6])
def test_few_rows_fit_and_warn(case, n_rows, n_features):
    X = _base(n_rows, n_features, seed=n_rows + n_features)
    if not case.feasible(n_rows, n_features):
        # A documented limit of the cleaner (tests/_registry.py): a clear
        # refusal naming the sample size, never a broken estimate.
        with pytest.raises(ValueError, match="n_samples"):
            _fit_strict(case, X)
        return
    est, caught = _fit_strict(case, X)
    for name in ("covariance_", "precision_", "eigenvalues_"):
        assert np.all(np.isfinite(getattr(est, name))), name
    assert np.all(est.eigenvalues_ >= 0)
    # T - 1 < 3 degrees of freedom: no bulk to fit (the base class's
    # threshold, as rmtclean.rules.eigen_clip's).
    assert WeakEstimateWarning in caught


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_enough_rows_do_not_warn(case):
    # The warnings are not noise: ordinary data raise none of them.
    est, caught = _fit_strict(case, _base(60, 10))
    assert WeakEstimateWarning not in caught
    assert RankDeficientWarning not in caught
    _check_sound(case, est)


# -- the laws at extreme arguments ---------------------------------------------------
def _strict(func, *args):
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        return np.asarray(func(*args), dtype=float)


def _monotone(values, increasing=True):
    steps = np.diff(values)
    return bool(np.all(steps >= 0) if increasing else np.all(steps <= 0))


@pytest.mark.parametrize("beta", [1, 2])
def test_tracy_widom_tails_finite_and_monotone(beta):
    tw = TracyWidom(beta=beta)
    s = np.r_[-60.0, -30.0, np.linspace(-12.0, 20.0, 321), 40.0, 77.0, 100.0, 500.0]
    cdf = _strict(tw.cdf, s)
    sf = _strict(tw.sf, s)
    pdf = _strict(tw.pdf, s)
    for values in (cdf, sf, pdf):
        assert np.all(np.isfinite(values))
    assert np.all((cdf >= 0) & (cdf <= 1)) and np.all((sf >= 0) & (sf <= 1))
    assert _monotone(cdf) and _monotone(sf, increasing=False)
    assert np.all(pdf >= 0)
    # The logs keep the deep tails where the probabilities underflow.
    left = np.linspace(-60.0, 0.0, 121)
    logcdf = _strict(tw.logcdf, left)
    assert np.all(np.isfinite(logcdf)) and _monotone(logcdf)
    right = np.r_[np.linspace(0.0, 100.0, 201), 300.0, 1000.0]
    logsf = _strict(tw.logsf, right)
    assert np.all(np.isfinite(logsf)) and _monotone(logsf, increasing=False)
    # Tracy & Widom 1994/1996: log F(s) ~ -|s|^3/24 (beta 1), -|s|^3/12
    # (beta 2) as s -> -inf [from memory]; at s = -60 the next
    # term, |s|^(3/2) / (3 sqrt 2) for beta 1, is 1.2% of the first.
    lead = -(60.0**3) / (24.0 if beta == 1 else 12.0)
    assert abs(logcdf[0] / lead - 1) < 0.02


@pytest.mark.parametrize("beta", [1, 2])
def test_tracy_widom_quantiles_at_extreme_probabilities(beta):
    tw = TracyWidom(beta=beta)
    p = np.r_[1e-300, 1e-100, 1e-12, 0.5, 1 - 1e-12]
    q = _strict(tw.ppf, p)
    assert np.all(np.isfinite(q)) and np.all(np.diff(q) > 0)
    upper = _strict(tw.isf, np.r_[1e-300, 1e-100, 1e-12, 0.5])
    assert np.all(np.isfinite(upper)) and np.all(np.diff(upper) < 0)
    # Round trip deep in the right tail [computed].
    assert np.isclose(tw.sf(upper[2]), 1e-12, rtol=1e-6)


RATIOS = [1e-10, 1e-4, 0.5, 1 - 1e-9, 1.0, 1 + 1e-9, 2.0, 1e4]


@pytest.mark.parametrize("ratio", RATIOS)
def test_marchenko_pastur_extremes_finite_and_monotone(ratio):
    mp = MarchenkoPastur(ratio)
    a, b = mp.support()
    width = b - a
    x = np.r_[
        -1.0,
        0.0,
        a,
        a + width * np.logspace(-15, -1, 15),
        np.linspace(a, b, 201),
        b - width * np.logspace(-1, -15, 15),
        b,
        b * (1 + 1e-12),
        10 * b,
    ]
    x = np.sort(x)
    cdf = _strict(mp.cdf, x)
    sf = _strict(mp.sf, x)
    assert np.all(np.isfinite(cdf)) and np.all(np.isfinite(sf))
    assert np.all((cdf >= 0) & (cdf <= 1)) and np.all((sf >= 0) & (sf <= 1))
    assert _monotone(cdf) and _monotone(sf, increasing=False)
    assert cdf[-1] == 1.0 and sf[0] == 1.0
    # The atom at 0 for ratio > 1 (Marchenko & Pastur 1967, Math. USSR-Sbornik 1(4)).
    assert np.isclose(mp.cdf(0.0), max(0.0, 1 - 1 / ratio), rtol=1e-12, atol=1e-15)
    inside = x[(x > 0) & (x > a) & (x < b)]
    pdf = _strict(mp.pdf, inside)
    assert np.all(np.isfinite(pdf)) and np.all(pdf >= 0)
    p = np.r_[1e-12, 1e-6, np.linspace(0.01, 0.99, 99), 1 - 1e-6, 1 - 1e-12]
    quantiles = _strict(mp.ppf, p)
    assert np.all(np.isfinite(quantiles)) and _monotone(quantiles)
    assert np.all((quantiles >= 0) & (quantiles <= b))
    z = np.r_[-1.0, 0.5 * (a + b), 2 * b] + 1e-3j
    assert np.all(np.isfinite(mp.stieltjes(z)))


def test_marchenko_pastur_sf_keeps_relative_accuracy_at_the_edge():
    # Near the upper edge the mass above x is ~ c (b - x)^{3/2}: over three
    # decades of distance, the ratios of successive values follow
    # 10^{-3/2} [computed from the square-root edge of the density].
    mp = MarchenkoPastur(0.5)
    b = mp.upper_edge
    gaps = 10.0 ** -np.arange(6, 12)
    sf = _strict(mp.sf, b - gaps)
    assert np.all(sf > 0)
    assert np.allclose(sf[1:] / sf[:-1], 10**-1.5, rtol=1e-3)


def test_semicircle_extremes_finite_and_monotone():
    ws = WignerSemicircle(2.0)
    x = np.r_[-1e300, -2.0, -2.0 + np.logspace(-15, -1, 15), 0.0, 2.0, 1e300]
    x = np.sort(x)
    cdf = _strict(ws.cdf, x)
    sf = _strict(ws.sf, x)
    assert np.all(np.isfinite(cdf)) and _monotone(cdf) and _monotone(sf, False)
    assert cdf[0] == 0.0 and cdf[-1] == 1.0


@pytest.mark.parametrize("cls", [KernelShrink, StieltjesShrink])
def test_variance_that_underflows_gives_the_zero_covariance(cls):
    # One entry of 1e-300: the rows differ, so the base's all-equal check
    # passes, but the sample variance 1e-600 underflows to 0 and no
    # eigenvalue is positive; the cleaners return the zero matrix [computed].
    X = np.zeros((20, 5))
    X[0, 0] = 1e-300
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        est = cls().fit(X)
    np.testing.assert_array_equal(est.covariance_, np.zeros((5, 5)))
    assert X[0, 0] == 1e-300 and np.count_nonzero(X) == 1
