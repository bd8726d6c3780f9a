"""LinearShrink: linear shrinkage towards a target, as a scikit-learn estimator."""

from __future__ import annotations

import warnings
from typing import ClassVar

import numpy as np
from scipy.linalg import lapack

from rmtclean._validation import (
    BOOLEAN,
    Interval,
    Options,
    numerical_rank,
    rank_tolerance,
)
from rmtclean.estimators._base import (
    SpectralCovariance,
    estimator_dataclass,
)
from rmtclean.estimators._docs import estimator_doc
from rmtclean.exceptions import WeakEstimateWarning
from rmtclean.rules._linear import (
    INTENSITY_METHODS,
    SHRINKAGE_TARGETS,
    _check_combination,
    _combine,
    _intensity,
    _linear_shrink,
    _target,
    linear_shrink,
)
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import DENSE_LIMIT, CleanedSpectrum, SampleSpectrum
from rmtclean.spectrum._report import detect_noise_and_signal
from rmtclean.spectrum._sample import sample_layout

__all__ = ["LinearShrink"]

#: Fitted attributes that the direct dense fit computes on first use.
_DEFERRED = (
    "spectrum_",
    "eigenvalues_",
    "eigenvectors_",
    "sample_eigenvalues_",
    "n_signal_",
)


class _DeferredAttribute:
    """A fitted attribute: set by a spectral fit, or read from the direct
    fit's ``_DeferredSpectrum`` (computed on first read and kept there, so
    using the fit leaves the estimator's ``__dict__`` unchanged)."""

    def __set_name__(self, owner, name: str) -> None:
        self.name = name

    def __get__(self, obj, objtype=None):
        if obj is None:
            return self
        values = obj.__dict__
        if self.name in values:
            return values[self.name]
        deferred = values.get("_deferred")
        if deferred is None:
            raise AttributeError(
                f"{type(obj).__name__!r} object has no attribute {self.name!r}"
            )
        return deferred.get(self.name)

    def __set__(self, obj, value) -> None:
        obj.__dict__[self.name] = value

    def __delete__(self, obj) -> None:
        try:
            del obj.__dict__[self.name]
        except KeyError:
            raise AttributeError(self.name) from None


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
%(stored)s
    spectrum_ : CleanedSpectrum
        The shrunk covariance in spectral form (used by ``transform``,
        ``score`` and ``mahalanobis``); computed on first use after a
        direct fit (see Notes).
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
%(report_count)s
    degrees_of_freedom_ : float
        The divisor ``n`` of the sample covariance (see ``bias``).
%(fitted_end)s

    See Also
    --------
    rmtclean.rules.linear_shrink_covariance : the same on arrays.
    rmtclean.rules.linear_shrink : the identity-target rule on eigenvalues.

    Notes
    -----
    Two routes give the same estimate (tested against each other):

    - Direct (no weights or ``half_life``, no ``standardize``, at least N
      degrees of freedom, the dense route with a stored ``covariance_``):
      one product ``X_c' X_c``, the intensity in O(N T)
      (:func:`rmtclean.rules.shrinkage_intensity`), ``precision_`` by a
      Cholesky inverse, and a pivoted Cholesky factor of ``S`` for the
      rank-deficiency warning. No eigendecomposition is computed at fit:
      ``spectrum_``, ``eigenvalues_``, ``eigenvectors_`` and
      ``sample_eigenvalues_`` are computed on first use (one ``eigh`` of
      ``covariance_``; ``S`` is recovered as ``(covariance_ - delta F) /
      (1 - delta)``, since ``F`` is also the target of ``covariance_``).
      This is what makes the default fit several times faster than
      ``LedoitWolf``, which forms three N x N products and a ``pinvh``.
    - Spectral (everything else, and the direct route's fallback when
      ``delta`` is 0 or 1 or the result is not numerically positive
      definite): the base class's seam. For the identity target, which is
      rotation invariant, the rule :func:`rmtclean.rules.linear_shrink` runs
      on the sample eigenvalues and the squared norms of the centred rows,
      so N > T needs no N x N matrix (``route="gram"``). The other targets
      form ``S`` and ``F`` densely (N x N memory for any ``route``) and
      diagonalise the shrunk matrix to serve ``spectrum_``.

    Two rows. With ``T = 2`` every centred row has ``x_t x_t' = S``, so
    the Ledoit-Wolf intensity (and its versions for the other targets) is
    exactly 0 and would return ``S``, singular for ``N >= 2``. Whenever a
    data-driven intensity is 0 while ``S`` is singular, the identity target
    uses the OAS intensity instead (Chen et al. 2010, eq. 23; positive for
    any nonzero ``S``) and the other targets use the target itself
    (``delta = 1``), and ``fit`` warns (``WeakEstimateWarning``). The
    identity and diagonal targets are then positive definite for every
    panel of 2 or more rows without zero-variance columns; the
    constant-correlation target of a rank-one ``S`` is singular when all its
    sample correlations are +1 (or half are -1). The rules
    ``rmtclean.rules.shrinkage_intensity`` and ``linear_shrink`` keep the
    published intensity.

    Missing data (the base's ``missing``) are not supported: the
    Ledoit-Wolf intensity needs complete rows. ``half_life`` acts through
    its frequency weights, as ``sample_weight``.

    References
    ----------
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


@estimator_dataclass
class LinearShrink(SpectralCovariance):
    # The base's parameters, less ``missing``, which LinearShrink does not take.
    __doc__ = estimator_doc(_DOC, exclude=("missing",), references=linear_shrink)

    _parameter_specs: ClassVar[dict] = {
        "target": [Options(SHRINKAGE_TARGETS)],
        "intensity": [
            Options(INTENSITY_METHODS),
            Interval(float, 0.0, 1.0, closed="both"),
        ],
        "bias": [BOOLEAN],
    }
    _needs_samples = True

    target: str = "identity"
    intensity: str | float = "ledoit-wolf"
    bias: bool = True

    # Read from the direct fit's deferred spectrum on first access.
    spectrum_ = _DeferredAttribute()
    eigenvalues_ = _DeferredAttribute()
    eigenvectors_ = _DeferredAttribute()
    sample_eigenvalues_ = _DeferredAttribute()
    n_signal_ = _DeferredAttribute()

    def _check_params(self) -> None:
        super()._check_params()
        _check_combination(self.target, self.intensity, type(self).__name__)

    def _fit_without_spectrum(self, X, sample_weight) -> bool:
        """The direct dense route (see :meth:`_fit_direct`), where it applies."""
        plain = (
            sample_weight is None
            and self.half_life is None
            and self.vol_half_life is None
            and not self.standardize
        )
        return plain and self._direct_route(X.shape) and self._fit_direct(X)

    def _store(self, spectrum: SampleSpectrum, cleaned, dtype) -> None:
        """The base's attributes, with S's divisor: the number of samples
        (``bias``) in place of the degrees of freedom."""
        self.__dict__.pop("_deferred", None)
        super()._store(spectrum, cleaned, dtype)
        dof = self.degrees_of_freedom_
        self.degrees_of_freedom_ = self._divisor(dof)
        self.sample_eigenvalues_ = self.sample_eigenvalues_ * (
            dof / self.degrees_of_freedom_
        )

    def _divisor(self, dof: float) -> float:
        """The divisor of S: the number of samples (bias) or the dof."""
        return dof + 1.0 if (self.bias and not self.assume_centered) else dof

    def _direct_route(self, shape) -> bool:
        """Whether the base would take the dense route and store covariance_."""
        n_rows, n_features = shape
        _, _, route = sample_layout(
            n_rows, n_features, n_rows, n_rows, self.assume_centered, self.route
        )
        store = self.store_covariance
        if store == "auto":
            store = n_features <= DENSE_LIMIT
        return route == "dense" and bool(store)

    def _shrunk(self, Xc, weights, n):
        """``(delta, S, (1 - delta) S + delta F)`` for centred rows and divisor n."""
        Z = Xc if weights is None else Xc * np.sqrt(weights)[:, None]
        S = Z.T @ Z
        S /= n
        if isinstance(self.intensity, str):
            frob2 = float(np.vdot(S, S))
            delta = _intensity(
                Xc, n, self.target, self.intensity, weights=weights, frob2=frob2
            )
        else:
            delta = float(self.intensity)
        return delta, S, _combine(S, _target(S, self.target), delta)

    def _fit_direct(self, X) -> bool:
        """One X'X, the O(N T) intensity and a Cholesky inverse; no eigh.

        Returns False, leaving the fit to the spectral route, when the
        sample spectrum could not be recovered from the result (delta of 0
        or 1) or the shrunk matrix is not numerically positive definite.
        """
        X64 = np.asarray(X, dtype=np.float64)
        n_rows = X64.shape[0]
        if self.assume_centered:
            location, Xc = np.zeros(X64.shape[1]), X64
        else:
            location = X64.mean(axis=0)
            Xc = X64 - location
        dof, _, _ = sample_layout(
            n_rows, X64.shape[1], float(n_rows), n_rows, self.assume_centered, "dense"
        )
        if dof < X64.shape[1]:  # rank deficient by design: spectral route
            return False
        n = self._divisor(dof)
        delta, S, cov = self._shrunk(Xc, None, n)
        if not 0.0 < delta < 1.0:
            return False
        self._warn_if_weak(_RankOnly(S, dof))  # overwrites S
        del S
        precision = None
        if self.store_precision:
            precision = _spd_inverse(cov)
            if precision is None:
                return False
        out_dtype = X.dtype if X.dtype == np.float32 else np.float64
        for name in _DEFERRED:
            self.__dict__.pop(name, None)
        self._deferred = _DeferredSpectrum(cov, delta, self.target, dof)
        self.location_ = location
        self.covariance_ = cov.astype(out_dtype, copy=False)
        self.precision_ = (
            None if precision is None else precision.astype(out_dtype, copy=False)
        )
        self.shrinkage_ = delta
        self.scale_ = None
        self.volatility_ = None
        self.degrees_of_freedom_ = n
        return True

    def _clean(self, spectrum: SampleSpectrum):
        dof = float(spectrum.n_samples)
        n = self._divisor(dof)
        Xc, w = spectrum.samples, spectrum.weights
        p = spectrum.n_features
        vals = spectrum.eigenvalues
        # A data-driven intensity of 0 would return a singular S (see Notes).
        singular = isinstance(self.intensity, str) and (
            spectrum.n_components < p or not vals[-1] > 0
        )
        if self.target == "identity":
            kwargs = {
                "squared_norms": np.einsum("ij,ij->i", Xc, Xc),
                "sample_weight": w,
            }
            out = _linear_shrink(
                vals * (dof / n), n, p, intensity=self.intensity, **kwargs
            )
            if singular and out.details.intensity == 0.0:
                out = _linear_shrink(vals * (dof / n), n, p, intensity="oas", **kwargs)
                self._warn_singular("the OAS intensity (Chen et al. 2010, eq. 23)")
            self.shrinkage_ = out.details.intensity
            return CleanedEigenvalues(out.values, null_value=out.null_value)
        self.shrinkage_, S, cov = self._shrunk(Xc, w, n)
        if singular and self.shrinkage_ == 0.0:
            self.shrinkage_, cov = 1.0, _target(S, self.target)
            self._warn_singular(f"the {self.target} target itself (intensity 1)")
        return _dense_spectrum(cov, scale=spectrum.scale)

    def _warn_singular(self, used: str) -> None:
        warnings.warn(
            f"{type(self).__name__}.fit: the {self.intensity!r} intensity is 0 "
            "while the sample covariance is singular (e.g. two rows, whose "
            "centred outer products all equal S), which would return S itself; "
            f"using {used} instead, a weak estimate.",
            WeakEstimateWarning,
            stacklevel=4,
        )


class _RankOnly:
    """What the base's weak-estimate warnings read from a sample spectrum,
    for a sample covariance S of full expected rank (dof >= N) without its
    eigendecomposition: the numerical rank from a pivoted Cholesky factor
    (LAPACK dpstrf, pivots at or below N eps max_i s_ii count as zero),
    given as eigenvalues 1 (rank many) and 0. S is overwritten."""

    def __init__(self, S: np.ndarray, dof: float):
        n_features = S.shape[0]
        tol = rank_tolerance(np.max(np.diagonal(S)), n_features)
        # S is symmetric, so S.T is its Fortran-ordered view: factor in place.
        rank = int(lapack.dpstrf(S.T, tol=tol, lower=1, overwrite_a=1)[2])
        self.n_samples = dof
        self.n_features = n_features
        self.eigenvalues = np.r_[np.ones(rank), np.zeros(n_features - rank)]


def _dense_spectrum(cov: np.ndarray, scale=None) -> CleanedSpectrum:
    """Descending eigenpairs of a dense symmetric matrix as a CleanedSpectrum.

    Eigenvalues at or below ``N eps`` times the largest are set to zero, so
    the inverse is the pseudo-inverse (the threshold of ``scipy.linalg.pinvh``),
    not the reciprocal of rounding noise.
    """
    vals, vecs = np.linalg.eigh(cov)
    vals = vals[::-1].copy()
    vals[numerical_rank(vals, cov.shape[0]) :] = 0.0
    return CleanedSpectrum(np.ascontiguousarray(vecs[:, ::-1]), vals, scale=scale)


def _spd_inverse(A: np.ndarray) -> np.ndarray | None:
    """Inverse of a symmetric positive definite matrix by Cholesky, else None."""
    factor, info = lapack.dpotrf(A, lower=1, clean=0)
    if info != 0:
        return None
    inv, info = lapack.dpotri(factor, lower=1)
    if info != 0:
        return None
    inv = np.tril(inv)
    inv += np.tril(inv, -1).T
    return inv


class _DeferredSpectrum:
    """Spectral attributes of a direct dense fit, computed on first use.

    Every target is unchanged by the shrinkage (``target(cov) = F``: same
    trace, same diagonal, same mean correlation), so the sample covariance
    is recovered as ``S = (cov - delta F) / (1 - delta)`` for ``delta < 1``.
    """

    def __init__(self, covariance, delta: float, target: str, dof: float):
        self._dof = dof
        self._cov = covariance
        self._delta = delta
        self._target = target
        self._cache = None

    def get(self, name: str):
        if self._cache is None:
            cov, delta = self._cov, self._delta
            spectrum = _dense_spectrum(cov)
            if self._target == "identity":  # same eigenvectors, monotone map
                mu = np.trace(cov) / cov.shape[0]
                sample = (spectrum.eigenvalues - delta * mu) / (1.0 - delta)
            else:
                S = (cov - delta * _target(cov, self._target)) / (1.0 - delta)
                sample = np.linalg.eigvalsh(S)[::-1]
            sample = np.maximum(sample, 0.0)
            found = detect_noise_and_signal(sample, self._dof, cov.shape[0])
            self._cache = {
                "spectrum_": spectrum,
                "eigenvalues_": spectrum.full_eigenvalues(),
                "eigenvectors_": spectrum.eigenvectors,
                "sample_eigenvalues_": sample,
                "n_signal_": None if found is None else found.n_signal,
            }
        return self._cache[name]
