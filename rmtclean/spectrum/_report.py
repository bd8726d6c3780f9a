"""One-call diagnosis of a sample spectrum: noise level, signal count, spikes."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rmtclean.spectrum._bulk import _fit_bulk, _numerical_rank
from rmtclean.spectrum._edge import (
    DEFAULT_CONSTANTS,
    _check_alpha,
    _check_bool,
    _check_edge_options,
    _detect_signal,
)
from rmtclean.spectrum._sample import sample_spectrum
from rmtclean.spectrum._spikes import invert_spikes

__all__ = ["SpectrumReport", "analyze_spectrum"]

CAUTION = (
    "Caution: these are statistical estimates from one sample; they carry "
    "estimation risk."
)


@dataclass(frozen=True)
class SpectrumReport:
    """What random-matrix theory reads in a sample spectrum.

    Attributes
    ----------
    n_signal : int
        Number of eigenvalues above the noise (sequential Tracy-Widom tests).
    noise_variance : float
        Noise variance of the Marchenko-Pastur bulk fitted without the signal
        eigenvalues.
    ratio : float
        Ratio of the fitted bulk law, ``(N - k)/(n - k)`` for ``k`` signal
        eigenvalues (or the effective ratio when ``fix_ratio=False``).
    bulk_edge : float
        Upper edge of the fitted bulk.
    threshold : float
        Level the first noise eigenvalue would have had to exceed to be
        declared signal.
    p_values, statistics : ndarray of shape (n_tested,)
        Tracy-Widom p-values and statistics of the tested eigenvalues,
        largest first (the signal ones, then the first one not rejected).
    spike_strengths : ndarray of shape (n_signal,)
        Population variance of each signal direction, inverted from its
        eigenvalue by the Baik-Ben Arous-Peche map with ratio ``N / n``;
        ``noise_variance`` where an eigenvalue is not above the limit edge.
    overlaps : ndarray of shape (n_signal,)
        Limit squared cosine between each signal eigenvector and its
        population direction (0 below the BBP threshold).
    eigenvalues : ndarray of shape (n_components,)
        The sample eigenvalues (descending; implicit zeros beyond).
    bulk_statistic : float
        Kolmogorov-Smirnov distance of the bulk to the fitted law.
    n_samples : float
        Degrees of freedom of the sample covariance.
    n_features : int
        Dimension N.
    alpha : float
        Level of the tests.
    standardized : bool
        Whether the spectrum is that of the correlation matrix.
    """

    n_signal: int
    noise_variance: float
    ratio: float
    bulk_edge: float
    threshold: float
    p_values: np.ndarray
    statistics: np.ndarray
    spike_strengths: np.ndarray
    overlaps: np.ndarray
    eigenvalues: np.ndarray
    bulk_statistic: float
    n_samples: float
    n_features: int
    alpha: float
    standardized: bool = False

    def to_dict(self) -> dict:
        """Plain Python types only, ready for ``json.dumps``."""
        out = {}
        for name in self.__dataclass_fields__:
            value = getattr(self, name)
            if isinstance(value, np.ndarray):
                value = [float(v) for v in value]
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
            (
                "features N, degrees of freedom n",
                f"{self.n_features}, {self.n_samples:g}",
            ),
            ("eigenvalues above the noise", f"{self.n_signal} (level {self.alpha:g})"),
            ("noise variance", f"{self.noise_variance:.6g}"),
            ("ratio of the bulk", f"{self.ratio:.6g}"),
            ("bulk edge", f"{self.bulk_edge:.6g}"),
            ("next test threshold", f"{self.threshold:.6g}"),
            ("bulk fit KS distance", f"{self.bulk_statistic:.4g}"),
        ]
        width = max(len(label) for label, _ in rows)
        lines = [f"Spectrum report ({kind} matrix)"]
        lines += [f"  {label:<{width}}  {value}" for label, value in rows]
        lines.append(
            f"  {'rank':>4}  {'eigenvalue':>12}  {'p-value':>10}  "
            f"{'spike':>12}  {'overlap':>8}"
        )
        for rank, p in enumerate(self.p_values, start=1):
            value = self.eigenvalues[rank - 1]
            if rank <= self.n_signal:
                spike = f"{self.spike_strengths[rank - 1]:12.6g}"
                overlap = f"{self.overlaps[rank - 1]:8.4f}"
            else:
                spike, overlap = f"{'(noise)':>12}", f"{'':>8}"
            lines.append(f"  {rank:>4}  {value:12.6g}  {p:10.3g}  {spike}  {overlap}")
        lines.append(CAUTION)
        return "\n".join(lines)


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
        Fix the ratio of the bulk law by the sizes (else fit it).

    Returns
    -------
    SpectrumReport
        See its attributes; ``print`` it for a table.

    See Also
    --------
    rmtclean.spectrum.detect_signal : the signal count.
    rmtclean.spectrum.fit_bulk : the noise variance and bulk edges.
    rmtclean.spectrum._spikes.invert_spikes : spikes and overlaps.

    Notes
    -----
    The signal count comes from :func:`~rmtclean.spectrum.detect_signal`,
    the noise level from :func:`~rmtclean.spectrum.fit_bulk` with that many
    eigenvalues set aside, and the spikes and overlaps from the
    Baik-Ben Arous-Peche inversion at ratio ``N / n`` and the fitted noise
    variance. All are estimates from one sample.

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
    """
    function = "analyze_spectrum"
    alpha = _check_alpha(alpha, function)
    fix_ratio = _check_bool(fix_ratio, "fix_ratio", function)
    spec = sample_spectrum(
        X,
        assume_centered=assume_centered,
        sample_weight=sample_weight,
        standardize=standardize,
    )
    n, n_features = float(spec.n_samples), spec.n_features
    # rounding-error zeros (repeated rows, collinear columns) are null space
    values = spec.eigenvalues[: _numerical_rank(spec.eigenvalues, n)]
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
    test = _detect_signal(values, n, n_features, alpha, max_signal, constants, None)
    k = test.n_signal
    fit = _fit_bulk(values, n, n_features, k, fix_ratio, "cvm")
    spikes = invert_spikes(values[:k], n_features / n, fit.noise_variance)
    return SpectrumReport(
        n_signal=k,
        noise_variance=fit.noise_variance,
        ratio=fit.ratio,
        bulk_edge=fit.upper_edge,
        threshold=test.threshold,
        p_values=test.p_values,
        statistics=test.statistics,
        spike_strengths=spikes.spikes,
        overlaps=spikes.overlaps,
        eigenvalues=spec.eigenvalues.copy(),
        bulk_statistic=fit.statistic,
        n_samples=n,
        n_features=int(n_features),
        alpha=alpha,
        standardized=bool(standardize),
    )
