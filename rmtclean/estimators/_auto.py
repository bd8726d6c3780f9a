"""AutoShrink: the cleaner (or the blend of cleaners) chosen by held-out score."""

from __future__ import annotations

import numbers
import warnings
from collections.abc import Callable
from typing import ClassVar

import numpy as np
from joblib import Parallel, delayed
from sklearn.base import clone
from sklearn.model_selection import KFold, check_cv
from sklearn.utils.validation import check_is_fitted

from rmtclean._validation import (
    CALLABLE,
    RANDOM_STATE,
    Interval,
    Options,
    _Special,
    check_params,
    check_sample_weight,
)
from rmtclean.distributed import is_dask_array
from rmtclean.estimators._base import (
    SpectralCovariance,
    estimator_dataclass,
)
from rmtclean.estimators._docs import estimator_doc
from rmtclean.estimators._folds import (
    FoldResult,
    common_names,
    cv_results,
    evaluate_fold,
    in_sample_basis,
    spectrum_groups,
)
from rmtclean.estimators._linear import LinearShrink
from rmtclean.estimators._registry import CLEANERS, find_cleaner
from rmtclean.exceptions import CandidateFailedWarning, WeakEstimateWarning
from rmtclean.rules._selection import (
    SCORINGS,
    blend_weights,
    heldout_score,
)
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum._sphericity import sign_sphericity

__all__ = ["AutoShrink"]

#: The fitted attributes of the estimator contract, read from the winner.
_DELEGATED = (
    "location_",
    "covariance_",
    "spectrum_",
    "sample_eigenvalues_",
    "eigenvalues_",
    "eigenvectors_",
    "n_signal_",
    "scale_",
    "degrees_of_freedom_",
    "volatility_",
)

_DOC = r"""The cleaner chosen by its held-out score, or a blend of cleaners.

    No single rule is best everywhere: spiked-model shrinkers win when a few
    factors stand above flat noise, nonlinear rules when the population
    spectrum is spread. AutoShrink scores each candidate on held-out folds
    of the rows and keeps the best one (``combine="select"``), refitted on
    all rows, or a convex combination of their cleaned eigenvalues
    (``combine="blend"``). The choice and the scores are kept in
    ``best_estimator_`` and ``cv_results_``.

    Parameters
    ----------
    candidates : list of estimators or str, default=None
        The cleaners to choose from: rmtclean estimators (cloned, used with
        their own parameters) or short names such as ``"kernel"`` or
        ``"spike"`` (see :data:`rmtclean.estimators.CLEANERS`). ``None`` is
        every cleaner of the registry but AutoShrink, with default settings.
        Cleaners built from names get AutoShrink's common parameters below
        and its ``random_state``.
    cv : int, cross-validation splitter or iterable, default=5
        The folds. An int ``K`` cuts the rows into ``K`` contiguous blocks in
        row order (no shuffling, so time series stay in order; with fewer
        rows than ``K``, one block per row); a scikit-learn splitter
        (e.g. ``TimeSeriesSplit``) or an iterable of ``(train, test)`` index
        arrays is used as given.
    scoring : {"loglik", "min-variance", "frobenius"} or callable, default="loglik"
        The held-out score (greater is better). ``"loglik"``: the mean
        Gaussian log-likelihood of the held-out rows (``score``);
        ``"min-variance"``: minus the realised variance of the
        minimum-variance portfolio on the held-out rows
        (:func:`rmtclean.metrics.minimum_variance_scorer`);
        ``"frobenius"``: minus the squared Frobenius distance to the
        held-out sample covariance over N, whose expectation is minus the
        Frobenius loss plus a constant (choose it when that loss matters:
        the log-likelihood weighs the small eigenvalues and can prefer
        another cleaner); a callable ``scoring(estimator, X_test) -> float``
        receives each candidate fitted on the training rows.
    combine : {"select", "blend"}, default="select"
        ``"select"`` keeps the candidate with the best mean score and refits
        it on all rows; ``"blend"`` uses ``sum_j w_j d_j``, the convex
        combination of the candidates' cleaned eigenvalues ``d_j`` in the
        common sample eigenbasis whose weights have the best mean held-out
        score (see Notes). The candidates must share one spectrum (the same
        common parameters); one with its own eigenvectors (TylerShrink,
        LinearShrink with a non-identity target) enters through its
        variances along the sample eigenvectors.
    n_jobs : int or None, default=None
        Folds evaluated in parallel (joblib); ``None`` means one.
    random_state : None, int, numpy Generator or RandomState, default=None
        Passed to the candidates built from names that take one (SplitShrink's
        random splits). A Generator or RandomState is drawn from once per fit.
    sphericity_level : float in (0, 1) or None, default=0.05
        When John's sphericity test on the spatial signs
        (:func:`rmtclean.spectrum.sign_sphericity`) does not reject
        ``Sigma = sigma^2 I`` at this level, the estimate is that multiple
        of the identity, ``tr(S) / N`` times ``I`` (LinearShrink with
        intensity 1; the identity correlation under ``standardize``), not
        the held-out choice; see Notes. ``None`` always uses the held-out
        choice. The test takes the rows as given (not standardised: columns
        of unequal variance reject it). It is skipped (as with ``None``)
        for weighted rows (``sample_weight``, ``half_life``,
        ``vol_half_life``) and for one column.
%(common)s

    Attributes
    ----------
    best_estimator_ : estimator
        The chosen candidate refitted on all rows (with ``combine="blend"``,
        the candidate of largest weight, refitted); when ``spherical_``,
        the fitted ``LinearShrink(intensity=1.0, bias=False)``.
    best_index_ : int
        The index in ``cv_results_`` of the best candidate by held-out
        score (the chosen one unless ``spherical_``).
    best_score_ : float
        Its mean held-out score.
    sphericity_pvalue_ : float or None
        The p-value of the sphericity test on all rows; None when it was
        not run (see ``sphericity_level``).
    spherical_ : bool
        Whether the test did not reject, so that the estimate is a
        multiple of the identity.
    cv_results_ : dict of ndarray
        scikit-learn's layout, one entry per candidate: ``"candidate"`` and
        ``"param_candidate"`` (names), ``"params"`` (``{"candidate": name}``),
        ``"split<k>_test_score"``, ``"mean_test_score"``,
        ``"std_test_score"``, ``"rank_test_score"`` (1 is best; scores within
        a relative 1e-10 tie), ``"mean_fit_time"``, ``"std_fit_time"``
        (the fold's shared decomposition plus the candidate's rule, seconds)
        and ``"mean_score_time"``, ``"std_score_time"``. A candidate that
        fails on a fold scores ``-inf`` there.
    weights_ : ndarray of shape (n_candidates,)
        The weight of each candidate in the fitted covariance: one-hot for
        ``"select"``, zeros when ``spherical_``.
    blend_score_ : float or None
        With ``"blend"``: the mean held-out score of the blend on the folds
        its weights were fitted on (optimistic; at least ``best_score_``).
    candidates_ : list of estimators
        The candidates as scored (unfitted).
    n_splits_ : int
        Number of folds.
%(fitted)s
    eigenvalues_ : ndarray of shape (n_features,)
        The cleaned eigenvalues, paired with ``sample_eigenvalues_``.
    eigenvectors_ : ndarray of shape (n_features, n_components)
    n_signal_ : int or None
        The winner's; for a blend, the signal count of
        :func:`rmtclean.analyze_spectrum` on the sample spectrum (one count
        per data set).
    degrees_of_freedom_ : float
%(fitted_end)s

    See Also
    --------
    rmtclean.estimators.CLEANERS : the default candidates.
    rmtclean.spectrum.sign_sphericity : the sphericity test (John 1972; Zou,
        Peng, Feng & Wang 2014), with its references.
    sklearn.model_selection.GridSearchCV : the same choice by refitting each
        candidate on each fold (AutoShrink shares the decomposition).

    Notes
    -----
    **Shared decompositions.** Every rotation-invariant cleaner of a
    training part keeps its sample eigenvectors ``V``; the held-out rows are
    summarised once per fold (``o_i = mean_t (u_i' y_t)^2`` and the null
    space's share) and each candidate's log-likelihood is then an O(r) sum,

    .. math:: -\tfrac12\Big[N\log 2\pi + \sum_i\big(\log d_i + o_i/d_i\big)
              + (N - r)\log c + o_0/c\Big].

    Candidates whose common parameters agree share one eigendecomposition
    per fold; a fit then costs ``K`` times (decomposition + every rule) plus
    the refit of the winner: about ``K + 1`` times the slowest candidate when
    one candidate's rule dominates, more when several rules cost alike
    (``benchmarks/auto_shrink.py`` measures 4 to 9 times with the default
    candidates, TylerShrink's fixed point running again on each fold).

    **Blending** maximises the mean held-out score over convex weights
    (stacking, Wolpert 1992; non-negative weights summing to one, Breiman
    1996), on eigenvalues as the cross-validated nonlinear shrinkage of
    Bartz (2016) chooses each eigenvalue on held-out data. It helps where
    the candidates err in opposite directions and no candidate's model
    holds: ``benchmarks/auto_shrink.py`` measured a held-out
    log-likelihood 1.1% above the best single cleaner on the dslabs
    expression panel (shuffled folds), and on the block-factor design at
    T = N / 2 with ``scoring="frobenius"`` a Frobenius loss 20% below it
    on the bench's three draws but 9% above it on ten fresh ones (Gaussian
    rows; 1% below with Student-t rows). It hurts where one simple
    candidate is right (identity and spiked designs: the extra weights are
    fitted on noisy folds) and, with the log-likelihood, where that score
    disagrees with the loss. The weights are fitted and scored on the same
    folds, so ``blend_score_`` is optimistic.

    **Pure noise.** When the population covariance is a multiple of the
    identity, every candidate's held-out score differs from the others' by
    less than its fold-to-fold noise, and the held-out choice is a draw
    among estimates that spread the spectrum more or less: on the bench's
    identity design (N = 100) its Frobenius loss was 0.85 to 4 times that
    of the best single cleaner in hindsight. ``tr(S) / N`` times ``I`` is
    the estimate there, and John's (1972) test, taken on the spatial signs
    so that heavy tails do not reject it (Zou et al. 2014), says when the
    data cannot tell the covariance from such a multiple. On pure noise
    (N = 100, T = 50 to 200) it divides the held-out choice's loss by 3
    to 6; its price, where a little spread is missed, is small: in one
    cell of twenty (population eigenvalues evenly spaced on ``[0.6,
    1.4]``, T = 100, the gate firing on 1 of 10 draws) a mean loss 0.6%
    above the held-out choice's, elsewhere equal or below
    (``benchmarks/auto_shrink_noise_gate.py``, ``benchmarks/auto_shrink.md``).
    Real panels (returns, expression) reject sphericity by far, but on a
    handful of rows the test has little power: on windows of 4 days of
    French's 49 industries it fires a third of the time and costs 1% of
    the next days' log-likelihood (``benchmarks/auto_shrink_gate_real.py``).

    Time-decay (``half_life``) weights each training part as a contiguous
    series. ``sample_weight`` weights the training rows; held-out rows
    count equally. Dask arrays and missing data are not supported (the
    folds need the rows).

    References
    ----------
    .. [1] D. H. Wolpert, "Stacked generalization", Neural Networks 5(2),
       241-259, 1992.
    .. [2] L. Breiman, "Stacked regressions", Machine Learning 24(1), 49-64,
       1996.
    .. [3] D. Bartz, "Cross-validation based nonlinear shrinkage",
       arXiv:1611.00798, 2016.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.estimators import AutoShrink
    >>> rng = np.random.default_rng(0)
    >>> X = rng.standard_normal((200, 40)) * np.r_[6.0, 4.0, np.ones(38)]
    >>> est = AutoShrink(candidates=["spike", "linear"]).fit(X)
    >>> type(est.best_estimator_).__name__
    'SpikeShrink'
    >>> est.cv_results_["rank_test_score"].tolist()
    [1, 2]
    """

_CANDIDATES = _Special(
    "a non-empty list of rmtclean estimators or short names",
    lambda v: isinstance(v, (list, tuple)) and len(v) > 0,
)
_SPLITTER = _Special(
    "a cross-validation splitter or an iterable of (train, test) pairs",
    lambda v: (
        hasattr(v, "split") or (hasattr(v, "__iter__") and not isinstance(v, str))
    ),
)


@estimator_dataclass
class AutoShrink(SpectralCovariance):
    __doc__ = estimator_doc(_DOC, exclude=("missing",))

    _parameter_specs: ClassVar[dict] = {
        "candidates": [None, _CANDIDATES],
        "cv": [Interval(int, 2, None), _SPLITTER],
        "scoring": [Options(SCORINGS), CALLABLE],
        "combine": [Options({"select", "blend"})],
        "n_jobs": [None, Interval(int, -1, -1), Interval(int, 1, None)],
        "random_state": [RANDOM_STATE],
        "sphericity_level": [None, Interval(float, 0.0, 1.0, closed="neither")],
    }
    # The folds need the data rows: no dask arrays.
    _needs_samples = True

    candidates: list | tuple | None = None
    cv: int | object = 5
    scoring: str | Callable = "loglik"
    combine: str = "select"
    n_jobs: int | None = None
    random_state: int | np.random.Generator | np.random.RandomState | None = None
    sphericity_level: float | None = 0.05

    # -- candidates -------------------------------------------------------
    def _candidate_seed(self):
        rs = self.random_state
        if isinstance(rs, np.random.Generator):
            return int(rs.integers(2**31 - 1))
        if isinstance(rs, np.random.RandomState):
            return int(rs.randint(2**31 - 1))
        return rs

    def _from_class(self, cls, seed):
        accepted = cls().get_params(deep=False)
        params = {
            name: value
            for name, value in self.get_params(deep=False).items()
            if name in accepted and name in common_names()
        }
        if "random_state" in accepted:
            params["random_state"] = seed
        return cls(**params)

    def _resolve_candidates(self, seed) -> tuple[list, list[str]]:
        owner = type(self).__name__
        if self.candidates is None:
            entries = [e for e in CLEANERS if not issubclass(e.cls, AutoShrink)]
            ests = [self._from_class(e.cls, seed) for e in entries]
            return ests, [e.name for e in entries]
        ests, names = [], []
        for item in self.candidates:
            if isinstance(item, str):
                try:
                    entry = find_cleaner(item)
                except ValueError as exc:
                    raise ValueError(
                        f"The 'candidates' parameter of {owner}: {exc}"
                    ) from exc
                cls, name = entry.cls, entry.name
                if issubclass(cls, AutoShrink):
                    raise ValueError(
                        f"The 'candidates' parameter of {owner} cannot hold "
                        f"{owner} itself. Got {item!r}."
                    )
                ests.append(self._from_class(cls, seed))
                names.append(name)
            elif isinstance(item, SpectralCovariance) and not isinstance(
                item, AutoShrink
            ):
                ests.append(clone(item))
                names.append(type(item).__name__)
            else:
                raise ValueError(
                    f"The 'candidates' parameter of {owner} must list rmtclean "
                    "estimators (other than AutoShrink) or short names. Got "
                    f"{item!r} instead."
                )
        # Two candidates of one class are told apart by their parameters.
        for i, name in enumerate(names):
            if names.count(name) > 1 and not isinstance(self.candidates[i], str):
                names[i] = repr(ests[i])
        for name in set(names):
            if names.count(name) > 1:
                raise ValueError(
                    f"The 'candidates' parameter of {owner} lists {name!r} "
                    "more than once."
                )
        return ests, names

    # -- folds ------------------------------------------------------------
    def _splits(self, X) -> list:
        n_rows = X.shape[0]
        cv = self.cv
        if isinstance(cv, numbers.Integral):
            cv = KFold(n_splits=min(int(cv), n_rows))
        splits = [
            (np.asarray(train), np.asarray(test))
            for train, test in check_cv(cv).split(X)
        ]
        if not splits:
            raise ValueError(
                f"The 'cv' parameter of {type(self).__name__} gave no folds."
            )
        return splits

    # -- fitting ----------------------------------------------------------
    def fit(self, X, y=None, sample_weight=None):
        """Score every candidate on the folds and fit the winner (or blend).

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Training data; rows are observations, in time order for time
            series (the default folds are contiguous blocks).
        y : Ignored
        sample_weight : array-like of shape (n_samples,), default=None
            Non-negative frequency weights of the rows, for the training
            parts and the refit.

        Returns
        -------
        self : object

        Warns
        -----
        CandidateFailedWarning
            When a candidate fails on a fold (too few rows for its rule,
            ...): it scores ``-inf`` there.
        """
        check_params(self)
        if is_dask_array(X):
            return self._fit_dask(X, sample_weight)
        X = self._validate_fit_data(X)
        owner = type(self).__name__
        if sample_weight is not None:
            sample_weight = check_sample_weight(sample_weight, X.shape[0], owner)
        seed = self._candidate_seed()
        ests, names = self._resolve_candidates(seed)
        groups = spectrum_groups(ests)
        splits = self._splits(X)
        blend = self.combine == "blend"
        if blend and len(groups) > 1:
            raise ValueError(
                f"{owner}(combine='blend') needs candidates that share one "
                "sample spectrum: their assume_centered, standardize, route, "
                "half_life and vol_half_life must agree."
            )
        folds = Parallel(n_jobs=self.n_jobs)(
            delayed(evaluate_fold)(
                X, sample_weight, train, test, ests, groups, self.scoring, blend
            )
            for train, test in splits
        )
        # With training parts too small for any spectrum (a row or two) no
        # candidate can be scored: a weak estimate, said once at the refit.
        unscorable = all(len(f.errors) == len(ests) for f in folds)
        if not unscorable:
            self._warn_failures(folds, names)
        self.candidates_ = ests
        self.n_splits_ = len(splits)
        self.cv_results_ = cv_results(folds, names)
        scores = self.cv_results_["mean_test_score"]
        self.best_index_ = int(
            np.flatnonzero(self.cv_results_["rank_test_score"] == 1)[0]
        )
        self.best_score_ = float(scores[self.best_index_])
        self.sphericity_pvalue_ = self._sphericity_pvalue(X, sample_weight)
        self.spherical_ = (
            self.sphericity_pvalue_ is not None
            and self.sphericity_pvalue_ > self.sphericity_level
        )
        if self.spherical_:
            self.blend_score_ = None
            self.weights_ = np.zeros(len(ests))
            flat = self._from_class(LinearShrink, seed)
            flat.set_params(intensity=1.0, bias=False)
            self._adopt(flat.fit(X, sample_weight=sample_weight))
        elif blend:
            self._fit_blend(X, sample_weight, ests, names, folds, splits)
        else:
            self.blend_score_ = None
            self.weights_ = np.eye(len(ests))[self.best_index_]
            self._adopt(self._refit(X, sample_weight, ests, unscorable))
        return self

    def _sphericity_pvalue(self, X, sample_weight) -> float | None:
        """John's test on the spatial signs, when it applies (else None)."""
        weighted = (
            sample_weight is not None
            or self.half_life is not None
            or self.vol_half_life is not None
        )
        if self.sphericity_level is None or weighted or X.shape[1] < 2:
            return None
        try:
            test = sign_sphericity(X, assume_centered=self.assume_centered)
        except ValueError:  # too few rows with a direction
            return None
        return test.p_value

    def describe_choice(self, n_shown: int = 3) -> str:
        """One line saying what was chosen and by which held-out scores.

        Parameters
        ----------
        n_shown : int, default=3
            Candidates listed (best first), or blend weights (largest first).

        Returns
        -------
        str

        Examples
        --------
        >>> import numpy as np
        >>> from rmtclean.estimators import AutoShrink
        >>> X = np.random.default_rng(0).standard_normal((100, 10))
        >>> est = AutoShrink(candidates=["clip", "linear"]).fit(X)
        >>> est.describe_choice().startswith("chosen by held-out loglik")
        True
        """
        check_is_fitted(self)
        res = self.cv_results_
        scoring = self.scoring if isinstance(self.scoring, str) else "score"
        head = f"chosen by held-out {scoring} over {self.n_splits_} folds: "
        if self.spherical_:
            what = "identity correlation" if self.standardize else "scaled identity"
            head = (
                f"sphericity not rejected (John's test on spatial signs, p = "
                f"{self.sphericity_pvalue_:.2g} > {self.sphericity_level:g}): the "
                f"{what} (LinearShrink, intensity 1); held-out {scoring} over "
                f"{self.n_splits_} folds would choose "
            )
        if self.blend_score_ is not None:
            order = np.argsort(-self.weights_, kind="stable")[:n_shown]
            parts = [
                f"{res['candidate'][j]} {self.weights_[j]:.2f}"
                for j in order
                if self.weights_[j] > 0
            ]
            return f"{head}blend of {', '.join(parts)} (score {self.blend_score_:.6g})"
        order = [self.best_index_] + [
            int(j)
            for j in np.argsort(-res["mean_test_score"], kind="stable")
            if j != self.best_index_
        ]
        parts = [
            f"{res['candidate'][j]} ({res['mean_test_score'][j]:.6g})"
            for j in order[:n_shown]
        ]
        return head + parts[0] + (", then " + ", ".join(parts[1:]) if parts[1:] else "")

    def _warn_failures(self, folds, names) -> None:
        owner = type(self).__name__
        for j, name in enumerate(names):
            errors = [f.errors[j] for f in folds if j in f.errors]
            if errors:
                warnings.warn(
                    f"{owner}.fit: candidate {name} failed on {len(errors)} of "
                    f"{len(folds)} folds and scores -inf there (first error: "
                    f"{errors[0]}).",
                    CandidateFailedWarning,
                    stacklevel=3,
                )

    def _refit(self, X, sample_weight, ests, unscorable):
        """The best candidate fitted on all rows (the next one if it fails)."""
        order = [self.best_index_] + [
            int(j)
            for j in np.argsort(-self.cv_results_["mean_test_score"], kind="stable")
            if j != self.best_index_
        ]
        if np.isfinite(self.best_score_):
            order = order[:1]
        else:
            # No finite score: the first candidate that fits all rows, in
            # the order given.
            order = list(range(len(ests)))
            owner = type(self).__name__
            if unscorable:
                message, category = (
                    f"{owner}.fit: the training parts of the {self.n_splits_} "
                    f"folds of {X.shape[0]} rows are too small to score any "
                    "candidate; the first candidate that fits all rows is "
                    "used, unchosen: a weak estimate.",
                    WeakEstimateWarning,
                )
            else:
                message, category = (
                    f"{owner}.fit: no candidate has a finite held-out score; "
                    "the first candidate that fits all rows is used.",
                    CandidateFailedWarning,
                )
            warnings.warn(message, category, stacklevel=3)
        for position, j in enumerate(order):
            try:
                best = clone(ests[j]).fit(X, sample_weight=sample_weight)
            except Exception:
                if position == len(order) - 1:
                    raise
                continue
            self.best_index_ = int(j)
            self.weights_ = np.eye(len(ests))[j]
            return best
        raise AssertionError("unreachable")  # pragma: no cover

    def _adopt(self, best) -> None:
        self.best_estimator_ = best
        for name in _DELEGATED:
            setattr(self, name, getattr(best, name, None))
        # The winner's precision, deferred as it was (formed on first access).
        self.precision_ = best.__dict__.get("_precision")

    def _fit_blend(self, X, sample_weight, ests, names, folds, splits) -> None:
        owner = type(self).__name__
        ok = [j for j in range(len(ests)) if all(j not in f.errors for f in folds)]
        if not ok:
            raise ValueError(
                f"{owner}.fit: no candidate could be scored on every fold, so "
                "there is nothing to blend."
            )
        scorers, values, nulls = [], [], []
        for f, (_, test) in zip(folds, splits, strict=True):
            scorers.append(_blend_scorer(self, f, X[test]))
            values.append(np.stack([f.values[j] for j in ok]))
            nulls.append(
                None if f.nulls[ok[0]] is None else np.array([f.nulls[j] for j in ok])
            )
        w_ok, self.blend_score_ = blend_weights(scorers, values, nulls)
        weights = np.zeros(len(ests))
        weights[ok] = w_ok
        # Refit: one decomposition of all rows, each weighted rule on it.
        rep = ests[ok[0]]
        spectrum, self.volatility_ = rep._fit_spectrum(
            X,
            sample_weight,
            keep_samples=any(ests[j]._needs_samples for j in ok),
            options={"eigenvectors": "all"},
        )
        self._warn_if_weak(spectrum)
        d, null = 0.0, 0.0
        for j in np.flatnonzero(weights):
            values, null_j = in_sample_basis(clone(ests[j])._clean(spectrum), spectrum)
            d = d + weights[j] * values
            null = None if null_j is None else null + weights[j] * null_j
        self._store(spectrum, CleanedEigenvalues(d, null), X.dtype)
        self.weights_ = weights
        top = int(np.argmax(weights))
        self.best_estimator_ = clone(ests[top]).fit(X, sample_weight=sample_weight)


def _blend_scorer(auto, fold: FoldResult, X_test):
    """``score(d, c)`` of blended eigenvalues on one fold."""
    if isinstance(auto.scoring, str):
        held = fold.heldout

        def score(d, c):
            return heldout_score(held, d, c, auto.scoring)

        return score
    spectrum = fold.spectrum

    def score(d, c):
        model = SpectralCovariance(
            store_precision=auto.store_precision,
            store_covariance=auto.store_covariance,
        )
        model._store(spectrum, CleanedEigenvalues(d, c), X_test.dtype)
        model.n_features_in_ = X_test.shape[1]
        try:
            return float(auto.scoring(model, X_test))
        except Exception:  # noqa: BLE001 - a failed blend scores -inf
            return -np.inf

    return score
