"""Numba kernel for the O(N^2) sum of the rotationally invariant estimator.

The Stieltjes-transform rule (:func:`rmtclean.rules.stieltjes_shrink`)
evaluates the sample Stieltjes transform at one point per eigenvalue, each
point with its own distance from the real axis. The kernel follows the
conventions of :mod:`rmtclean._kernels`: a module-level
``@njit(cache=True)`` function on contiguous float64 arrays, compiled with
``error_model="numpy"`` (a division by zero gives inf or NaN, as in numpy),
no ``fastmath`` (NaN and inf propagate), a ``prange`` over the independent
evaluation points, O(N) outputs and O(1) scratch per point, inputs never
written.

Kernels
-------
resolvent_sum_widths(centres, widths)
    g(z_i) = (1/m) sum_j 1/(z_i - lambda_j) at z_i = lambda_i - i w_i
    (Bun, Allez, Bouchaud & Potters 2016 with a width per point).

Thread counts are set with :func:`rmtclean._kernels.numba_threads`.
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

__all__ = ["resolvent_sum_widths"]

# Independent accumulators, so that the inner loop vectorises without a
# reassociated floating-point sum (no fastmath).
_LANES = 8


@njit(cache=True, parallel=True, error_model="numpy")
def resolvent_sum_widths(
    centres: np.ndarray, widths: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Sample Stieltjes transform at z_i = lambda_i - i w_i, physics sign.

    g(z_i) = (1/m) sum_j 1/(z_i - lambda_j), m = len(centres), evaluated at
    every centre lambda_i with its own width w_i. With d = lambda_i - lambda_j,
    1/(d - i w_i) = (d + i w_i)/(d^2 + w_i^2).

    Parameters
    ----------
    centres : ndarray of shape (m,)
        The eigenvalues lambda_j (any order).
    widths : ndarray of shape (m,)
        The distances w_i > 0 of the points from the real axis.

    Returns
    -------
    real, imag : ndarray of shape (m,)
        Real and imaginary parts of g(z_i); imag > 0 for w_i > 0.
    """
    m = centres.shape[0]
    real = np.empty(m)
    imag = np.empty(m)
    m_lanes = (m // _LANES) * _LANES
    for i in prange(m):
        li = centres[i]
        wi = widths[i]
        w2 = wi * wi
        lane_re = np.zeros(_LANES)
        lane_im = np.zeros(_LANES)
        for jb in range(0, m_lanes, _LANES):
            for lane in range(8):  # a literal: a global bound stops the vectoriser
                d = li - centres[jb + lane]
                inv = 1.0 / (d * d + w2)
                lane_re[lane] += d * inv
                lane_im[lane] += inv
        re_acc = 0.0
        im_acc = 0.0
        for lane in range(_LANES):
            re_acc += lane_re[lane]
            im_acc += lane_im[lane]
        for j in range(m_lanes, m):
            d = li - centres[j]
            inv = 1.0 / (d * d + w2)
            re_acc += d * inv
            im_acc += inv
        real[i] = re_acc / m
        imag[i] = wi * im_acc / m
    return real, imag
