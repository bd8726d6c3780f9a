"""Numba kernels for the O(N^2) spectral sums of the nonlinear rules.

Every kernel is a module-level ``@njit(cache=True)`` function on contiguous
float64 arrays, compiled with ``error_model="numpy"`` (a division by zero
gives inf or NaN, as in numpy, instead of raising). Kernels never write
into their inputs and allocate only O(N) outputs and scratch. The outer loop
over evaluation points is a ``prange`` (the points are independent); no
``fastmath`` beyond reassociating plain sums, so NaN and inf propagate.

Kernels
-------
epanechnikov_density_hilbert(x, centres, bandwidths)
    Epanechnikov kernel density estimate and the matching estimate of the
    Hilbert transform, with one bandwidth per kernel centre (Ledoit & Wolf
    2020). Blocks of centres far from a point enter through a Laurent
    expansion (a one-level fast multipole scheme), the rest pair by pair in
    a vectorised loop: 20,000 sorted eigenvalues take about 0.2 s on one
    core (``benchmarks/bench_kernel_rule.py``).
resolvent_sum(centres, eta), resolvent_sum_widths(centres, widths)
    Sample Stieltjes transform g(z_i) = (1/m) sum_j 1/(z_i - lambda_j) at
    z_i = lambda_i - i eta, or with a width per point z_i = lambda_i - i w_i
    (Bun, Allez, Bouchaud & Potters 2016).

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
    "resolvent_sum_widths",
]

SQRT5 = math.sqrt(5.0)
SQRT2 = math.sqrt(2.0)
# Epanechnikov kernel with unit variance: k(x) = 3/(4 sqrt5) (1 - x^2/5)^+.
KERNEL_PEAK = 3.0 / (4.0 * SQRT5)
_PEAK_OVER_PI = KERNEL_PEAK / math.pi
# Far field. For |u| >= SERIES_CUT the Hilbert transform of the kernel is
# summed as its moment expansion in w = 5/u^2 <= 5/64, exact to
# rounding with 14 terms (tail < 1e-18 relative). It avoids a logarithm where
# most pairs of eigenvalues lie, and it is more accurate than the closed form,
# whose two O(u) terms cancel to O(1/u) (relative error ~ eps u^2).
SERIES_CUT = 8.0
# Coefficients 3/((2r+1)(2r+3)) = m_2r / 5^r, m_2r the even moments of k.
_S0, _S1, _S2, _S3, _S4, _S5, _S6 = (
    3.0 / ((2 * r + 1) * (2 * r + 3)) for r in range(7)
)
_S7, _S8, _S9, _S10, _S11, _S12, _S13 = (
    3.0 / ((2 * r + 1) * (2 * r + 3)) for r in range(7, 14)
)
# Independent accumulators in the resolvent loop, so that it vectorises
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


# Logarithm for the pair loop, written out so that the loop vectorises (a
# call to the C library's log does not): y = 2^e m with m in [sqrt(1/2),
# sqrt(2)), log m = 2 atanh(s) = sum_k 2 s^(2k+1)/(2k+1), s = (m-1)/(m+1),
# |s| <= 0.1716, 11 terms (tail < 1e-19), and e log 2 in two parts (the
# split of fdlibm's e_log.c) so that the sum is accurate to a few ulp.
_LN2_HI = 6.93147180369123816490e-01
_LN2_LO = 1.90821492927058770002e-10
_MANTISSA = 0x000FFFFFFFFFFFFF
_EXPONENT_ONE = 0x3FF0000000000000
_C0, _C1, _C2, _C3, _C4, _C5 = (2.0 / (2 * k + 1) for k in range(6))
_C6, _C7, _C8, _C9, _C10 = (2.0 / (2 * k + 1) for k in range(6, 11))


@njit(cache=True, error_model="numpy", inline="always")
def _log_in_place(values, bits, exponent, n):
    """values[:n] = log(values[:n]) for positive normal finite values.

    ``bits`` is ``values.view(np.int64)``; ``exponent`` is scratch. Other
    inputs (0, inf, NaN, subnormals) give finite garbage: the caller masks
    them.
    """
    for t in range(n):
        word = bits[t]
        exponent[t] = float((word >> 52) - 1023)
        bits[t] = (word & _MANTISSA) | _EXPONENT_ONE
    for t in range(n):
        m = values[t]
        big = m > SQRT2
        m = 0.5 * m if big else m
        e = exponent[t] + 1.0 if big else exponent[t]
        s = (m - 1.0) / (m + 1.0)
        s2 = s * s
        p = _C0 + s2 * (_C1 + s2 * (_C2 + s2 * (_C3 + s2 * (_C4 + s2 * (_C5 + s2 * (
            _C6 + s2 * (_C7 + s2 * (_C8 + s2 * (_C9 + s2 * _C10)))))))))  # fmt: skip
        values[t] = e * _LN2_HI + (e * _LN2_LO + s * p)


@njit(cache=True, error_model="numpy", fastmath={"reassoc"}, inline="always")
def _sum(values, n):
    """Sum of values[:n], reassociated so that it vectorises."""
    acc = 0.0
    for t in range(n):
        acc += values[t]
    return acc


@njit(cache=True, error_model="numpy", inline="always")
def _pair_block(xi, centres, inv_bandwidths, start, stop, scratch, bits):
    """Density sum and Hilbert sum over j in [start, stop), pair by pair.

    Exactly the per-pair values of :func:`epanechnikov_hilbert` (closed form
    for |u| < SERIES_CUT, the series beyond; a NaN takes the closed form and
    propagates) and of the kernel. ``scratch`` is a tuple of five arrays of
    BLOCK_SIZE entries, ``bits`` the int64 view of the first.
    Returns (density sum, near-field Hilbert sum, far-field series sum);
    the far-field sum still lacks its factor -1/pi.
    """
    n = stop - start
    arg, us, f_terms, near_terms, far_terms = scratch
    for t in range(n):
        u = (xi - centres[start + t]) * inv_bandwidths[start + t]
        us[t] = u
        arg[t] = abs((SQRT5 - u) / (SQRT5 + u))
    # far_terms serves as the exponent scratch of the logarithm
    _log_in_place(arg, bits, far_terms, n)
    for t in range(n):
        j = start + t
        u = us[t]
        au = abs(u)
        ib = inv_bandwidths[j]
        one_minus = 1.0 - u * u * 0.2
        lin = u * (-0.3 / math.pi)
        closed = lin if au == SQRT5 else lin + _PEAK_OVER_PI * one_minus * arg[t]
        d = xi - centres[j]
        w = 5.0 / (u * u)
        series = _far_series(w)
        is_far = au >= SERIES_CUT
        f_terms[t] = KERNEL_PEAK * one_minus * ib if au < SQRT5 else 0.0
        near_terms[t] = 0.0 if is_far else closed * ib
        far_terms[t] = series / d if is_far else 0.0
    return _sum(f_terms, n), _sum(near_terms, n), _sum(far_terms, n)


# Block expansion of the far field. The centres are cut into blocks of
# BLOCK_SIZE consecutive entries. With c_J the middle of block J and
# R_J = max_j (|c_j - c_J| + sqrt5 h_j), every far-field term of the block is
# analytic outside the disc |x - c_J| <= R_J, and so is their sum
#     G_J(x) = sum_j P(5 h_j^2 / (x - c_j)^2) / (x - c_j),
#     P(w) = sum_r 3 w^r / ((2r+1)(2r+3))  (the series of epanechnikov_hilbert),
# whose Laurent series in D = x - c_J is (1/D) sum_k a_k (R_J/D)^k with
#     a_k = sum_j sum_{2r <= k} 3/((2r+1)(2r+3)) C(k, 2r) w_j^r t_j^(k-2r),
#     w_j = 5 h_j^2 / R_J^2,  t_j = (c_j - c_J) / R_J,  |t_j| + sqrt(w_j) <= 1.
# Each term of a_k is at most (|t_j| + sqrt(w_j))^k <= 1, so |a_k| <= block
# size and nothing cancels. A block is used through its expansion for the
# points with |D| >= SEPARATION R_J, where the tail after N_TERMS terms is
# below SEPARATION^-N_TERMS / (1 - 1/SEPARATION) = 2e-17 relative; the other
# blocks are summed pair by pair. (A one-level version of the fast multipole
# method of Greengard & Rokhlin, J. Comput. Phys. 73, 1987, for this kernel.)
BLOCK_SIZE = 128
SEPARATION = 2.0
N_TERMS = 56
# Points per chunk of the far-field loop (the loop over a chunk vectorises).
_CHUNK = 64


def _laurent_table() -> np.ndarray:
    """table[r, k] = 3/((2r+1)(2r+3)) C(k, 2r), zero for 2r > k."""
    table = np.zeros((N_TERMS // 2 + 1, N_TERMS))
    for k in range(N_TERMS):
        for r in range(k // 2 + 1):
            table[r, k] = 3.0 / ((2 * r + 1) * (2 * r + 3)) * math.comb(k, 2 * r)
    return table


LAURENT_TABLE = _laurent_table()


@njit(cache=True, parallel=True, error_model="numpy")
def _block_expansions(centres, bandwidths, table):
    """Centre, radius and scaled Laurent coefficients of every block."""
    m = centres.shape[0]
    n_blocks = (m + BLOCK_SIZE - 1) // BLOCK_SIZE
    n_terms = table.shape[1]
    middle = np.empty(n_blocks)
    radius = np.empty(n_blocks)
    coef = np.zeros((n_blocks, n_terms))
    for b in prange(n_blocks):
        lo = b * BLOCK_SIZE
        hi = min(m, lo + BLOCK_SIZE)
        top = centres[lo]
        bottom = centres[lo]
        for j in range(lo + 1, hi):
            top = max(top, centres[j])
            bottom = min(bottom, centres[j])
        mid = 0.5 * (top + bottom)
        rad = 0.0
        for j in range(lo, hi):
            rad = max(rad, abs(centres[j] - mid) + SQRT5 * bandwidths[j])
        middle[b] = mid
        radius[b] = rad
        powers_t = np.empty(n_terms)
        for j in range(lo, hi):
            t = (centres[j] - mid) / rad
            w = 5.0 * (bandwidths[j] / rad) ** 2
            powers_t[0] = 1.0
            for k in range(1, n_terms):
                powers_t[k] = powers_t[k - 1] * t
            w_r = 1.0
            for r in range(table.shape[0]):
                for k in range(2 * r, n_terms):
                    coef[b, k] += table[r, k] * w_r * powers_t[k - 2 * r]
                w_r *= w
    return middle, radius, coef


@njit(cache=True, error_model="numpy")
def _far_chunk(x, lo, size, middle, radius, coef):
    """Sum of the expansions of the blocks separated from x[lo:lo + size].

    Horner's rule runs over the points of the chunk at once: the innermost
    loops have no dependence between iterations and vectorise.
    """
    n_terms = coef.shape[1]
    far = np.zeros(size)
    dist = np.empty(size)
    ratio = np.empty(size)
    acc = np.empty(size)
    for b in range(middle.shape[0]):
        mid = middle[b]
        rad = radius[b]
        top = coef[b, n_terms - 1]
        for i in range(size):
            dist[i] = x[lo + i] - mid
            ratio[i] = rad / dist[i]
            acc[i] = top
        for k in range(n_terms - 2, -1, -1):
            ck = coef[b, k]
            for i in range(size):
                acc[i] = ck + ratio[i] * acc[i]
        cut = SEPARATION * rad
        for i in range(size):
            far[i] += acc[i] / dist[i] if abs(dist[i]) >= cut else 0.0
    return far


@njit(cache=True, parallel=True, error_model="numpy")
def epanechnikov_density_hilbert(
    x: np.ndarray,
    centres: np.ndarray,
    bandwidths: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Kernel density and Hilbert-transform estimates at the points ``x``.

    f(x_i) = (1/m) sum_j k((x_i - c_j)/h_j)/h_j and
    H(x_i) = (1/m) sum_j H_k((x_i - c_j)/h_j)/h_j, m = len(centres),
    with k the unit-variance Epanechnikov kernel and H_k its Hilbert
    transform (see :func:`epanechnikov_hilbert`).

    The pairs are summed exactly (closed form with a logarithm for
    |u| < SERIES_CUT, the moment series beyond), except that a block of
    BLOCK_SIZE consecutive centres far from x_i enters through its Laurent
    expansion (see BLOCK_SIZE above), equal to the pair sums to rounding.
    The cost is O(m (m / BLOCK_SIZE) N_TERMS) for the expansions plus the
    pairs of the blocks near each point: with centres sorted (as sample
    eigenvalues are) the blocks are narrow and few are near. Any order is
    correct; unsorted centres make wide blocks and cost time only.

    Parameters
    ----------
    x : ndarray of shape (n_points,)
        Evaluation points.
    centres, bandwidths : ndarray of shape (m,)
        Kernel centres (sample eigenvalues) and their positive bandwidths.

    Returns
    -------
    density, hilbert : ndarray of shape (n_points,)
    """
    n_points = x.shape[0]
    m = centres.shape[0]
    middle, radius, coef = _block_expansions(centres, bandwidths, LAURENT_TABLE)
    n_blocks = middle.shape[0]
    inv_bandwidths = 1.0 / bandwidths
    density = np.empty(n_points)
    hilbert = np.empty(n_points)
    n_chunks = (n_points + _CHUNK - 1) // _CHUNK
    for c in prange(n_chunks):
        lo = c * _CHUNK
        hi = min(n_points, lo + _CHUNK)
        size = hi - lo
        far = _far_chunk(x, lo, size, middle, radius, coef)
        # The other blocks pair by pair (a NaN is never separated: it lands
        # here and propagates).
        arg = np.empty(BLOCK_SIZE)
        scratch = (
            arg,
            np.empty(BLOCK_SIZE),
            np.empty(BLOCK_SIZE),
            np.empty(BLOCK_SIZE),
            np.empty(BLOCK_SIZE),
        )
        bits = arg.view(np.int64)
        for i in range(lo, hi):
            xi = x[i]
            f_acc = 0.0
            near_acc = 0.0
            far_acc = far[i - lo]
            for b in range(n_blocks):
                if not abs(xi - middle[b]) >= SEPARATION * radius[b]:
                    start = b * BLOCK_SIZE
                    f_b, near_b, far_b = _pair_block(
                        xi,
                        centres,
                        inv_bandwidths,
                        start,
                        min(m, start + BLOCK_SIZE),
                        scratch,
                        bits,
                    )
                    f_acc += f_b
                    near_acc += near_b
                    far_acc += far_b
            density[i] = f_acc / m
            hilbert[i] = (near_acc - far_acc / math.pi) / m
    return density, hilbert


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


@njit(cache=True, error_model="numpy")
def resolvent_sum(centres: np.ndarray, eta: float) -> tuple[np.ndarray, np.ndarray]:
    """Sample Stieltjes transform at z_i = lambda_i - i eta, physics sign.

    :func:`resolvent_sum_widths` with the same width ``eta`` at every point:
    g(z_i) = (1/m) sum_j 1/(z_i - lambda_j), m = len(centres).

    Returns
    -------
    real, imag : ndarray of shape (m,)
        Real and imaginary parts of g(z_i); imag > 0 for eta > 0.
    """
    return resolvent_sum_widths(centres, np.full(centres.shape[0], eta))


KERNELS = {
    "epanechnikov": epanechnikov_density_hilbert,
    "resolvent": resolvent_sum,
}


#: Below this many pairs (about 1000 eigenvalues) a kernel called with the
#: default ``n_jobs=None`` runs on one thread. On a busy 2-core machine (load
#: average 4.5) waking numba's other thread cost 2-60 ms per call against
#: 0.3 ms (100 eigenvalues), 1.6 ms (400) and 13 ms (800) of work on one
#: thread; idle, two threads save at most 0.02, 0.4 and 1.3 ms there
#: (``benchmarks/bench_kernel_rule.py``, part 5).
SERIAL_PAIRS = 1_000_000


@contextlib.contextmanager
def numba_threads(n_jobs: int | None, pairs: int | None = None) -> Iterator[int]:
    """Run the enclosed kernels on ``n_jobs`` numba threads.

    ``None`` keeps the current setting (one thread when ``pairs``, the size
    of the work, is below :data:`SERIAL_PAIRS`), ``-1`` uses all of numba's
    threads, a positive value is capped at ``numba.config.NUMBA_NUM_THREADS``.
    The previous thread count is restored on exit, also after an exception.

    Yields
    ------
    int
        The thread count in force inside the block.
    """
    previous = numba.get_num_threads()
    available = numba.config.NUMBA_NUM_THREADS
    if n_jobs is None:
        wanted = 1 if pairs is not None and pairs < SERIAL_PAIRS else previous
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
