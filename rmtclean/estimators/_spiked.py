"""SpikeShrink: optimal shrinkage in the spiked model, as a scikit-learn estimator."""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from rmtclean._validation import Interval, Options
from rmtclean.estimators._base import (
    SpectralCovariance,
    TakesMissing,
    estimator_dataclass,
)
from rmtclean.estimators._bulkvalue import OneBulkValue
from rmtclean.estimators._docs import estimator_doc
from rmtclean.rules._spiked import SPIKE_SHRINKERS, spike_shrink
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import SampleSpectrum

__all__ = ["SpikeShrink"]

_DOC = r"""Optimal eigenvalue shrinkage in the spiked covariance model.

    Sample eigenvalues above the Marchenko-Pastur bulk edge
    ``s2 (1 + sqrt(N / dof))^2`` are mapped back to population spikes and
    replaced by the shrinker that is asymptotically optimal for ``loss``
    (Donoho, Gavish & Johnstone 2018); the other eigenvalues, and the null
    space when N exceeds the degrees of freedom, are set to the noise
    variance ``s2``. See :func:`rmtclean.rules.spike_shrink` and
    :data:`rmtclean.rules.SPIKE_SHRINKERS` for the losses and formulas.

    Parameters
    ----------
    loss : str, default="frobenius"
        The loss the shrinker is optimal for: one of ``"frobenius"``,
        ``"frobenius-precision"``, ``"frobenius-relative"``,
        ``"frobenius-relative-precision"``, ``"frobenius-whitened"``,
        ``"stein"``, ``"entropy"``, ``"operator"``, ``"operator-precision"``,
        ``"operator-whitened"``, ``"nuclear"``, ``"nuclear-precision"``,
        ``"nuclear-relative"``, ``"divergence"``, ``"frechet"``,
        ``"affinity"``.
    noise_variance : float, "median" or None, default=None
        The noise variance ``s2`` (of the correlation matrix when
        ``standardize``), or how to estimate it: ``None`` fits the
        Marchenko-Pastur law to the bulk (:func:`rmtclean.spectrum.fit_bulk`,
        the separated eigenvalues set aside), ``"median"`` uses median
        matching alone (see :func:`rmtclean.rules.spike_shrink`).
%(eigen_solver)s
%(common)s
    Attributes
    ----------
%(fitted)s
    eigenvalues_ : ndarray of shape (n_features,)
        The cleaned eigenvalues, paired with ``sample_eigenvalues_``: the
        shrunk spikes first, then ``noise_variance_``.
%(eigenvectors)s
    n_signal_ : int
        Number of eigenvalues shrunk as spikes: by default the signal count
        of :func:`rmtclean.analyze_spectrum` on the same spectrum; with a
        given or ``"median"`` noise variance, those above the bulk edge.
    noise_variance_ : float
        The noise variance used (given or estimated).
    spike_inversion_ : SpikeInversion
        Spikes, eigenvector overlaps and signal mask of the sample
        eigenvalues (:func:`rmtclean.spectrum.invert_spikes`).
    degrees_of_freedom_ : float
        Degrees of freedom of the sample covariance.
%(fitted_end)s

    See Also
    --------
    rmtclean.rules.spike_shrink : the same on arrays.
    rmtclean.spectrum.invert_spikes : the spike inversion alone.

    Notes
    -----
    The shrinkers are derived for the spiked model: a few population
    eigenvalues above a flat noise level. Donoho, Gavish & Johnstone treat
    ``N / dof <= 1``; the same limits hold above 1, where the null space
    gets ``s2``. With ``half_life`` or ``missing`` the ratio uses the
    heuristic sample size the base class passes, and the noise variance
    estimate is approximate.

    References
    ----------
    .. [1] D. L. Donoho, M. Gavish and I. M. Johnstone, "Optimal shrinkage of
       eigenvalues in the spiked covariance model", Annals of Statistics
       46(4), 1742-1778, 2018.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.estimators import SpikeShrink
    >>> rng = np.random.default_rng(0)
    >>> X = rng.standard_normal((200, 50)) * np.r_[4.0, 3.0, np.ones(48)]
    >>> est = SpikeShrink(loss="stein").fit(X)
    >>> est.n_signal_
    2
    >>> bool(np.all(est.eigenvalues_[2:] == est.noise_variance_))
    True
    """


@estimator_dataclass
class SpikeShrink(OneBulkValue, TakesMissing, SpectralCovariance):
    __doc__ = OneBulkValue.fill_doc(
        estimator_doc(_DOC),
        "``noise_variance`` given as a number",
    )

    _parameter_specs: ClassVar[dict] = {
        "loss": [Options(SPIKE_SHRINKERS)],
        "noise_variance": [
            None,
            Options({"median"}),
            Interval(float, 0.0, None, closed="neither"),
        ],
    }

    loss: str = "frobenius"
    noise_variance: str | float | None = None

    def _randomized_request(self, dof: float, n_features: int):
        s2 = self.noise_variance
        if s2 is None or isinstance(s2, str):
            self._refuse_randomized(
                "noise_variance as a number", f"noise_variance={s2!r}"
            )
        # The bulk edge s2 (1 + sqrt(N / dof))^2 of is_above_bulk_edge.
        return None, float(s2) * (1.0 + np.sqrt(n_features / dof)) ** 2

    def _clean(self, spectrum: SampleSpectrum) -> CleanedEigenvalues:
        out = spike_shrink(
            spectrum.eigenvalues,
            spectrum.n_samples,
            spectrum.n_features,
            loss=self.loss,
            noise_variance=self.noise_variance,
        )
        self.noise_variance_ = out.details.noise_variance
        self.spike_inversion_ = out.details.inversion
        return out
