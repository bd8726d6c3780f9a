"""Tests of rmtclean._kernels.resolvent_sum_widths against a numpy twin."""

import numba
import numpy as np
import pytest

from rmtclean._kernels import numba_threads, resolvent_sum_widths
from rmtclean.rules._stieltjes import stieltjes_shrink


def _twin(centres, widths):
    """g(z_i) = mean_j 1/(z_i - c_j), z_i = c_i - i w_i, broadcast [computed]."""
    z = centres - 1j * widths
    g = (1.0 / (z[:, None] - centres[None, :])).mean(axis=1)
    return g.real, g.imag


def _spectrum(rng, m):
    lam = np.sort(rng.chisquare(5, m))[::-1] / 5
    return lam, 0.1 * lam + 0.01 * rng.random(m)


@pytest.mark.parametrize("m", [1, 7, 8, 9, 61, 300])
def test_matches_the_numpy_twin(m):
    # Sizes below, at and across the 8-lane blocks of the inner loop.
    centres, widths = _spectrum(np.random.default_rng(m), m)
    re, im = resolvent_sum_widths(centres, widths)
    tre, tim = _twin(centres, widths)
    scale = np.max(np.abs(tre + 1j * tim))
    np.testing.assert_allclose(re, tre, rtol=1e-12, atol=1e-12 * scale)
    np.testing.assert_allclose(im, tim, rtol=1e-12, atol=1e-12 * scale)
    assert np.all(im > 0)


def test_inputs_not_written():
    centres, widths = _spectrum(np.random.default_rng(1), 50)
    c0, w0 = centres.copy(), widths.copy()
    resolvent_sum_widths(centres, widths)
    np.testing.assert_array_equal(centres, c0)
    np.testing.assert_array_equal(widths, w0)


def test_nan_propagates():
    centres, widths = _spectrum(np.random.default_rng(2), 40)
    c = centres.copy()
    c[5] = np.nan  # every point sums over it
    re, im = resolvent_sum_widths(c, widths)
    assert np.all(np.isnan(re)) and np.all(np.isnan(im))
    w = widths.copy()
    w[3] = np.nan  # only its own point uses it
    re, im = resolvent_sum_widths(centres, w)
    assert np.isnan(re[3]) and np.isnan(im[3])
    assert np.all(np.isfinite(np.delete(re, 3)))
    assert np.all(np.isfinite(np.delete(im, 3)))


def test_zero_width_self_term_is_inf_not_an_error():
    # error_model="numpy": 1/0 gives inf (the j = i term with w_i = 0).
    centres, widths = _spectrum(np.random.default_rng(3), 10)
    w = widths.copy()
    w[0] = 0.0
    re, im = resolvent_sum_widths(centres, w)
    assert np.isnan(im[0]) or np.isinf(im[0])  # 0 * inf or inf


def test_thread_count_invariance():
    # Each point is summed in a fixed order by one thread: bitwise equal.
    centres, widths = _spectrum(np.random.default_rng(4), 500)
    with numba_threads(1):
        one = resolvent_sum_widths(centres, widths)
    with numba_threads(numba.config.NUMBA_NUM_THREADS):
        many = resolvent_sum_widths(centres, widths)
    np.testing.assert_array_equal(one[0], many[0])
    np.testing.assert_array_equal(one[1], many[1])


@pytest.mark.parametrize("T, N", [(401, 100), (101, 100), (100, 100), (61, 100)])
@pytest.mark.parametrize("width", ["relative", "uniform"])
def test_rule_engines_agree(T, N, width):
    # The numba and the blocked numpy sums give the same rule [computed].
    X = np.random.default_rng(T).standard_normal((T, N))
    Xc = X - X.mean(0)
    n = T - 1
    lam = np.linalg.svd(Xc, compute_uv=False)[: min(N, n)] ** 2 / n
    with numba_threads(1):
        a = stieltjes_shrink(lam, n, N, width=width, engine="numba")
    b = stieltjes_shrink(lam, n, N, width=width, engine="numpy")
    np.testing.assert_allclose(a.values, b.values, rtol=1e-12)
    if N > n:
        assert a.null_value == pytest.approx(b.null_value, rel=1e-12)


def test_engine_validation():
    with pytest.raises(ValueError, match="'engine' parameter of stieltjes_shrink"):
        stieltjes_shrink(np.array([2.0, 1.0]), 10, 2, engine="cuda")
