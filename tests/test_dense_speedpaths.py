"""Exactness of the fast dense paths of a fit.

- ``CleanedSpectrum.to_dense`` forms ``c I + V_s diag(d_s - c) V_s'`` (only
  the directions whose value differs from a shared ``c``) by BLAS syrk; it
  must equal the plain ``V diag(d) V' + c (I - V V')`` written out here.
- ``SampleSpectrum.from_data`` forms ``Xc' Xc / dof`` without a scaled copy
  of the data; it must reproduce numpy's ``np.cov`` / ``np.corrcoef``.
- ``precision_`` is densified on first access; it must equal the eager
  ``spectrum_.to_dense(-1)`` and the inverse (``pinvh``) of ``covariance_``.

The references are numpy and scipy (``np.cov``, ``np.corrcoef``,
``np.linalg.inv``, ``scipy.linalg.pinvh``) and the defining formula of the
factored covariance (shared/DESIGN.md, CleanedSpectrum), evaluated naively
in the tests [computed].
"""

import pickle

import numpy as np
import pytest
import scipy.linalg

from rmtclean import EigenClip, KernelShrink, SpikeShrink
from rmtclean.spectrum import CleanedSpectrum, SampleSpectrum


def _orthonormal(rng, n, k):
    q, r = np.linalg.qr(rng.standard_normal((n, k)))
    return q * np.sign(np.diag(r))


def _plain(V, d, null=None, power=1.0):
    """``V diag(d^p) V' + c^p (I - V V')`` by a general product (the definition)."""
    dp = np.zeros_like(d)
    dp[d > 0] = d[d > 0] ** power
    out = (V * dp) @ V.T
    if null is not None:
        out += null**power * (np.eye(V.shape[0]) - V @ V.T)
    return out


def _rel(a, b):
    return np.abs(a - b).max() / np.abs(b).max()


@pytest.mark.parametrize("power", [1.0, -1.0])
def test_clipped_bulk_is_identity_plus_low_rank(rng, power):
    # Eigenvalue clipping (Laloux et al. 1999): spikes kept, the bulk set to
    # one value; the dense matrix is c I plus a rank-3 term.
    N = 120
    V = _orthonormal(rng, N, N)
    d = np.r_[9.0, 4.0, 2.5, np.full(N - 3, 0.8)]
    A = CleanedSpectrum(V, d)
    ref = _plain(V, d, power=power)
    out = A.to_dense(power)
    assert _rel(out, ref) < 1e-12
    assert np.array_equal(out, out.T)


@pytest.mark.parametrize("power", [1.0, -1.0])
def test_shared_value_inside_the_spectrum(rng, power):
    # The shared value lies between other values: d_s - c of both signs
    # (the W+ W+' - W- W-' split).
    N = 90
    V = _orthonormal(rng, N, N)
    d = np.r_[5.0, 3.0, np.full(N - 5, 1.2), 0.7, 0.4, 0.1]
    out = CleanedSpectrum(V, d).to_dense(power)
    assert _rel(out, _plain(V, d, power=power)) < 1e-12
    assert np.array_equal(out, out.T)


@pytest.mark.parametrize("power", [1.0, -1.0])
def test_distinct_values_and_null_space(rng, power):
    N, r = 80, 30
    V = _orthonormal(rng, N, r)
    d = np.sort(rng.uniform(0.5, 6.0, r))[::-1]
    # Some values equal to the null value are skipped by the dense form.
    d[-4:] = 0.3
    A = CleanedSpectrum(V, d, null_value=0.3)
    out = A.to_dense(power)
    assert _rel(out, _plain(V, d, null=0.3, power=power)) < 1e-12
    assert np.array_equal(out, out.T)
    # All distinct, complete basis: the full syrk.
    W = _orthonormal(rng, N, N)
    e = np.sort(rng.uniform(0.5, 6.0, N))[::-1]
    full = CleanedSpectrum(W, e).to_dense(power)
    assert _rel(full, _plain(W, e, power=power)) < 1e-12


def test_zero_eigenvalues_give_the_pseudo_inverse(rng):
    # scipy.linalg.pinvh is the reference for a singular cleaned matrix.
    N = 40
    V = _orthonormal(rng, N, N)
    d = np.r_[np.linspace(4.0, 1.0, N - 5), np.zeros(5)]
    A = CleanedSpectrum(V, d)
    dense = A.to_dense()
    assert _rel(A.to_dense(-1.0), scipy.linalg.pinvh(dense)) < 1e-10


def test_scaled_dense_is_symmetric_and_matches_the_definition(rng):
    N = 50
    V = _orthonormal(rng, N, N)
    d = np.r_[6.0, 2.0, np.full(N - 2, 0.9)]
    s = rng.uniform(0.1, 10.0, N)
    A = CleanedSpectrum(V, d, scale=s)
    for power, sp in ((1.0, s), (-1.0, 1.0 / s)):
        out = A.to_dense(power)
        ref = sp[:, None] * _plain(V, d, power=power) * sp[None, :]
        assert _rel(out, ref) < 1e-12
        assert np.array_equal(out, out.T)


def test_sample_covariance_matches_numpy(rng):
    # np.cov (T - 1 degrees of freedom) and np.corrcoef are the references;
    # V diag(vals) V' from the eigendecomposition rebuilds the matrix.
    X = rng.standard_normal((300, 60)) * rng.uniform(0.1, 5.0, 60) + 3.0
    spec = SampleSpectrum.from_data(X)
    V, vals = spec.eigenvectors, spec.eigenvalues
    assert np.abs(V.T @ V - np.eye(60)).max() < 1e-13
    ref = np.cov(X, rowvar=False)
    assert _rel((V * vals) @ V.T, ref) < 1e-12
    corr = SampleSpectrum.from_data(X, standardize=True)
    W, cv = corr.eigenvectors, corr.eigenvalues
    assert _rel((W * cv) @ W.T, np.corrcoef(X, rowvar=False)) < 1e-12
    np.testing.assert_allclose(corr.scale, X.std(axis=0, ddof=1), rtol=1e-12)
    # assume_centered: X'X / T, as sklearn's empirical_covariance(assume_centered=True).
    cen = SampleSpectrum.from_data(X, assume_centered=True)
    U, uv = cen.eigenvectors, cen.eigenvalues
    assert _rel((U * uv) @ U.T, X.T @ X / 300) < 1e-12


def test_weighted_sample_covariance_matches_numpy(rng):
    # Integer frequency weights: np.cov(fweights=...) is the reference.
    X = rng.standard_normal((200, 30))
    w = rng.integers(0, 4, 200)
    spec = SampleSpectrum.from_data(X, sample_weight=w)
    V, vals = spec.eigenvectors, spec.eigenvalues
    assert _rel((V * vals) @ V.T, np.cov(X, rowvar=False, fweights=w)) < 1e-12


@pytest.mark.parametrize("assume_centered", [False, True])
@pytest.mark.parametrize("standardize", [False, True])
def test_inputs_are_not_modified(rng, assume_centered, standardize):
    X = rng.standard_normal((80, 20)) * 3.0 + 1.0
    before = X.copy()
    spec = SampleSpectrum.from_data(
        X,
        assume_centered=assume_centered,
        standardize=standardize,
        keep_samples=True,
    )
    assert np.array_equal(X, before)
    assert not np.shares_memory(spec.samples, X)
    EigenClip(assume_centered=assume_centered, standardize=standardize).fit(X)
    assert np.array_equal(X, before)


@pytest.mark.parametrize("klass", [EigenClip, KernelShrink, SpikeShrink])
def test_deferred_precision_equals_the_eager_inverse(rng, klass):
    X = rng.standard_normal((150, 40)) * np.r_[4.0, 3.0, np.ones(38)]
    est = klass().fit(X)
    before = dict(vars(est))
    precision = est.precision_
    assert est.precision_ is precision  # formed once
    assert vars(est) == before  # reading it leaves the fitted attributes alone
    # Same numbers as the eager spectral inverse.
    assert np.array_equal(precision, est.spectrum_.to_dense(-1.0))
    np.testing.assert_allclose(
        precision @ est.covariance_, np.eye(40), rtol=0, atol=1e-10
    )
    assert _rel(precision, np.linalg.inv(est.covariance_)) < 1e-10
    assert est.get_precision() is precision


def test_deferred_precision_gram_route_is_pinvh(rng):
    # N > T: the null space gets one value; scipy.linalg.pinvh of covariance_
    # is the reference inverse.
    X = rng.standard_normal((40, 70))
    est = EigenClip().fit(X)
    assert _rel(est.precision_, scipy.linalg.pinvh(est.covariance_)) < 1e-9


def test_deferred_precision_dtype_pickle_and_refit(rng):
    X = rng.standard_normal((100, 25))
    est = EigenClip().fit(X.astype(np.float32))
    clone = pickle.loads(pickle.dumps(est))  # pickled before the first access
    assert est.precision_.dtype == np.float32
    assert np.array_equal(clone.precision_, est.precision_)
    first = est.precision_
    est.fit(X)  # a refit replaces the deferred inverse
    assert est.precision_ is not first and est.precision_.dtype == np.float64
    off = EigenClip(store_precision=False).fit(X)
    assert off.precision_ is None
    np.testing.assert_allclose(off.get_precision(), est.precision_, rtol=1e-12)
    unfitted = EigenClip()
    assert not hasattr(unfitted, "precision_")
