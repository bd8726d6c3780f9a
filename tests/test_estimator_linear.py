"""Tests of the LinearShrink estimator."""

import warnings

import numpy as np
import pytest
from sklearn.covariance import OAS, LedoitWolf, ShrunkCovariance
from sklearn.utils.estimator_checks import parametrize_with_checks

from rmtclean.estimators import LinearShrink
from rmtclean.exceptions import (
    InvalidParameterError,
    RankDeficientWarning,
    WeakEstimateWarning,
)
from rmtclean.rules import linear_shrink, linear_shrink_covariance
from tests._spectra import report_count
from tests.test_rule_linear import lw2004_intensity

SHAPES = [(60, 8), (25, 70), (30, 1)]
TARGETS = ["identity", "diagonal", "constant-correlation"]
RTOL = 1e-10


def _data(rng, T, N):
    A = rng.standard_normal((N, N)) / np.sqrt(N) + np.eye(N)
    return rng.standard_t(df=6, size=(T, N)) @ A + rng.standard_normal(N)


def _close(a, b, rtol=RTOL):
    """Equal to rtol relative to the largest entry of the reference."""
    np.testing.assert_allclose(a, b, rtol=0, atol=rtol * np.abs(b).max())


@parametrize_with_checks(
    [
        LinearShrink(),
        LinearShrink(intensity="oas"),
        LinearShrink(target="diagonal"),
        LinearShrink(target="constant-correlation", intensity=0.3),
    ]
)
def test_sklearn_checks(estimator, check):
    check(estimator)


# -- scikit-learn equality (1.9.1 source [paper]: divisor n, demeaned) -----
@pytest.mark.parametrize("shape", SHAPES)
@pytest.mark.parametrize("assume_centered", [False, True])
@pytest.mark.parametrize(
    "intensity,reference",
    [
        ("ledoit-wolf", LedoitWolf),
        ("oas-sklearn", OAS),
        (0.2, lambda **kw: ShrunkCovariance(shrinkage=0.2, **kw)),
    ],
)
def test_equals_sklearn(rng, shape, assume_centered, intensity, reference):
    X = _data(rng, *shape)
    est = LinearShrink(intensity=intensity, assume_centered=assume_centered).fit(X)
    ref = reference(assume_centered=assume_centered).fit(X)
    _close(est.covariance_, ref.covariance_)
    _close(est.precision_, ref.precision_)
    np.testing.assert_allclose(est.location_, ref.location_, rtol=1e-14, atol=0)
    shrinkage = getattr(ref, "shrinkage_", getattr(ref, "shrinkage", None))
    assert est.shrinkage_ == pytest.approx(shrinkage, rel=RTOL, abs=1e-300)
    X_test = _data(np.random.default_rng(1), 20, shape[1])
    assert est.score(X_test) == pytest.approx(ref.score(X_test), rel=1e-10)
    assert est.degrees_of_freedom_ == shape[0]


@pytest.mark.parametrize("shape", [(60, 8), (25, 70)])
@pytest.mark.parametrize("target", TARGETS)
def test_equals_function(rng, shape, target):
    X = _data(rng, *shape)
    est = LinearShrink(target=target).fit(X)
    cov, delta = linear_shrink_covariance(X, target=target)
    assert est.shrinkage_ == pytest.approx(delta, rel=1e-12)
    _close(est.covariance_, cov)
    _close(est.precision_ @ est.covariance_, np.eye(shape[1]))


@pytest.mark.parametrize("shape", [(60, 8), (25, 70)])
@pytest.mark.parametrize("intensity", ["ledoit-wolf", "oas", 0.4])
def test_gram_route_equals_dense_route(rng, shape, intensity):
    X = _data(rng, *shape)
    dense = LinearShrink(intensity=intensity, route="dense").fit(X)
    gram = LinearShrink(intensity=intensity, route="gram").fit(X)
    assert gram.shrinkage_ == pytest.approx(dense.shrinkage_, rel=1e-12)
    _close(gram.covariance_, dense.covariance_)
    np.testing.assert_allclose(
        gram.sample_eigenvalues_,
        dense.sample_eigenvalues_,
        rtol=0,
        atol=1e-10 * dense.sample_eigenvalues_[0],
    )


@pytest.mark.parametrize("shape", [(60, 8), (25, 70)])
def test_identity_eigenvalues_are_paired(rng, shape):
    X = _data(rng, *shape)
    est = LinearShrink().fit(X)
    lam = est.sample_eigenvalues_
    mu = lam.sum() / shape[1]
    d = est.shrinkage_
    np.testing.assert_allclose(est.eigenvalues_, (1 - d) * lam + d * mu, rtol=1e-13)
    # The sample eigenvalues carry the divisor T, like covariance_.
    Xc = X - X.mean(axis=0)
    top = np.linalg.eigvalsh(Xc.T @ Xc / shape[0])[::-1]
    np.testing.assert_allclose(lam, np.maximum(top, 0), rtol=0, atol=1e-10 * top[0])


def test_bias_false_uses_degrees_of_freedom(rng):
    # Ledoit & Wolf (2004, J. Multivariate Anal. 88(2), from memory) evaluated with
    # S = X_c'X_c/(T-1) and n = T - 1 by the written-out reference.
    T, N = 30, 10
    X = _data(rng, T, N)
    est = LinearShrink(bias=False).fit(X)
    delta, S, mu = lw2004_intensity(X - X.mean(axis=0), T - 1)
    assert est.shrinkage_ == pytest.approx(delta, rel=RTOL)
    _close(est.covariance_, (1 - delta) * S + delta * mu * np.eye(N))
    assert est.degrees_of_freedom_ == T - 1
    np.testing.assert_allclose(np.cov(X.T), S, rtol=1e-12)


@pytest.mark.parametrize("target", TARGETS)
def test_standardize_cleans_the_correlation(rng, target):
    # [computed] standardize=True shrinks the standardised data and restores the
    # (T - 1)-divisor column scales.
    T, N = 50, 6
    X = _data(rng, T, N)
    est = LinearShrink(target=target, standardize=True).fit(X)
    Xc = X - X.mean(axis=0)
    sd = Xc.std(axis=0, ddof=1)
    inner, delta = linear_shrink_covariance(
        Xc / sd, target=target, assume_centered=True
    )
    assert est.shrinkage_ == pytest.approx(delta, rel=1e-12)
    _close(est.covariance_, inner * np.outer(sd, sd))


@pytest.mark.parametrize("target", TARGETS)
def test_frequency_weights_repeat_rows(rng, target):
    T, N = 30, 5
    X = _data(rng, T, N)
    w = rng.integers(0, 4, size=T)
    w[0] = 1
    weighted = LinearShrink(target=target).fit(X, sample_weight=w.astype(float))
    repeated = LinearShrink(target=target).fit(np.repeat(X, w, axis=0))
    assert weighted.shrinkage_ == pytest.approx(repeated.shrinkage_, rel=1e-11)
    _close(weighted.covariance_, repeated.covariance_)


@pytest.mark.parametrize("target", ["diagonal", "constant-correlation"])
def test_structured_spectrum_is_that_of_the_covariance(rng, target):
    X = _data(rng, 40, 7)
    est = LinearShrink(target=target).fit(X)
    vals = np.linalg.eigvalsh(est.covariance_)[::-1]
    np.testing.assert_allclose(est.eigenvalues_, vals, rtol=1e-12)
    Z = X - est.location_
    np.testing.assert_allclose(
        est.mahalanobis(X),
        np.einsum("ij,jk,ik->i", Z, np.linalg.inv(est.covariance_), Z),
        rtol=1e-10,
    )
    # one count per data set: the spectrum report's, on the same spectrum
    assert est.n_signal_ == report_count(est)


def test_float32_input_gives_float32(rng):
    X = _data(rng, 40, 5).astype(np.float32)
    est = LinearShrink().fit(X)
    assert est.covariance_.dtype == np.float32
    assert est.transform(X).dtype == np.float32


def test_input_not_modified(rng):
    X = _data(rng, 20, 4)
    X0 = X.copy()
    LinearShrink(target="constant-correlation").fit(X)
    np.testing.assert_array_equal(X, X0)


def test_rule_and_estimator_share_the_intensity(rng):
    # The estimator's identity path is the rule on its spectrum.
    X = _data(rng, 40, 6)
    est = LinearShrink(intensity="oas").fit(X)
    out = linear_shrink(est.sample_eigenvalues_, 40, 6, intensity="oas")
    assert out.details.intensity == pytest.approx(est.shrinkage_, rel=1e-12)


def test_bad_parameters(rng):
    X = _data(rng, 20, 4)
    with pytest.raises(InvalidParameterError, match="'target' parameter of Linear"):
        LinearShrink(target="ones").fit(X)
    with pytest.raises(InvalidParameterError, match="Got 1.5 instead"):
        LinearShrink(intensity=1.5).fit(X)
    with pytest.raises(InvalidParameterError, match="'bias' parameter"):
        LinearShrink(bias="yes").fit(X)
    with pytest.raises(ValueError, match="LinearShrink: the OAS intensity"):
        LinearShrink(target="diagonal", intensity="oas").fit(X)
    Xz = X.copy()
    Xz[:, 1] = 3.0
    with pytest.raises(ValueError, match="zero variance"):
        LinearShrink(target="constant-correlation").fit(Xz)


# -- the direct dense fit (no eigendecomposition at fit) against the spectral one ---
@pytest.mark.parametrize("target", TARGETS)
@pytest.mark.parametrize("intensity", ["ledoit-wolf", 0.3])
@pytest.mark.parametrize("bias", [True, False])
def test_direct_fit_equals_spectral_fit(rng, target, intensity, bias):
    T, N = 50, 9
    X = _data(rng, T, N)
    kw = dict(target=target, intensity=intensity, bias=bias)
    direct = LinearShrink(**kw).fit(X)
    # Unit weights give the same estimate through the spectral route.
    spectral = LinearShrink(**kw).fit(X, sample_weight=np.ones(T))
    assert "spectrum_" not in vars(direct) and "spectrum_" in vars(spectral)
    assert direct.shrinkage_ == pytest.approx(spectral.shrinkage_, rel=1e-12)
    assert direct.degrees_of_freedom_ == spectral.degrees_of_freedom_
    _close(direct.covariance_, spectral.covariance_)
    _close(direct.precision_, spectral.precision_)
    np.testing.assert_allclose(direct.location_, spectral.location_, rtol=1e-14)
    for name in ("sample_eigenvalues_", "eigenvalues_"):
        ref = getattr(spectral, name)
        np.testing.assert_allclose(
            getattr(direct, name), ref, rtol=0, atol=1e-10 * ref[0]
        )
    # Eigenvectors agree up to sign.
    dots = np.abs(np.sum(direct.eigenvectors_ * spectral.eigenvectors_, axis=0))
    np.testing.assert_allclose(dots, 1.0, atol=1e-8)
    X_test = _data(np.random.default_rng(2), 15, N)
    assert direct.score(X_test) == pytest.approx(spectral.score(X_test), rel=1e-10)
    _close(direct.transform(X_test), spectral.transform(X_test))
    _close(direct.mahalanobis(X_test), spectral.mahalanobis(X_test))


def test_direct_fit_defers_then_keeps_the_spectrum(rng):
    X = _data(rng, 40, 6)
    est = LinearShrink().fit(X)
    before = dict(vars(est))
    first = est.spectrum_
    assert est.spectrum_ is first  # computed once
    assert vars(est) == before  # using the fit does not change its attributes
    # A refit through the spectral route replaces the deferred attributes.
    est.fit(X, sample_weight=np.ones(40))
    assert est.spectrum_ is not first and "spectrum_" in vars(est)
    est.fit(X)
    assert "spectrum_" not in vars(est) and est.spectrum_ is not first


@pytest.mark.parametrize("intensity", [0.0, 1.0])
def test_bounds_of_intensity_use_the_spectral_route(rng, intensity):
    # delta = 0 or 1 hides S or its eigenvectors in the result: the fit falls
    # back to the spectral route, which keeps them.
    X = _data(rng, 40, 6)
    est = LinearShrink(intensity=intensity).fit(X)
    assert "spectrum_" in vars(est)
    Xc = X - X.mean(axis=0)
    lam = np.linalg.eigvalsh(Xc.T @ Xc / 40)[::-1]
    np.testing.assert_allclose(est.sample_eigenvalues_, lam, rtol=1e-10)


def test_singular_sample_covariance_without_shrinkage(rng):
    # T = N after demeaning leaves S singular: with delta = 0 the precision is
    # the pseudo-inverse of the spectral route, as sklearn's pinvh.
    X = _data(rng, 8, 8)
    est = LinearShrink(intensity=0.0).fit(X)
    ref = ShrunkCovariance(shrinkage=0.0).fit(X)
    _close(est.covariance_, ref.covariance_)
    assert est.sample_eigenvalues_[-1] == 0.0


@pytest.mark.parametrize("intensity", ["ledoit-wolf", 0.0])
def test_dataframe_feature_names_on_both_routes(rng, intensity):
    import pandas as pd

    X = pd.DataFrame(_data(rng, 30, 4), columns=list("abcd"))
    est = LinearShrink(intensity=intensity).fit(X)
    np.testing.assert_array_equal(est.feature_names_in_, list("abcd"))


@pytest.mark.parametrize("target", TARGETS)
@pytest.mark.parametrize("scale", [1.0, 1e-150, 1e150])
def test_two_rows_give_a_positive_definite_estimate(rng, target, scale):
    # [computed] With T = 2 every centred row has x_t x_t' = S, so every
    # Ledoit-Wolf-type intensity is 0 and S (rank 1) would be returned
    # (sklearn's LedoitWolf does so). Issue 14 asks for a positive-definite
    # estimate: the identity target takes the OAS intensity (Chen, Wiesel,
    # Eldar & Hero 2010, eq. 23, written out here with n = T = 2), the other
    # targets the target itself; the fit warns.
    X = scale * _data(rng, 2, 3)
    Xc = X - X.mean(axis=0)
    S = Xc.T @ Xc / 2
    assert lw2004_intensity(Xc / scale, 2.0)[0] == pytest.approx(0.0, abs=1e-12)
    with pytest.warns(WeakEstimateWarning, match="intensity is 0 while the sample"):
        est = LinearShrink(target=target).fit(X)
    p, n = 3, 2.0
    unit = S / scale**2  # the intensity is scale free: computed in these units
    tr, tr2 = np.trace(unit), np.sum(unit * unit)
    if target == "identity":
        num = (1 - 2 / p) * tr2 + tr**2
        rho = min(num / ((n + 1 - 2 / p) * (tr2 - tr**2 / p)), 1)
        assert est.shrinkage_ == pytest.approx(rho, rel=1e-12)
        expected = (1 - rho) * S + rho * np.trace(S) / p * np.eye(p)
    else:
        assert est.shrinkage_ == 1.0
        sd = np.sqrt(np.diag(S))
        if target == "diagonal":
            expected = np.diag(np.diag(S))
        else:  # mean sample correlation off the diagonal, Ledoit-Wolf (2004)
            R = S / np.outer(sd, sd)
            rbar = (R.sum() - p) / (p * (p - 1))
            expected = rbar * np.outer(sd, sd)
            np.fill_diagonal(expected, np.diag(S))
    _close(est.covariance_, expected)
    if target != "constant-correlation":  # that target is singular at T = 2
        assert np.linalg.eigvalsh(est.covariance_ / scale**2).min() > 0
        _close(est.precision_, np.linalg.inv(expected / scale**2) / scale**2)


def test_half_life_is_the_kish_weighted_fit(rng):
    from rmtclean.weights import exponential_weights, kish_weights

    T, N = 60, 7
    X = _data(rng, T, N)
    decayed = LinearShrink(half_life=15.0).fit(X)
    weights = kish_weights(exponential_weights(T, 15.0), None)
    weighted = LinearShrink().fit(X, sample_weight=weights)
    assert decayed.shrinkage_ == pytest.approx(weighted.shrinkage_, rel=1e-12)
    _close(decayed.covariance_, weighted.covariance_)
    plain = LinearShrink().fit(X)
    assert abs(decayed.shrinkage_ - plain.shrinkage_) > 1e-6


@pytest.mark.parametrize("spectral", [False, True])
def test_warnings_on_both_routes(rng, spectral):
    weight = (lambda T: np.ones(T)) if spectral else (lambda T: None)
    X = _data(rng, 40, 6)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # ordinary data: no warning
        LinearShrink().fit(X, sample_weight=weight(40))
    dup = np.c_[X, X[:, 0]]  # a duplicated column: S is singular
    with pytest.warns(RankDeficientWarning, match="1 of the 7 sample eigenvalues"):
        est = LinearShrink().fit(dup, sample_weight=weight(40))
    assert ("spectrum_" in vars(est)) == spectral
    with pytest.warns(WeakEstimateWarning, match="only 2 degree"):
        LinearShrink().fit(X[:3, :2], sample_weight=weight(3))
