r"""Optimal eigenvalue shrinkers in the spiked covariance model.

Donoho, Gavish & Johnstone (2018) show that, in the spiked model, each loss
function has its own optimal shrinker of the separated sample eigenvalues.
For one spike the loss reduces to a two-by-two block: the population
covariance ``A = diag(ell, 1)`` against the estimate
``B = I + (eta - 1) v v'`` with ``v = (c, s)``, ``c^2`` the limit squared
overlap of the sample and population eigenvectors and ``s^2 = 1 - c^2``.
The shrinker ``eta*(ell)`` minimises that block loss. Each shrinker below
is a function of ``(ell, c^2)`` in units of the noise variance.

The losses by their rmtclean names, each with ``L(A, B)`` (A the true
covariance, B the estimate, p the dimension) and its optimal shrinker:

``frobenius``
    L = ||A - B||_F^2;
    eta* = ell c^2 + s^2
``frobenius-precision``
    L = ||A^-1 - B^-1||_F^2;
    eta* = ell / (c^2 + ell s^2)
``frobenius-relative``
    L = ||A^-1 B - I||_F^2;
    eta* = (ell c^2 + ell^2 s^2) / (c^2 + ell^2 s^2)
``frobenius-relative-precision``
    L = ||B^-1 A - I||_F^2;
    eta* = (ell^2 c^2 + s^2) / (ell c^2 + s^2)
``frobenius-whitened``
    L = ||A^-1/2 B A^-1/2 - I||_F^2;
    eta* = 1 + (ell - 1) c^2 / (c^2 + ell s^2)^2
``stein``
    L = tr(A^-1 B) - log det(A^-1 B) - p;
    eta* = ell / (c^2 + ell s^2)
``entropy``
    L = tr(B^-1 A) - log det(B^-1 A) - p;
    eta* = ell c^2 + s^2
``operator``
    L = ||A - B||_2;
    eta* = ell
``operator-precision``
    L = ||A^-1 - B^-1||_2;
    eta* = ell
``operator-whitened``
    L = ||A^-1/2 B A^-1/2 - I||_2;
    eta* = 1 + (ell - 1) / (c^2 + ell s^2)
``nuclear``
    L = ||A - B||_*;
    eta* = max(1 + (ell - 1)(1 - 2 s^2), 1)
``nuclear-precision``
    L = ||A^-1 - B^-1||_*;
    eta* = max(ell / (c^2 + (2 ell - 1) s^2), 1)
``nuclear-relative``
    L = ||A^-1 B - I||_*;
    eta* = max(ell / (c^2 + ell^2 s^2), 1)
``divergence``
    L = tr(A^-1 B) + tr(B^-1 A) - 2p;
    eta* = sqrt((ell^2 c^2 + ell s^2) / (c^2 + ell s^2))
``frechet``
    L = tr(A + B - 2 A^1/2 B^1/2);
    eta* = (sqrt(ell) c^2 + s^2)^2
``affinity``
    L = log det((A + B)/2) / 2 - log det(A B) / 4;
    eta* = ((1 + c^2) ell + s^2) / (1 + c^2 + ell s^2)

``||.||_*`` is the nuclear norm (sum of singular values). The affinity loss
is the Bhattacharyya distance between ``N(0, A)`` and ``N(0, B)``; the
Matusita affinity loss ``1 - exp(-distance)`` has the same minimiser. The
Frechet loss is Donoho, Gavish & Johnstone's ``||A^1/2 - B^1/2||_F^2``, not
the Gaussian Wasserstein distance. The ``operator-whitened`` and
``nuclear-relative`` forms were identified by minimising the block loss
numerically (the tests check every form that way); the others are the
closed forms of Donoho, Gavish & Johnstone.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from functools import lru_cache
from types import MappingProxyType

import numpy as np

from rmtclean._validation import (
    POSITIVE_FINITE,
    check_spectrum,
    check_value,
    numerical_rank,
)
from rmtclean.exceptions import InvalidParameterError
from rmtclean.laws import MarchenkoPastur
from rmtclean.rules._types import CleanedEigenvalues, SpikeDetails
from rmtclean.spectrum._bulk import fit_bulk
from rmtclean.spectrum._spikes import SpikeInversion, _invert_spikes

__all__ = ["SPIKE_SHRINKERS", "optimal_hard_threshold", "spike_shrink"]


def _frobenius(ell, c2):
    return ell * c2 + (1.0 - c2)


def _frobenius_precision(ell, c2):
    return ell / (c2 + ell * (1.0 - c2))


def _frobenius_relative(ell, c2):
    s2 = 1.0 - c2
    return (ell * c2 + ell**2 * s2) / (c2 + ell**2 * s2)


def _frobenius_relative_precision(ell, c2):
    s2 = 1.0 - c2
    return (ell**2 * c2 + s2) / (ell * c2 + s2)


def _frobenius_whitened(ell, c2):
    return 1.0 + (ell - 1.0) * c2 / (c2 + ell * (1.0 - c2)) ** 2


def _operator(ell, c2):
    return np.asarray(ell, dtype=float).copy()


def _operator_whitened(ell, c2):
    return 1.0 + (ell - 1.0) / (c2 + ell * (1.0 - c2))


def _nuclear(ell, c2):
    return np.maximum(1.0 + (ell - 1.0) * (1.0 - 2.0 * (1.0 - c2)), 1.0)


def _nuclear_precision(ell, c2):
    return np.maximum(ell / (c2 + (2.0 * ell - 1.0) * (1.0 - c2)), 1.0)


def _nuclear_relative(ell, c2):
    return np.maximum(ell / (c2 + ell**2 * (1.0 - c2)), 1.0)


def _divergence(ell, c2):
    s2 = 1.0 - c2
    return np.sqrt((ell**2 * c2 + ell * s2) / (c2 + ell * s2))


def _frechet(ell, c2):
    return (np.sqrt(ell) * c2 + (1.0 - c2)) ** 2


def _affinity(ell, c2):
    s2 = 1.0 - c2
    return ((1.0 + c2) * ell + s2) / (1.0 + c2 + ell * s2)


#: Loss name -> optimal shrinker ``eta(ell, c2)`` in units of the noise
#: variance (Donoho, Gavish & Johnstone 2018); see the module docstring.
SPIKE_SHRINKERS: MappingProxyType[str, Callable] = MappingProxyType(
    {
        "frobenius": _frobenius,
        "frobenius-precision": _frobenius_precision,
        "frobenius-relative": _frobenius_relative,
        "frobenius-relative-precision": _frobenius_relative_precision,
        "frobenius-whitened": _frobenius_whitened,
        "stein": _frobenius_precision,
        "entropy": _frobenius,
        "operator": _operator,
        "operator-precision": _operator,
        "operator-whitened": _operator_whitened,
        "nuclear": _nuclear,
        "nuclear-precision": _nuclear_precision,
        "nuclear-relative": _nuclear_relative,
        "divergence": _divergence,
        "frechet": _frechet,
        "affinity": _affinity,
    }
)


@lru_cache(maxsize=256)
def _marchenko_pastur_median(ratio: float) -> float:
    """Median of the Marchenko-Pastur law with ratio <= 1 and s2 = 1."""
    return float(MarchenkoPastur(ratio).ppf(0.5))


def _nonzero_median_factor(n_samples: float, n_features: int) -> float:
    """Median of the nonzero sample eigenvalues of pure noise, s2 = 1.

    For ``q = n_features / n_samples <= 1`` this is the Marchenko-Pastur
    median with ratio q. For q > 1 the nonzero eigenvalues of the sample
    covariance are those of the ``n_samples x n_samples`` Gram matrix, a
    Marchenko-Pastur law with ratio 1/q scaled by q.
    """
    q = n_features / n_samples
    if q <= 1.0:
        return _marchenko_pastur_median(q)
    return q * _marchenko_pastur_median(1.0 / q)


def _median_noise_variance(
    eigenvalues: np.ndarray, n_samples: float, n_features: int
) -> tuple[float, int]:
    """Noise variance by median matching, and the number of eigenvalues set aside.

    A first estimate matches the median of all eigenvalues (descending) to
    the noise median; the ``k`` eigenvalues above the bulk edge it implies
    are then set aside and the median of the rest is matched to the bulk
    model of :func:`rmtclean.spectrum.fit_bulk`: white noise of dimension
    ``N - k`` with ``n - k`` degrees of freedom, scaled by ``(n - k) / n``.
    """
    first = float(np.median(eigenvalues)) / _nonzero_median_factor(
        n_samples, n_features
    )
    edge = first * (1.0 + np.sqrt(n_features / n_samples)) ** 2
    n_signal = int(np.count_nonzero(eigenvalues > edge))
    # fit_bulk's limits: two bulk eigenvalues left, n_signal below n_samples.
    n_signal = min(n_signal, eigenvalues.size - 2, int(np.ceil(n_samples)) - 1)
    if n_signal <= 0:
        return first, 0
    dof = n_samples - n_signal
    factor = _nonzero_median_factor(dof, n_features - n_signal) * dof / n_samples
    return float(np.median(eigenvalues[n_signal:])) / factor, n_signal


def _estimate_noise_variance(
    eigenvalues: np.ndarray, n_samples: float, n_features: int, method: str
) -> float:
    """Noise variance of a validated descending spectrum by ``method``."""
    # Round-off zeros (numpy's matrix_rank tolerance) are rank deficiency,
    # not noise: leave them out.
    positive = eigenvalues[: numerical_rank(eigenvalues, n_features)]
    median, n_signal = _median_noise_variance(positive, n_samples, n_features)
    if method == "median" or positive.size < 3:
        return median
    fit = fit_bulk(positive, n_samples, n_features, n_signal=n_signal)
    return fit.noise_variance


def _spike_shrink(
    eigenvalues: np.ndarray,
    n_samples: float,
    n_features: int,
    shrinker: Callable,
    noise_variance: float,
    n_signal: int | None = None,
) -> tuple[np.ndarray, int, SpikeInversion]:
    """Core of :func:`spike_shrink` on validated input.

    ``n_signal`` (the spectrum report's count) limits the spikes to the
    largest ``n_signal`` eigenvalues; None keeps all above the edge.
    """
    inversion = _invert_spikes(eigenvalues, n_features / n_samples, noise_variance)
    if n_signal is not None:
        keep = np.arange(eigenvalues.size) < n_signal
        inversion = dataclasses.replace(
            inversion,
            spikes=np.where(keep, inversion.spikes, noise_variance),
            overlaps=np.where(keep, inversion.overlaps, 0.0),
            is_signal=inversion.is_signal & keep,
        )
    eta = shrinker(inversion.spikes / noise_variance, inversion.overlaps)
    values = noise_variance * np.where(inversion.is_signal, eta, 1.0)
    return values, inversion.n_signal, inversion


def spike_shrink(
    eigenvalues,
    n_samples: float,
    n_features: int,
    *,
    loss: str = "frobenius",
    noise_variance: float | None = None,
) -> CleanedEigenvalues:
    r"""Shrink sample eigenvalues optimally for a loss in the spiked model.

    Sample eigenvalues above the bulk edge ``s2 (1 + sqrt(q))^2`` are mapped
    back to population spikes and replaced by the loss-specific optimal
    shrinker of Donoho, Gavish & Johnstone [1]_; all others, and the null
    space when ``n_features > n_samples``, are set to the noise variance.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_components,)
        Sample eigenvalues in descending order: the nonzero part of the
        spectrum, ``n_components = min(n_features, n_samples)``; the
        remaining ``n_features - n_components`` are implicit zeros.
    n_samples : float
        Effective sample size (degrees of freedom: ``T - 1`` after
        demeaning, ``T`` for centred data).
    n_features : int
        Dimension ``N``.
    loss : str, default="frobenius"
        Loss the shrinker is optimal for; one of the keys of
        :data:`SPIKE_SHRINKERS` (see the module documentation for the
        table of losses and formulas).
    noise_variance : float, "median" or None, default=None
        Noise variance ``s2``, or how to estimate it (see Notes): ``None``
        takes the noise variance and the signal count of
        :func:`rmtclean.analyze_spectrum` (only the eigenvalues it calls
        signal are shrunk as spikes); ``"median"`` uses median matching
        alone.

    Returns
    -------
    CleanedEigenvalues
        ``values`` in the input order; ``null_value`` is ``s2`` when
        ``n_components < n_features``, else ``None``; ``n_signal`` is the
        number of eigenvalues shrunk as spikes (the spectrum report's count
        by default, else those above the bulk edge). ``details`` (a
        :class:`SpikeDetails`) holds
        ``noise_variance``, ``noise_variance_method`` (``"report"``,
        ``"given"``, ``"bulk-fit"`` for spectra too small for the report, or
        ``"median"``), ``loss``,
        ``bulk_edge`` and ``inversion``, the
        :class:`~rmtclean.spectrum._spikes.SpikeInversion` used.

    Notes
    -----
    With ``q = n_features / n_samples``, ``y = lambda / s2`` above the edge,
    the spike ``ell`` and the squared overlap ``c^2`` are

    .. math::

        \ell = \tfrac12 \left(y + 1 - q + \sqrt{(y + 1 - q)^2 - 4y}\right),
        \qquad
        c^2 = \frac{1 - q / (\ell - 1)^2}{1 + q / (\ell - 1)},

    and the cleaned eigenvalue is ``s2 * eta*(ell, c^2)``.

    Donoho, Gavish & Johnstone treat ``q`` in ``(0, 1]``. For ``q > 1`` the
    same limits of the separated eigenvalues and overlaps hold (Baik &
    Silverstein 2006; Benaych-Georges & Nadakuditi 2011), and the block
    reduction is unchanged, so the same shrinkers apply; the
    ``n_features - n_samples`` null directions carry no information and
    get ``s2``.

    Estimating the noise variance starts with median matching (Gavish &
    Donoho [2]_): ``s2 = median(eigenvalues) / mu``, where ``mu`` is
    the median of the nonzero eigenvalues of unit-variance noise (the
    Marchenko-Pastur median for ratio ``q <= 1``; ``q`` times the median for
    ratio ``1/q`` when ``q > 1``). The ``k`` eigenvalues above the edge this
    first estimate implies are then set aside and the median of the others
    is matched to noise of dimension ``N - k`` with ``n - k`` degrees of
    freedom, scaled by ``(n - k)/n`` (the bulk model of
    :func:`rmtclean.spectrum.fit_bulk`); this removes the upward bias of
    order ``k / N`` that the spikes give the plain median. That is the
    ``"median"`` estimate. The default then sets the same ``k`` eigenvalues
    aside and fits the bulk law to the others by minimum Cramer-von Mises
    distance (:func:`rmtclean.spectrum.fit_bulk`); on Gaussian noise its
    standard error is about half that of the median (spectra of fewer than
    three eigenvalues keep the median estimate). Both assume the eigenvalues
    given are the whole nonzero spectrum (``n_components = min(n_features,
    n_samples)``); eigenvalues at round-off level (below
    ``max(N, n_components) * eps`` times the largest, as in
    :func:`numpy.linalg.matrix_rank`) count as rank deficiency and are left
    out, so repeating rows and giving them integer weights yield the same
    estimate.

    References
    ----------
    .. [1] Donoho, D. L., Gavish, M. and Johnstone, I. M. (2018). Optimal
       shrinkage of eigenvalues in the spiked covariance model. Ann.
       Statist. 46(4), 1742-1778.
    .. [2] Gavish, M. and Donoho, D. L. (2014). The optimal hard threshold
       for singular values is 4/sqrt(3). IEEE Trans. Inf. Theory 60(8),
       5040-5053.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules._spiked import spike_shrink
    >>> rng = np.random.default_rng(0)
    >>> X = rng.standard_normal((400, 100)) * np.r_[3.0, np.ones(99)]
    >>> eigenvalues = np.linalg.eigvalsh(X.T @ X / 400)[::-1]
    >>> result = spike_shrink(eigenvalues, 400, 100, loss="stein")
    >>> result.n_signal
    1
    >>> bool(np.all(result.values[1:] == result.details.noise_variance))
    True
    """
    name = "spike_shrink"
    values, n_samples, n_features = check_spectrum(
        eigenvalues, n_samples, n_features, name
    )
    if not isinstance(loss, str) or loss not in SPIKE_SHRINKERS:
        raise ValueError(
            f"The 'loss' parameter of {name} must be one of "
            f"{sorted(SPIKE_SHRINKERS)}. Got {loss!r} instead."
        )
    count = None
    found = None
    if noise_variance is None:
        from rmtclean.spectrum._report import detect_noise_and_signal

        found = detect_noise_and_signal(values, n_samples, n_features)
    if found is not None:
        method, s2, count = "report", found.noise_variance, found.n_signal
    elif noise_variance is None or (
        isinstance(noise_variance, str) and noise_variance == "median"
    ):
        method = "bulk-fit" if noise_variance is None else "median"
        s2 = _estimate_noise_variance(values, n_samples, n_features, method)
    else:
        method = "given"
        if not POSITIVE_FINITE.accepts(noise_variance):
            raise InvalidParameterError(
                f"The 'noise_variance' parameter of {name} must be None, 'median' "
                f"or a positive finite real number. Got {noise_variance!r} instead."
            )
        s2 = float(noise_variance)
    cleaned, n_signal, inversion = _spike_shrink(
        values, n_samples, n_features, SPIKE_SHRINKERS[loss], s2, count
    )
    return CleanedEigenvalues(
        values=cleaned,
        null_value=s2 if values.size < n_features else None,
        n_signal=n_signal,
        details=SpikeDetails(
            noise_variance=s2,
            noise_variance_method=method,
            loss=loss,
            bulk_edge=inversion.bulk_edge,
            inversion=inversion,
        ),
    )


def optimal_hard_threshold(ratio: float, *, known_noise: bool = True) -> float:
    r"""Optimal hard threshold coefficient for singular values.

    For ``Y = X + sigma Z`` of shape ``m x n`` with a low-rank signal ``X``
    and white noise ``Z``, Gavish & Donoho [1]_ keep the singular values of
    ``Y`` above ``lambda*(beta) sqrt(n) sigma`` when sigma is known, or above
    ``omega(beta) y_med`` (``y_med`` the median singular value) when it is
    not, with ``beta = m / n``.

    Parameters
    ----------
    ratio : float
        Aspect ratio ``beta = m / n``; a value above 1 is replaced by its
        inverse (transpose Y).
    known_noise : bool, default=True
        Return ``lambda*(beta)`` (True) or ``omega(beta)`` (False).

    Returns
    -------
    float
        The threshold coefficient.

    Notes
    -----
    .. math::

        \lambda^*(\beta) = \sqrt{2(\beta + 1)
            + \frac{8\beta}{\beta + 1 + \sqrt{\beta^2 + 14\beta + 1}}},
        \qquad
        \omega(\beta) = \frac{\lambda^*(\beta)}{\sqrt{\mu_\beta}},

    with ``mu_beta`` the median of the Marchenko-Pastur law of ratio beta
    and unit variance. ``lambda*(1) = 4 / sqrt(3)``.

    References
    ----------
    .. [1] Gavish, M. and Donoho, D. L. (2014). The optimal hard threshold
       for singular values is 4/sqrt(3). IEEE Trans. Inf. Theory 60(8),
       5040-5053.

    Examples
    --------
    >>> from rmtclean.rules._spiked import optimal_hard_threshold
    >>> round(optimal_hard_threshold(1.0), 4)
    2.3094
    >>> round(optimal_hard_threshold(1.0, known_noise=False), 4)
    2.8584
    """
    owner = "optimal_hard_threshold"
    beta = float(check_value(ratio, [POSITIVE_FINITE], "ratio", owner))
    beta = min(beta, 1.0 / beta)
    coefficient = np.sqrt(
        2.0 * (beta + 1.0)
        + 8.0 * beta / (beta + 1.0 + np.sqrt(beta**2 + 14.0 * beta + 1.0))
    )
    if not known_noise:
        coefficient /= np.sqrt(_marchenko_pastur_median(beta))
    return float(coefficient)
