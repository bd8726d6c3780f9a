"""LinearShrink: linear shrinkage towards a target, as a scikit-learn estimator."""

from __future__ import annotations

import numpy as np

from rmtclean._validation import BOOLEAN, Interval, Options, check_params
from rmtclean.estimators._base import SpectralCovariance, common_params_doc
from rmtclean.rules._linear import (
    INTENSITY_METHODS,
    SHRINKAGE_TARGETS,
    _check_combination,
    _combine,
    _intensity,
    _linear_shrink,
    _target,
)
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import CleanedSpectrum, SampleSpectrum

__all__ = ["LinearShrink"]

_DOC = r"""Linear shrinkage ``(1 - delta) S + delta F`` towards a target.

    ``F`` is ``mu I`` (``mu = tr(S)/p``), ``diag(S)`` or the
    constant-correlation matrix; ``delta`` is Ledoit-Wolf's, OAS's or given.
    With the defaults, ``covariance_`` and ``shrinkage_`` equal those of
    ``sklearn.covariance.LedoitWolf`` (to rounding, also for N > T);
    ``intensity="oas-sklearn"`` reproduces ``sklearn.covariance.OAS`` and a
    float ``sklearn.covariance.ShrunkCovariance``.

    Parameters
    ----------
    target : {"identity", "diagonal", "constant-correlation"}, default="identity"
        The shrinkage target, see :func:`rmtclean.rules.shrinkage_target`.
    intensity : {"ledoit-wolf", "oas", "oas-sklearn"} or float, default="ledoit-wolf"
        ``"ledoit-wolf"``: Ledoit & Wolf (2004) for the identity, their
        (2003, 2004) optimal intensity for the other targets; ``"oas"``:
        Chen et al. (2010) eq. (23); ``"oas-sklearn"``: scikit-learn's
        variant of it (the ``2/p`` terms dropped); a float is a fixed
        ``delta`` in [0, 1]. OAS is defined for the identity target only.
        See :func:`rmtclean.rules.linear_shrink` for why ``"oas"`` is the
        published formula.
    bias : bool, default=True
        Divide the sample covariance by ``T`` (the number of samples, or
        the sum of the weights) rather than by the degrees of freedom
        ``T - 1``. The default is scikit-learn's and the papers' convention:
        the intensity formulas pair ``S`` with the ``n`` it was divided by,
        and only ``n = T`` reproduces ``LedoitWolf``, ``OAS`` and
        ``ShrunkCovariance``. ``bias=False`` gives rmtclean's usual ``T - 1``
        and evaluates the same formulas with ``n = T - 1``. Either way
        ``degrees_of_freedom_`` holds the divisor used.
%(common)s
    Attributes
    ----------
    shrinkage_ : float
        The intensity ``delta`` used.
    covariance_ : ndarray of shape (n_features, n_features) or None
        The shrunk covariance (None when not stored densely).
    precision_ : ndarray of shape (n_features, n_features) or None
        Its inverse (when stored).
    location_ : ndarray of shape (n_features,)
        The column means (zeros when ``assume_centered``).
    spectrum_ : CleanedSpectrum
        The shrunk covariance in spectral form (used by ``transform``,
        ``score`` and ``mahalanobis``).
    sample_eigenvalues_ : ndarray of shape (n_features,)
        Descending eigenvalues of the sample covariance with the divisor
        ``degrees_of_freedom_`` (of its standardised form when
        ``standardize``).
    eigenvalues_ : ndarray of shape (n_features,)
        Eigenvalues of the shrunk matrix. For the identity target they are
        ``(1 - delta) sample_eigenvalues_ + delta mu``, pair by pair; for the
        other targets (not rotation invariant) they are the descending
        eigenvalues of the shrunk matrix, not paired with the sample ones.
    eigenvectors_ : ndarray of shape (n_features, n_components)
        The sample eigenvectors (identity target) or those of the shrunk
        matrix (other targets).
    n_signal_ : None
        Linear shrinkage computes no bulk edge.
    scale_ : ndarray of shape (n_features,) or None
        Column standard deviations when ``standardize``.
    degrees_of_freedom_ : float
        The divisor ``n`` of the sample covariance (see ``bias``).
    n_features_in_ : int
    feature_names_in_ : ndarray of shape (n_features_in_,)

    See Also
    --------
    rmtclean.rules.linear_shrink_covariance : the same on arrays.
    rmtclean.rules.linear_shrink : the identity-target rule on eigenvalues.

    Notes
    -----
    The identity target is rotation invariant: the fit is the base class's
    seam (one sample spectrum, the rule :func:`rmtclean.rules.linear_shrink`
    on its eigenvalues), which also serves N > T without an N x N matrix
    (``route="gram"``). Its Ledoit-Wolf intensity needs, beyond the
    eigenvalues, only the squared norms of the T centred rows (O(N T)).

    The other targets are not: ``S`` and ``F`` are formed densely (N x N
    memory for any ``route``), the intensity costs O(N T) more, and the
    shrunk matrix is diagonalised once to serve ``spectrum_``.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "A well-conditioned estimator for
       large-dimensional covariance matrices", J. Multivariate Anal. 88(2),
       365-411, 2004.
    .. [2] Y. Chen, A. Wiesel, Y. C. Eldar and A. O. Hero, "Shrinkage
       algorithms for MMSE covariance estimation", IEEE Trans. Signal
       Process. 58(10), 5016-5029, 2010.
    .. [3] O. Ledoit and M. Wolf, "Honey, I shrunk the sample covariance
       matrix", J. Portfolio Management 30(4), 110-119, 2004.

    Examples
    --------
    >>> import numpy as np
    >>> from sklearn.covariance import LedoitWolf
    >>> from rmtclean.estimators import LinearShrink
    >>> X = np.random.default_rng(0).standard_normal((40, 60))
    >>> est = LinearShrink().fit(X)
    >>> ref = LedoitWolf().fit(X)
    >>> bool(np.allclose(est.covariance_, ref.covariance_, rtol=1e-10, atol=0))
    True
    >>> bool(abs(est.shrinkage_ - ref.shrinkage_) < 1e-12)
    True
    """


class LinearShrink(SpectralCovariance):
    __doc__ = _DOC.replace("%(common)s", common_params_doc().rstrip("\n"))

    _parameter_specs: dict = {
        "target": [Options(SHRINKAGE_TARGETS)],
        "intensity": [
            Options(INTENSITY_METHODS),
            Interval(float, 0.0, 1.0, closed="both"),
        ],
        "bias": [BOOLEAN],
    }
    _needs_samples = True

    def __init__(
        self,
        *,
        target="identity",
        intensity="ledoit-wolf",
        bias=True,
        store_precision=True,
        assume_centered=False,
        standardize=False,
        route="auto",
        store_covariance="auto",
    ):
        super().__init__(
            store_precision=store_precision,
            assume_centered=assume_centered,
            standardize=standardize,
            route=route,
            store_covariance=store_covariance,
        )
        self.target = target
        self.intensity = intensity
        self.bias = bias

    def fit(self, X, y=None, sample_weight=None):
        """Fit the shrunk covariance to ``X``; see :meth:`SpectralCovariance.fit`."""
        check_params(self)
        _check_combination(self.target, self.intensity, type(self).__name__)
        super().fit(X, y, sample_weight=sample_weight)
        dof = self.degrees_of_freedom_
        self.degrees_of_freedom_ = self._divisor(dof)
        self.sample_eigenvalues_ = self.sample_eigenvalues_ * (
            dof / self.degrees_of_freedom_
        )
        return self

    def _divisor(self, dof: float) -> float:
        """The divisor of S: the number of samples (bias) or the dof."""
        return dof + 1.0 if (self.bias and not self.assume_centered) else dof

    def _clean(self, spectrum: SampleSpectrum):
        dof = float(spectrum.n_samples)
        n = self._divisor(dof)
        Xc, w = spectrum.samples, spectrum.weights
        p = spectrum.n_features
        if self.target == "identity":
            out = _linear_shrink(
                spectrum.eigenvalues * (dof / n),
                n,
                p,
                intensity=self.intensity,
                squared_norms=np.einsum("ij,ij->i", Xc, Xc),
                sample_weight=w,
            )
            self.shrinkage_ = out.details["intensity"]
            return CleanedEigenvalues(out.values, null_value=out.null_value)
        Z = Xc if w is None else Xc * np.sqrt(w)[:, None]
        S = Z.T @ Z
        S /= n
        if isinstance(self.intensity, str):
            delta = _intensity(
                Xc,
                n,
                self.target,
                self.intensity,
                weights=w,
                frob2=float(np.vdot(S, S)),
            )
        else:
            delta = float(self.intensity)
        self.shrinkage_ = delta
        vals, vecs = np.linalg.eigh(_combine(S, _target(S, self.target), delta))
        return CleanedSpectrum(
            vecs[:, ::-1], np.maximum(vals[::-1], 0.0), scale=spectrum.scale
        )
