"""One-call diagnosis of a sample spectrum: noise level, signal count, spikes."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import NamedTuple

import numpy as np

from rmtclean._validation import (
    BOOLEAN,
    OPEN_UNIT,
    check_spectrum,
    check_value,
    numerical_rank,
)
from rmtclean.spectrum._bulk import _fit_bulk
from rmtclean.spectrum._edge import (
    DEFAULT_CONSTANTS,
    _check_edge_options,
    _detect_signal,
)
from rmtclean.spectrum._sample import rank_deficiency, sample_spectrum
from rmtclean.spectrum._spikes import _invert_spikes

__all__ = [
    "SpectrumReport",
    "analyze_spectrum",
    "fit_fails",
    "fit_warning_level",
    "spectrum_report",
]

#: Closes every printed report (and the CLI's outputs, ``rmtclean.demo``).
CAUTION = (
    "Caution: these are statistical estimates and carry estimation risk. "
    "They are not investment or medical advice; defer to your own licensed "
    "professionals and your firm's risk rules."
)


#: The bulk fit is said not to describe a spectrum when its Kolmogorov-Smirnov
#: distance exceeds this, or FIT_WARNING_SCALE / m for m fitted eigenvalues if
#: larger. Under white Gaussian noise the distance stays below 0.06 for
#: m >= 49 and below 0.22 for m = 10 (maximum of 40 draws at each of eight
#: sizes, benchmarks/bulk_fit_null.py), i.e. below both levels.
FIT_WARNING_LEVEL = 0.1
FIT_WARNING_SCALE = 4.0
#: Below this ratio N / n (more than 50 observations per variable, a noise law
#: within +-30% of its mean) a failed bulk fit is read as the population
#: spectrum showing through.
LONG_SAMPLE_RATIO = 0.02
#: Fewest bulk eigenvalues whose fit the KS level above is calibrated for
#: (benchmarks/bulk_fit_null.py starts at 10); with fewer, no fit can be
#: judged and the report says so.
MIN_BULK_TESTED = 10


def fit_warning_level(n_used: int) -> float:
    """KS distance above which the bulk fit is said not to hold."""
    return max(FIT_WARNING_LEVEL, FIT_WARNING_SCALE / max(int(n_used), 1))


def fit_fails(statistic: float, n_used: int) -> bool:
    """Whether a bulk fit's KS distance is above :func:`fit_warning_level`.

    A distance equal to the level up to rounding (``4/25`` computed as
    ``0.16000000000000003`` against ``4 / 25``) does not count as above it.
    """
    return statistic > fit_warning_level(n_used) * (1.0 + 1e-9)


@dataclass(frozen=True)
class SpectrumReport:
    """What random-matrix theory reads in a sample spectrum.

    Attributes
    ----------
    n_signal : int
        Number of eigenvalues above the noise: the sequential Tracy-Widom
        tests reject for each of them, and each lies above ``bulk_edge`` and
        above the edge of the law fitted to the whole spectrum.
    noise_variance : float
        Noise variance ``s2`` of the Marchenko-Pastur bulk fitted without the
        signal eigenvalues.
    ratio : float
        The ratio ``q`` of the noise law: ``N / n`` (``n`` the degrees of
        freedom, effective with weights) or, with ``fix_ratio=False``, the
        effective ratio fitted within ``[N / n, 4 N / n]``.
    bulk_edge : float
        Upper edge ``s2 (1 + sqrt(q))^2`` of the noise law. Every signal
        eigenvalue lies above it.
    critical_spike : float
        The BBP threshold ``s2 (1 + sqrt(q))``: every signal's spike
        strength lies above it.
    threshold : float
        Level the first noise eigenvalue would have had to exceed to be
        declared signal: the larger of its Tracy-Widom level and the edge of
        the law fitted to the whole spectrum.
    p_values, statistics : ndarray of shape (n_tested,)
        Tracy-Widom p-values and statistics of the tested eigenvalues,
        largest first (the signal ones, then the first one not declared).
    spike_strengths : ndarray of shape (n_signal,)
        Population variance of each signal direction, inverted from its
        eigenvalue by the Baik-Ben Arous-Peche map at ``ratio`` and
        ``noise_variance``.
    overlaps : ndarray of shape (n_signal,)
        Limit squared cosine between each signal eigenvector and its
        population direction (Paul 2007), in (0, 1).
    eigenvalues : ndarray of shape (n_components,)
        The sample eigenvalues (descending; implicit zeros beyond).
    bulk_statistic : float
        Kolmogorov-Smirnov distance of the bulk (the eigenvalues after the
        signal) to the fitted law.
    n_observations : int
        Rows of the data.
    degrees_of_freedom : float
        Degrees of freedom ``n`` of the sample covariance (``T - 1`` after
        demeaning; Kish's effective size with weights).
    n_features : int
        Dimension N.
    alpha : float
        Level of the tests.
    standardized : bool
        Whether the spectrum is that of the correlation matrix.
    warnings : tuple of str
        What the user should know before reading the numbers: the bulk law
        does not describe the spectrum, the count hit ``max_signal``. Empty
        when nothing is to be said.
    """

    n_signal: int
    noise_variance: float
    ratio: float
    bulk_edge: float
    critical_spike: float
    threshold: float
    p_values: np.ndarray
    statistics: np.ndarray
    spike_strengths: np.ndarray
    overlaps: np.ndarray
    eigenvalues: np.ndarray
    bulk_statistic: float
    n_observations: int
    degrees_of_freedom: float
    n_features: int
    alpha: float
    standardized: bool = False
    warnings: tuple = ()

    def to_dict(self) -> dict:
        """Plain Python types only, ready for ``json.dumps``.

        The keys are the attribute names; arrays become lists of floats,
        ``warnings`` a list of strings.
        """
        out = {}
        for name in self.__dataclass_fields__:
            value = getattr(self, name)
            if isinstance(value, np.ndarray):
                value = [float(v) for v in value]
            elif isinstance(value, tuple):
                value = [str(v) for v in value]
            elif isinstance(value, (bool, np.bool_)):
                value = bool(value)
            elif isinstance(value, (int, np.integer)):
                value = int(value)
            else:
                value = float(value)
            out[name] = value
        return out

    def __str__(self) -> str:
        kind = "correlation" if self.standardized else "covariance"
        rows = [
            ("n_observations, n_features", f"{self.n_observations}, {self.n_features}"),
            ("degrees_of_freedom", f"{self.degrees_of_freedom:g}"),
            ("n_signal", f"{self.n_signal} (level {self.alpha:g})"),
            ("noise_variance", f"{self.noise_variance:.6g}"),
            ("ratio", f"{self.ratio:.6g}"),
            ("bulk_edge", f"{self.bulk_edge:.6g}"),
            ("critical_spike", f"{self.critical_spike:.6g}"),
            ("threshold", f"{self.threshold:.6g}"),
            ("bulk_statistic (KS)", f"{self.bulk_statistic:.4g}"),
        ]
        width = max(len(label) for label, _ in rows)
        lines = [f"Spectrum report ({kind} matrix)"]
        lines += [f"  {label:<{width}}  {value}" for label, value in rows]
        lines.append(
            f"  {'rank':>4}  {'eigenvalue':>12}  {'p-value':>10}  "
            f"{'spike':>12}  {'overlap':>8}"
        )
        notes = []
        for rank, p in enumerate(self.p_values, start=1):
            value = self.eigenvalues[rank - 1]
            if rank <= self.n_signal:
                spike = f"{self.spike_strengths[rank - 1]:12.6g}"
                overlap = f"{self.overlaps[rank - 1]:8.4f}"
            elif p < self.alpha:  # rejected, but not above the threshold
                spike, overlap = "(below threshold)", ""
                notes.append(
                    f"  rank {rank}: its p-value is below the level {self.alpha:g}, "
                    f"but the eigenvalue {value:.6g} is below the threshold "
                    f"{self.threshold:.6g} (the edge of the law fitted to the "
                    "whole spectrum), so it is not counted as signal."
                )
            else:
                spike, overlap = f"{'(noise)':>12}", f"{'':>8}"
            lines.append(f"  {rank:>4}  {value:12.6g}  {p:10.3g}  {spike}  {overlap}")
        lines += notes
        lines += [f"warning: {message}" for message in self.warnings]
        lines.append(CAUTION)
        return "\n".join(lines)


def _fit_warnings(fit, ratio, n_signal, n_features, n_samples, level):
    """The words a failed bulk fit owes the user (empty if the fit holds)."""
    if fit.n_used < MIN_BULK_TESTED:
        per = n_samples / n_features
        return [
            f"only {fit.n_used} eigenvalues are left for the noise bulk, too "
            "few to test whether the Marchenko-Pastur law describes them "
            f"(bulk fit KS distance {fit.statistic:.2g}): read the signal "
            f"count ({n_signal}), the noise variance and the p-values as rough "
            "guides, not test results"
            + (
                f"; with {per:.0f} observations per variable the sample "
                "eigenvalues are already close to the population's."
                if ratio < LONG_SAMPLE_RATIO
                else "."
            )
        ]
    if not fit_fails(fit.statistic, fit.n_used):
        return []
    # two digits, more if they would print "0.16 > 0.16"
    digits = next(
        (d for d in range(2, 8) if f"{fit.statistic:.{d}g}" != f"{level:.{d}g}"), 8
    )
    head = (
        f"the Marchenko-Pastur law does not describe this spectrum (bulk fit "
        f"KS distance {fit.statistic:.{digits}g} > {level:.{digits}g})"
    )
    if ratio < LONG_SAMPLE_RATIO:
        return [
            f"{head}: with {n_samples / n_features:.0f} observations per "
            "variable the population spectrum shows through and the sample "
            f"covariance is already close to it: the signal count ({n_signal}) "
            "is not meaningful; nonlinear shrinkage (KernelShrink) changes the "
            "estimate little, while cleaners that flatten the spectrum below "
            "that count (EigenClip, SpikeShrink) discard real structure."
        ]
    return [
        f"{head}: the noise is not white (heavy tails, correlated noise or a "
        "spread population spectrum); read the signal count "
        f"({n_signal}) and the noise variance as rough guides, not test results."
    ]


def _bulk_model(values, n, n_features, k, fix_ratio):
    """Fit with k set aside and the noise law (s2, q, edge) it implies."""
    fit = _fit_bulk(values, n, n_features, k, fix_ratio, "cvm")
    nominal = n_features / n
    # fit.ratio is the ratio of the bulk left, (N - k)/(n - k) when fixed;
    # a fitted one is rescaled by the same factor to the whole spectrum.
    q = nominal if fix_ratio else fit.ratio * nominal / ((n_features - k) / (n - k))
    s2 = fit.noise_variance
    return fit, q, s2, s2 * (1.0 + math.sqrt(q)) ** 2


class _Detection(NamedTuple):
    n_signal: int
    test: object  # EdgeTest
    fit: object  # BulkFit with the signal set aside
    ratio: float
    noise_variance: float
    bulk_edge: float
    whole_edge: float


def _detect(values, n, n_features, alpha, max_signal, constants, fix_ratio):
    """The one signal detection (validated nonzero spectrum, max_signal set)."""
    # One fit to the whole spectrum, ratio fixed (or free), sets the level no
    # signal eigenvalue may fall under: refitting without the signal at each
    # step would lower it and, on spectra that are not Marchenko-Pastur,
    # cascade into the bulk.
    whole_edge = _bulk_model(values, n, n_features, 0, fix_ratio)[3]
    test = _detect_signal(
        values, n, n_features, alpha, max_signal, constants, None, True, whole_edge
    )
    k = test.n_signal
    fit, q, s2, edge = _bulk_model(values, n, n_features, k, fix_ratio)
    while k and not values[k - 1] > edge:  # a consistent report by construction
        k -= 1
        fit, q, s2, edge = _bulk_model(values, n, n_features, k, fix_ratio)
    return _Detection(k, test, fit, q, s2, edge, whole_edge)


def detect_noise_and_signal(values, n_samples, n_features, alpha=0.05):
    """The report's count and noise variance for a validated spectrum, or None.

    For the rules (``eigen_clip(edge="auto")``, ``spike_shrink``) and the
    estimators' ``n_signal_``: the same detection as
    :func:`spectrum_report` with its default options. None when the
    spectrum is too small to fit a bulk (fewer than 3 nonzero eigenvalues or
    degrees of freedom).
    """
    n = float(n_samples)
    values = values[: numerical_rank(values, n)]
    if values.size < 3 or math.ceil(n) < 3:
        return None
    high = min(values.size - 2, math.ceil(n) - 2)
    return _detect(values, n, n_features, alpha, high, DEFAULT_CONSTANTS, True)


def spectrum_report(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    standardized: bool = False,
    n_observations: int | None = None,
    alpha: float = 0.05,
    constants: str = DEFAULT_CONSTANTS,
    max_signal: int | None = None,
    fix_ratio: bool = True,
) -> SpectrumReport:
    """The spectrum report of a sample spectrum already computed.

    The one detection behind :func:`analyze_spectrum`, the estimators'
    ``n_signal_`` and the ``rmtclean`` command's figures: the same spectrum
    and options give the same count everywhere.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_components,)
        Sample eigenvalues in descending order (the nonzero part; implicit
        zeros beyond when ``n_features > n_samples``), e.g. a fitted
        estimator's ``sample_eigenvalues_``.
    n_samples : float
        Degrees of freedom of the sample covariance (``T - 1`` after
        demeaning; an estimator's ``degrees_of_freedom_``).
    n_features : int
        Dimension ``N``.
    standardized : bool, default=False
        Whether these are eigenvalues of a correlation matrix (for the
        report's labels).
    n_observations : int, optional
        Rows of the data, for the report; default ``round(n_samples + 1)``.
    alpha, constants, max_signal, fix_ratio
        As for :func:`analyze_spectrum`.

    Returns
    -------
    SpectrumReport

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum import spectrum_report
    >>> X = np.random.default_rng(0).standard_normal((400, 100))
    >>> eig = np.linalg.eigvalsh(np.cov(X, rowvar=False))[::-1]
    >>> spectrum_report(eig, 399, 100).n_signal
    0
    """
    function = "analyze_spectrum"
    all_values, n, n_features = check_spectrum(
        eigenvalues, n_samples, n_features, function
    )
    alpha = float(check_value(alpha, [OPEN_UNIT], "alpha", function))
    fix_ratio = bool(check_value(fix_ratio, [BOOLEAN], "fix_ratio", function))
    # rounding-error zeros (repeated rows, collinear columns) are null space
    values = all_values[: numerical_rank(all_values, n)]
    if values.size < 3 or math.ceil(n) < 3:
        raise ValueError(
            f"{function} needs at least 3 nonzero sample eigenvalues and 3 degrees "
            f"of freedom. Got {values.size} eigenvalue(s) and {n:g} degrees of "
            "freedom."
        )
    high = min(values.size - 2, math.ceil(n) - 2)
    if max_signal is None:
        max_signal = high
    max_signal, _ = _check_edge_options(
        values, n, max_signal, constants, None, function
    )
    max_signal = min(max_signal, high)
    found = _detect(values, n, n_features, alpha, max_signal, constants, fix_ratio)
    k, test, fit, q, s2, edge, whole_edge = found
    spikes = _invert_spikes(values[:k], q, s2)
    messages = _fit_warnings(fit, q, k, n_features, n, fit_warning_level(fit.n_used))
    if k == max_signal and k < high:
        messages.append(
            f"the count stopped at max_signal={max_signal}: more eigenvalues may "
            "stand above the noise."
        )
    return SpectrumReport(
        n_signal=k,
        noise_variance=s2,
        ratio=q,
        bulk_edge=edge,
        critical_spike=s2 * (1.0 + math.sqrt(q)),
        threshold=max(test.threshold, whole_edge),
        p_values=test.p_values,
        statistics=test.statistics,
        spike_strengths=spikes.spikes,
        overlaps=spikes.overlaps,
        eigenvalues=all_values,
        bulk_statistic=fit.statistic,
        n_observations=int(round(n + 1))
        if n_observations is None
        else int(n_observations),
        degrees_of_freedom=n,
        n_features=n_features,
        alpha=alpha,
        standardized=bool(standardized),
        warnings=tuple(messages),
    )


def analyze_spectrum(
    X,
    *,
    alpha: float = 0.05,
    assume_centered: bool = False,
    standardize: bool = False,
    sample_weight=None,
    constants: str = DEFAULT_CONSTANTS,
    max_signal: int | None = None,
    fix_ratio: bool = True,
) -> SpectrumReport:
    """Noise level, number of signal eigenvalues and spikes of a data set.

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Data, rows are observations.
    alpha : float, default=0.05
        Level of each sequential Tracy-Widom test.
    assume_centered : bool, default=False
        Do not demean; use ``T`` instead of ``T - 1`` degrees of freedom.
    standardize : bool, default=False
        Analyse the correlation matrix instead of the covariance.
    sample_weight : array_like of shape (n_samples,), optional
        Non-negative frequency weights.
    constants : {"johnstone", "half-integer"}, default="johnstone"
        Tracy-Widom centring constants (see
        :func:`rmtclean.spectrum.detect_signal`).
    max_signal : int or None, default=None
        Largest number of signal eigenvalues to declare.
    fix_ratio : bool, default=True
        Hold the ratio of the noise law at ``N / n`` and fit only the noise
        variance (Laloux et al. [2]_); if False, fit an effective ratio too,
        within ``[N / n, 4 N / n]``.

    Returns
    -------
    SpectrumReport
        See its attributes; ``print`` it for a table. Read its
        ``warnings`` first.

    See Also
    --------
    spectrum_report : the same on a sample spectrum already computed.
    rmtclean.spectrum.detect_signal : the sequential tests.
    rmtclean.spectrum.fit_bulk : the noise variance and bulk edges.
    rmtclean.spectrum.invert_spikes : spikes and overlaps.

    Notes
    -----
    Three steps, one consistent answer:

    1. The Marchenko-Pastur law is fitted to the whole spectrum (minimum
       Cramer-von Mises distance, ratio ``q = N / n`` held, as Laloux et
       al. [2]_ fit the variance with ``q`` known); its upper edge is the
       level no signal eigenvalue may fall under.
    2. Sequential Tracy-Widom tests (Johnstone [1]_; noise re-estimated at
       each step, as Kritchman & Nadler [3]_) declare the largest
       eigenvalues signal one by one, and stop at the first that is not
       rejected or not above that level: they never continue into the bulk.
    3. The noise variance ``s2`` is refitted with the ``k`` signal
       eigenvalues set aside (:func:`~rmtclean.spectrum.fit_bulk`), and each
       signal eigenvalue is inverted to its spike and overlap by the
       Baik-Ben Arous-Peche map at ``(q, s2)``.

    By construction every signal eigenvalue lies above ``bulk_edge``, so its
    spike lies above the BBP threshold ``critical_spike`` and its overlap is
    positive. When the fitted law does not describe the bulk (Kolmogorov-
    Smirnov distance above ``max(0.1, 4 / m)`` for ``m`` fitted
    eigenvalues), ``warnings`` says so and what it means: on long samples of
    real data the population spectrum, which has no flat part, shows
    through, and the count is not meaningful.

    References
    ----------
    .. [1] Johnstone, I. M. (2001). On the distribution of the largest
       eigenvalue in principal components analysis. Ann. Statist. 29(2),
       295-327.
    .. [2] Laloux, L., Cizeau, P., Bouchaud, J.-P. and Potters, M. (1999).
       Noise dressing of financial correlation matrices. Phys. Rev. Lett.
       83(7), 1467-1470.
    .. [3] Kritchman, S. and Nadler, B. (2009). Non-parametric detection of
       the number of signals: hypothesis testing and random matrix theory.
       IEEE Trans. Signal Process. 57(10), 3930-3941.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean import analyze_spectrum
    >>> rng = np.random.default_rng(0)
    >>> scales = np.ones(100)
    >>> scales[0] = 3.0  # one planted factor: variance 9
    >>> report = analyze_spectrum(rng.standard_normal((400, 100)) * scales)
    >>> report.n_signal, round(float(report.spike_strengths[0]), 0)
    (1, 9.0)
    >>> report.warnings
    ()
    """
    spec = sample_spectrum(
        X,
        assume_centered=assume_centered,
        sample_weight=sample_weight,
        standardize=standardize,
    )
    report = spectrum_report(
        spec.eigenvalues,
        spec.n_samples,
        spec.n_features,
        standardized=spec.scale is not None,
        alpha=alpha,
        constants=constants,
        max_signal=max_signal,
        fix_ratio=fix_ratio,
        n_observations=int(np.shape(X)[0]),
    )
    # the estimators' RankDeficientWarning, said in the report as well
    words = rank_deficiency(spec)
    if words is None:
        return report
    return replace(report, warnings=(words, *report.warnings))
