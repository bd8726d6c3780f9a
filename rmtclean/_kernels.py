"""Numba kernels for the O(N^2) spectral sums of the nonlinear rules.

Every kernel is a module-level ``@njit(cache=True)`` function on contiguous
float64 arrays, compiled with ``error_model="numpy"`` (a division by zero
gives inf or NaN, as in numpy, instead of raising). Kernels never write
into their inputs and allocate only O(N) outputs and scratch. The outer loop
over evaluation points is a ``prange`` (the points are independent); no
``fastmath``, so NaN and inf propagate.

Kernels
-------
epanechnikov_density_hilbert(x, centres, bandwidths, window_start, window_stop)
    Epanechnikov kernel density estimate and the matching estimate of the
    Hilbert transform, with one bandwidth per kernel centre (Ledoit & Wolf
    2020).
resolvent_sum(centres, eta)
    Sample Stieltjes transform g(z_i) = (1/m) sum_j 1/(z_i - lambda_j) at
    z_i = lambda_i - i eta (Bun, Allez, Bouchaud & Potters 2016).

``KERNELS`` maps these names to the kernels; :func:`numba_threads` maps an
``n_jobs`` value to numba's thread count for the duration of a ``with`` block.
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Iterator

import numba
import numpy as np
from numba import njit, prange

__all__ = [
    "KERNELS",
    "epanechnikov_density_hilbert",
    "epanechnikov_hilbert",
    "numba_threads",
    "resolvent_sum",
]

SQRT5 = math.sqrt(5.0)
# Epanechnikov kernel with unit variance: k(x) = 3/(4 sqrt5) (1 - x^2/5)^+.
KERNEL_PEAK = 3.0 / (4.0 * SQRT5)
# Far field. For |u| >= SERIES_CUT the Hilbert transform of the kernel is
# summed as its moment expansion in w = 5/u^2 <= SERIES_W = 5/64, exact to
# rounding with 14 terms (tail < 1e-18 relative). It avoids a logarithm where
# most pairs of eigenvalues lie, and it is more accurate than the closed form,
# whose two O(u) terms cancel to O(1/u) (relative error ~ eps u^2).
SERIES_CUT = 8.0
SERIES_W = 5.0 / (SERIES_CUT * SERIES_CUT)
# Coefficients 3/((2r+1)(2r+3)) = m_2r / 5^r, m_2r the even moments of k.
_S0, _S1, _S2, _S3, _S4, _S5, _S6 = (
    3.0 / ((2 * r + 1) * (2 * r + 3)) for r in range(7)
)
_S7, _S8, _S9, _S10, _S11, _S12, _S13 = (
    3.0 / ((2 * r + 1) * (2 * r + 3)) for r in range(7, 14)
)
# Independent accumulators in the far-field loop, so that it vectorises
# without reassociating a single floating-point sum (no fastmath).
_LANES = 8


@njit(cache=True, error_model="numpy", inline="always")
def _far_series(w: float) -> float:
    """sum_{r<14} 3 w^r / ((2r+1)(2r+3)) by Horner's rule."""
    p = _S12 + w * _S13
    p = _S11 + w * p
    p = _S10 + w * p
    p = _S9 + w * p
    p = _S8 + w * p
    p = _S7 + w * p
    p = _S6 + w * p
    p = _S5 + w * p
    p = _S4 + w * p
    p = _S3 + w * p
    p = _S2 + w * p
    p = _S1 + w * p
    return _S0 + w * p


@njit(cache=True, error_model="numpy")
def _near_hilbert(u: float) -> float:
    """Closed form of H_k(u), with its limit -3u/(10 pi) at |u| = sqrt5."""
    lin = -0.3 * u / math.pi
    if abs(u) == SQRT5:
        return lin
    return lin + KERNEL_PEAK / math.pi * (1.0 - u * u / 5.0) * math.log(
        abs((SQRT5 - u) / (SQRT5 + u))
    )


@njit(cache=True, error_model="numpy")
def epanechnikov_hilbert(u: float) -> float:
    """Hilbert transform of the unit-variance Epanechnikov kernel at ``u``.

    H_k(u) = (1/pi) PV int k(t)/(t - u) dt
           = -3u/(10 pi) + 3/(4 sqrt5 pi) (1 - u^2/5) log|(sqrt5 - u)/(sqrt5 + u)|,
    with the limit -3u/(10 pi) at |u| = sqrt5. For |u| >= SERIES_CUT the same
    function is summed as -(1/(pi u)) sum_r 3 (5/u^2)^r / ((2r+1)(2r+3)), the
    moment expansion (the even moments of k are 3 5^r/((2r+1)(2r+3))).
    """
    if abs(u) >= SERIES_CUT:
        return -_far_series(5.0 / (u * u)) / (math.pi * u)
    return _near_hilbert(u)


@njit(cache=True, error_model="numpy", inline="always")
def _far_block(xi, centres, bandwidths, start, n_blocks, lanes):
    """Far-field sums of _far_series(w)/d over ``n_blocks`` blocks of pairs.

    Block k covers j in [start + 8k, start + 8k + 8) and accumulates into
    ``lanes`` (independent accumulators, so that the loop vectorises without
    a reassociated sum). A pair in the near field (w > SERIES_W) or a NaN
    turns the sums into NaN: the caller then rescans the point.
    """
    for k in range(n_blocks):
        jb = start + 8 * k
        for lane in range(8):  # literal: a global bound stops the vectoriser
            d = xi - centres[jb + lane]
            t = bandwidths[jb + lane] / d
            w = 5.0 * t * t
            # _far_series written out: a call here stops the vectoriser
            p = _S0 + w * (_S1 + w * (_S2 + w * (_S3 + w * (_S4 + w * (_S5 + w * (
                _S6 + w * (_S7 + w * (_S8 + w * (_S9 + w * (_S10 + w * (
                    _S11 + w * (_S12 + w * _S13))))))))))))  # fmt: skip
            lanes[lane] += p / d if w <= SERIES_W else np.nan


@njit(cache=True, error_model="numpy", inline="always")
def _mixed_block(xi, centres, inv_bandwidths, start, stop):
    """Density sum and Hilbert sum over j in [start, stop), any field.

    Returns (density sum, near-field Hilbert sum, far-field series sum);
    the far-field sum still lacks its factor -1/pi.
    """
    f_acc = 0.0
    near_acc = 0.0
    far_acc = 0.0
    for j in range(start, stop):
        d = xi - centres[j]
        u = d * inv_bandwidths[j]
        au = abs(u)
        if au >= SERIES_CUT:
            far_acc += _far_series(5.0 / (u * u)) / d
        else:  # near field, NaN included so that it propagates
            near_acc += _near_hilbert(u) * inv_bandwidths[j]
            if au < SQRT5:
                f_acc += KERNEL_PEAK * (1.0 - u * u / 5.0) * inv_bandwidths[j]
    return f_acc, near_acc, far_acc


@njit(cache=True, parallel=True, error_model="numpy")
def epanechnikov_density_hilbert(
    x: np.ndarray,
    centres: np.ndarray,
    bandwidths: np.ndarray,
    window_start: np.ndarray,
    window_stop: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Kernel density and Hilbert-transform estimates at the points ``x``.

    f(x_i) = (1/m) sum_j k((x_i - c_j)/h_j)/h_j and
    H(x_i) = (1/m) sum_j H_k((x_i - c_j)/h_j)/h_j, m = len(centres),
    with k the unit-variance Epanechnikov kernel and H_k its Hilbert
    transform (see :func:`epanechnikov_hilbert`).

    Parameters
    ----------
    x : ndarray of shape (n_points,)
        Evaluation points.
    centres, bandwidths : ndarray of shape (m,)
        Kernel centres (sample eigenvalues) and their positive bandwidths.
    window_start, window_stop : ndarray of int64, shape (n_points,)
        A hint: for point i, the pairs with |x_i - c_j| < SERIES_CUT h_j
        (near field, where the closed form with a logarithm is used) are
        expected among j in [window_start[i], window_stop[i]); the pairs
        outside go through a vectorised far-field loop. A wrong hint costs
        time, never accuracy: a near pair outside the window is detected and
        point i is redone over all j. Pass 0 and m (or any empty window) for
        no hint.

    Returns
    -------
    density, hilbert : ndarray of shape (n_points,)
    """
    n_points = x.shape[0]
    m = centres.shape[0]
    density = np.empty(n_points)
    hilbert = np.empty(n_points)
    inv_bandwidths = 1.0 / bandwidths
    for i in prange(n_points):
        xi = x[i]
        lo = max(0, min(window_start[i], m))
        hi = max(lo, min(window_stop[i], m))
        # Whole blocks outside the window; the few pairs between a block
        # boundary and the window go to the window (it handles any pair).
        below, above = lo // _LANES, (m - hi) // _LANES
        lo, hi = below * _LANES, m - above * _LANES
        lanes = np.zeros(_LANES)
        _far_block(xi, centres, bandwidths, 0, below, lanes)
        _far_block(xi, centres, bandwidths, hi, above, lanes)
        outside = 0.0
        for lane in range(_LANES):
            outside += lanes[lane]
        if np.isnan(outside):  # a near pair (or a NaN) outside the window
            lo, hi, outside = 0, m, 0.0
        f_acc, near_acc, far_acc = _mixed_block(xi, centres, inv_bandwidths, lo, hi)
        density[i] = f_acc / m
        hilbert[i] = (near_acc - (far_acc + outside) / math.pi) / m
    return density, hilbert


@njit(cache=True, parallel=True, error_model="numpy")
def resolvent_sum(centres: np.ndarray, eta: float) -> tuple[np.ndarray, np.ndarray]:
    """Sample Stieltjes transform at z_i = lambda_i - i eta, physics sign.

    g(z_i) = (1/m) sum_j 1/(z_i - lambda_j), m = len(centres), evaluated at
    every centre lambda_i. With d = lambda_i - lambda_j,
    1/(d - i eta) = (d + i eta)/(d^2 + eta^2).

    Returns
    -------
    real, imag : ndarray of shape (m,)
        Real and imaginary parts of g(z_i); imag > 0 for eta > 0.
    """
    m = centres.shape[0]
    real = np.empty(m)
    imag = np.empty(m)
    eta2 = eta * eta
    m_lanes = (m // _LANES) * _LANES
    for i in prange(m):
        li = centres[i]
        lane_re = np.zeros(_LANES)
        lane_im = np.zeros(_LANES)
        for jb in range(0, m_lanes, _LANES):
            for lane in range(_LANES):
                d = li - centres[jb + lane]
                inv = 1.0 / (d * d + eta2)
                lane_re[lane] += d * inv
                lane_im[lane] += inv
        re_acc = 0.0
        im_acc = 0.0
        for lane in range(_LANES):
            re_acc += lane_re[lane]
            im_acc += lane_im[lane]
        for j in range(m_lanes, m):
            d = li - centres[j]
            inv = 1.0 / (d * d + eta2)
            re_acc += d * inv
            im_acc += inv
        real[i] = re_acc / m
        imag[i] = eta * im_acc / m
    return real, imag


KERNELS = {
    "epanechnikov": epanechnikov_density_hilbert,
    "resolvent": resolvent_sum,
}


@contextlib.contextmanager
def numba_threads(n_jobs: int | None) -> Iterator[int]:
    """Run the enclosed kernels on ``n_jobs`` numba threads.

    ``None`` keeps the current setting, ``-1`` uses all of numba's threads,
    a positive value is capped at ``numba.config.NUMBA_NUM_THREADS``. The
    previous thread count is restored on exit, also after an exception.

    Yields
    ------
    int
        The thread count in force inside the block.
    """
    previous = numba.get_num_threads()
    available = numba.config.NUMBA_NUM_THREADS
    if n_jobs is None:
        wanted = previous
    elif n_jobs == -1:
        wanted = available
    elif n_jobs >= 1:
        wanted = min(int(n_jobs), available)
    else:
        raise ValueError(
            f"The 'n_jobs' parameter must be None, -1 or a positive int. "
            f"Got {n_jobs!r} instead."
        )
    try:
        numba.set_num_threads(wanted)
        yield wanted
    finally:
        numba.set_num_threads(previous)
