"""Tests of the eigenvalue-clipping rule (rmtclean.rules.eigen_clip)."""

import numpy as np
import pytest

from rmtclean.exceptions import WeakEstimateWarning
from rmtclean.rules import CleanedEigenvalues, eigen_clip
from rmtclean.spectrum import detect_signal, fit_bulk
from tests._spectra import one_blas_thread
from tests._spectra import spiked_spectrum as _spiked_spectrum

S2 = 2.5

__all__ = ["one_blas_thread"]  # the autouse fixture, imported


def spiked_spectrum(rng, n_rows, n_features, variance=S2, spikes=()):
    return _spiked_spectrum(rng, n_rows, n_features, variance, spikes)


def full_trace(result, n_features):
    n_null = n_features - result.values.size
    null = 0.0 if result.null_value is None else result.null_value
    return result.values.sum() + n_null * null


CASES = [(301, 60, (40.0, 25.0, 15.0)), (41, 120, (300.0, 150.0))]  # N < T, N > T
EDGES = ["bulk-fit", "tracy-widom", 8.0]


@pytest.mark.parametrize("n_rows, n_features, spikes", CASES)
@pytest.mark.parametrize("edge", EDGES)
def test_trace_preserved_and_top_untouched(rng, n_rows, n_features, spikes, edge):
    # Laloux, Cizeau, Bouchaud & Potters 1999, PRL 83(7) (from
    # memory): the clipped eigenvalues are replaced by their mean, which keeps
    # the trace (to 1e-12 relative), and the kept eigenpairs are unchanged.
    eig, dof = spiked_spectrum(rng, n_rows, n_features, spikes=spikes)
    out = eigen_clip(eig, dof, n_features, edge=edge)
    assert isinstance(out, CleanedEigenvalues)
    k = out.n_signal
    assert full_trace(out, n_features) == pytest.approx(eig.sum(), rel=1e-12)
    np.testing.assert_array_equal(out.values[:k], eig[:k])
    assert np.all(out.values[k:] == out.details.bulk_mean)
    if n_features > eig.size:
        assert out.null_value == out.details.bulk_mean
    else:
        assert out.null_value is None
    # [computed] the mean over everything not kept, null-space zeros included
    mean = eig[k:].sum() / (n_features - k)
    assert out.details.bulk_mean == pytest.approx(mean, rel=1e-12)


@pytest.mark.parametrize("n_rows, n_features, spikes", CASES)
def test_edges_find_the_planted_spikes(rng, n_rows, n_features, spikes):
    # Spikes far above the BBP threshold s2 (1 + sqrt q) (Baik, Ben Arous & Peche
    # 2005, Ann. Probab. 33(5))
    # stand above both the fitted bulk edge and the Tracy-Widom threshold.
    eig, dof = spiked_spectrum(rng, n_rows, n_features, spikes=spikes)
    for edge in ("bulk-fit", "tracy-widom"):
        out = eigen_clip(eig, dof, n_features, edge=edge)
        assert out.n_signal == len(spikes), edge
    test = detect_signal(eig, dof, n_features)
    tw = eigen_clip(eig, dof, n_features, edge="tracy-widom")
    assert tw.n_signal == test.n_signal
    assert tw.details.noise_variance == test.noise_variance


def test_bulk_fit_edge_is_the_fitted_upper_edge(rng):
    # Laloux et al. 1999 (PRL 83(7), from memory): keep what lies above the upper
    # edge of the MP law fitted to the spectrum; the noise variance reported
    # is the fit with the kept eigenvalues set aside [computed: fit_bulk].
    eig, dof = spiked_spectrum(rng, 301, 60, spikes=(40.0, 25.0, 15.0))
    out = eigen_clip(eig, dof, 60, edge="bulk-fit")
    edge = fit_bulk(eig, dof, 60).upper_edge
    assert out.details.edge == edge
    assert out.n_signal == np.count_nonzero(eig > edge)
    refit = fit_bulk(eig, dof, 60, n_signal=out.n_signal)
    assert out.details.noise_variance == refit.noise_variance


def test_float_edge_and_n_keep(rng):
    eig, dof = spiked_spectrum(rng, 301, 60, spikes=(40.0, 25.0, 15.0))
    edge = 0.5 * (eig[1] + eig[2])
    assert eigen_clip(eig, dof, 60, edge=edge).n_signal == 2
    out = eigen_clip(eig, dof, 60, n_keep=5, edge="tracy-widom")  # n_keep wins
    assert out.n_signal == 5
    np.testing.assert_array_equal(out.values[:5], eig[:5])
    none = eigen_clip(eig, dof, 60, n_keep=0)
    # [computed] all replaced by the mean: tr(S) / N
    np.testing.assert_allclose(none.values, eig.sum() / 60, rtol=1e-12)
    # n_keep beyond n_components - 1 is capped: with N <= n, the sample spectrum
    np.testing.assert_array_equal(eigen_clip(eig, dof, 60, n_keep=99).values, eig)
    # a float edge below every eigenvalue still clips the last one
    assert eigen_clip(eig, dof, 60, edge=0.0).n_signal == eig.size - 1


def test_pure_noise_becomes_flat_at_noise_variance(rng):
    # Pure noise: no eigenvalue above the Tracy-Widom threshold (at this seed)
    # and everything replaced by the mean, which estimates s2 with sd
    # s2 sqrt(2 / (n N)) [computed: chi-squared variance of the trace].
    n_rows, n_features = 201, 100
    eig, dof = spiked_spectrum(rng, n_rows, n_features)
    out = eigen_clip(eig, dof, n_features, edge="tracy-widom")
    assert out.n_signal == 0
    assert np.ptp(out.values) == 0.0
    sd = S2 * np.sqrt(2 / (dof * n_features))
    assert abs(out.values[0] - S2) < 4 * sd
    # the bulk-fit edge keeps at most a couple of fluctuating top eigenvalues
    # and its replaced values also sit at s2
    fitted = eigen_clip(eig, dof, n_features, edge="bulk-fit")
    assert fitted.n_signal <= 2
    assert abs(fitted.details.bulk_mean - S2) < 4 * sd + eig[0] / n_features


def test_n_greater_than_t_null_value(rng):
    eig, dof = spiked_spectrum(rng, 41, 120, spikes=(300.0,))
    out = eigen_clip(eig, dof, 120, n_keep=1)
    assert out.values.size == 40
    assert out.null_value == pytest.approx((eig.sum() - eig[0]) / 119, rel=1e-12)
    assert out.null_value > 0


@pytest.mark.parametrize("edge", ["bulk-fit", "tracy-widom"])
def test_rounding_zeros_are_null_space(rng, edge):
    # Zeros at rounding level (repeated rows, collinear columns) are treated as
    # null space: padding the spectrum with them changes nothing [computed].
    eig, dof = spiked_spectrum(rng, 41, 120, spikes=(300.0, 150.0))
    padded = np.r_[eig, np.full(20, 1e-17 * eig[0])]
    base = eigen_clip(eig, dof + 20, 120, edge=edge)
    out = eigen_clip(padded, dof + 20, 120, edge=edge)
    assert out.n_signal == base.n_signal
    np.testing.assert_allclose(out.values[: eig.size], base.values, rtol=1e-12)
    np.testing.assert_allclose(out.values[eig.size :], base.null_value, rtol=1e-12)


def test_input_not_modified(rng):
    eig, dof = spiked_spectrum(rng, 101, 30)
    copy = eig.copy()
    eigen_clip(eig, dof, 30)
    np.testing.assert_array_equal(eig, copy)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"edge": "median"}, "'edge' parameter of eigen_clip"),
        ({"edge": -1.0}, "'edge' parameter of eigen_clip"),
        ({"edge": np.nan}, "'edge' parameter of eigen_clip"),
        ({"n_keep": -1}, "'n_keep' parameter of eigen_clip"),
        ({"n_keep": 1.5}, "'n_keep' parameter of eigen_clip"),
        ({"alpha": 1.0}, "'alpha' parameter of eigen_clip"),
        ({"n_features": 0}, "'n_features' parameter of eigen_clip"),
    ],
)
def test_validation(kwargs, match):
    params = {"n_samples": 50, "n_features": 10, **kwargs}
    with pytest.raises(ValueError, match=match):
        eigen_clip(np.linspace(5, 1, 10), **params)


def test_validation_of_eigenvalues():
    with pytest.raises(ValueError, match="finite"):
        eigen_clip([5.0, np.nan, 1.0], 50, 10)
    with pytest.warns(WeakEstimateWarning, match="at least 3 nonzero"):
        out = eigen_clip([5.0, 1.0], 50, 10)
    assert out.n_signal == 0
    np.testing.assert_allclose(out.values, 0.6)  # [computed] 6 / 10
    assert eigen_clip([5.0, 1.0], 50, 10, n_keep=1).n_signal == 1
