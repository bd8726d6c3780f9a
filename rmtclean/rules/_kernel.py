r"""Analytical nonlinear shrinkage (Ledoit & Wolf 2020).

Three layers: the private cores :func:`_density_hilbert` (the kernel sums,
numba or numpy) and :func:`_kernel_shrink`, the public validated
:func:`kernel_shrink`, and the estimator
:class:`rmtclean.estimators.KernelShrink`.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from rmtclean import _kernels
from rmtclean._validation import (
    POSITIVE_FINITE,
    Options,
    check_spectrum,
    check_value,
)
from rmtclean.exceptions import WeakEstimateWarning
from rmtclean.rules._linear import _linear_shrink
from rmtclean.rules._types import (
    CleanedEigenvalues,
    KernelDetails,
    expand_zeros,
    positive_rank,
)

__all__ = ["KERNEL_ENGINES", "KERNEL_FORMULAS", "kernel_shrink"]

#: Implementations of the kernel sums.
KERNEL_ENGINES = ("numba", "numpy")
#: "published": Ledoit & Wolf (2020) exactly; "stabilized": the same away
#: from N/T = 1, with the remedy of the Notes of :func:`kernel_shrink` near it.
KERNEL_FORMULAS = ("stabilized", "published")

_SQRT5 = math.sqrt(5.0)
# Row blocks of the numpy engine hold at most this many pairs (32 MB each).
_NUMPY_BLOCK_PAIRS = 4_000_000
# Up to this many pairs (about 32 eigenvalues) the numba engine also uses
# the numpy sums: on a loaded machine waking numba's threads took 0.01-0.1 s
# per call where the numpy sums take about 0.1-1 ms (measured for 5 to 100
# eigenvalues, load average 11 on 2 cores).
_NUMPY_SMALL_PAIRS = 1024


# -- the kernel sums -------------------------------------------------------
def _hilbert_numpy(u: np.ndarray) -> np.ndarray:
    """H_k(u) on an array, with the kernel's split (series for |u| >= cut)."""
    au = np.abs(u)
    far = au >= _kernels.SERIES_CUT
    out = np.empty_like(u)
    uf = u[far]
    w = 5.0 / (uf * uf)
    coef = 3.0 / ((2.0 * np.arange(14) + 1.0) * (2.0 * np.arange(14) + 3.0))
    series = np.zeros_like(w)
    for c in coef[::-1]:
        series = series * w + c
    out[far] = -series / (np.pi * uf)
    un = u[~far]
    lin = -0.3 * un / np.pi
    with np.errstate(divide="ignore", invalid="ignore"):
        log_term = (
            _kernels.KERNEL_PEAK
            / np.pi
            * (1.0 - un * un / 5.0)
            * np.log(np.abs((_SQRT5 - un) / (_SQRT5 + un)))
        )
    out[~far] = np.where(np.abs(un) == _SQRT5, lin, lin + log_term)
    return out


def _density_hilbert_numpy(x, centres, bandwidths):
    """Pure-numpy kernel sums, in row blocks of at most 4e6 pairs."""
    m = centres.size
    density = np.empty(x.size)
    hilbert = np.empty(x.size)
    step = max(1, _NUMPY_BLOCK_PAIRS // max(m, 1))
    for start in range(0, x.size, step):
        rows = slice(start, start + step)
        u = (x[rows, None] - centres[None, :]) / bandwidths[None, :]
        k = _kernels.KERNEL_PEAK * np.maximum(1.0 - u * u / 5.0, 0.0)
        density[rows] = (k / bandwidths).sum(axis=1) / m
        hilbert[rows] = (_hilbert_numpy(u) / bandwidths).sum(axis=1) / m
    return density, hilbert


def _density_hilbert(x, centres_desc, h, engine="numba", n_jobs=None):
    """Density and Hilbert-transform estimates, bandwidths ``h * centres``.

    ``centres_desc`` positive and descending; ``x`` any points.
    """
    x = np.ascontiguousarray(x, dtype=np.float64)
    centres = np.ascontiguousarray(centres_desc, dtype=np.float64)
    bandwidths = h * centres
    if engine == "numpy" or x.size * centres.size <= _NUMPY_SMALL_PAIRS:
        return _density_hilbert_numpy(x, centres, bandwidths)
    with _kernels.numba_threads(n_jobs, x.size * centres.size):
        return _kernels.epanechnikov_density_hilbert(x, centres, bandwidths)


# -- the rule --------------------------------------------------------------
def _hilbert_at_zero(vals: np.ndarray, h: float) -> float:
    """Closed form of H~(0), Ledoit & Wolf (2020); needs sqrt5 h < 1."""
    s5h = _SQRT5 * h
    factor = (
        3.0 / (10.0 * h * h)
        + 3.0
        / (4.0 * _SQRT5 * h)
        * (1.0 - 1.0 / (5.0 * h * h))
        * math.log((1.0 + s5h) / (1.0 - s5h))
    ) / math.pi
    return factor * float(np.mean(1.0 / vals))


def _shrink_from_estimates(vals, f, H, n, p, hilbert_zero=None):
    """Ledoit & Wolf's (2020) formulas given f~ and H~ at ``vals``: (d, d0)."""
    c = p / n
    if p <= n:
        a = math.pi * c * vals * f
        b = 1.0 - c - math.pi * c * vals * H
        return vals / (a * a + b * b), None
    d = vals / (math.pi**2 * vals * vals * (f * f + H * H))
    return d, 1.0 / (math.pi * (p - n) / n * hilbert_zero)


def closed_form_null(n: float, p: int, h: float) -> bool:
    """Whether Ledoit & Wolf's (2020) closed form of ``H~(0)`` serves the null
    directions: there are none (``p <= n``), or ``sqrt5 h < 1``."""
    return p <= n or _SQRT5 * h < 1.0


def _oas_null_value(vals: np.ndarray, n: float, p: int) -> float:
    """OAS linear shrinkage's value ``rho tr(S) / p`` for the null directions
    (Chen, Wiesel, Eldar & Hero 2010, eq. 23), from the eigenvalues alone."""
    return float(_linear_shrink(vals, n, p, intensity="oas").null_value)


def _published(vals, n, p, h, engine, n_jobs):
    """Ledoit & Wolf (2020) on descending positive ``vals``: (d, d0).

    Where the closed form of ``H~(0)`` does not hold (``p > n``, ``sqrt5 h
    >= 1``) the null value is OAS's (:func:`_oas_null_value`).
    """
    f, H = _density_hilbert(vals, vals, h, engine, n_jobs)
    if closed_form_null(n, p, h):
        h0 = _hilbert_at_zero(vals, h) if p > n else None
        return _shrink_from_estimates(vals, f, H, n, p, h0)
    d, _ = _shrink_from_estimates(vals, f, H, n, p, math.inf)
    # Fractional degrees of freedom (weighted rows) can leave p > n at full
    # rank: then there are no null directions to value.
    return d, _oas_null_value(vals, n, p) if vals.size < p else None


#: Half-width in N/T of the zone where the hard-edge floor is phased in.
HARD_EDGE_ZONE = 0.2


def _hard_edge_floor(d: np.ndarray, d0, ratio: float, h: float):
    """Floor the shrunk values of the collapsed bottom eigenvalues.

    Near ``ratio = 1`` the bottom ``k = ceil(2/h)`` sample eigenvalues sit
    at the hard edge, where their local bandwidths ``h lambda_j`` are
    smaller than their spacing; there the density estimate is the kernel's
    own peak and ``d_j`` falls to 0 like ``lambda_j``. They (and the null
    value) are raised to at least ``tau`` times the median of ``d`` over the
    ``2k`` eigenvalues just above them (a median: single values there are
    noisy), ``tau = 1 - |ratio - 1| / HARD_EDGE_ZONE`` clipped at 0.
    Returns ``(d, d0, number of values raised)``.
    """
    tau = 1.0 - abs(ratio - 1.0) / HARD_EDGE_ZONE
    k = int(math.ceil(2.0 / h))
    m = d.size
    if tau <= 0.0 or 3 * k > m:
        return d, d0, 0
    floor = tau * float(np.median(d[m - 3 * k : m - k]))
    out = d.copy()
    bottom = out[m - k :]
    raised = int(np.count_nonzero(bottom < floor))
    out[m - k :] = np.maximum(bottom, floor)
    if d0 is not None:
        raised += int(d0 < floor)
        d0 = max(d0, floor)
    return out, d0, raised


def _kernel_shrink(
    vals: np.ndarray,
    n_samples: float,
    n_features: int,
    *,
    bandwidth: float | None,
    formula: str,
    engine: str,
    n_jobs: int | None,
) -> CleanedEigenvalues:
    """Core of :func:`kernel_shrink` (no validation; ``vals`` descending > 0).

    Every option is passed: the defaults are :func:`kernel_shrink`'s and
    :func:`_kernel_rule`'s.
    """
    n, p = float(n_samples), int(n_features)
    h = n ** (-1.0 / 3.0) if bandwidth is None else float(bandwidth)
    # Work in units of the largest eigenvalue (the formulas are scale
    # equivariant; this keeps f~^2 and H~^2 finite for tiny or huge spectra).
    unit = float(vals[0])
    d, d0 = _published(vals / unit, n, p, h, engine, n_jobs)
    d = d * unit
    d0 = None if d0 is None else d0 * unit
    details = {
        "bandwidth": h,
        "formula": formula,
        "ratio": p / n,
        "n_floored": 0,
        "null_method": "closed-form" if closed_form_null(n, p, h) else "oas",
    }
    if formula == "stabilized":
        d, d0, details["n_floored"] = _hard_edge_floor(d, d0, p / n, h)
    null = d0 if vals.size < p else None
    return CleanedEigenvalues(d, null, None, KernelDetails(**details))


def _kernel_rule(
    eigenvalues: np.ndarray,
    n_samples: float,
    n_features: int,
    *,
    rank: int | None = None,
    bandwidth: float | None = None,
    formula: str = "stabilized",
    engine: str = "numba",
    n_jobs: int | None = None,
    warn_as: str | None = None,
) -> CleanedEigenvalues:
    """The kernel rule on a full sample spectrum: the one core of its callers.

    ``eigenvalues`` are the descending sample eigenvalues, zeros included.
    The first ``rank`` are the positive part (default
    :func:`~rmtclean.rules._types.positive_rank`); with a rank below
    ``min(N, dof)`` the rank is the effective sample size, while the default
    bandwidth ``dof^(-1/3)`` follows the degrees of freedom (the sample size
    the kernel estimate rests on). Where Ledoit & Wolf's closed form for the
    null space fails (``sqrt5 h >= 1`` with ``N > n``) the null directions
    get OAS's value, with a :class:`~rmtclean.exceptions.WeakEstimateWarning`
    naming ``warn_as`` when given. The zero eigenvalues get the null value;
    an all-zero spectrum (constant data) gives zeros and ``details=None``.
    """
    k, p, dof = eigenvalues.size, int(n_features), float(n_samples)
    if rank is None:
        rank, n = positive_rank(eigenvalues, dof, p)
    else:
        n = float(rank) if rank < min(p, dof) else dof
    if rank == 0:  # constant data: a zero covariance
        return CleanedEigenvalues(np.zeros(k), 0.0 if k < p else None)
    h = dof ** (-1.0 / 3.0) if bandwidth is None else float(bandwidth)
    if warn_as is not None and not closed_form_null(n, p, h):
        warnings.warn(
            f"{warn_as}: n_features = {p} exceeds the effective "
            f"n_samples = {n:g} and sqrt(5) * bandwidth = {_SQRT5 * h:.3g} "
            ">= 1 (fewer than 12 degrees of freedom with the default "
            "bandwidth), where Ledoit & Wolf's (2020) closed form for the "
            "null space does not hold: the null directions get OAS linear "
            "shrinkage's value (Chen et al. 2010), a weak estimate.",
            WeakEstimateWarning,
            stacklevel=4,  # the caller of the estimator's fit
        )
    out = _kernel_shrink(
        np.ascontiguousarray(eigenvalues[:rank], dtype=np.float64),
        n,
        p,
        bandwidth=h,
        formula=formula,
        engine=engine,
        n_jobs=n_jobs,
    )
    return expand_zeros(out, k, p)


def kernel_shrink(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    bandwidth: float | None = None,
    formula: str = "stabilized",
    engine: str = "numba",
    n_jobs: int | None = None,
) -> CleanedEigenvalues:
    r"""Analytical nonlinear shrinkage of sample eigenvalues.

    Ledoit & Wolf's (2020) [1]_ estimator of the oracle eigenvalues
    ``u_i' Sigma u_i`` from an Epanechnikov kernel estimate of the density
    of the sample spectrum and of its Hilbert transform.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_components,)
        The nonzero sample eigenvalues, descending, ``n_components =
        min(n_features, n_samples)``; all must be positive.
    n_samples : float
        Effective sample size ``n`` (``T - 1`` after demeaning).
    n_features : int
        Dimension ``p``.
    bandwidth : float, optional
        Global bandwidth ``h``; default ``n^(-1/3)`` as in [1]_. The local
        bandwidths are ``h lambda_j``.
    formula : {"stabilized", "published"}, default="stabilized"
        ``"published"`` is [1]_ exactly. ``"stabilized"`` equals it (to
        rounding) when ``|p/n - 1| > 0.2`` and adds the remedy of the Notes
        near the singular ratio.
    engine : {"numba", "numpy"}, default="numba"
        The O(m^2) kernel sums: compiled (O(m) memory) or numpy row blocks.
        Up to 1,024 pairs (about 32 eigenvalues) both use the numpy sums,
        cheaper than starting the compiled kernel's threads.
    n_jobs : int, optional
        Numba threads for the sums (``None``: numba's current setting,
        ``-1``: all).

    Returns
    -------
    CleanedEigenvalues
        ``values`` in the input order; ``null_value`` the common value
        ``d0`` of the ``p - n`` null directions when ``n_components <
        n_features``; ``details`` a :class:`KernelDetails` (``bandwidth``,
        ``formula``, ``ratio``, ``n_floored`` and ``null_method``:
        ``"closed-form"`` or ``"oas"``, see the Notes).

    Raises
    ------
    ValueError
        For a non-positive eigenvalue or malformed sizes.

    Notes
    -----
    With ``c = p/n``, ``m = min(p, n)``, the unit-variance Epanechnikov
    kernel ``k(x) = 3/(4 sqrt5) (1 - x^2/5)^+`` and its Hilbert transform
    ``H_k``:

    .. math:: \tilde f(x) = \frac1m\sum_j \frac{k((x - \lambda_j)/h_j)}{h_j},
              \quad \tilde H(x) = \frac1m\sum_j
              \frac{H_k((x - \lambda_j)/h_j)}{h_j},\quad h_j = h\lambda_j,

    and for ``p <= n``

    .. math:: d_i = \frac{\lambda_i}{(\pi c\lambda_i\tilde f(\lambda_i))^2
              + (1 - c - \pi c\lambda_i\tilde H(\lambda_i))^2};

    for ``p > n``, ``d_i = 1 / (pi^2 lambda_i (f~^2 + H~^2))`` and the null
    directions get ``d0 = 1 / (pi (p - n)/n H~(0))`` with

    .. math:: \tilde H(0) = \frac1\pi\left[\frac{3}{10h^2} +
              \frac{3}{4\sqrt5 h}\Big(1 - \frac{1}{5h^2}\Big)
              \log\frac{1 + \sqrt5 h}{1 - \sqrt5 h}\right]
              \frac1n\sum_j\frac1{\lambda_j}.

    Few samples (``p > n`` and ``sqrt5 h >= 1``: ``n < 12`` with the
    default bandwidth). The closed form of ``H~(0)`` above holds only for
    ``sqrt5 h < 1`` (the kernel's support must not reach 0; Ledoit & Wolf's
    own code states ``n >= 12``). Below, the non-null values keep the formula
    above and the null directions get the value of OAS linear shrinkage,
    ``d0 = rho tr(S)/p`` with Chen et al.'s (2010) [2]_ eq. (23) intensity
    ``rho`` (``details.null_method == "oas"``). It was chosen by held-out
    Gaussian likelihood on the dslabs tissue expression panel, where the
    null value decides the likelihood and OAS's value was the best
    candidate at every training size (``benchmarks/small_wide_likelihood.md``).

    Near the singular ratio (``formula="stabilized"``). When ``|c - 1| <
    0.2`` the smallest sample eigenvalues approach a hard edge at 0; for the
    bottom ``k = ceil(2/h)`` of them the local bandwidth ``h lambda_j`` is
    below their spacing, ``f~`` is the kernel's own peak and ``d_j`` falls to
    0 like ``lambda_j`` (and ``d0`` with them), while the oracle stays near
    the bottom of the population spectrum. Those ``k`` values and ``d0`` are
    raised to at least ``tau`` times the median of ``d`` over the ``2k``
    eigenvalues just above them, ``tau = 1 - |c - 1|/0.2``: continuous in
    ``c``, and exactly the published formula for ``|c - 1| >= 0.2``
    (``details.n_floored`` counts the values raised). The floor removes the
    published formula's breakdown in minimum-variance loss at ``c = 1``;
    it does not close the gap to linear shrinkage on every design (numbers,
    rejected candidates and the command: ``benchmarks/near_singular_ratio.md``).

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Analytical nonlinear shrinkage of
       large-dimensional covariance matrices", Ann. Statist. 48(5),
       3043-3065, 2020.
    .. [2] Y. Chen, A. Wiesel, Y. C. Eldar and A. O. Hero, "Shrinkage
       algorithms for MMSE covariance estimation", IEEE Trans. Signal
       Process. 58(10), 5016-5029, 2010.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import kernel_shrink
    >>> X = np.random.default_rng(0).standard_normal((400, 100))
    >>> lam = np.linalg.eigvalsh(np.cov(X, rowvar=False))[::-1]
    >>> out = kernel_shrink(lam, 399, 100)
    >>> bool(np.ptp(out.values) < np.ptp(lam) / 3)
    True
    """
    owner = "kernel_shrink"
    vals, n, _ = check_spectrum(
        eigenvalues, n_samples, n_features, owner, positive=True
    )
    if bandwidth is not None:
        bandwidth = float(check_value(bandwidth, [POSITIVE_FINITE], "bandwidth", owner))
    check_value(formula, [Options(KERNEL_FORMULAS)], "formula", owner)
    check_value(engine, [Options(KERNEL_ENGINES)], "engine", owner)
    if n_features <= n and vals.size < n_features:
        raise ValueError(
            f"{owner}: with n_features <= n_samples all n_features = {n_features} "
            f"eigenvalues are needed (and must be positive); got {vals.size}."
        )
    return _kernel_shrink(
        vals,
        n,
        int(n_features),
        bandwidth=bandwidth,
        formula=formula,
        engine=engine,
        n_jobs=n_jobs,
    )
