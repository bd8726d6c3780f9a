"""SampleSpectrum and CleanedSpectrum against numpy/scipy references."""

import tracemalloc

import numpy as np
import pytest

from rmtclean.spectrum import CleanedSpectrum, SampleSpectrum, sample_spectrum


def _desc_eigvalsh(a):
    return np.linalg.eigvalsh(a)[::-1]


@pytest.mark.parametrize("route", ["dense", "gram"])
def test_eigenvalues_match_numpy_cov(rng, route):
    # Reference: numpy.cov with ddof=1 (T - 1 degrees of freedom after demeaning).
    X = rng.standard_normal((120, 40)) @ rng.standard_normal((40, 40))
    spec = SampleSpectrum.from_data(X, route=route)
    ref = _desc_eigvalsh(np.cov(X, rowvar=False))
    np.testing.assert_allclose(spec.eigenvalues, ref, rtol=1e-10, atol=1e-12)
    assert spec.n_samples == 119.0
    V = spec.eigenvectors
    np.testing.assert_allclose(V.T @ V, np.eye(40), atol=1e-10)
    S = np.cov(X, rowvar=False)
    np.testing.assert_allclose((V * spec.eigenvalues) @ V.T, S, atol=1e-10)


def test_gram_route_when_features_exceed_samples(rng):
    X = rng.standard_normal((25, 300))
    spec = sample_spectrum(X)
    assert spec.route == "gram"
    assert spec.n_components == 24  # rank T - 1 after demeaning
    ref = _desc_eigvalsh(np.cov(X, rowvar=False))[:24]
    np.testing.assert_allclose(spec.eigenvalues, ref, rtol=1e-9)
    np.testing.assert_allclose(spec.full_eigenvalues()[24:], 0.0)


def test_gram_route_never_builds_n_by_n(rng):
    # N = 6000, T = 40: one N x N float64 matrix would be 288 MB.
    X = rng.standard_normal((40, 6000))
    tracemalloc.start()
    try:
        SampleSpectrum.from_data(X, route="gram")
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak < 0.1 * 6000**2 * 8


def test_assume_centered_uses_T(rng):
    X = rng.standard_normal((50, 8))
    spec = SampleSpectrum.from_data(X, assume_centered=True)
    ref = _desc_eigvalsh(X.T @ X / 50)
    np.testing.assert_allclose(spec.eigenvalues, ref, rtol=1e-12)
    assert spec.n_samples == 50.0
    np.testing.assert_array_equal(spec.location, np.zeros(8))


def test_integer_weights_equal_repeated_rows(rng):
    X = rng.standard_normal((30, 6))
    w = rng.integers(0, 4, size=30)
    w[0] = 2
    repeated = np.repeat(X, w, axis=0)
    a = SampleSpectrum.from_data(X, sample_weight=w.astype(float))
    b = SampleSpectrum.from_data(repeated)
    np.testing.assert_allclose(a.eigenvalues, b.eigenvalues, rtol=1e-10)
    assert a.n_samples == b.n_samples
    np.testing.assert_allclose(a.location, b.location, rtol=1e-12)


def test_standardize_gives_correlation_spectrum(rng):
    X = rng.standard_normal((80, 10)) * np.arange(1, 11)
    spec = SampleSpectrum.from_data(X, standardize=True)
    ref = _desc_eigvalsh(np.corrcoef(X, rowvar=False))
    np.testing.assert_allclose(spec.eigenvalues, ref, rtol=1e-10)
    np.testing.assert_allclose(spec.scale, X.std(axis=0, ddof=1), rtol=1e-12)


@pytest.mark.parametrize("value", [3.0, 0.0, 0.01, 0.1, -7.3e-5, 1e8 / 3])
@pytest.mark.parametrize("n_features", [4, 40])  # dense and Gram routes
def test_standardize_refuses_constant_column(rng, value, n_features):
    # A constant that is not a binary fraction (0.01) centres to residuals
    # of order eps |mean|, not 0: still zero variance, not a column of +-1.
    X = rng.standard_normal((20, n_features))
    X[:, 2] = value
    assert np.ptp(X[:, 2]) == 0
    with pytest.raises(ValueError, match=r"zero variance \(first index 2\)"):
        SampleSpectrum.from_data(X, standardize=True)
    from rmtclean.missing import missing_sample_spectrum

    X[0, 0] = np.nan
    with pytest.raises(ValueError, match=r"zero variance \(first index 2\)"):
        missing_sample_spectrum(X, method="pairwise", standardize=True)


def test_standardize_keeps_a_small_spread_around_a_large_level(rng):
    # Prices near 100 moving by 1e-9: tiny relative spread, far above
    # rounding error (1e-14 of the level); the correlation is numpy's.
    X = rng.standard_normal((50, 5))
    X[:, 1] = 100.0 + 1e-9 * rng.standard_normal(50)
    spec = SampleSpectrum.from_data(X, standardize=True)
    ref = _desc_eigvalsh(np.corrcoef(X, rowvar=False))
    np.testing.assert_allclose(spec.eigenvalues, ref, rtol=1e-6)


def test_input_not_modified(rng):
    X = rng.standard_normal((20, 5))
    before = X.copy()
    sample_spectrum(X, standardize=True)
    np.testing.assert_array_equal(X, before)


@pytest.mark.parametrize(
    "bad, exc, match",
    [
        (np.ones(5), ValueError, "2-D"),
        (np.ones((3, 2, 2)), ValueError, "2-D"),
        (np.ones((1, 3)), ValueError, "at least 2"),
        (np.array([[1.0, np.nan], [2.0, 3.0]]), ValueError, "NaN or infinity"),
        (np.array([[1.0, np.inf], [2.0, 3.0]]), ValueError, "NaN or infinity"),
        (np.ones((3, 2), dtype=complex), TypeError, "complex"),
        (np.array([["a", "b"], ["c", "d"]], dtype=object), TypeError, "numeric"),
    ],
)
def test_sample_spectrum_bad_input(bad, exc, match):
    with pytest.raises(exc, match=match):
        sample_spectrum(bad)


def _random_cleaned(rng, n, r, *, null=True, scale=False):
    V = np.linalg.qr(rng.standard_normal((n, r)))[0]
    d = rng.uniform(0.5, 5.0, size=r)
    s = rng.uniform(0.5, 2.0, size=n) if scale else None
    return CleanedSpectrum(V, d, null_value=0.7 if null else None, scale=s)


def _dense_reference(cs):
    V, d = cs.eigenvectors, cs.eigenvalues
    n = V.shape[0]
    P = V @ V.T
    C = (V * d) @ V.T + (cs.null_value or 0.0) * (np.eye(n) - P)
    if cs.scale is not None:
        C = np.diag(cs.scale) @ C @ np.diag(cs.scale)
    return C


@pytest.mark.parametrize("null", [True, False])
@pytest.mark.parametrize("scale", [True, False])
def test_cleaned_spectrum_operations_match_dense(rng, null, scale):
    n, r = 12, (5 if null else 12)
    cs = _random_cleaned(rng, n, r, null=null, scale=scale)
    A = _dense_reference(cs)
    B = rng.standard_normal((n, 3))
    b = rng.standard_normal(n)
    np.testing.assert_allclose(cs.to_dense(), A, atol=1e-12)
    np.testing.assert_allclose(
        cs.to_dense(-1.0), np.linalg.inv(A), rtol=1e-9, atol=1e-10
    )
    np.testing.assert_allclose(cs.matvec(B), A @ B, atol=1e-12)
    np.testing.assert_allclose(cs.matvec(b), A @ b, atol=1e-12)
    np.testing.assert_allclose(cs.solve(B), np.linalg.solve(A, B), rtol=1e-9)
    np.testing.assert_allclose(cs.logdet(), np.linalg.slogdet(A)[1], rtol=1e-12)
    np.testing.assert_allclose(cs.diagonal(), np.diag(A), rtol=1e-12)
    np.testing.assert_allclose(cs.trace(), np.trace(A), rtol=1e-12)
    # whiten/colour: L L' = A with L = colour(I), and whiten inverts colour.
    L = cs.colour(np.eye(n))
    np.testing.assert_allclose(L @ L.T, A, atol=1e-10)
    np.testing.assert_allclose(cs.whiten(cs.colour(B)), B, atol=1e-10)
    if not scale:
        import scipy.linalg

        root = scipy.linalg.sqrtm(A).real
        np.testing.assert_allclose(cs.sqrt_matvec(B), root @ B, atol=1e-8)
        np.testing.assert_allclose(
            cs.inv_sqrt_matvec(B), np.linalg.solve(root, B), atol=1e-8
        )
    else:
        with pytest.raises(ValueError, match="symmetric square root"):
            cs.sqrt_matvec(B)


def test_cleaned_spectrum_needs_null_value(rng):
    V = np.linalg.qr(rng.standard_normal((6, 2)))[0]
    with pytest.raises(ValueError, match="null_value"):
        CleanedSpectrum(V, np.ones(2))
    with pytest.raises(ValueError, match="shape"):
        CleanedSpectrum(V, np.ones(3), null_value=1.0)


def test_logdet_of_singular_is_minus_inf(rng):
    V = np.linalg.qr(rng.standard_normal((4, 4)))[0]
    cs = CleanedSpectrum(V, np.array([2.0, 1.0, 0.5, 0.0]))
    assert cs.logdet() == -np.inf


def test_gram_route_with_duplicated_rows_stays_orthonormal(rng):
    # Rank deficiency beyond T - 1: repeated rows give exactly zero Gram
    # eigenvalues; the eigenvectors must still be orthonormal.
    X = rng.standard_normal((10, 200))
    X = np.vstack([X, X[:5]])
    spec = SampleSpectrum.from_data(X, route="gram")
    V = spec.eigenvectors
    np.testing.assert_allclose(V.T @ V, np.eye(V.shape[1]), atol=1e-10)
    S = np.cov(X, rowvar=False)
    np.testing.assert_allclose((V * spec.eigenvalues) @ V.T, S, atol=1e-10)
