"""EigenClip: eigenvalue clipping as a scikit-learn estimator."""

from __future__ import annotations

from typing import ClassVar

from rmtclean._validation import Interval, Options
from rmtclean.estimators._base import (
    SpectralCovariance,
    TakesMissing,
    estimator_dataclass,
)
from rmtclean.estimators._bulkvalue import OneBulkValue
from rmtclean.estimators._docs import estimator_doc
from rmtclean.rules._clipping import eigen_clip
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import SampleSpectrum

__all__ = ["EigenClip"]

_DOC = r"""Covariance with the noise eigenvalues clipped to their mean.

    The sample eigenvalues above the noise edge are kept with their
    eigenvectors; all the others, the null space included when N exceeds
    the degrees of freedom, are replaced by their mean, so the trace is
    unchanged (Laloux, Cizeau, Bouchaud & Potters 1999). See
    :func:`rmtclean.rules.eigen_clip`.

    Parameters
    ----------
    edge : {"auto", "bulk-fit", "tracy-widom"} or float, default="auto"
        Where the noise ends: the signal count of
        :func:`rmtclean.analyze_spectrum` on the same data and options
        (``"auto"``: Tracy-Widom tests at level ``alpha`` stopped at the
        edge of the Marchenko-Pastur law fitted to the whole spectrum), the
        upper edge of that fitted law alone (``"bulk-fit"``), the count of
        the sequential Tracy-Widom tests alone (``"tracy-widom"``), or a
        fixed eigenvalue level (of the correlation matrix when
        ``standardize``).
    alpha : float, default=0.05
        Level of the Tracy-Widom tests (``edge="auto"`` or
        ``"tracy-widom"``).
    n_keep : int or None, default=None
        Keep exactly the ``n_keep`` largest eigenvalues; overrides ``edge``.
%(eigen_solver)s
%(common)s
    Attributes
    ----------
%(fitted)s
    eigenvalues_ : ndarray of shape (n_features,)
        The cleaned eigenvalues, paired with ``sample_eigenvalues_``: the
        ``n_signal_`` kept ones, then ``bulk_mean_``.
%(eigenvectors)s
    n_signal_ : int
        Number of eigenvalues kept.
    edge_ : float or str
        The edge used: an eigenvalue level, or ``"n_keep"``.
    bulk_mean_ : float
        The value given to every clipped eigenvalue.
    noise_variance_ : float or None
        The fitted noise variance for a fitted edge, else None.
    degrees_of_freedom_ : float
        Degrees of freedom of the sample covariance.
%(fitted_end)s

    See Also
    --------
    rmtclean.rules.eigen_clip : the same on arrays.
    rmtclean.analyze_spectrum : the noise level, edge and spikes as a report.

    References
    ----------
    .. [1] L. Laloux, P. Cizeau, J.-P. Bouchaud and M. Potters, "Noise
       dressing of financial correlation matrices", Phys. Rev. Lett. 83(7),
       1467-1470, 1999.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.estimators import EigenClip
    >>> rng = np.random.default_rng(0)
    >>> X = rng.standard_normal((300, 60)) * np.r_[5.0, 4.0, np.ones(58)]
    >>> est = EigenClip(edge="tracy-widom").fit(X)
    >>> est.n_signal_
    2
    >>> bool(np.isclose(np.trace(est.covariance_), np.trace(np.cov(X.T))))
    True
    """


@estimator_dataclass
class EigenClip(OneBulkValue, TakesMissing, SpectralCovariance):
    __doc__ = OneBulkValue.fill_doc(
        estimator_doc(_DOC),
        "``n_keep`` or a numeric ``edge``",
    )

    _parameter_specs: ClassVar[dict] = {
        "edge": [
            Options({"auto", "bulk-fit", "tracy-widom"}),
            Interval(float, 0.0, None, closed="left"),
        ],
        "alpha": [Interval(float, 0.0, 1.0, closed="neither")],
        "n_keep": [None, Interval(int, 0, None, closed="left")],
    }

    edge: str | float = "auto"
    alpha: float = 0.05
    n_keep: int | None = None

    def _randomized_request(self, dof: float, n_features: int):
        if self.n_keep is not None:
            return self.n_keep, None
        if isinstance(self.edge, str):
            self._refuse_randomized("n_keep or a numeric edge", f"edge={self.edge!r}")
        return None, float(self.edge)

    def _clean(self, spectrum: SampleSpectrum) -> CleanedEigenvalues:
        out = eigen_clip(
            spectrum.eigenvalues,
            spectrum.n_samples,
            spectrum.n_features,
            edge=self.edge,
            n_keep=self.n_keep,
            alpha=self.alpha,
        )
        self.edge_ = out.details.edge
        self.bulk_mean_ = out.details.bulk_mean
        self.noise_variance_ = out.details.noise_variance
        return out
