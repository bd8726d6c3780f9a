"""Fitting from dask arrays, locally and on a LocalCluster bound to 127.0.0.1."""

import numpy as np
import pytest

da = pytest.importorskip("dask.array", reason="dask is an optional extra")
distributed = pytest.importorskip("distributed", reason="distributed is optional")

import rmtclean  # noqa: E402
from rmtclean.distributed import dask_sample_spectrum, is_dask_array  # noqa: E402
from rmtclean.estimators import (  # noqa: E402
    EigenClip,
    KernelShrink,
    SpikeShrink,
    StieltjesShrink,
)
from rmtclean.spectrum import SampleSpectrum  # noqa: E402
from tests._identity_rule import KeepSample  # noqa: E402


def _cleaners():
    out = [KeepSample()]
    for cls in [KernelShrink, EigenClip, StieltjesShrink, SpikeShrink]:
        out.append(cls())
    return out


@pytest.fixture(scope="module")
def client():
    cluster = distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        host="127.0.0.1",
        dashboard_address=None,
        processes=True,
    )
    client = distributed.Client(cluster)
    try:
        yield client
    finally:
        client.close()
        cluster.close()


@pytest.mark.parametrize("standardize", [False, True])
@pytest.mark.parametrize("assume_centered", [False, True])
def test_dask_spectrum_equals_in_memory(rng, standardize, assume_centered):
    X = rng.standard_normal((2000, 12)) @ rng.standard_normal((12, 12)) + 3.0
    w = rng.integers(0, 3, size=2000).astype(float)
    for weights in [None, w]:
        a = dask_sample_spectrum(
            da.from_array(X, chunks=(300, 12)),
            standardize=standardize,
            assume_centered=assume_centered,
            sample_weight=weights,
        )
        b = SampleSpectrum.from_data(
            X,
            standardize=standardize,
            assume_centered=assume_centered,
            sample_weight=weights,
        )
        np.testing.assert_allclose(a.eigenvalues, b.eigenvalues, rtol=1e-10)
        np.testing.assert_allclose(a.location, b.location, rtol=1e-12, atol=1e-12)
        assert a.n_samples == b.n_samples


def test_dask_gram_route_equals_in_memory(rng):
    X = rng.standard_normal((60, 400))
    a = dask_sample_spectrum(da.from_array(X, chunks=(15, 400)))
    b = SampleSpectrum.from_data(X)
    assert a.route == b.route == "gram"
    np.testing.assert_allclose(a.eigenvalues, b.eigenvalues, rtol=1e-10)
    overlap = np.abs(np.sum(a.eigenvectors * b.eigenvectors, axis=0))
    np.testing.assert_allclose(overlap, 1.0, atol=1e-8)


def test_fit_on_local_cluster_equals_in_memory(rng, client):
    X = rng.standard_normal((3000, 20)) @ rng.standard_normal((20, 20))
    dX = da.from_array(X, chunks=(500, 20))
    assert is_dask_array(dX) and not is_dask_array(X)
    for est in _cleaners():
        ref = type(est)(**est.get_params()).fit(X)
        got = type(est)(**est.get_params()).fit(dX)
        scale = np.abs(ref.covariance_).max()
        np.testing.assert_allclose(got.covariance_, ref.covariance_, atol=1e-10 * scale)
        assert got.n_features_in_ == 20


def test_dask_bad_input():
    with pytest.raises(ValueError, match="NaN or infinity"):
        X = np.ones((10, 3))
        X[4, 1] = np.nan
        KeepSample().fit(da.from_array(X, chunks=(5, 3)))
    with pytest.raises(ValueError, match="2-D"):
        KeepSample().fit(da.ones(10, chunks=5))
    with pytest.raises(TypeError, match="complex"):
        KeepSample().fit(da.ones((10, 3), chunks=(5, 3), dtype=complex))
    with pytest.raises(ValueError, match="at least 2"):
        KeepSample().fit(da.ones((1, 3), chunks=(1, 3)))


@pytest.mark.parametrize("n_features", [4, 40])  # dense and Gram routes
def test_dask_standardize_refuses_a_constant_not_binary_column(rng, n_features):
    # 0.01 centres to residuals of order eps, not 0: zero variance all the same.
    X = rng.standard_normal((20, n_features))
    X[:, 2] = 0.01
    with pytest.raises(ValueError, match=r"zero variance \(first index 2\)"):
        dask_sample_spectrum(
            da.from_array(X, chunks=(10, n_features)), standardize=True
        )


def test_backtest_on_local_cluster_equals_local_run(rng, client):
    from sklearn.covariance import LedoitWolf

    from rmtclean.backtest import backtest

    X = 0.01 * rng.standard_normal((160, 12))
    cleaners = {"LW": LedoitWolf(), "kernel": rmtclean.KernelShrink()}
    local = backtest(X, cleaners, window=60, step=25)
    remote = backtest(X, cleaners, window=60, step=25, client=client)
    current = backtest(X, cleaners, window=60, step=25, client="current")
    for other in (remote, current):
        np.testing.assert_allclose(
            other.returns.to_numpy(), local.returns.to_numpy(), rtol=1e-12
        )
        np.testing.assert_allclose(
            other.log_likelihood.to_numpy(),
            local.log_likelihood.to_numpy(),
            rtol=1e-12,
        )


def test_backtest_refuses_a_bad_client(rng):
    from sklearn.covariance import LedoitWolf

    from rmtclean.backtest import backtest

    X = rng.standard_normal((80, 4))
    with pytest.raises(ValueError, match="'client' parameter of backtest"):
        backtest(X, [LedoitWolf()], window=40, step=20, client="cluster")
    with pytest.raises(TypeError, match="'client' parameter of backtest"):
        backtest(X, [LedoitWolf()], window=40, step=20, client=3)
