"""The shared base of rmtclean's covariance estimators."""

from __future__ import annotations

import numpy as np
from sklearn.base import OneToOneFeatureMixin, TransformerMixin
from sklearn.covariance import EmpiricalCovariance
from sklearn.utils.validation import check_is_fitted, validate_data

from rmtclean._validation import BOOLEAN, Options, check_params, check_sample_weight
from rmtclean.distributed import dask_sample_spectrum, is_dask_array
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import CleanedSpectrum, SampleSpectrum

__all__ = ["SpectralCovariance", "DENSE_STORE_LIMIT"]

#: ``store_covariance="auto"`` keeps dense matrices up to this many features.
DENSE_STORE_LIMIT = 5000

_COMMON_DOC = """
    store_precision : bool, default=True
        Store the dense precision matrix ``precision_`` (when the covariance
        is stored densely).
    assume_centered : bool, default=False
        If True, the data are not demeaned and the sample covariance uses
        ``T`` degrees of freedom instead of ``T - 1``.
    standardize : bool, default=False
        Clean the correlation matrix, then restore the variances:
        ``covariance_ = D R D`` with ``D`` the column standard deviations
        and ``R`` the cleaned correlation.
    route : {"auto", "dense", "gram"}, default="auto"
        How the sample spectrum is computed: ``"dense"`` forms the N x N
        sample covariance and calls ``eigh``; ``"gram"`` takes the thin SVD
        of the data and never forms an N x N matrix. ``"auto"`` uses
        ``"gram"`` when N exceeds the number of samples or 5,000.
    store_covariance : "auto" or bool, default="auto"
        Whether ``covariance_`` (and ``precision_``) are stored as dense
        N x N arrays (8 N^2 bytes each). ``"auto"`` stores them up to
        N = 5,000. Otherwise they are ``None``, and ``spectrum_`` (a
        :class:`~rmtclean.spectrum.CleanedSpectrum`) serves ``score``,
        ``mahalanobis``, ``transform`` and ``spectrum_.solve/logdet``
        without an N x N array.
"""


class SpectralCovariance(OneToOneFeatureMixin, TransformerMixin, EmpiricalCovariance):
    """Base class: sample spectrum -> rule -> cleaned spectrum.

    Subclasses declare ``_parameter_specs`` for their own parameters, store
    keyword-only parameters in ``__init__`` and implement
    ``_clean(spectrum) -> CleanedEigenvalues`` (or return a
    :class:`~rmtclean.spectrum.CleanedSpectrum` for rules that are not
    rotation invariant). Rules that need the data rows set
    ``_needs_samples = True`` and read ``spectrum.samples``.

    Fitted attributes
    -----------------
    location_ : ndarray of shape (n_features,)
    covariance_ : ndarray of shape (n_features, n_features) or None
    precision_ : ndarray of shape (n_features, n_features) or None
    spectrum_ : CleanedSpectrum
    sample_eigenvalues_ : ndarray of shape (n_features,)
        Descending sample eigenvalues (of the correlation matrix when
        ``standardize``); the null space's zeros last.
    eigenvalues_ : ndarray of shape (n_features,)
        Cleaned eigenvalues, paired with ``sample_eigenvalues_``.
    eigenvectors_ : ndarray of shape (n_features, n_components)
    n_signal_ : int or None
    scale_ : ndarray of shape (n_features,) or None
    degrees_of_freedom_ : float
    n_features_in_ : int
    feature_names_in_ : ndarray of shape (n_features_in_,)
    """

    _parameter_specs: dict = {
        "store_precision": [BOOLEAN],
        "assume_centered": [BOOLEAN],
        "standardize": [BOOLEAN],
        "route": [Options({"auto", "dense", "gram"})],
        "store_covariance": [Options({"auto"}), BOOLEAN],
    }
    _needs_samples = False

    def __init__(
        self,
        *,
        store_precision=True,
        assume_centered=False,
        standardize=False,
        route="auto",
        store_covariance="auto",
    ):
        self.store_precision = store_precision
        self.assume_centered = assume_centered
        self.standardize = standardize
        self.route = route
        self.store_covariance = store_covariance

    # -- the seam ---------------------------------------------------------
    def _clean(self, spectrum: SampleSpectrum):  # pragma: no cover - abstract
        raise NotImplementedError

    # -- fitting ----------------------------------------------------------
    def fit(self, X, y=None, sample_weight=None):
        """Fit the cleaned covariance to ``X``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Training data; rows are observations.
        y : Ignored
        sample_weight : array-like of shape (n_samples,), default=None
            Non-negative frequency weights: an integer weight ``k`` counts
            a row ``k`` times. The degrees of freedom are ``sum(w) - 1``.

        Returns
        -------
        self : object
        """
        check_params(self)
        if is_dask_array(X):
            return self._fit_dask(X, sample_weight)
        X = self._validate_fit_data(X)
        if sample_weight is not None:
            sample_weight = check_sample_weight(
                sample_weight, X.shape[0], type(self).__name__
            )
        spectrum = SampleSpectrum.from_data(
            X,
            assume_centered=self.assume_centered,
            sample_weight=sample_weight,
            standardize=self.standardize,
            route=self.route,
            keep_samples=self._needs_samples,
        )
        self._store(spectrum, self._clean(spectrum), X.dtype)
        return self

    def _fit_dask(self, X, sample_weight):
        owner = type(self).__name__
        if self._needs_samples:
            raise TypeError(
                f"{owner} needs the data rows in memory and does not accept a "
                "dask array; pass a numpy array or use another cleaner."
            )
        spectrum = dask_sample_spectrum(
            X,
            assume_centered=self.assume_centered,
            sample_weight=sample_weight,
            standardize=self.standardize,
            route=self.route,
            owner=f"{owner}.fit",
        )
        self.n_features_in_ = int(X.shape[1])
        if hasattr(self, "feature_names_in_"):
            del self.feature_names_in_
        dtype = np.float32 if X.dtype == np.float32 else np.float64
        self._store(spectrum, self._clean(spectrum), dtype)
        return self

    def _validate_fit_data(self, X):
        try:
            return validate_data(
                self, X, dtype=[np.float64, np.float32], ensure_min_samples=2
            )
        except ValueError as exc:
            if "standardize" in str(exc):
                raise
            raise ValueError(f"{type(self).__name__}.fit: {exc}") from exc

    def _store(self, spectrum: SampleSpectrum, cleaned, dtype) -> None:
        n_features = spectrum.n_features
        if isinstance(cleaned, CleanedSpectrum):
            result = cleaned
            n_signal = None
        elif isinstance(cleaned, CleanedEigenvalues):
            values = np.asarray(cleaned.values, dtype=np.float64)
            if values.shape != spectrum.eigenvalues.shape:
                raise RuntimeError(
                    f"{type(self).__name__}: the rule returned {values.shape} "
                    f"values for {spectrum.eigenvalues.shape} eigenvalues."
                )
            null = cleaned.null_value if spectrum.n_components < n_features else None
            result = CleanedSpectrum(
                spectrum.eigenvectors, values, null_value=null, scale=spectrum.scale
            )
            n_signal = cleaned.n_signal
        else:  # pragma: no cover - programming error
            raise TypeError(f"_clean returned {type(cleaned).__name__}")
        out_dtype = dtype if dtype == np.float32 else np.float64
        self.location_ = spectrum.location
        self.spectrum_ = result
        self.sample_eigenvalues_ = spectrum.full_eigenvalues()
        self.eigenvalues_ = result.full_eigenvalues()
        self.eigenvectors_ = result.eigenvectors
        self.n_signal_ = None if n_signal is None else int(n_signal)
        self.scale_ = spectrum.scale
        self.degrees_of_freedom_ = float(spectrum.n_samples)
        store = self.store_covariance
        if store == "auto":
            store = n_features <= DENSE_STORE_LIMIT
        if store:
            self.covariance_ = result.to_dense().astype(out_dtype, copy=False)
            self.precision_ = (
                result.to_dense(-1.0).astype(out_dtype, copy=False)
                if self.store_precision
                else None
            )
        else:
            self.covariance_ = None
            self.precision_ = None

    # -- using the fit ----------------------------------------------------
    def get_precision(self):
        """The dense precision matrix (computed from ``spectrum_`` if not stored)."""
        check_is_fitted(self)
        if self.precision_ is not None:
            return self.precision_
        return self.spectrum_.to_dense(-1.0)

    def _centred_columns(self, X):
        X = validate_data(self, X, reset=False, dtype=[np.float64, np.float32])
        return X, (np.asarray(X, dtype=np.float64) - self.location_).T

    def transform(self, X):
        """Whiten ``X``: map ``x - location_`` by ``L^{-1}``, ``L L' = covariance_``.

        Without ``standardize`` this is the symmetric ``covariance_^{-1/2}``.
        """
        check_is_fitted(self)
        X, Z = self._centred_columns(X)
        out = self.spectrum_.whiten(Z).T
        return out.astype(X.dtype, copy=False) if X.dtype == np.float32 else out

    def inverse_transform(self, X):
        """Undo :meth:`transform`."""
        check_is_fitted(self)
        X = validate_data(self, X, reset=False, dtype=[np.float64, np.float32])
        out = (
            self.spectrum_.colour(np.asarray(X, dtype=np.float64).T).T + self.location_
        )
        return out.astype(X.dtype, copy=False) if X.dtype == np.float32 else out

    def score(self, X_test, y=None):
        """Mean Gaussian log-likelihood of ``X_test`` under the fitted model.

        Equals scikit-learn's ``EmpiricalCovariance.score`` formula
        ``(-tr(S_test P) + log det P - N log(2 pi)) / 2``, evaluated from
        ``spectrum_`` without an N x N matrix.
        """
        check_is_fitted(self)
        _, Z = self._centred_columns(X_test)
        logdet = self.spectrum_.logdet()
        if not np.isfinite(logdet):
            return -np.inf
        W = self.spectrum_.whiten(Z)
        quad = float(np.einsum("ij,ij->", W, W)) / Z.shape[1]
        return -0.5 * (quad + logdet + Z.shape[0] * np.log(2.0 * np.pi))

    def mahalanobis(self, X):
        """Squared Mahalanobis distances of the rows of ``X`` to ``location_``."""
        check_is_fitted(self)
        _, Z = self._centred_columns(X)
        W = self.spectrum_.whiten(Z)
        return np.einsum("ij,ij->j", W, W)

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.transformer_tags.preserves_dtype = ["float64", "float32"]
        return tags


def common_params_doc() -> str:
    """The Parameters entries shared by every estimator (for docstrings)."""
    return _COMMON_DOC
