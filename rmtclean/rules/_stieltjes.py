r"""Rotationally invariant estimator (RIE) of Bun, Allez, Bouchaud & Potters.

Three layers: the private core :func:`_stieltjes_shrink`, the public
validated :func:`stieltjes_shrink`, and the estimator
:class:`rmtclean.estimators.StieltjesShrink`.
"""

from __future__ import annotations

import math

import numpy as np

from rmtclean import _kernels
from rmtclean._kernels import resolvent_sum_widths
from rmtclean._validation import (
    BOOLEAN,
    POSITIVE_FINITE,
    Options,
    check_spectrum,
    check_value,
)
from rmtclean.laws import MarchenkoPastur
from rmtclean.rules._types import (
    CleanedEigenvalues,
    StieltjesDetails,
    expand_zeros,
    positive_rank,
)

__all__ = ["STIELTJES_ENGINES", "stieltjes_shrink"]

_WIDTHS = ("relative", "uniform")
#: Implementations of the O(n_components^2) sum.
STIELTJES_ENGINES = ("numba", "numpy")
#: Rows of the (rows x n_components) blocks of the numpy sum.
_BLOCK = 256


def _resolvent_numpy(vals, widths):
    """(1/m) sum_j 1/(z_i - l_j), z_i = l_i - i w_i (blocked numpy sum)."""
    m = vals.size
    re, im = np.empty(m), np.empty(m)
    for start in range(0, m, _BLOCK):
        rows = slice(start, min(start + _BLOCK, m))
        d = vals[rows, None] - vals[None, :]
        inv = 1.0 / (d * d + widths[rows, None] ** 2)
        re[rows] = (d * inv).sum(axis=1) / m
        im[rows] = widths[rows] * inv.sum(axis=1) / m
    return re, im


def _resolvent(vals, widths, n_features, engine="numba", n_jobs=None):
    """g(z_i) over all N eigenvalues (zeros included), z_i = l_i - i w_i."""
    m = vals.size
    uniform = bool(np.all(widths == widths[0]))
    if engine == "numpy":
        re, im = _resolvent_numpy(vals, widths)
    else:
        with _kernels.numba_threads(n_jobs, m * m):
            if uniform:  # the published one-eta sum
                re, im = _kernels.resolvent_sum(vals, float(widths[0]))
            else:
                re, im = resolvent_sum_widths(vals, widths)
    z = vals - 1j * widths
    g = re + 1j * im
    if m < n_features:  # the null eigenvalues add (N - m)/N * 1/z
        g = (m * g + (n_features - m) / z) / n_features
    return z, g


def _hard_edge_weight(ratio: float, eta: float) -> float:
    """Weight ``tau`` of the hard-edge width floor, 0 far from ``q = 1``.

    ``tau = max(0, 1 - |1 - sqrt(q)| / sqrt(eta))``: positive only where the
    Marchenko-Pastur lower edge ``(1 - sqrt q)^2`` (units of the noise
    variance) is closer to 0 than the width ``eta``.
    """
    return max(0.0, 1.0 - abs(1.0 - math.sqrt(ratio)) / math.sqrt(eta))


def _stieltjes_shrink(
    vals: np.ndarray,
    n_samples: float,
    n_features: int,
    *,
    eta: float | None,
    regularize: bool,
    preserve_trace: bool,
    width: str,
    engine: str = "numba",
    n_jobs: int | None = None,
) -> CleanedEigenvalues:
    """Core of :func:`stieltjes_shrink` (no validation; ``vals`` descending > 0).

    The options' defaults are :func:`stieltjes_shrink`'s and the
    estimator's; the estimator takes no ``engine``.
    """
    n, p, m = float(n_samples), int(n_features), vals.size
    q = p / n
    # Work in units of the mean eigenvalue tr(S)/N (the rule is scale
    # equivariant; this keeps squares of tiny or huge spectra finite).
    unit = float(vals.sum()) / p
    vals = np.ascontiguousarray(vals / unit, dtype=np.float64)
    scale = 1.0
    eta_abs = p**-0.5 if eta is None else float(eta)
    tau = 0.0
    if width == "relative":  # eta_i = eta max(lambda_i, tau tr(S)/N)
        tau = _hard_edge_weight(q, eta_abs)
        widths = eta_abs * np.maximum(vals, tau * scale)
    else:  # the published formula: one eta for every point
        widths = np.full(m, eta_abs)
    z, g = _resolvent(vals, widths, p, engine, n_jobs)
    xi = vals / np.abs(1.0 - q + q * z * g) ** 2
    details = {
        "eta": eta_abs * unit,
        "width": width,
        "ratio": q,
        "noise_variance": None,
        "hard_edge_weight": tau,
    }
    if regularize:
        edge = (1.0 - math.sqrt(q)) ** 2
        s2 = scale if edge == 0.0 else min(float(vals[-1]) / edge, scale)
        g_mp = np.asarray(MarchenkoPastur(q, s2).stieltjes(z))
        gamma = s2 * np.abs(1.0 - q + q * z * g_mp) ** 2 / vals
        xi = xi * np.maximum(1.0, gamma)
        details["noise_variance"] = s2 * unit
    null = None
    if m < p:
        # Ledoit-Peche's null value 1/((q - 1) mbar(0)), mbar the Stieltjes
        # transform of the m nonzero eigenvalues at 0. The point 0 lies
        # outside their spectrum, so mbar(0) = (1/m) sum_j 1/l_j is taken on
        # the real axis: an offset -i eta there drops the small eigenvalues'
        # terms once eta exceeds their distance from 0 (near q = 1).
        mbar0 = float(np.mean(1.0 / vals))
        null = 1.0 / ((q - 1.0) * mbar0)
    if preserve_trace:
        total = float(xi.sum()) + (0.0 if null is None else (p - m) * null)
        factor = float(vals.sum()) / total
        xi = xi * factor
        null = None if null is None else null * factor
        details["trace_factor"] = factor
    null = None if null is None else null * unit
    return CleanedEigenvalues(xi * unit, null, None, StieltjesDetails(**details))


def _stieltjes_rule(
    eigenvalues: np.ndarray, n_samples: float, n_features: int, **options
) -> CleanedEigenvalues:
    """The RIE on a full sample spectrum: the one core of its callers.

    ``eigenvalues`` are the descending sample eigenvalues, zeros included;
    the positive part and the effective sample size are
    :func:`~rmtclean.rules._types.positive_rank`'s, the zeros get the null
    value, and an all-zero spectrum (constant data) gives zeros and
    ``details=None``. ``options`` are :func:`_stieltjes_shrink`'s.
    """
    k, p = eigenvalues.size, int(n_features)
    r, n = positive_rank(eigenvalues, n_samples, p)
    if r == 0:  # constant data: a zero covariance
        return CleanedEigenvalues(np.zeros(k), 0.0 if k < p else None)
    vals = np.ascontiguousarray(eigenvalues[:r], dtype=np.float64)
    return expand_zeros(_stieltjes_shrink(vals, n, p, **options), k, p)


def stieltjes_shrink(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    eta: float | None = None,
    regularize: bool = True,
    preserve_trace: bool = True,
    width: str = "relative",
    engine: str = "numba",
    n_jobs: int | None = None,
) -> CleanedEigenvalues:
    r"""Rotationally invariant estimator of the oracle eigenvalues.

    Bun, Allez, Bouchaud & Potters' (2016) [1]_ RIE from the Stieltjes
    transform of the sample spectrum slightly off the real axis, with the
    small-eigenvalue regularisation of Bun, Bouchaud & Potters (2017) [2]_.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_components,)
        The nonzero sample eigenvalues, descending, ``n_components =
        min(n_features, n_samples)``; all must be positive.
    n_samples : float
        Effective sample size ``T`` (``T - 1`` after demeaning).
    n_features : int
        Dimension ``N``.
    eta : float, optional
        Relative distance of the evaluation points from the real axis.
        With ``width="relative"`` the point is ``z_i = lambda_i (1 - i
        eta)``; with ``width="uniform"`` it is ``z_i = lambda_i - i eta``
        with ``eta`` in units of the mean eigenvalue ``tr(S)/N``. Either
        way the rule is scale equivariant. Default ``N^(-1/2)`` [2]_.
    regularize : bool, default=True
        Apply the small-eigenvalue correction of [2]_.
    preserve_trace : bool, default=True
        Rescale so that the cleaned trace (null space included) equals
        ``sum(eigenvalues)``.
    width : {"relative", "uniform"}, default="relative"
        ``"relative"``: the distance from the real axis is ``eta
        lambda_i``, proportional to the eigenvalue, floored near ``q = 1``
        (see Notes). ``"uniform"``: one distance for every point, the
        published formula of [1]_ and [2]_.
    engine : {"numba", "numpy"}, default="numba"
        Implementation of the O(n_components^2) sum: a numba kernel with
        O(N) extra memory, or a blocked numpy sum (for tests on small N).
    n_jobs : int, optional
        Numba threads for the sum (``-1``: all).

    Returns
    -------
    CleanedEigenvalues
        ``values`` in the input order; ``null_value`` for the ``N - T``
        null directions when ``n_components < n_features``; ``details``
        a :class:`StieltjesDetails`: ``eta`` (``eta tr(S)/N``: the absolute
        distance for ``"uniform"``, the distance at an eigenvalue equal to
        the mean for ``"relative"``), ``width``, ``ratio``,
        ``noise_variance`` (the ``sigma^2`` of the regularisation),
        ``hard_edge_weight`` (the ``tau`` of the width floor, 0 for
        ``"uniform"``) and ``trace_factor``.

    Notes
    -----
    With ``q = N/T`` and ``g(z) = (1/N) sum_j 1/(z - lambda_j)`` over all
    ``N`` sample eigenvalues (zeros included),

    .. math:: \xi_i = \frac{\lambda_i}{|1 - q + q z_i g(z_i)|^2},\qquad
              z_i = \lambda_i - i\eta_i.

    Width. The published formula [1]_ [2]_ takes one ``eta_i = eta`` for
    every point (``width="uniform"``; ``eta`` in units of ``tr(S)/N``
    here). The derivation lets ``eta -> 0`` after ``N -> infinity`` with an
    O(1) spectrum; at finite ``N`` the self-term ``j = i`` of ``g(z_i)`` is
    ``i/(N eta)``, and in ``q z_i g(z_i)`` it weighs ``q lambda_i/(N eta)``.
    For an eigenvalue far above the others (a market mode of size ~N) this
    is O(1-10) and divides the eigenvalue by about
    ``1 + (q lambda_i/(N eta))^2`` (17 for the market mode below), where the
    limit (``g`` real outside the bulk) gives the overlap-weighted value: for
    a spike of the white spiked model, ``lambda/(1 - q + q lambda g_MP(lambda))^2``
    equals ``ell c^2 + s2 (1 - c^2)`` exactly (``ell``, ``c^2`` of
    Baik-Ben Arous-Peche and Paul; checked numerically for rmtclean). The
    default ``width="relative"`` uses ``eta_i = eta lambda_i``, a width
    proportional to the local scale of the spectrum, as in the
    eigenvalue-proportional bandwidths of Ledoit & Wolf's kernel estimator
    (:func:`rmtclean.rules.kernel_shrink`): the self-term then weighs
    ``q/(N eta) = q N^(-1/2)`` for every eigenvalue, large or small, and
    vanishes as ``N`` grows (rmtclean's choice, not in [1]_ [2]_).

    Hard edge (``width="relative"``). Near ``q = 1`` the smallest
    eigenvalues pile up towards 0 (density ``~ lambda^(-1/2)``, the k-th
    smallest of order ``(k/N)^2``), so ``eta lambda_i`` falls below the
    eigenvalue spacing for the bottom ``~N^(1/2)`` of them, and the
    regularisation of [2]_, which calibrates the finite-width bias of the
    published width on the Marchenko-Pastur law, no longer matches the
    width in use. The widths are therefore floored,
    ``eta_i = eta max(lambda_i, tau tr(S)/N)`` with
    ``tau = max(0, 1 - |1 - sqrt q| / sqrt(eta))``: ``tau > 0`` only where
    the lower edge ``(1 - sqrt q)^2 sigma^2`` is closer to 0 than the
    published width ``eta sigma^2`` (``|1 - sqrt q| < N^(-1/4)`` by
    default), and ``tau = 1`` at ``q = 1``, where every eigenvalue below the
    mean gets the published width. Outside that zone the widths are
    ``eta lambda_i`` unchanged (rmtclean's choice, measured in
    ``benchmarks/stieltjes_near_square.py``).

    The evidence for this choice (Frobenius losses and PRIALs on
    block-factor, mixture and spiked designs, and the alternatives rejected)
    is in ``benchmarks/stieltjes_near_square.md``.

    Regularisation [2]_: ``sigma^2 = lambda_min / (1 - sqrt q)^2`` (the
    Marchenko-Pastur lower edge put on the smallest nonzero eigenvalue),
    ``Gamma_i = sigma^2 |1 - q + q z_i g_MP(z_i)|^2 / lambda_i`` with
    ``g_MP`` the Marchenko-Pastur transform of ratio ``q`` and variance
    ``sigma^2``, and ``xi_i <- xi_i max(1, Gamma_i)``. ``sigma^2`` is capped
    at ``tr(S)/N``: a noise variance cannot exceed the mean variance, and
    near ``q = 1``, where ``(1 - sqrt q)^2 -> 0``, the uncapped value is
    0/0 (rmtclean's guard, not in [2]_).

    Null space (``N > T``). For ``lambda > 0`` the formula equals
    ``lambda / |z gbar(z)|^2`` with ``gbar`` the transform of the ``T``
    nonzero eigenvalues (the zeros cancel the ``1 - q``); it has no limit
    at ``lambda = 0``. The null directions get Ledoit & Peche's value
    ``1 / ((q - 1) mbar(0))`` with ``mbar(0) = (1/T) sum_j 1/lambda_j``
    (Ledoit & Peche 2011 [3]_). The point 0 is outside the nonzero
    spectrum, so ``mbar(0)`` is taken on the real axis: an earlier version
    of rmtclean evaluated it at ``-i eta``, which replaces ``1/lambda_j`` by
    ``lambda_j/(lambda_j^2 + eta^2)`` and drops the small eigenvalues'
    terms once ``eta`` exceeds the gap ``(sqrt q - 1)^2 sigma^2`` between 0
    and the spectrum; near ``N = T - 1`` (one null direction) the null
    value then came out near 37 on unit noise (``N = 100``, ``T = 100``,
    demeaned: Frobenius loss 13.2 against 1.01 for the sample
    covariance). On pure noise
    of variance ``sigma^2`` the nonzero eigenvalues follow ``q`` times a
    Marchenko-Pastur law of ratio ``1/q``, whose mean inverse gives
    ``mbar(0) = 1/(sigma^2 (q - 1))`` and the null value ``sigma^2``. The
    null value is not regularised; the trace rescaling includes it.

    References
    ----------
    .. [1] J. Bun, R. Allez, J.-P. Bouchaud and M. Potters, "Rotational
       invariant estimator for general noisy matrices", IEEE Trans. Inf.
       Theory 62(12), 7475-7490, 2016.
    .. [2] J. Bun, J.-P. Bouchaud and M. Potters, "Cleaning large
       correlation matrices: tools from random matrix theory", Phys. Rep.
       666, 1-109, 2017 (section on numerical implementation).
    .. [3] O. Ledoit and S. Peche, "Eigenvectors of some large sample
       covariance matrix ensembles", Probab. Theory Relat. Fields 151,
       233-264, 2011.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import stieltjes_shrink
    >>> X = np.random.default_rng(0).standard_normal((1000, 200))
    >>> lam = np.linalg.eigvalsh(np.cov(X, rowvar=False))[::-1]
    >>> out = stieltjes_shrink(lam, 999, 200)
    >>> bool(np.std(out.values) < np.std(lam) / 3)
    True
    """
    owner = "stieltjes_shrink"
    vals, n, _ = check_spectrum(
        eigenvalues, n_samples, n_features, owner, positive=True
    )
    check_value(eta, [POSITIVE_FINITE, None], "eta", owner)
    check_value(regularize, [BOOLEAN], "regularize", owner)
    check_value(preserve_trace, [BOOLEAN], "preserve_trace", owner)
    check_value(width, [Options(_WIDTHS)], "width", owner)
    check_value(engine, [Options(STIELTJES_ENGINES)], "engine", owner)
    return _stieltjes_shrink(
        vals,
        n,
        int(n_features),
        eta=None if eta is None else float(eta),
        regularize=bool(regularize),
        preserve_trace=bool(preserve_trace),
        width=width,
        engine=engine,
        n_jobs=n_jobs,
    )
