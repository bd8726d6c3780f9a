"""Fit of the Marchenko-Pastur law to the bulk of a sample spectrum.

The bulk is what is left of the sample spectrum once the ``n_signal``
largest eigenvalues are set aside. Its fit gives the noise variance, the
effective aspect ratio and a goodness-of-fit statistic; the edge tests and
the clipping rule build on it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Integral

import numpy as np
import scipy.optimize

from rmtclean._validation import check_spectrum, numerical_rank

__all__ = ["BulkFit", "fit_bulk"]

_METHODS = ("cvm", "moments")


@dataclass(frozen=True)
class BulkFit:
    """Marchenko-Pastur fit to the bulk of a sample spectrum.

    Attributes
    ----------
    noise_variance : float
        Estimated variance ``s2`` of the noise directions (population units).
    ratio : float
        Aspect ratio of the fitted bulk law. With ``fix_ratio=True`` it is
        ``(n_features - n_signal) / (n_samples - n_signal)``; otherwise the
        effective ratio fitted to the shape of the bulk (heavy tails and
        serial correlation widen the bulk, which reads as a larger ratio
        when the nominal ratio is below 1).
    lower_edge, upper_edge : float
        Edges of the continuous part of the fitted bulk law, in the units of
        the sample eigenvalues.
    statistic : float
        Kolmogorov-Smirnov distance between the empirical distribution of
        the bulk eigenvalues used and the fitted law (restricted to its
        continuous part when the ratio exceeds 1). Near 0 for a
        Marchenko-Pastur bulk; large when the bulk has another shape.
    n_used : int
        Number of eigenvalues the fit used.
    n_signal : int
        Number of largest eigenvalues set aside before fitting.
    fix_ratio : bool
        Whether the ratio was fixed by the sizes or fitted.
    method : str
        ``"cvm"`` (minimum Cramer-von Mises distance) or ``"moments"``.
    """

    noise_variance: float
    ratio: float
    lower_edge: float
    upper_edge: float
    statistic: float
    n_used: int
    n_signal: int
    fix_ratio: bool
    method: str

    def __str__(self) -> str:
        mode = "fixed by the sizes" if self.fix_ratio else "fitted"
        rows = [
            ("noise variance", f"{self.noise_variance:.6g}"),
            ("ratio of the bulk", f"{self.ratio:.6g} ({mode})"),
            ("bulk edges", f"[{self.lower_edge:.6g}, {self.upper_edge:.6g}]"),
            (
                "eigenvalues fitted",
                f"{self.n_used} ({self.n_signal} largest set aside)",
            ),
            ("KS distance", f"{self.statistic:.4g}"),
        ]
        width = max(len(label) for label, _ in rows)
        lines = [f"Marchenko-Pastur bulk fit ({self.method})"]
        lines += [f"  {label:<{width}}  {value}" for label, value in rows]
        return "\n".join(lines)


# --------------------------------------------------------------------------
# validation of the spectrum functions' own parameters


def _check_n_signal(n_signal, n_components: int, n_samples: float, function: str):
    high = min(n_components - 2, math.ceil(n_samples) - 1)
    if (
        isinstance(n_signal, bool)
        or not isinstance(n_signal, Integral)
        or not 0 <= n_signal <= high
    ):
        raise ValueError(
            f"The 'n_signal' parameter of {function} must be an int in the range "
            f"[0, {max(high, 0)}] (at least two bulk eigenvalues must remain and "
            f"n_signal must stay below n_samples). Got {n_signal!r} instead."
        )
    return int(n_signal)


# --------------------------------------------------------------------------
# the bulk model


def _mp_cdf(x: np.ndarray, shape: float) -> np.ndarray:
    """Cdf of the Marchenko-Pastur law with ratio ``shape <= 1``, variance 1."""
    from rmtclean.laws import MarchenkoPastur

    return np.asarray(MarchenkoPastur(shape, 1.0).cdf(x), dtype=np.float64)


def _bulk_sizes(n_samples: float, n_features: int, n_signal: int):
    """Dimension, degrees of freedom and ratio of the bulk model."""
    dim = n_features - n_signal
    dof = n_samples - n_signal
    return dim, dof, dim / dof


def _ks_distance(sorted_x: np.ndarray, cdf: np.ndarray) -> float:
    m = sorted_x.size
    upper = np.arange(1, m + 1) / m - cdf
    lower = cdf - np.arange(0, m) / m
    return float(max(upper.max(), lower.max()))


def _cvm_distance(cdf: np.ndarray) -> float:
    m = cdf.size
    target = (2.0 * np.arange(1, m + 1) - 1.0) / (2.0 * m)
    return float(1.0 / (12.0 * m) + np.sum((cdf - target) ** 2))


def _mp_pdf(x: np.ndarray, shape: float) -> np.ndarray:
    """Density of the Marchenko-Pastur law with ratio ``shape <= 1``, variance 1."""
    from rmtclean.laws import MarchenkoPastur

    return np.asarray(MarchenkoPastur(shape, 1.0).pdf(x), dtype=np.float64)


def _cvm_stationary_log_scale(y: np.ndarray, shape: float) -> float | None:
    """Root in [-1, 1] of the derivative of the CvM distance in the log scale.

    With ``z = y exp(-t)`` the derivative is ``-2 sum (F(z) - target) f(z) z``.
    A root found by bracketing is located to rounding error, whereas a
    minimiser stops at about sqrt(eps) of a flat minimum, so two routes to
    the same spectrum (dense or Gram) agree to ~1e-13 instead of ~1e-8.
    Returns None if the derivative does not change sign on the bracket.
    """
    m = y.size
    target = (2.0 * np.arange(1, m + 1) - 1.0) / (2.0 * m)

    def slope(t):
        z = y * math.exp(-t)
        return float(np.sum((_mp_cdf(z, shape) - target) * _mp_pdf(z, shape) * z))

    t_low, t_high = _log_scale_bracket(y, shape)
    low, high = slope(t_low), slope(t_high)
    if not (low > 0.0 > high):
        return None
    return float(scipy.optimize.brentq(slope, t_low, t_high, xtol=1e-15, rtol=1e-15))


def _log_scale_bracket(y: np.ndarray, shape: float) -> tuple[float, float]:
    """Log scales at which the median of ``y`` sits on the law's edges.

    Outside this bracket the median value lies outside the support of the
    law, and once every value does the distance is flat (the derivative
    vanishes): a root search over a wider bracket could stop there, with a
    fitted law that misses the data (a Kolmogorov-Smirnov distance of 1).
    This happened for narrow laws (ratio below ~0.01, support +-12%) with
    the fixed bracket [-1, 1] used before; and a start (the trace) far from
    the median, as when one market factor holds most of the trace, put the
    answer outside [-1, 1].
    """
    median = float(np.median(y))
    lower = (1.0 - math.sqrt(shape)) ** 2
    upper = (1.0 + math.sqrt(shape)) ** 2
    t_low = math.log(median / upper)
    t_high = math.log(median / lower) if lower > 0.0 else t_low + 1.0 + math.log(upper)
    return t_low, t_high


def _fit_shape_scale(x, shape0, scale0, fix_shape, method, shape_bounds=(1e-6, 1.0)):
    """Fit MP(shape, scale) with shape <= 1 to ascending positive values x."""
    if method == "moments":
        return shape0, scale0
    # Search the log scale relative to the start, in data divided by it: the
    # optimisers' steps and tolerances then do not depend on the units of
    # the data (the bounded search stops at sqrt(eps) |t|, so an absolute
    # log scale t = log(1e300) lost 1e-5 relative), and the fit is
    # scale-equivariant.
    y = x / scale0
    if fix_shape:
        t = _cvm_stationary_log_scale(y, shape0)
        if t is not None:
            return shape0, scale0 * math.exp(t)
        result = scipy.optimize.minimize_scalar(
            lambda t: _cvm_distance(_mp_cdf(y / math.exp(t), shape0)),
            bounds=_log_scale_bracket(y, shape0),
            method="bounded",
            options={"xatol": 1e-10},
        )
        return shape0, scale0 * math.exp(result.x)

    def objective(theta):
        return _cvm_distance(_mp_cdf(y / math.exp(theta[0]), theta[1]))

    result = scipy.optimize.minimize(
        objective,
        np.array([0.0, float(np.clip(shape0, *shape_bounds))]),
        method="Nelder-Mead",
        bounds=[(-2.0, 2.0), shape_bounds],
        options={"xatol": 1e-9, "fatol": 1e-14, "maxiter": 2000},
    )
    return float(result.x[1]), scale0 * math.exp(result.x[0])


def _fit_bulk(eigenvalues, n_samples, n_features, n_signal, fix_ratio, method):
    """Unvalidated core of :func:`fit_bulk`."""
    dim, dof, ratio = _bulk_sizes(n_samples, n_features, n_signal)
    x = np.sort(eigenvalues[n_signal:])
    # The nonzero part of MP(ratio, v) is MP(min(ratio, 1/ratio), scale) with
    # scale = v * max(ratio, 1): fit that shape to the values we hold.
    shape_fixed = min(ratio, 1.0 / ratio)
    # A free ratio stays within [q, 4 q] of the nominal q: heavy tails and
    # serial correlation widen a bulk, nothing in the model narrows it, and
    # an unbounded fit collapsed to a near-zero ratio on real spectra.
    if ratio <= 1.0:
        bounds = (shape_fixed, min(4.0 * shape_fixed, 1.0))
    else:
        bounds = (shape_fixed / 4.0, shape_fixed)
    if fix_ratio:
        shape0 = shape_fixed
        scale0 = float(np.sum(x)) / min(dim, dof)  # trace: exact mean
    else:
        scale0 = float(np.mean(x))
        shape0 = float(np.clip(np.var(x) / scale0**2, *bounds))
    shape, scale = _fit_shape_scale(x, shape0, scale0, fix_ratio, method, bounds)
    if fix_ratio:
        fitted_ratio = ratio
    else:
        # The shape alone cannot tell q from 1/q: stay on the nominal side.
        fitted_ratio = shape if ratio <= 1.0 else 1.0 / shape
    variance = scale / max(fitted_ratio, 1.0)
    statistic = _ks_distance(x, _mp_cdf(x / scale, shape))
    return BulkFit(
        noise_variance=float(variance * n_samples / dof),
        ratio=float(fitted_ratio),
        lower_edge=float(scale * (1.0 - math.sqrt(shape)) ** 2),
        upper_edge=float(scale * (1.0 + math.sqrt(shape)) ** 2),
        statistic=statistic,
        n_used=int(x.size),
        n_signal=int(n_signal),
        fix_ratio=bool(fix_ratio),
        method=method,
    )


def fit_bulk(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    n_signal: int = 0,
    fix_ratio: bool = True,
    method: str = "cvm",
) -> BulkFit:
    r"""Fit the Marchenko-Pastur law to the bulk of a sample spectrum.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_components,)
        Sample eigenvalues in descending order: the nonzero part of the
        spectrum, ``n_components = min(n_features, n_samples)``; when
        ``n_features > n_samples`` the remaining eigenvalues are implicit
        zeros. Values at rounding-error level (repeated rows, collinear
        columns) are treated as such zeros and not fitted.
    n_samples : float
        Degrees of freedom of the sample covariance (``T - 1`` after
        demeaning, ``T`` if the data were centred).
    n_features : int
        Dimension ``N``.
    n_signal : int, default=0
        Number of largest eigenvalues to set aside as signal.
    fix_ratio : bool, default=True
        If True the ratio of the bulk law is fixed by the sizes and only the
        noise variance is fitted (Laloux et al. [2]_ fit the variance with
        the ratio known). If False the ratio is fitted too (an effective
        ratio), within ``[q, 4 q]`` of the nominal ratio ``q``: heavy tails
        and serial correlation widen a bulk, nothing in the model narrows
        it.
    method : {"cvm", "moments"}, default="cvm"
        ``"cvm"`` minimises the Cramer-von Mises distance between the
        empirical distribution of the bulk and the law, started from the
        moment estimates; ``"moments"`` returns the moment estimates (the
        trace for the variance, the second moment for a free ratio).

    Returns
    -------
    BulkFit
        Noise variance, ratio, bulk edges, Kolmogorov-Smirnov distance of the
        fit and the counts used.

    See Also
    --------
    rmtclean.spectrum.detect_signal : Choose ``n_signal`` by Tracy-Widom tests.

    Notes
    -----
    With ``k = n_signal`` strong spikes set aside, the remaining eigenvalues
    behave like those of white noise of dimension ``N - k`` observed with
    ``n - k`` degrees of freedom (the spikes use up ``k`` dimensions in both
    the feature and the sample space), scaled by ``(n - k)/n``:

    .. math::

        \lambda_{k+1}, \dots \sim
        \mathrm{MP}\left(\frac{N-k}{n-k},\; s^2 \frac{n-k}{n}\right).

    This model sets the fixed ratio and turns the fitted variance of the bulk
    into ``noise_variance``; its trace matches the expected trace of the bulk
    to first order in ``k/n`` for strong spikes, so the variance is not biased
    low by the share of the trace that the spikes take. When the bulk ratio
    exceeds 1 the law has an atom at zero; the fit uses the nonzero
    eigenvalues given, whose law is the continuous part,
    ``MP(1/q, s^2 q (n-k)/n)`` up to normalisation. That shape is the same for
    ``q`` and ``1/q``, so a fitted ratio stays on the side of 1 of the nominal
    ratio.

    The distance fit is robust to a few outliers in the bulk and fits its
    shape; on Gaussian noise the moment (trace) estimate of the variance is
    slightly more precise.

    References
    ----------
    .. [1] Marchenko, V. A. and Pastur, L. A. (1967). Distribution of
       eigenvalues for some sets of random matrices. Math. USSR-Sbornik 1(4),
       457-483.
    .. [2] Laloux, L., Cizeau, P., Bouchaud, J.-P. and Potters, M. (1999).
       Noise dressing of financial correlation matrices. Phys. Rev. Lett.
       83(7), 1467-1470.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum import fit_bulk
    >>> X = np.random.default_rng(0).normal(scale=1.5, size=(800, 200))
    >>> eig = np.linalg.eigvalsh(np.cov(X, rowvar=False))[::-1]
    >>> fit = fit_bulk(eig, n_samples=799, n_features=200)
    >>> round(fit.noise_variance, 1), round(fit.ratio, 3)
    (2.3, 0.25)
    """
    function = "fit_bulk"
    values, n_samples, n_features = check_spectrum(
        eigenvalues, n_samples, n_features, function
    )
    # rounding-error zeros (repeated rows, collinear columns) are null space
    values = values[: numerical_rank(values, n_samples)]
    n_signal = _check_n_signal(n_signal, values.size, n_samples, function)
    if not isinstance(fix_ratio, (bool, np.bool_)):
        raise ValueError(
            f"The 'fix_ratio' parameter of {function} must be a bool. "
            f"Got {fix_ratio!r} instead."
        )
    if method not in _METHODS:
        raise ValueError(
            f"The 'method' parameter of {function} must be one of {_METHODS}. "
            f"Got {method!r} instead."
        )
    if not np.any(values[n_signal:] > 0):
        raise ValueError(
            f"The bulk given to {function} (eigenvalues after the {n_signal} "
            "largest) is all zero: there is no noise level to fit."
        )
    return _fit_bulk(values, n_samples, n_features, n_signal, bool(fix_ratio), method)
