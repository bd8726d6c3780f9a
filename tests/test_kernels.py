"""Tests of rmtclean._kernels against pure-numpy twins written here."""

import numba
import numpy as np
import pytest
from scipy.integrate import quad

from rmtclean import _kernels

SQRT5 = np.sqrt(5.0)


# -- numpy twins (broadcast, small N) --------------------------------------
def _hk_closed(u):
    """H_k(u), closed form: Ledoit & Wolf 2020, Ann. Statist.
    48(5) [memory+checked]."""
    u = np.asarray(u, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        v = -0.3 * u / np.pi + 3 / (4 * SQRT5 * np.pi) * (1 - u * u / 5) * np.log(
            np.abs((SQRT5 - u) / (SQRT5 + u))
        )
    return np.where(np.abs(u) == SQRT5, -0.3 * u / np.pi, v)


def _hk_twin(u):
    """The kernel's split: closed form near, moment series for |u| >= 8."""
    u = np.asarray(u, dtype=float)
    with np.errstate(divide="ignore"):
        w = 5.0 / (u * u)
    r = np.arange(14)
    coef = 3.0 / ((2 * r + 1) * (2 * r + 3))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        series = -(w[..., None] ** r * coef).sum(axis=-1) / (np.pi * u)
    return np.where(np.abs(u) >= _kernels.SERIES_CUT, series, _hk_closed(u))


def _density_hilbert_twin(x, c, h):
    u = (x[:, None] - c[None, :]) / h[None, :]
    k = 3 / (4 * SQRT5) * np.maximum(1 - u * u / 5, 0)
    return (k / h).mean(axis=1), (_hk_twin(u) / h).mean(axis=1)


@numba.njit(error_model="numpy")
def _log_twin(values, scratch):
    _kernels._log_in_place(values, values.view(np.int64), scratch, values.size)


def _resolvent_twin(c, eta):
    g = (1.0 / ((c - 1j * eta)[:, None] - c[None, :])).mean(axis=1)
    return g.real, g.imag


def _spectrum(rng, n):
    lam = np.sort(rng.chisquare(5, n))[::-1] / 5
    return lam, lam * n ** (-1 / 3)


def _assert_rel(a, b, rtol):
    # Relative to the largest magnitude: H changes sign inside the spectrum.
    np.testing.assert_allclose(a, b, rtol=rtol, atol=rtol * np.max(np.abs(b)))


# -- the Hilbert transform of the kernel -----------------------------------
@pytest.mark.parametrize("u", [-7.0, -2.0, -0.5, 0.3, 1.0, 2.0, 3.0, 6.5])
def test_hilbert_transform_matches_principal_value_quadrature(u):
    # H_k(u) = (1/pi) PV int k(t)/(t - u) dt (Ledoit & Wolf 2020, Ann. Statist. 48(5)
    # [memory+checked]), by scipy's Cauchy-weight quadrature.
    def k(t):
        return 3 / (4 * SQRT5) * (1 - t * t / 5)

    if abs(u) < SQRT5:
        pv = quad(k, -SQRT5, SQRT5, weight="cauchy", wvar=u)[0]
    else:
        pv = quad(lambda t: k(t) / (t - u), -SQRT5, SQRT5)[0]
    assert _kernels.epanechnikov_hilbert(u) == pytest.approx(pv / np.pi, rel=1e-12)


def test_hilbert_series_matches_closed_form_where_both_are_accurate():
    # Moment expansion vs closed form at 8 <= |u| <= 30, where the closed
    # form's cancellation error (~eps u^2) is still below 1e-13.
    u = np.concatenate([np.linspace(8.0, 30.0, 41), -np.linspace(8.0, 30.0, 41)])
    got = np.array([_kernels.epanechnikov_hilbert(v) for v in u])
    np.testing.assert_allclose(got, _hk_closed(u), rtol=1e-12)


def test_hilbert_far_field_is_minus_one_over_pi_u():
    # A unit-mass kernel's Hilbert transform tends to -1/(pi u) [computed].
    for u in (1e3, -1e5, 1e8):
        assert _kernels.epanechnikov_hilbert(u) == pytest.approx(
            -1.0 / (np.pi * u), rel=1e-5 if abs(u) < 1e4 else 1e-9
        )


def test_hilbert_at_the_support_edges():
    # The limit -3u/(10 pi) at |u| = sqrt5 (Ledoit & Wolf 2020, Ann. Statist. 48(5)).
    assert _kernels.epanechnikov_hilbert(SQRT5) == -0.3 * SQRT5 / np.pi
    assert _kernels.epanechnikov_hilbert(-SQRT5) == 0.3 * SQRT5 / np.pi


# -- the density / Hilbert sums --------------------------------------------
@pytest.mark.parametrize("n", [1, 7, 8, 9, 61, 300])
def test_density_hilbert_matches_numpy_twin(rng, n):
    lam, h = _spectrum(rng, n)
    f, H = _kernels.epanechnikov_density_hilbert(lam, lam, h)
    f_ref, H_ref = _density_hilbert_twin(lam, lam, h)
    _assert_rel(f, f_ref, 1e-12)
    _assert_rel(H, H_ref, 1e-12)


@pytest.mark.parametrize("n", [127, 128, 129, 3000])
def test_block_expansions_match_the_pair_sums(rng, n):
    # Sizes around BLOCK_SIZE and one where most blocks go through their
    # Laurent expansion; points off the spectrum, below, above, at 0 and at
    # a support edge (the kernel's own split is what the twin evaluates).
    lam, h = _spectrum(rng, n)
    x = np.concatenate(
        [lam, [0.0, lam[0] * 2, lam[-1] / 3, lam[5] + SQRT5 * h[5]]],
        dtype=float,
    )
    f, H = _kernels.epanechnikov_density_hilbert(x, lam, h)
    f_ref, H_ref = _density_hilbert_twin(x, lam, h)
    _assert_rel(f, f_ref, 1e-12)
    _assert_rel(H, H_ref, 1e-12)


def test_order_of_the_centres_costs_time_never_accuracy(rng):
    # Shuffled centres make wide blocks (nearly all pairs direct); the result
    # must agree with the sorted order to rounding.
    lam, h = _spectrum(rng, 1000)
    order = rng.permutation(lam.size)
    sorted_ = _kernels.epanechnikov_density_hilbert(lam, lam, h)
    shuffled = _kernels.epanechnikov_density_hilbert(lam, lam[order], h[order])
    _assert_rel(shuffled[0], sorted_[0], 1e-13)
    _assert_rel(shuffled[1], sorted_[1], 1e-13)


def test_laurent_table_is_the_binomial_moment_table():
    # table[r, k] = 3/((2r+1)(2r+3)) C(k, 2r) [computed: Pascal's rule].
    t = _kernels.LAURENT_TABLE
    assert t.shape == (_kernels.N_TERMS // 2 + 1, _kernels.N_TERMS)
    r, k = 3, 10
    assert t[r, k] == 3 / (7 * 9) * 210
    assert np.all(t[np.arange(1, t.shape[0]), 0] == 0)
    # tail bound of the expansion stays below 1e-16
    sep = _kernels.SEPARATION
    assert sep ** (-_kernels.N_TERMS) / (1 - 1 / sep) < 1e-16


def test_vectorised_logarithm_matches_numpy(rng):
    # The pair loop's own log against numpy's, over 600 decades.
    values = np.exp(rng.uniform(-690, 690, 4096))
    values = np.concatenate([values, [1.0, 2.0, 0.5, np.sqrt(2), 1 - 1e-16]])
    got = values.copy()
    scratch = np.empty_like(got)
    _log_twin(got, scratch)
    np.testing.assert_allclose(got, np.log(values), rtol=4e-16, atol=4e-16)


def test_density_integrates_to_one(rng):
    # Each kernel has unit mass, so f integrates to 1 [computed].
    lam, h = _spectrum(rng, 50)
    grid = np.linspace(lam[-1] - 3 * h[-1], lam[0] + 3 * h[0], 400_001)
    f, _ = _kernels.epanechnikov_density_hilbert(grid, lam, h)
    assert np.trapezoid(f, grid) == pytest.approx(1.0, rel=1e-6)


def test_kernels_propagate_nan_and_leave_inputs_alone(rng):
    lam, h = _spectrum(rng, 40)
    lam_copy, h_copy = lam.copy(), h.copy()
    _kernels.epanechnikov_density_hilbert(lam, lam, h)
    _kernels.resolvent_sum(lam, 0.1)
    np.testing.assert_array_equal(lam, lam_copy)
    np.testing.assert_array_equal(h, h_copy)
    bad = lam.copy()
    bad[3] = np.nan
    f, H = _kernels.epanechnikov_density_hilbert(bad, bad, h)
    assert np.all(np.isnan(H))
    re, im = _kernels.resolvent_sum(bad, 0.1)
    assert np.all(np.isnan(re)) and np.all(np.isnan(im))


# -- the resolvent ---------------------------------------------------------
@pytest.mark.parametrize("n", [1, 8, 13, 250])
@pytest.mark.parametrize("eta", [1e-3, 0.05, 2.0])
def test_resolvent_matches_numpy_twin(rng, n, eta):
    lam, _ = _spectrum(rng, n)
    re, im = _kernels.resolvent_sum(lam, eta)
    re_ref, im_ref = _resolvent_twin(lam, eta)
    _assert_rel(re, re_ref, 1e-12)
    np.testing.assert_allclose(im, im_ref, rtol=1e-12)
    assert np.all(im > 0)


# -- threads ---------------------------------------------------------------
def test_numba_threads_restores_the_previous_count():
    before = numba.get_num_threads()
    with _kernels.numba_threads(1) as used:
        assert used == 1 == numba.get_num_threads()
    assert numba.get_num_threads() == before
    with pytest.raises(RuntimeError):
        with _kernels.numba_threads(1):
            raise RuntimeError("inside")
    assert numba.get_num_threads() == before
    with _kernels.numba_threads(-1) as used:
        assert used == numba.config.NUMBA_NUM_THREADS
    with _kernels.numba_threads(None) as used:
        assert used == before
    # Default n_jobs on small work: one thread; explicit n_jobs is obeyed.
    with _kernels.numba_threads(None, _kernels.SERIAL_PAIRS - 1) as used:
        assert used == 1 == numba.get_num_threads()
    with _kernels.numba_threads(None, _kernels.SERIAL_PAIRS) as used:
        assert used == before
    with _kernels.numba_threads(-1, 10) as used:
        assert used == numba.config.NUMBA_NUM_THREADS
    assert numba.get_num_threads() == before


def test_numba_threads_rejects_bad_values():
    with pytest.raises(ValueError, match="'n_jobs' parameter must be None, -1"):
        with _kernels.numba_threads(0):
            pass


def test_results_do_not_depend_on_the_thread_count(rng):
    lam, h = _spectrum(rng, 1230)
    with _kernels.numba_threads(1):
        one = _kernels.epanechnikov_density_hilbert(lam, lam, h)
    with _kernels.numba_threads(-1):
        all_ = _kernels.epanechnikov_density_hilbert(lam, lam, h)
    np.testing.assert_array_equal(one[0], all_[0])
    np.testing.assert_array_equal(one[1], all_[1])


def test_kernel_registry():
    assert _kernels.KERNELS["epanechnikov"] is _kernels.epanechnikov_density_hilbert
    assert _kernels.KERNELS["resolvent"] is _kernels.resolvent_sum
