"""The shared base of rmtclean's covariance estimators."""

from __future__ import annotations

import warnings
from dataclasses import dataclass, replace
from typing import ClassVar

import numpy as np
from sklearn.base import OneToOneFeatureMixin, TransformerMixin
from sklearn.covariance import EmpiricalCovariance
from sklearn.utils.validation import check_is_fitted, validate_data

from rmtclean._validation import (
    BOOLEAN,
    Interval,
    Options,
    check_params,
    check_sample_weight,
)
from rmtclean.distributed import dask_sample_spectrum, is_dask_array
from rmtclean.exceptions import RankDeficientWarning, WeakEstimateWarning
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import DENSE_LIMIT, CleanedSpectrum, SampleSpectrum
from rmtclean.spectrum._sample import rank_deficiency
from rmtclean.volatility import devolatilise
from rmtclean.weights import half_life_weights

__all__ = [
    "SpectralCovariance",
    "TakesMissing",
    "estimator_dataclass",
    "mixin_dataclass",
]


#: Cleaned eigenvalues of an incomplete-data fit are at least this times their
#: mean, which makes the result positive definite.
MISSING_FLOOR = 1e-8

#: Fewer degrees of freedom than this leave no bulk to fit (as in
#: rmtclean.rules.eigen_clip): the fit warns that its estimate is weak.
WEAK_DOF = 3


def _report_count(spectrum: SampleSpectrum) -> int | None:
    """The signal count of rmtclean.analyze_spectrum on this sample spectrum.

    One count per data set: estimators whose rule uses no count report the
    spectrum report's (None when the spectrum is too small for a bulk fit).
    """
    from rmtclean.spectrum._report import detect_noise_and_signal

    found = detect_noise_and_signal(
        spectrum.eigenvalues, spectrum.n_samples, spectrum.n_features
    )
    return None if found is None else found.n_signal


#: The estimators are dataclasses: each declares its parameters once, as
#: annotated class attributes with their defaults, and the generated
#: keyword-only ``__init__`` only stores them (its signature is what
#: scikit-learn's ``get_params`` reads). Subclasses inherit the base's fields.
#: ``eq=False`` and ``repr=False`` keep scikit-learn's identity comparison,
#: hashing and repr.
estimator_dataclass = dataclass(kw_only=True, eq=False, repr=False)

#: A mixin's fields join the ``__init__`` of the estimator dataclass that
#: lists it among its bases; the mixin itself generates no ``__init__``.
mixin_dataclass = dataclass(kw_only=True, init=False, eq=False, repr=False)


@estimator_dataclass
class SpectralCovariance(OneToOneFeatureMixin, TransformerMixin, EmpiricalCovariance):
    """Base class: sample spectrum -> rule -> cleaned spectrum.

    Subclasses are declared with ``@estimator_dataclass``, list their own
    parameters as annotated fields with defaults (after the base's),
    declare ``_parameter_specs`` for them and implement
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
        The eigenvectors of ``spectrum_``: all sample eigenvectors, or, for a
        cleaner that computes only the leading ones (EigenClip, SpikeShrink),
        those whose cleaned value differs from the bulk value.
    n_signal_ : int or None
    scale_ : ndarray of shape (n_features,) or None
        The column scales restored: standard deviations with
        ``standardize``, ``volatility_`` with ``vol_half_life``.
    volatility_ : ndarray of shape (n_features,) or None
        The volatility forecast for the next row (``vol_half_life`` only).
    degrees_of_freedom_ : float
    n_features_in_ : int
    feature_names_in_ : ndarray of shape (n_features_in_,)
    """

    _parameter_specs: ClassVar[dict] = {
        "store_precision": [BOOLEAN],
        "assume_centered": [BOOLEAN],
        "standardize": [BOOLEAN],
        "route": [Options({"auto", "dense", "gram"})],
        "store_covariance": [Options({"auto"}), BOOLEAN],
        "half_life": [None, Interval(float, 0.0, None, closed="neither")],
        "vol_half_life": [None, Interval(float, 0.0, None, closed="neither")],
    }
    _needs_samples = False

    # The parameters every estimator takes, with their defaults; the
    # docstrings describe them through ``_docs.common_params_doc``.
    store_precision: bool = True
    assume_centered: bool = False
    standardize: bool = False
    route: str = "auto"
    store_covariance: str | bool = "auto"
    half_life: float | None = None
    vol_half_life: float | None = None

    # -- the seam ---------------------------------------------------------
    def _clean(self, spectrum: SampleSpectrum):  # pragma: no cover - abstract
        raise NotImplementedError

    def _spectrum_options(self) -> dict:
        """How the sample spectrum is computed: ``eigenvectors="all"``, or
        ``"leading"`` for rules that read only eigenvalues and leave a bulk of
        equal values (the fit then computes the eigenvectors of the other
        eigenvalues only, :meth:`SampleSpectrum.cleaned`)."""
        return {"eigenvectors": "all"}

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
            a row ``k`` times. The degrees of freedom are ``sum(w) - 1``
            (with ``half_life``: the Kish size of the combined weights, less
            one).

        Returns
        -------
        self : object

        Raises
        ------
        ValueError
            Besides malformed input: when all rows are equal (all entries
            zero with ``assume_centered``), as the sample covariance is zero.

        Warns
        -----
        WeakEstimateWarning
            With fewer than 3 degrees of freedom (no bulk to fit).
        RankDeficientWarning
            When sample eigenvalues the sample size allows are zero to
            rounding (duplicated or collinear columns, repeated rows).
        """
        self._check_params()
        if is_dask_array(X):
            self._refuse_vol_scaling("dask arrays")
            return self._fit_dask(X, sample_weight)
        X = self._validate_fit_data(X)
        if self._missing_method() != "error" and np.isnan(X).any():
            self._refuse_vol_scaling(f"missing={self.missing!r} with NaN entries")
            return self._fit_missing(X, sample_weight)
        if self._fit_without_spectrum(X, sample_weight):
            return self
        spectrum, volatility = self._fit_spectrum(X, sample_weight)
        self._warn_if_weak(spectrum)
        self._store(spectrum, self._clean(spectrum), X.dtype)
        self.volatility_ = volatility
        return self

    def _check_params(self) -> None:
        """Validate the parameters (a subclass adds checks across them)."""
        check_params(self)

    def _fit_without_spectrum(self, X, sample_weight) -> bool:
        """Fit validated rows ``X`` without a sample spectrum, if the rule can.

        Returns whether it did (LinearShrink's direct dense route); by
        default False, and the fit goes through the sample spectrum.
        """
        return False

    def _refuse_vol_scaling(self, what: str) -> None:
        if getattr(self, "vol_half_life", None) is not None:
            raise ValueError(
                f"{type(self).__name__}.fit: vol_half_life does not support "
                f"{what} (its volatilities need complete rows in time order). "
                f"Got vol_half_life={self.vol_half_life!r}."
            )

    def _fit_spectrum(self, X, sample_weight, keep_samples=None, options=None):
        """The sample spectrum a fit cleans, and the volatility forecast.

        ``X`` are validated rows and ``sample_weight`` the caller's
        frequency weights (the half-life decay is applied here).
        ``keep_samples`` (default: whether the rule needs the rows) keeps
        the centred rows; ``options`` (default: :meth:`_spectrum_options`)
        go to :meth:`SampleSpectrum.from_data`. AutoShrink calls it on each
        fold, once for all the cleaners whose spectrum parameters agree,
        with every eigenvector.

        Returns
        -------
        spectrum : SampleSpectrum
        volatility : ndarray of shape (n_features,) or None
            The forecast with ``vol_half_life``, else None.
        """
        if keep_samples is None:
            keep_samples = self._needs_samples
        if options is None:
            options = self._spectrum_options()
        sample_weight = self._fit_weights(sample_weight, X.shape[0])
        if getattr(self, "vol_half_life", None) is not None:
            return self._devolatilised_spectrum(X, sample_weight, keep_samples, options)
        spectrum = SampleSpectrum.from_data(
            X,
            assume_centered=self.assume_centered,
            sample_weight=sample_weight,
            standardize=self.standardize,
            route=self.route,
            keep_samples=keep_samples,
            **options,
        )
        return spectrum, None

    def _devolatilised_spectrum(self, X, sample_weight, keep_samples, options):
        """The spectrum of the correlation of the EWMA-devolatilised series.

        Returns the spectrum (location: the column means of ``X``; scale: the
        volatility forecast, which ``_store`` restores) and the forecast.
        """
        scaled, location, vol = devolatilise(
            X,
            self.vol_half_life,
            sample_weight=sample_weight,
            assume_centered=self.assume_centered,
            feature_names=getattr(self, "feature_names_in_", None),
            owner=f"{type(self).__name__}.fit",
        )
        spectrum = SampleSpectrum.from_data(
            scaled,
            assume_centered=self.assume_centered,
            sample_weight=sample_weight,
            standardize=True,
            route=self.route,
            keep_samples=keep_samples,
            **options,
        )
        spectrum = replace(spectrum, location=location, scale=vol.forecast)
        return spectrum, vol.forecast

    def _warn_if_weak(self, spectrum: SampleSpectrum) -> None:
        """Warn when the data are legal but leave the estimate weak."""
        owner = type(self).__name__
        dof = spectrum.n_samples
        if dof < WEAK_DOF:
            warnings.warn(
                f"{owner}.fit: only {dof:g} degree(s) of freedom (fewer than "
                f"{WEAK_DOF}): the sample spectrum has no bulk to fit and the "
                "cleaned covariance is a weak estimate.",
                WeakEstimateWarning,
                stacklevel=3,
            )
        words = rank_deficiency(spectrum)
        if words is not None:
            warnings.warn(f"{owner}.fit: {words}", RankDeficientWarning, stacklevel=3)

    def _fit_dask(self, X, sample_weight):
        owner = type(self).__name__
        if self._needs_samples:
            raise TypeError(
                f"{owner} needs the data rows in memory and does not accept a "
                "dask array; pass a numpy array or use another cleaner."
            )
        sample_weight = self._fit_weights(sample_weight, X.shape[0])
        spectrum = dask_sample_spectrum(
            X,
            assume_centered=self.assume_centered,
            sample_weight=sample_weight,
            standardize=self.standardize,
            route=self.route,
            owner=f"{owner}.fit",
            **self._spectrum_options(),
        )
        self._warn_if_weak(spectrum)
        self.volatility_ = None
        self.n_features_in_ = int(X.shape[1])
        if hasattr(self, "feature_names_in_"):
            del self.feature_names_in_
        dtype = np.float32 if X.dtype == np.float32 else np.float64
        self._store(spectrum, self._clean(spectrum), dtype)
        return self

    def _missing_method(self) -> str:
        return getattr(self, "missing", "error")

    def _fit_weights(self, sample_weight, n_rows):
        """Validated frequency weights, combined with the half-life decay."""
        owner = type(self).__name__
        if sample_weight is not None:
            sample_weight = check_sample_weight(sample_weight, n_rows, owner)
        half_life = getattr(self, "half_life", None)
        if half_life is None:
            return sample_weight
        return half_life_weights(n_rows, half_life, sample_weight)

    def _fit_missing(self, X, sample_weight):
        from rmtclean.missing import missing_sample_spectrum

        owner = type(self).__name__
        method = self._missing_method()
        if sample_weight is not None or getattr(self, "half_life", None) is not None:
            raise ValueError(
                f"{owner}.fit: missing={method!r} does not support sample_weight "
                "or half_life; pass complete data or drop the weights."
            )
        if self._needs_samples:
            raise ValueError(
                f"{owner}.fit: missing={method!r} is not supported by {owner}, "
                "which needs the complete data rows; use another cleaner or "
                "complete the data."
            )
        spectrum = missing_sample_spectrum(
            X,
            method=method,
            assume_centered=self.assume_centered,
            standardize=self.standardize,
        )
        cleaned = self._clean(spectrum)
        if isinstance(cleaned, CleanedEigenvalues):
            values = np.asarray(cleaned.values, dtype=np.float64)
            floor = MISSING_FLOOR * max(
                spectrum.eigenvalues.sum() / spectrum.n_features, 1e-300
            )
            null = cleaned.null_value
            cleaned = CleanedEigenvalues(
                np.maximum(values, floor),
                null_value=None if null is None else max(float(null), floor),
                n_signal=cleaned.n_signal,
                details=cleaned.details,
            )
        self._store(spectrum, cleaned, X.dtype)
        self.volatility_ = None
        return self

    def _validate_fit_data(self, X):
        allow_nan = self._missing_method() != "error"
        try:
            X = validate_data(
                self,
                X,
                dtype=[np.float64, np.float32],
                ensure_min_samples=2,
                ensure_all_finite="allow-nan" if allow_nan else True,
            )
        except ValueError as exc:
            if "standardize" in str(exc):
                raise
            owner = type(self).__name__
            if "NaN" in str(exc) and not allow_nan:
                raise ValueError(
                    f"{owner}.fit: {str(exc).splitlines()[0]} Pass "
                    "missing='pairwise' or missing='em' to estimate from "
                    "incomplete data."
                ) from exc
            raise ValueError(f"{owner}.fit: {exc}") from exc
        self._check_not_constant(X)
        return X

    def _check_not_constant(self, X) -> None:
        """Refuse data whose sample covariance is zero (no covariance to clean)."""
        if self.assume_centered:
            constant = not np.any(X)
            what = "every entry is zero (with assume_centered=True)"
        else:
            constant = bool(np.all(X == X[0]))
            what = f"all {X.shape[0]} rows are equal (every column is constant)"
        if constant:
            raise ValueError(
                f"{type(self).__name__}.fit: X has zero variance: {what}, so its "
                "sample covariance is zero and there is nothing to clean."
            )

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
            result = spectrum.cleaned(values, cleaned.null_value)
            n_signal = cleaned.n_signal
        else:  # pragma: no cover - programming error
            raise TypeError(f"_clean returned {type(cleaned).__name__}")
        out_dtype = dtype if dtype == np.float32 else np.float64
        self.location_ = spectrum.location
        self.spectrum_ = result
        self.sample_eigenvalues_ = spectrum.full_eigenvalues()
        self.eigenvalues_ = result.full_eigenvalues()
        self.eigenvectors_ = result.eigenvectors
        if n_signal is None:
            n_signal = _report_count(spectrum)
        self.n_signal_ = None if n_signal is None else int(n_signal)
        self.scale_ = spectrum.scale
        self.degrees_of_freedom_ = float(spectrum.n_samples)
        store = self.store_covariance
        if store == "auto":
            store = n_features <= DENSE_LIMIT
        if store:
            self.covariance_ = result.to_dense().astype(out_dtype, copy=False)
            # Densified on first access (another N x N product), same numbers.
            self.precision_ = (
                _DeferredPrecision(result, out_dtype) if self.store_precision else None
            )
        else:
            self.covariance_ = None
            self.precision_ = None

    # -- the precision, densified on first access -------------------------
    @property
    def precision_(self):
        """The dense precision matrix, or None when not stored.

        A fit stores it as the cleaned spectrum's inverse and forms the
        N x N array on first access (then keeps it), so a fit whose caller
        reads only ``covariance_`` or uses ``spectrum_`` skips that product.
        """
        try:
            value = self.__dict__["_precision"]
        except KeyError:
            raise AttributeError(
                f"{type(self).__name__!r} object has no attribute 'precision_'"
            ) from None
        return value.get() if isinstance(value, _DeferredPrecision) else value

    @precision_.setter
    def precision_(self, value):
        self.__dict__["_precision"] = value

    @precision_.deleter
    def precision_(self):
        try:
            del self.__dict__["_precision"]
        except KeyError:
            raise AttributeError("precision_") from None

    # -- using the fit ----------------------------------------------------
    def get_precision(self):
        """The dense precision matrix (computed from ``spectrum_`` if not stored)."""
        check_is_fitted(self)
        if self.precision_ is not None:
            return self.precision_
        return self.spectrum_.to_dense(-1.0)

    def covariance_frame(self):
        """The cleaned covariance as a DataFrame labelled by the feature names.

        Labels are ``feature_names_in_`` when the fit saw a DataFrame, else
        ``x0, x1, ...`` (as ``get_feature_names_out``). Densifies
        ``spectrum_`` when ``covariance_`` is not stored. Needs pandas.

        Returns
        -------
        pandas.DataFrame of shape (n_features, n_features)
        """
        check_is_fitted(self)
        import pandas as pd

        cov = self.covariance_
        if cov is None:
            cov = self.spectrum_.to_dense()
        names = self.get_feature_names_out()
        return pd.DataFrame(np.array(cov), index=names, columns=names)

    def correlation_frame(self):
        """The cleaned covariance scaled to unit diagonal, as a labelled DataFrame.

        ``R = D^{-1/2} C D^{-1/2}`` with ``D = diag(C)``; with ``standardize``
        this is the cleaned correlation re-normalised (cleaning the
        eigenvalues of a correlation matrix need not keep its unit
        diagonal). Labels as in :meth:`covariance_frame`.

        Returns
        -------
        pandas.DataFrame of shape (n_features, n_features)
        """
        frame = self.covariance_frame()
        values = frame.to_numpy()
        sd = np.sqrt(np.diag(values))
        corr = values / np.outer(sd, sd)
        np.fill_diagonal(corr, 1.0)
        return frame.__class__(corr, index=frame.index, columns=frame.columns)

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


@mixin_dataclass
class TakesMissing:
    """Mixin of a :class:`SpectralCovariance` that estimates from data with
    NaN entries: adds the ``missing`` parameter (described by
    ``common_params_doc``). Cleaners that need complete data rows leave it
    out."""

    _parameter_specs: ClassVar[dict] = {
        "missing": [Options({"error", "pairwise", "em"})],
    }

    missing: str = "error"


class _DeferredPrecision:
    """``spectrum.to_dense(-1)`` in ``dtype``, computed once on first use."""

    def __init__(self, spectrum: CleanedSpectrum, dtype):
        self._spectrum = spectrum
        self._dtype = dtype
        self._value = None

    def get(self) -> np.ndarray:
        if self._value is None:
            dense = self._spectrum.to_dense(-1.0)
            self._value = dense.astype(self._dtype, copy=False)
        return self._value
