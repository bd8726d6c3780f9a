"""Leading eigenvectors from one tridiagonal reduction, and the cleaners that
use them (EigenClip, SpikeShrink with eigen_solver="partial").

References: numpy.linalg.eigh (LAPACK syevd) for the eigenpairs, and the same
estimators with eigen_solver="full" (every eigenvector from numpy.linalg.eigh)
for the fits; the cleaned covariance must agree to 1e-10 relative.
"""

import numpy as np
import pytest

from rmtclean import EigenClip, SpikeShrink
from rmtclean.spectrum import SampleSpectrum
from rmtclean.spectrum._partial import (
    ALL_VECTORS_FRACTION,
    INVERSE_ITERATION_MAX,
    TridiagonalEigh,
)


def _rel(a, b) -> float:
    return float(np.max(np.abs(a - b)) / np.max(np.abs(b)))


def _spiked(rng, n_rows, n_features, spikes=(30.0, 15.0, 8.0)):
    sd = np.ones(n_features)
    sd[: len(spikes)] = np.sqrt(spikes)
    sd *= rng.uniform(0.5, 2.0, n_features)
    return rng.standard_normal((n_rows, n_features)) * sd + 1.5


@pytest.mark.parametrize("scale", [1.0, 1e-150, 1e150])
def test_tridiagonal_eigh_against_numpy(rng, scale):
    # Every branch of TridiagonalEigh.leading: inverse iteration (k <= 100),
    # MRRR (100 < k < n/2) and divide and conquer (k >= n/2); the scales
    # reach both ends of LAPACK's safe range (numpy's syevd scales there too).
    n = 300
    B = rng.standard_normal((n, n + 20))
    A = (B @ B.T) * scale
    ref_vals, ref_vecs = np.linalg.eigh(A)  # reference: numpy (LAPACK syevd)
    ref_vals, ref_vecs = ref_vals[::-1], ref_vecs[:, ::-1]
    eig = TridiagonalEigh(A)
    assert _rel(eig.eigenvalues, ref_vals) < 1e-12
    ks = [1, 7, INVERSE_ITERATION_MAX + 20, int(ALL_VECTORS_FRACTION * n) + 10]
    for k in ks:
        V = eig.leading(k)
        assert V.shape == (n, k)
        np.testing.assert_allclose(V.T @ V, np.eye(k), atol=1e-12)
        # Distinct eigenvalues: each vector equals numpy's up to its sign.
        signs = np.sign(np.sum(V * ref_vecs[:, :k], axis=0))
        np.testing.assert_allclose(V * signs, ref_vecs[:, :k], atol=1e-9)
    assert eig.leading(0).shape == (n, 0)
    with pytest.raises(ValueError, match="k must be in"):
        eig.leading(n + 1)


def test_tridiagonal_eigh_leaves_input_unless_overwrite(rng):
    B = rng.standard_normal((40, 40))
    A = B + B.T
    before = A.copy()
    TridiagonalEigh(A)
    np.testing.assert_array_equal(A, before)
    eig = TridiagonalEigh(np.asfortranarray(A))
    np.testing.assert_allclose(
        eig.eigenvalues, np.linalg.eigvalsh(before)[::-1], rtol=0, atol=1e-12
    )


CLEANERS = [
    (EigenClip, {}),
    (EigenClip, {"edge": "tracy-widom"}),
    (EigenClip, {"n_keep": 4}),
    (SpikeShrink, {}),
    (SpikeShrink, {"loss": "stein"}),
]
DATA = [
    ({}, (150, 40)),  # dense route
    ({}, (30, 80)),  # gram route (N > T)
    ({"route": "gram"}, (150, 40)),
    ({"standardize": True}, (150, 40)),
    ({"assume_centered": True}, (30, 80)),
]


@pytest.mark.parametrize("cls,params", CLEANERS)
@pytest.mark.parametrize("options,shape", DATA)
def test_partial_equals_full(rng, cls, params, options, shape):
    X = _spiked(rng, *shape)
    part = cls(**params, **options).fit(X)
    full = cls(eigen_solver="full", **params, **options).fit(X)
    assert part.n_signal_ == full.n_signal_
    assert _rel(part.covariance_, full.covariance_) < 1e-10
    assert _rel(part.precision_, full.precision_) < 1e-10
    assert _rel(part.eigenvalues_, full.eigenvalues_) < 1e-10
    assert _rel(part.sample_eigenvalues_, full.sample_eigenvalues_) < 1e-10
    # Only the eigenvectors the rule moves off the bulk value are computed.
    k = part.n_signal_
    assert part.eigenvectors_.shape == (shape[1], k)
    assert full.eigenvectors_.shape[1] >= k
    X_new = _spiked(rng, 20, shape[1])
    assert _rel(part.transform(X_new), full.transform(X_new)) < 1e-9
    assert part.score(X_new) == pytest.approx(full.score(X_new), rel=1e-10)
    assert _rel(part.mahalanobis(X_new), full.mahalanobis(X_new)) < 1e-9
    assert _rel(part.inverse_transform(part.transform(X_new)), X_new) < 1e-10
    assert part.spectrum_.logdet() == pytest.approx(full.spectrum_.logdet(), rel=1e-10)


def test_partial_with_weights_and_half_life(rng):
    X = _spiked(rng, 120, 30)
    w = rng.integers(0, 4, size=120).astype(float)
    options = [({}, {"sample_weight": w}), ({"half_life": 40.0}, {})]
    options.append(({"vol_half_life": 20.0}, {}))
    for kwargs, fit in options:
        part = EigenClip(**kwargs).fit(X, **fit)
        full = EigenClip(eigen_solver="full", **kwargs).fit(X, **fit)
        assert _rel(part.covariance_, full.covariance_) < 1e-10


def test_nothing_kept_is_a_multiple_of_the_identity(rng):
    # n_keep=0: every eigenvalue is the mean, the covariance tr(S)/N I
    # (Laloux et al. 1999's clipping with nothing above the edge).
    X = rng.standard_normal((60, 12))
    est = EigenClip(n_keep=0).fit(X)
    assert est.eigenvectors_.shape == (12, 0)
    mean = np.trace(np.cov(X, rowvar=False)) / 12  # reference: numpy
    np.testing.assert_allclose(est.covariance_, mean * np.eye(12), rtol=1e-12)
    np.testing.assert_allclose(
        est.transform(X[:3]), (X[:3] - X.mean(0)) / np.sqrt(mean)
    )


def test_sample_spectrum_leading_route(rng):
    X = _spiked(rng, 200, 30)
    lead = SampleSpectrum.from_data(X, eigenvectors="leading")
    full = SampleSpectrum.from_data(X)
    assert lead.eigenvectors is None
    assert _rel(lead.eigenvalues, full.eigenvalues) < 1e-12
    V = lead.leading_eigenvectors(3)
    np.testing.assert_allclose(
        np.abs(V.T @ full.eigenvectors[:, :3]), np.eye(3), atol=1e-9
    )
    np.testing.assert_array_equal(
        full.leading_eigenvectors(2), full.eigenvectors[:, :2]
    )
    with pytest.raises(
        ValueError, match="eigenvectors must be 'all', 'leading' or 'randomized'"
    ):
        SampleSpectrum.from_data(X, eigenvectors="some")


def test_bad_eigen_solver(rng):
    X = rng.standard_normal((30, 5))
    with pytest.raises(ValueError, match="eigen_solver"):
        EigenClip(eigen_solver="lanczos").fit(X)


@pytest.mark.parametrize("shape", [(400, 20), (30, 60)])
def test_dask_partial_equals_in_memory_full(rng, shape):
    # rmtclean.distributed on the dense (scatter) and gram routes.
    da = pytest.importorskip("dask.array", reason="dask is an optional extra")
    X = _spiked(rng, *shape)
    Xd = da.from_array(X, chunks=(shape[0] // 4, shape[1]))
    for cls in (EigenClip, SpikeShrink):
        part = cls().fit(Xd)
        full = cls(eigen_solver="full").fit(X)
        assert part.eigenvectors_.shape[1] == part.n_signal_ == full.n_signal_
        assert _rel(part.covariance_, full.covariance_) < 1e-10


# -- the randomized route (Halko, Martinsson & Tropp 2011, SIAM Review 53(2))


def _strong(rng, n_rows, n_features, n_spikes):
    # Spikes of 100 to 300 over unit noise at N / T = 0.25: the bulk edge is
    # (1 + 0.5)^2 = 2.25 (Marchenko-Pastur), so each application of Z'Z
    # shrinks the error by about 2.25 / 100 and 8 of them reach rounding.
    sd = np.ones(n_features)
    sd[:n_spikes] = np.sqrt(np.linspace(300.0, 100.0, n_spikes))
    return rng.standard_normal((n_rows, n_features)) * sd


def test_randomized_top_eigh_against_numpy(rng):
    from rmtclean.spectrum._randomized import randomized_top_eigh

    Z = _strong(rng, 400, 100, 4)
    vals, vecs = randomized_top_eigh(Z, 14)
    ref_vals, ref_vecs = np.linalg.eigh(Z.T @ Z)  # reference: numpy
    np.testing.assert_allclose(vals[:4], ref_vals[::-1][:4], rtol=1e-12)
    overlap = np.abs(np.sum(vecs[:, :4] * ref_vecs[:, ::-1][:, :4], axis=0))
    np.testing.assert_allclose(overlap, 1.0, atol=1e-12)
    np.testing.assert_allclose(vecs.T @ vecs, np.eye(14), atol=1e-12)


@pytest.mark.parametrize(
    "cls,params,n_spikes",
    [
        (EigenClip, {"n_keep": 3}, 3),
        (EigenClip, {"edge": 50.0}, 3),
        (EigenClip, {"edge": 50.0}, 20),  # more than the 16 tried first
        (SpikeShrink, {"noise_variance": 1.0}, 3),
        (SpikeShrink, {"noise_variance": 1.0, "loss": "stein"}, 20),
    ],
)
@pytest.mark.parametrize("shape", [(400, 100), (60, 150)])
def test_randomized_equals_exact_on_separated_spikes(rng, cls, params, n_spikes, shape):
    X = _strong(rng, *shape, n_spikes)
    exact = cls(**params).fit(X)
    fast = cls(eigen_solver="randomized", **params).fit(X)
    assert fast.n_signal_ == exact.n_signal_
    assert fast.eigenvectors_.shape == (shape[1], exact.n_signal_)
    assert _rel(fast.covariance_, exact.covariance_) < 1e-10
    assert fast.score(X) == pytest.approx(exact.score(X), rel=1e-10)
    # The trace of the sample covariance is kept: the eigenvalues not
    # computed are given their mean (reference: numpy's np.cov).
    trace = np.trace(np.cov(X, rowvar=False))
    assert np.sum(fast.sample_eigenvalues_) == pytest.approx(trace, rel=1e-12)


def test_randomized_is_deterministic(rng):
    X = _strong(rng, 200, 50, 2)
    a = EigenClip(n_keep=2, eigen_solver="randomized").fit(X)
    b = EigenClip(n_keep=2, eigen_solver="randomized").fit(X)
    np.testing.assert_array_equal(a.covariance_, b.covariance_)


def test_randomized_refuses_rules_fitted_to_the_spectrum(rng):
    X = rng.standard_normal((50, 10))
    with pytest.raises(
        ValueError, match=r"EigenClip\(eigen_solver='randomized'\) needs"
    ):
        EigenClip(eigen_solver="randomized").fit(X)
    with pytest.raises(ValueError, match="Got noise_variance='median'"):
        SpikeShrink(eigen_solver="randomized", noise_variance="median").fit(X)
    da = pytest.importorskip("dask.array", reason="dask is an optional extra")
    with pytest.raises(ValueError, match="needs the data in memory"):
        EigenClip(eigen_solver="randomized", n_keep=1).fit(da.from_array(X))
