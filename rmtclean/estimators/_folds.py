"""AutoShrink's cross-validation loop: every candidate scored on one fold.

The candidates whose spectrum parameters agree share one decomposition of
the training part; the held-out rows are summarised once in its eigenbasis
(:func:`rmtclean.rules._selection.heldout_fold`) and each rotation-invariant
candidate is scored from its cleaned eigenvalues alone.
"""

from __future__ import annotations

import inspect
import time
import warnings
from dataclasses import dataclass, field, replace

import numpy as np
from sklearn.base import clone

from rmtclean.estimators._base import SpectralCovariance
from rmtclean.rules._selection import (
    heldout_fold,
    heldout_score,
    variances_in_basis,
)
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import CleanedSpectrum

__all__ = [
    "TIE_RTOL",
    "FoldResult",
    "common_names",
    "cv_results",
    "evaluate_fold",
    "in_sample_basis",
    "spectrum_groups",
]

#: Parameters of the base class that do not change the sample spectrum.
_STORAGE_PARAMS = frozenset({"store_precision", "store_covariance", "missing"})
#: Scores within this fraction of the best count as ties (rounding), and the
#: earlier candidate wins: equivariances then hold to rounding.
TIE_RTOL = 1e-10


@dataclass
class FoldResult:
    """Scores and by-products of one fold (picklable, for joblib)."""

    scores: np.ndarray
    fit_time: np.ndarray
    score_time: np.ndarray
    errors: dict = field(default_factory=dict)
    values: list = field(default_factory=list)
    nulls: list = field(default_factory=list)
    heldout: object = None
    spectrum: object = None


def common_names() -> frozenset:
    return frozenset(inspect.signature(SpectralCovariance.__init__).parameters) - {
        "self"
    }


def _spectrum_key(est) -> tuple:
    params = est.get_params(deep=False)
    return tuple(
        (name, params.get(name)) for name in sorted(common_names() - _STORAGE_PARAMS)
    )


def spectrum_groups(ests) -> list[list[int]]:
    """Candidate indices grouped by the sample spectrum they clean."""
    groups: dict = {}
    for j, est in enumerate(ests):
        groups.setdefault(_spectrum_key(est), []).append(j)
    return list(groups.values())


def evaluate_fold(X, sample_weight, train, test, ests, groups, scoring, keep):
    """Score every candidate on one fold, one decomposition per group."""
    m = len(ests)
    out = FoldResult(np.full(m, -np.inf), np.zeros(m), np.zeros(m))
    out.values, out.nulls = [None] * m, [None] * m
    X_train, X_test = X[train], X[test]
    w_train = None if sample_weight is None else sample_weight[train]
    builtin = isinstance(scoring, str)
    with warnings.catch_warnings():
        # Fold fits are internal: their warnings would repeat K times what
        # the refit says once. Failures are reported by the caller.
        warnings.simplefilter("ignore")
        for members in groups:
            rep = ests[members[0]]
            start = time.perf_counter()
            try:
                # Every eigenvector: the held-out rows are summarised in the
                # full training basis.
                spectrum, _ = rep._fit_spectrum(
                    X_train,
                    w_train,
                    keep_samples=any(ests[j]._needs_samples for j in members),
                    options={"eigenvectors": "all"},
                )
            except Exception as exc:  # noqa: BLE001 - reported, scored -inf
                for j in members:
                    out.errors[j] = _describe(exc)
                continue
            shared = time.perf_counter() - start
            held = None
            for j in members:
                est = clone(ests[j])
                start = time.perf_counter()
                try:
                    cleaned = est._clean(spectrum)
                    out.fit_time[j] = shared + time.perf_counter() - start
                    start = time.perf_counter()
                    if not builtin:
                        est._store(spectrum, cleaned, X.dtype)
                        est.n_features_in_ = X.shape[1]
                        score = float(scoring(est, X_test))
                    elif isinstance(cleaned, CleanedEigenvalues):
                        if held is None:
                            held = _summary(
                                spectrum, spectrum.location, X_test, scoring
                            )
                        score = _rule_score(held, spectrum, cleaned, scoring)
                    else:
                        score = _spectrum_score(cleaned, spectrum, X_test, scoring)
                    out.score_time[j] = time.perf_counter() - start
                except Exception as exc:  # noqa: BLE001 - reported, scored -inf
                    out.errors[j] = _describe(exc)
                    continue
                if np.isnan(score):
                    out.errors[j] = "the score is NaN"
                    continue
                out.scores[j] = score
                if keep:
                    out.values[j], out.nulls[j] = in_sample_basis(cleaned, spectrum)
            if keep:
                out.heldout = held
                out.spectrum = replace(spectrum, samples=None, weights=None)
    return out


def in_sample_basis(cleaned, spectrum) -> tuple[np.ndarray, float | None]:
    """A candidate's cleaned eigenvalues and null value in the sample basis.

    Rotation-invariant rules give them directly; a cleaner with its own
    eigenvectors (TylerShrink's spatial signs, LinearShrink's non-identity
    targets) gives its variances along the sample eigenvectors
    (:func:`rmtclean.rules._selection.variances_in_basis`).
    """
    has_null = spectrum.n_components < spectrum.n_features
    if isinstance(cleaned, CleanedEigenvalues):
        values = np.asarray(cleaned.values, dtype=np.float64)
        return values, float(cleaned.null_value) if has_null else None
    values, null = variances_in_basis(spectrum.eigenvectors, cleaned)
    return values, null if has_null else None


def _describe(exc: BaseException) -> str:
    return f"{type(exc).__name__}: {exc}"


def _rule_score(held, spectrum, cleaned, scoring) -> float:
    values = np.asarray(cleaned.values, dtype=np.float64)
    if values.shape != spectrum.eigenvalues.shape:
        raise RuntimeError(
            f"the rule returned {values.shape} values for "
            f"{spectrum.eigenvalues.shape} eigenvalues"
        )
    has_null = spectrum.n_components < spectrum.n_features
    return heldout_score(
        held, values, cleaned.null_value if has_null else None, scoring
    )


def _summary(basis, location, X_test, scoring):
    """The held-out rows in the eigenbasis (and scales) of a spectrum."""
    return heldout_fold(
        basis.eigenvectors, location, X_test, scale=basis.scale, scoring=scoring
    )


def _spectrum_score(cleaned: CleanedSpectrum, spectrum, X_test, scoring) -> float:
    """Score of a cleaner that is not rotation invariant (own eigenbasis)."""
    held = _summary(cleaned, spectrum.location, X_test, scoring)
    return heldout_score(held, cleaned.eigenvalues, cleaned.null_value, scoring)


def cv_results(folds: list[FoldResult], names: list[str]) -> dict:
    scores = np.array([f.scores for f in folds])  # (n_folds, n_candidates)
    fit = np.array([f.fit_time for f in folds])
    score_time = np.array([f.score_time for f in folds])
    with np.errstate(invalid="ignore"):
        mean = scores.mean(axis=0)
        std = np.where(np.isfinite(mean), scores.std(axis=0), np.nan)
    out = {
        "candidate": np.array(names, dtype=object),
        "param_candidate": np.ma.MaskedArray(
            np.array(names, dtype=object), mask=np.zeros(len(names), bool)
        ),
        "params": [{"candidate": name} for name in names],
    }
    for k in range(scores.shape[0]):
        out[f"split{k}_test_score"] = scores[k]
    out["mean_test_score"] = mean
    out["std_test_score"] = std
    out["rank_test_score"] = _ranks(mean)
    out["mean_fit_time"] = fit.mean(axis=0)
    out["std_fit_time"] = fit.std(axis=0)
    out["mean_score_time"] = score_time.mean(axis=0)
    out["std_score_time"] = score_time.std(axis=0)
    return out


def _ranks(mean: np.ndarray) -> np.ndarray:
    """1 + the number of candidates scoring better beyond rounding."""
    finite = np.where(np.isfinite(mean), mean, -np.inf)
    ranks = np.empty(mean.size, dtype=np.int32)
    for j, s in enumerate(finite):
        tol = TIE_RTOL * abs(s) if np.isfinite(s) else 0.0
        ranks[j] = 1 + int(np.count_nonzero(finite > s + tol))
    return ranks
