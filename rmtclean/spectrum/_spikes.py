"""Spiked-model maps between population spikes and sample eigenvalues.

In the spiked covariance model the population covariance is the noise
variance ``s2`` times the identity, except for a few directions with larger
variances ``ell`` (the spikes). With ``q = n_features / n_samples`` fixed,
a spike above the critical value ``s2 (1 + sqrt(q))`` produces a sample
eigenvalue that separates from the Marchenko-Pastur bulk, at a predictable
place and with a predictable eigenvector overlap; weaker spikes vanish into
the bulk (the BBP phase transition). This module holds these maps as
vectorised pure functions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rmtclean._validation import POSITIVE_FINITE, check_real_values, check_value

__all__ = [
    "SpikeInversion",
    "critical_spike",
    "eigenvalue_to_spike",
    "invert_spikes",
    "is_above_bulk_edge",
    "spike_overlap",
    "spike_to_eigenvalue",
]


def _check_model(ratio, noise_variance, function: str) -> tuple[float, float]:
    """Validated ``(q, s2)``: both positive finite reals."""
    q = check_value(ratio, [POSITIVE_FINITE], "ratio", function)
    s2 = check_value(noise_variance, [POSITIVE_FINITE], "noise_variance", function)
    return float(q), float(s2)


def _check_inputs(values, value_name, ratio, noise_variance, function):
    """Validated (values as float array, q, s2) of a public function."""
    values = check_real_values(values, value_name, function)
    return (values, *_check_model(ratio, noise_variance, function))


def _as_output(array: np.ndarray, like) -> float | np.ndarray:
    return float(array) if np.ndim(like) == 0 else array


def _spike_to_eigenvalue(x: np.ndarray, q: float) -> np.ndarray:
    """Forward BBP map in units of the noise variance (no validation)."""
    critical = 1.0 + np.sqrt(q)
    separated = x > critical
    safe = np.where(separated, x, 2.0 * critical)
    return np.where(separated, safe * (1.0 + q / (safe - 1.0)), critical**2)


def _is_separated(y: np.ndarray, q: float) -> np.ndarray:
    """Strictly above the bulk edge, in units of the noise variance."""
    return y > (1.0 + np.sqrt(q)) ** 2


def _eigenvalue_to_spike(y: np.ndarray, q: float) -> np.ndarray:
    """Inverse BBP map in units of the noise variance; bulk values map to 1."""
    lower, upper = (1.0 - np.sqrt(q)) ** 2, (1.0 + np.sqrt(q)) ** 2
    separated = _is_separated(y, q)
    safe = np.where(separated, y, 2.0 * upper)
    # (y + 1 - q)^2 - 4 y factors as (y - lower)(y - upper): no cancellation.
    spikes = 0.5 * ((safe + 1.0 - q) + np.sqrt((safe - lower) * (safe - upper)))
    return np.where(separated, spikes, 1.0)


def _spike_overlap(x: np.ndarray, q: float) -> np.ndarray:
    """Squared cosine in units of the noise variance; zero below the threshold."""
    separated = x > 1.0 + np.sqrt(q)
    safe = np.where(separated, x, 2.0 + 2.0 * np.sqrt(q))
    overlap = (1.0 - q / (safe - 1.0) ** 2) / (1.0 + q / (safe - 1.0))
    return np.where(separated, overlap, 0.0)


def critical_spike(ratio: float, noise_variance: float = 1.0) -> float:
    """Smallest spike that separates from the bulk (the BBP threshold).

    Parameters
    ----------
    ratio : float
        Aspect ratio ``q = n_features / n_samples`` (any positive value).
    noise_variance : float, default=1.0
        Variance ``s2`` of the noise directions.

    Returns
    -------
    float
        ``s2 (1 + sqrt(q))``. Spikes at or below it leave no separated
        sample eigenvalue in the limit.

    Examples
    --------
    >>> from rmtclean.spectrum._spikes import critical_spike
    >>> critical_spike(0.25)
    1.5
    """
    q, s2 = _check_model(ratio, noise_variance, "critical_spike")
    return float(s2 * (1.0 + np.sqrt(q)))


def spike_to_eigenvalue(
    spike, ratio: float, noise_variance: float = 1.0
) -> float | np.ndarray:
    r"""Limit of the sample eigenvalue produced by a population spike.

    Parameters
    ----------
    spike : float or array_like
        Population eigenvalue(s) ``ell``, in the units of the data.
    ratio : float
        Aspect ratio ``q = n_features / n_samples`` (``n_samples`` the
        degrees of freedom). Values above 1 are allowed.
    noise_variance : float, default=1.0
        Variance ``s2`` of the noise directions.

    Returns
    -------
    float or ndarray
        Limit sample eigenvalue(s), same shape as ``spike``. Spikes at or
        below :func:`critical_spike` return the bulk edge
        ``s2 (1 + sqrt(q))^2``, where the top of the bulk sits.

    See Also
    --------
    eigenvalue_to_spike : The inverse map.

    Notes
    -----
    With ``x = ell / s2`` (Baik, Ben Arous & Peche [1]_; Baik & Silverstein
    [2]_):

    .. math::

        \lambda = s^2 \, x \left(1 + \frac{q}{x - 1}\right),
        \qquad x > 1 + \sqrt{q}.

    The formula holds for ``q > 1`` as well, where the sample covariance
    has ``n_features - n_samples`` zero eigenvalues besides the bulk [2]_.
    Only spikes above the noise level are treated; spikes below
    ``s2 (1 - sqrt(q))`` that detach from the lower edge are not.

    References
    ----------
    .. [1] Baik, J., Ben Arous, G. and Peche, S. (2005). Phase transition of
       the largest eigenvalue for nonnull complex sample covariance
       matrices. Ann. Probab. 33(5), 1643-1697.
    .. [2] Baik, J. and Silverstein, J. W. (2006). Eigenvalues of large
       sample covariance matrices of spiked population models. J.
       Multivariate Anal. 97(6), 1382-1408.

    Examples
    --------
    >>> from rmtclean.spectrum._spikes import spike_to_eigenvalue
    >>> spike_to_eigenvalue([5.0, 1.2], ratio=0.5)
    array([5.625     , 2.91421356])
    """
    x, q, s2 = _check_inputs(
        spike, "spike", ratio, noise_variance, "spike_to_eigenvalue"
    )
    return _as_output(s2 * _spike_to_eigenvalue(x / s2, q), spike)


def eigenvalue_to_spike(
    eigenvalue, ratio: float, noise_variance: float = 1.0
) -> float | np.ndarray:
    r"""Population spike that a separated sample eigenvalue points to.

    Parameters
    ----------
    eigenvalue : float or array_like
        Sample eigenvalue(s) ``lambda``, in the units of the data.
    ratio : float
        Aspect ratio ``q = n_features / n_samples``; values above 1 allowed.
    noise_variance : float, default=1.0
        Variance ``s2`` of the noise directions.

    Returns
    -------
    float or ndarray
        Spike estimate(s), same shape as ``eigenvalue``. Eigenvalues at or
        below the bulk edge ``s2 (1 + sqrt(q))^2`` carry no detectable spike
        and return ``noise_variance``: the population eigenvalue of a noise
        direction. Use :func:`is_above_bulk_edge` to tell the two apart.

    See Also
    --------
    spike_to_eigenvalue : The forward map.
    invert_spikes : Spikes, overlaps and the signal mask in one result.

    Notes
    -----
    With ``y = lambda / s2`` above ``(1 + sqrt(q))^2``, the unique root above
    the threshold of the forward map:

    .. math::

        \ell = \frac{s^2}{2} \left( y + 1 - q
        + \sqrt{(y - (1 - \sqrt{q})^2)(y - (1 + \sqrt{q})^2)} \right).

    The map jumps at the edge: just above it the spike tends to the
    critical value ``s2 (1 + sqrt(q))``, at the edge it is ``s2``.

    Examples
    --------
    >>> from rmtclean.spectrum._spikes import eigenvalue_to_spike
    >>> eigenvalue_to_spike([5.625, 1.0], ratio=0.5)
    array([5., 1.])
    """
    y, q, s2 = _check_inputs(
        eigenvalue, "eigenvalue", ratio, noise_variance, "eigenvalue_to_spike"
    )
    return _as_output(s2 * _eigenvalue_to_spike(y / s2, q), eigenvalue)


def is_above_bulk_edge(
    eigenvalue, ratio: float, noise_variance: float = 1.0
) -> bool | np.ndarray:
    """Whether sample eigenvalues lie strictly above the bulk edge.

    Parameters
    ----------
    eigenvalue : float or array_like
        Sample eigenvalue(s).
    ratio : float
        Aspect ratio ``q = n_features / n_samples``.
    noise_variance : float, default=1.0
        Variance ``s2`` of the noise directions.

    Returns
    -------
    bool or ndarray of bool
        ``eigenvalue > s2 (1 + sqrt(q))^2``. This is the limit rule; it
        ignores the Tracy-Widom fluctuations of the top bulk eigenvalue.

    Examples
    --------
    >>> from rmtclean.spectrum._spikes import is_above_bulk_edge
    >>> is_above_bulk_edge([5.625, 2.0], ratio=0.5)
    array([ True, False])
    """
    y, q, s2 = _check_inputs(
        eigenvalue, "eigenvalue", ratio, noise_variance, "is_above_bulk_edge"
    )
    above = _is_separated(y / s2, q)
    return bool(above) if np.ndim(eigenvalue) == 0 else above


def spike_overlap(
    spike, ratio: float, noise_variance: float = 1.0
) -> float | np.ndarray:
    r"""Limit squared cosine between a spike's population and sample eigenvectors.

    Parameters
    ----------
    spike : float or array_like
        Population eigenvalue(s) ``ell``, in the units of the data.
    ratio : float
        Aspect ratio ``q = n_features / n_samples``; values above 1 allowed.
    noise_variance : float, default=1.0
        Variance ``s2`` of the noise directions.

    Returns
    -------
    float or ndarray
        Squared overlap ``c^2`` in ``[0, 1)``, same shape as ``spike``; zero
        at or below :func:`critical_spike`.

    Notes
    -----
    With ``x = ell / s2`` (Paul [1]_, Theorem 4, Gaussian data, ``q < 1``;
    the same limit holds for ``q >= 1``, Benaych-Georges & Nadakuditi [2]_):

    .. math::

        c^2 = \frac{1 - q / (x - 1)^2}{1 + q / (x - 1)},
        \qquad x > 1 + \sqrt{q}.

    References
    ----------
    .. [1] Paul, D. (2007). Asymptotics of sample eigenstructure for a large
       dimensional spiked covariance model. Statistica Sinica 17,
       1617-1642.
    .. [2] Benaych-Georges, F. and Nadakuditi, R. R. (2011). The eigenvalues
       and eigenvectors of finite, low rank perturbations of large random
       matrices. Adv. Math. 227(1), 494-521.

    Examples
    --------
    >>> from rmtclean.spectrum._spikes import spike_overlap
    >>> round(spike_overlap(5.0, ratio=0.5), 6)
    0.861111
    """
    x, q, s2 = _check_inputs(spike, "spike", ratio, noise_variance, "spike_overlap")
    return _as_output(_spike_overlap(x / s2, q), spike)


@dataclass(frozen=True)
class SpikeInversion:
    """Spikes and eigenvector overlaps read off a sample spectrum.

    Attributes
    ----------
    eigenvalues : ndarray of shape (n_eigenvalues,)
        The sample eigenvalues given, in their order.
    spikes : ndarray of shape (n_eigenvalues,)
        Spike estimate for each eigenvalue; ``noise_variance`` for those at
        or below the bulk edge.
    overlaps : ndarray of shape (n_eigenvalues,)
        Limit squared cosine between each sample eigenvector and its
        population eigenvector; 0 for bulk eigenvalues.
    is_signal : ndarray of bool, shape (n_eigenvalues,)
        Whether each eigenvalue lies strictly above the bulk edge.
    ratio : float
        Aspect ratio ``q = n_features / n_samples`` used.
    noise_variance : float
        Noise variance ``s2`` used.
    """

    eigenvalues: np.ndarray
    spikes: np.ndarray
    overlaps: np.ndarray
    is_signal: np.ndarray
    ratio: float
    noise_variance: float

    @property
    def n_signal(self) -> int:
        """Number of eigenvalues above the bulk edge."""
        return int(np.count_nonzero(self.is_signal))

    @property
    def bulk_edge(self) -> float:
        """Upper edge of the noise bulk, ``s2 (1 + sqrt(q))^2``."""
        return float(self.noise_variance * (1.0 + np.sqrt(self.ratio)) ** 2)

    def __str__(self) -> str:
        lines = [
            f"Spike inversion: ratio q = {self.ratio:.6g}, noise variance "
            f"{self.noise_variance:.6g}, bulk edge {self.bulk_edge:.6g}",
            f"{self.n_signal} of {self.eigenvalues.size} eigenvalue(s) above "
            "the bulk edge",
        ]
        if self.n_signal:
            lines.append(f"{'eigenvalue':>14} {'spike':>14} {'overlap c^2':>12}")
            for index in np.flatnonzero(self.is_signal):
                lines.append(
                    f"{self.eigenvalues[index]:14.6g} {self.spikes[index]:14.6g} "
                    f"{self.overlaps[index]:12.6f}"
                )
        return "\n".join(lines)


def invert_spikes(
    eigenvalues, ratio: float, noise_variance: float = 1.0
) -> SpikeInversion:
    """Spikes, eigenvector overlaps and signal mask for a sample spectrum.

    Parameters
    ----------
    eigenvalues : array_like of shape (n_eigenvalues,)
        Sample eigenvalues, any order (rmtclean passes them descending).
    ratio : float
        Aspect ratio ``q = n_features / n_samples``; values above 1 allowed.
    noise_variance : float, default=1.0
        Variance ``s2`` of the noise directions.

    Returns
    -------
    SpikeInversion
        See its Attributes. ``spikes`` are :func:`eigenvalue_to_spike`,
        ``overlaps`` are :func:`spike_overlap` at those spikes and
        ``is_signal`` is :func:`is_above_bulk_edge`.

    Examples
    --------
    >>> from rmtclean.spectrum._spikes import invert_spikes
    >>> result = invert_spikes([5.625, 3.0, 1.0], ratio=0.5)
    >>> result.n_signal
    2
    >>> print(result)  # doctest: +NORMALIZE_WHITESPACE
    Spike inversion: ratio q = 0.5, noise variance 1, bulk edge 2.91421
    2 of 3 eigenvalue(s) above the bulk edge
        eigenvalue          spike  overlap c^2
             5.625              5     0.861111
                 3              2     0.333333
    """
    y, q, s2 = _check_inputs(
        eigenvalues, "eigenvalues", ratio, noise_variance, "invert_spikes"
    )
    if y.ndim != 1:
        raise ValueError(
            "The 'eigenvalues' input of invert_spikes must be 1-D. "
            f"Got an array of shape {y.shape} instead."
        )
    return _invert_spikes(y, q, s2)


def _invert_spikes(y: np.ndarray, q: float, s2: float) -> SpikeInversion:
    """Core of :func:`invert_spikes` on validated input."""
    x = _eigenvalue_to_spike(y / s2, q)
    return SpikeInversion(
        eigenvalues=y.copy(),
        spikes=s2 * x,
        overlaps=_spike_overlap(x, q),
        is_signal=_is_separated(y / s2, q),
        ratio=q,
        noise_variance=s2,
    )
