"""How many eigenvalues stand above the noise: sequential Tracy-Widom tests."""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from numbers import Real

import numpy as np

from rmtclean._validation import (
    BOOLEAN,
    OPEN_UNIT,
    POSITIVE_FINITE,
    Interval,
    Options,
    check_spectrum,
    check_value,
    numerical_rank,
)
from rmtclean.spectrum._bulk import _bulk_sizes

__all__ = ["EdgeTest", "detect_signal"]

_CONSTANTS = ("half-integer", "johnstone")
#: Default centring constants (chosen by benchmarks/edge_false_alarm.py).
DEFAULT_CONSTANTS = "johnstone"


@dataclass(frozen=True)
class EdgeTest:
    """Result of the sequential Tracy-Widom tests on a sample spectrum.

    Attributes
    ----------
    n_signal : int
        Number of eigenvalues declared signal: the tests reject for the
        ``n_signal`` largest and not for the next one (or ``max_signal`` was
        reached).
    bulk_edge : float
        Upper edge of the Marchenko-Pastur bulk left after the signal,
        ``s2 (sqrt(n - k) + sqrt(N - k))^2 / n`` with ``k = n_signal`` and the
        re-estimated noise variance ``s2``.
    threshold : float
        The eigenvalue level that the ``(n_signal + 1)``-th largest eigenvalue
        would have had to exceed to be declared signal: the Tracy-Widom
        ``1 - alpha`` quantile mapped to eigenvalue units, with the noise
        variance of that test held fixed.
    noise_variance : float
        Noise variance re-estimated without the ``n_signal`` largest
        eigenvalues (the known value when one was given).
    eigenvalues : ndarray of shape (n_tested,)
        The eigenvalues tested, largest first.
    statistics : ndarray of shape (n_tested,)
        Centred and scaled statistics, Tracy-Widom (beta = 1) under the null.
    p_values : ndarray of shape (n_tested,)
        Upper-tail Tracy-Widom p-values of the statistics.
    alpha : float
        Level of each test.
    constants : str
        Centring and scaling constants used (``"half-integer"`` or
        ``"johnstone"``).
    adjusted : bool
        Whether the statistics were adjusted for the estimated noise
        variance.
    edge : float or None
        The bulk edge every signal eigenvalue had to exceed as well (see
        ``bulk_edge`` of :func:`detect_signal`); None when not used.
    stopped_at_edge : bool
        Whether the tests stopped because the next eigenvalue was not above
        ``edge``, although its Tracy-Widom test rejected.
    """

    n_signal: int
    bulk_edge: float
    threshold: float
    noise_variance: float
    eigenvalues: np.ndarray
    statistics: np.ndarray
    p_values: np.ndarray
    alpha: float
    constants: str
    adjusted: bool = False
    edge: float | None = None
    stopped_at_edge: bool = False

    def __str__(self) -> str:
        lines = [
            f"Sequential Tracy-Widom tests at level {self.alpha:g} "
            f"({self.constants} constants)",
            f"  eigenvalues above the noise  {self.n_signal}",
            f"  noise variance               {self.noise_variance:.6g}",
            f"  bulk edge                    {self.bulk_edge:.6g}",
            f"  next test threshold          {self.threshold:.6g}",
            *(
                []
                if self.edge is None
                else [f"  fitted bulk edge             {self.edge:.6g}"]
            ),
            f"  {'rank':>4}  {'eigenvalue':>12}  {'TW statistic':>12}  "
            f"{'p-value':>10}  decision",
        ]
        for rank, (value, stat, p) in enumerate(
            zip(self.eigenvalues, self.statistics, self.p_values, strict=True),
            start=1,
        ):
            decision = "signal" if rank <= self.n_signal else "noise"
            if rank > self.n_signal and self.stopped_at_edge:
                decision = "noise (not above the bulk edge)"
            lines.append(
                f"  {rank:>4}  {value:12.6g}  {stat:12.4f}  {p:10.3g}  {decision}"
            )
        return "\n".join(lines)


def _noise_variance(values, n_samples, n_features, k):
    """Trace estimate of s2 with the k largest eigenvalues set aside.

    The bulk model of :func:`rmtclean.spectrum.fit_bulk`: the rest is white
    noise of dimension N - k with n - k degrees of freedom, scaled by
    (n - k)/n, so its trace has expectation s2 (N - k)(n - k)/n.
    """
    dim, dof, _ = _bulk_sizes(n_samples, n_features, k)
    return float(np.sum(values[k:])) * n_samples / (dim * dof)


def _scaled_statistic(mu, sigma, n_cells, law_mean, law_var, adjust):
    """Centring and scale of n * lambda / s2_hat, as a TW1 variate.

    With white Gaussian noise the total sum of squares (chi-squared with
    ``n_cells`` degrees of freedom) is independent of the normalised data
    matrix, hence of the ratio of the largest eigenvalue to the trace. So
    ``log(n lambda / s2)`` is the sum of ``log(n lambda / s2_hat)`` and an
    independent term of variance about ``2 / n_cells``: the variance of the
    statistic with the estimated noise variance is smaller by about
    ``2 mu^2 / n_cells``. ``adjust`` rescales the Tracy-Widom fluctuation
    about its mean to that variance.
    """
    if not adjust:
        return mu, sigma, sigma
    reduced = sigma**2 - 2.0 * mu**2 / (n_cells * law_var)
    scale = math.sqrt(max(reduced, 0.01 * sigma**2))
    return mu + (sigma - scale) * law_mean, sigma, scale


@functools.lru_cache(maxsize=64)
def _law_constants(alpha: float) -> tuple[float, float, float]:
    """TW1 mean, variance and upper ``alpha`` quantile (cached: tests repeat)."""
    from rmtclean.laws import TracyWidom

    law = TracyWidom(beta=1)
    return float(law.mean()), float(law.var()), float(law.ppf(1.0 - alpha))


def _fitted_edge(values, n_samples, n_features, s2):
    """Upper edge of the Marchenko-Pastur law fitted to the whole spectrum.

    Ratio fixed at ``N / n``, noise variance fitted (minimum Cramer-von Mises
    distance to all the eigenvalues, as Laloux et al. fit the whole density)
    or the known ``s2``: ``s2 (1 + sqrt(N / n))^2``.
    """
    from rmtclean.spectrum._bulk import _fit_bulk

    if s2 is not None:
        return float(s2 * (1.0 + math.sqrt(n_features / n_samples)) ** 2)
    return _fit_bulk(values, n_samples, n_features, 0, True, "cvm").upper_edge


def _detect_signal(
    values,
    n_samples,
    n_features,
    alpha,
    max_signal,
    constants,
    s2,
    adjust=True,
    edge=None,
):
    """Unvalidated core of :func:`detect_signal` (``edge`` a level or None)."""
    from rmtclean.laws import TracyWidom
    from rmtclean.laws._wishart import largest_eigenvalue_scaling

    law = TracyWidom(beta=1)
    law_mean, law_var, quantile = _law_constants(alpha)
    known = s2 is not None
    stats, pvals = [], []
    k = 0
    at_edge = False
    while True:
        dim, dof, _ = _bulk_sizes(n_samples, n_features, k)
        variance = s2 if known else _noise_variance(values, n_samples, n_features, k)
        mu, sigma = largest_eigenvalue_scaling(dof, dim, constants=constants)
        centre, _, scale = _scaled_statistic(
            float(mu), float(sigma), dim * dof, law_mean, law_var, adjust and not known
        )
        if k >= max_signal:
            break
        stat = (n_samples * values[k] / variance - centre) / scale
        p = float(law.sf(stat))
        stats.append(stat)
        pvals.append(p)
        if p >= alpha:
            break
        if edge is not None and not values[k] > edge:
            # Rejected, but inside the fitted bulk: never continue into it.
            at_edge = True
            break
        k += 1
    threshold = variance * (centre + scale * quantile) / n_samples
    return EdgeTest(
        n_signal=k,
        bulk_edge=variance * (math.sqrt(dof) + math.sqrt(dim)) ** 2 / n_samples,
        threshold=threshold,
        noise_variance=float(variance),
        eigenvalues=values[: len(stats)].copy(),
        statistics=np.asarray(stats, dtype=np.float64),
        p_values=np.asarray(pvals, dtype=np.float64),
        alpha=float(alpha),
        constants=constants,
        adjusted=bool(adjust and not known),
        edge=None if edge is None else float(edge),
        stopped_at_edge=at_edge,
    )


def _check_edge_options(values, n_samples, max_signal, constants, s2, function):
    high = min(values.size - 1, math.ceil(n_samples) - 2)
    check_value(max_signal, [None, Interval(int, 0, high)], "max_signal", function)
    check_value(constants, [Options(_CONSTANTS)], "constants", function)
    check_value(s2, [None, POSITIVE_FINITE], "noise_variance", function)
    if max_signal is None:
        max_signal = max(high, 0)
    return int(max_signal), None if s2 is None else float(s2)


def detect_signal(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    alpha: float = 0.05,
    max_signal: int | None = None,
    constants: str = DEFAULT_CONSTANTS,
    noise_variance: float | None = None,
    adjust: bool = True,
    bulk_edge: str | float | None = "fit",
) -> EdgeTest:
    r"""Count the eigenvalues above the noise bulk by sequential Tracy-Widom tests.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_components,)
        Sample eigenvalues in descending order (the nonzero part of the
        spectrum; implicit zeros beyond ``n_components`` when
        ``n_features > n_samples``).
    n_samples : float
        Degrees of freedom of the sample covariance (``T - 1`` after
        demeaning).
    n_features : int
        Dimension ``N``.
    alpha : float, default=0.05
        Level of each test. On pure noise the probability of declaring at
        least one signal eigenvalue is close to ``alpha``.
    max_signal : int or None, default=None
        Largest number of signal eigenvalues to declare; ``None`` allows up
        to ``n_components - 1``. Eigenvalues at rounding-error level
        (repeated rows, collinear columns) count as null space and are not
        tested.
    constants : {"johnstone", "half-integer"}, default="johnstone"
        Centring and scaling of the largest eigenvalue: ``"johnstone"``
        uses ``(n - 1, N)`` (Johnstone 2001), ``"half-integer"`` uses
        ``(n - 1/2, N - 1/2)`` (Ma 2012, as recalled). See Notes for the
        choice of default.
    noise_variance : float or None, default=None
        The noise variance, if known. By default it is estimated at each
        step from the trace of the eigenvalues not yet declared signal.
    adjust : bool, default=True
        Account for the noise variance being estimated (see Notes). Ignored
        when ``noise_variance`` is given.
    bulk_edge : "fit", float or None, default="fit"
        A level every signal eigenvalue must also exceed: the tests stop at
        the first eigenvalue not above it, even if its test rejects, so they
        never continue into the bulk. ``"fit"``: the upper edge
        ``s2 (1 + sqrt(N / n))^2`` of the Marchenko-Pastur law fitted to the
        whole spectrum with the ratio fixed (the known ``noise_variance``
        if given); ``None``: no such level.

    Returns
    -------
    EdgeTest
        ``n_signal``, the bulk edge, the threshold of the last test, the
        re-estimated noise variance and, for each tested eigenvalue, its
        statistic and p-value.

    See Also
    --------
    rmtclean.spectrum.fit_bulk : Marchenko-Pastur fit of the bulk.

    Notes
    -----
    Step ``k = 0, 1, ...`` tests whether the ``(k+1)``-th largest eigenvalue
    is noise, given that the ``k`` largest are signal. Under that null the
    other eigenvalues behave like white noise of dimension ``N - k`` with
    ``n - k`` degrees of freedom (see :func:`rmtclean.spectrum.fit_bulk`),
    so

    .. math::

        s_k = \frac{n \lambda_{k+1} / \hat s^2_k - \mu(n-k, N-k)}
                   {\sigma(n-k, N-k)} \;\approx\; \mathrm{TW}_1,
        \qquad
        \hat s^2_k = \frac{n}{(N-k)(n-k)} \sum_{j > k} \lambda_j,

    with the centring and scaling ``mu, sigma`` of the largest eigenvalue of
    a white Wishart matrix (Johnstone [1]_). The noise variance is unknown in
    practice and is re-estimated at each step from the trace of the
    eigenvalues still under test, as in Kritchman & Nadler [2]_ (who also
    test sequentially and stop at the first non-rejection; from memory).

    Estimating the noise variance changes the null law. For white Gaussian
    noise the total sum of squares, ``chi^2`` with ``m = (N-k)(n-k)``
    degrees of freedom, is independent of the direction of the data matrix
    and so of ``lambda / trace``; hence ``log(n lambda / s^2)`` splits into
    ``log(n lambda / \hat s^2)`` plus an independent term of variance
    ``2/m``, and the statistic with the estimated variance fluctuates less
    than TW1 (a test at level 0.05 then rejects about 2% of the time at
    ``n = 50, N = 10``). With ``adjust=True`` the fluctuation about the TW1
    mean ``E`` is rescaled to the reduced variance:

    .. math::

        \tilde\sigma^2 = \sigma^2 - \frac{2 \mu^2}{m \operatorname{Var}(TW_1)},
        \qquad
        s_k = E + \frac{n \lambda_{k+1} / \hat s^2_k - \mu - \sigma E}
                        {\tilde\sigma},

    which matches the first two moments (a two-moment approximation derived
    for rmtclean, not a published correction).

    On spectra that are not Marchenko-Pastur beyond a few spikes (a
    population spectrum with no flat part, as in long samples of real
    returns) the re-estimated variance drops at each step and the tests keep
    rejecting, deep into the bulk. The ``bulk_edge`` level stops them there:
    a signal eigenvalue lies above the fitted edge, so its inverted spike is
    above the BBP threshold and its overlap is positive.

    Choice of the default constants: with the noise variance known,
    Johnstone's ``(n - 1, N)`` constants are conservative at small sizes and
    the half-integer ones sit closer to ``alpha``. With the variance
    estimated and the adjustment above, as in practice, the order flips.
    The default is ``"johnstone"``: with the variance estimated its
    false-alarm rate on pure noise stays closest to ``alpha`` (table and
    command: ``benchmarks/edge_false_alarm.md``).

    References
    ----------
    .. [1] Johnstone, I. M. (2001). On the distribution of the largest
       eigenvalue in principal components analysis. Ann. Statist. 29(2),
       295-327.
    .. [2] Kritchman, S. and Nadler, B. (2008). Determining the number of
       components in a factor model from limited noisy data. Chemometr.
       Intell. Lab. Syst. 94(1), 19-32.
    .. [3] Ma, Z. (2012). Accuracy of the Tracy-Widom limits for the extreme
       eigenvalues in white Wishart matrices. Bernoulli 18(1), 322-359.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum import detect_signal
    >>> rng = np.random.default_rng(0)
    >>> scales = np.ones(100)
    >>> scales[:2] = [4.0, 3.0]  # two planted spikes (standard deviations)
    >>> X = rng.standard_normal((400, 100)) * scales
    >>> eig = np.linalg.eigvalsh(np.cov(X, rowvar=False))[::-1]
    >>> test = detect_signal(eig, n_samples=399, n_features=100)
    >>> test.n_signal
    2
    """
    function = "detect_signal"
    values, n_samples, n_features = check_spectrum(
        eigenvalues, n_samples, n_features, function
    )
    # rounding-error zeros (repeated rows, collinear columns) are null space
    values = values[: numerical_rank(values, n_samples)]
    alpha = float(check_value(alpha, [OPEN_UNIT], "alpha", function))
    max_signal, s2 = _check_edge_options(
        values, n_samples, max_signal, constants, noise_variance, function
    )
    if s2 is None and not np.any(values[max_signal:] > 0):
        raise ValueError(
            f"The eigenvalues given to {function} vanish beyond the "
            f"{max_signal} largest: the noise variance cannot be estimated."
        )
    adjust = bool(check_value(adjust, [BOOLEAN], "adjust", function))
    edge = _check_bulk_edge(bulk_edge, function)
    if edge == "fit":
        edge = _fitted_edge(values, n_samples, n_features, s2)
    return _detect_signal(
        values, n_samples, n_features, alpha, max_signal, constants, s2, adjust, edge
    )


def _check_bulk_edge(value, function: str):
    return _check_level(value, "bulk_edge", ("fit", None), function)


def _check_level(value, name: str, options: tuple, function: str):
    """One of ``options`` (names, or None) or a non-negative finite float."""
    if value in options and not isinstance(value, (bool, Real)):
        return value
    if (
        isinstance(value, bool)
        or not isinstance(value, Real)
        or not math.isfinite(value)
        or value < 0
    ):
        shown = ", ".join(repr(option) for option in options)
        raise ValueError(
            f"The {name!r} parameter of {function} must be one of {shown} or a "
            f"non-negative float. Got {value!r} instead."
        )
    return float(value)
