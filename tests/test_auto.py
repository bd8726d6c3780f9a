"""AutoShrink and its selection core (rmtclean/rules/_selection.py).

References: the held-out scores are compared with scipy's multivariate
normal log-density, rmtclean's ``minimum_variance_scorer`` and a direct
numpy Frobenius norm; the fold scores with scikit-learn's
``cross_val_score`` of each candidate fitted on its own (the shared
decomposition must change nothing but the cost).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import scipy.stats
from sklearn.model_selection import KFold, TimeSeriesSplit, cross_val_score

from rmtclean import (
    AutoShrink,
    EigenClip,
    KernelShrink,
    LinearShrink,
    SpikeShrink,
    SplitShrink,
    StieltjesShrink,
)
from rmtclean.estimators import SpectralCovariance
from rmtclean.exceptions import (
    CandidateFailedWarning,
    InvalidParameterError,
    WeakEstimateWarning,
)
from rmtclean.metrics import minimum_variance_scorer
from rmtclean.rules._selection import blend_weights, heldout_fold, heldout_score
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.synthetic import make_design
from tests._spectra import report_count


def _data(rng, n_rows, n_features, spikes=(6.0, 3.0)):
    scales = np.r_[np.asarray(spikes), np.ones(n_features - len(spikes))]
    return rng.standard_normal((n_rows, n_features)) * scales + rng.normal(
        size=n_features
    )


# -- the held-out scores ---------------------------------------------------------
@pytest.mark.parametrize("shape", [(80, 20), (25, 40)], ids=["dense", "gram"])
@pytest.mark.parametrize("standardize", [False, True])
def test_heldout_scores_match_references(rng, shape, standardize):
    n_rows, n_features = shape
    X = _data(rng, n_rows, n_features)
    X_test = _data(rng, 15, n_features)
    est = KernelShrink(standardize=standardize).fit(X)
    spec = est.spectrum_
    null = spec.null_value if spec.has_null_space else None
    cov = spec.to_dense()
    for scoring in ("loglik", "min-variance", "frobenius"):
        fold = heldout_fold(
            spec.eigenvectors, est.location_, X_test, scale=spec.scale, scoring=scoring
        )
        got = heldout_score(fold, spec.eigenvalues, null, scoring)
        if scoring == "loglik":
            # scipy.stats.multivariate_normal (reference library).
            want = scipy.stats.multivariate_normal(est.location_, cov).logpdf(X_test)
            want = float(np.mean(want))
            assert got == pytest.approx(est.score(X_test), rel=1e-10)
        elif scoring == "min-variance":
            want = minimum_variance_scorer(est, X_test)  # the library's scorer
        else:
            # -||C - S_test||_F^2 / N in the units the cleaner works in.
            Y = X_test - est.location_
            inner = cov
            if standardize:
                Y = Y / spec.scale
                inner = cov / np.outer(spec.scale, spec.scale)
            S_test = Y.T @ Y / Y.shape[0]
            want = -float(np.sum((inner - S_test) ** 2)) / n_features
        assert got == pytest.approx(want, rel=1e-8), scoring


def test_loglik_is_minus_inf_for_a_zero_eigenvalue():
    fold = heldout_fold(np.eye(2), np.zeros(2), np.ones((3, 2)))
    assert heldout_score(fold, np.array([1.0, 0.0])) == -np.inf


def test_heldout_score_refuses_a_missing_null_value():
    fold = heldout_fold(np.eye(3)[:, :2], np.zeros(3), np.ones((2, 3)))
    with pytest.raises(ValueError, match="null_value"):
        heldout_score(fold, np.ones(2), None)


def test_blend_weights_reach_a_known_interior_optimum():
    # Frobenius score to a target halfway between two candidates: the
    # quadratic's maximiser over the simplex is w = (1/2, 1/2, 0).
    target = np.array([3.0, 2.0, 1.0])
    values = [np.array([[4.0, 2.0, 1.0], [2.0, 2.0, 1.0], [9.0, 9.0, 9.0]])]

    def score(d, c):
        return -float(np.sum((d - target) ** 2))

    w, s = blend_weights([score], values, [None])
    assert np.all(w >= 0) and w.sum() == pytest.approx(1.0)
    assert w == pytest.approx([0.5, 0.5, 0.0], abs=1e-4)
    assert s == pytest.approx(0.0, abs=1e-7)


# -- cv_results_ ---------------------------------------------------------------------
CANDIDATES = ["clip", "linear", "spike", "stieltjes"]


def test_fold_scores_equal_each_candidate_refitted(rng):
    X = _data(rng, 90, 30)
    est = AutoShrink(candidates=CANDIDATES, cv=4).fit(X)
    res = est.cv_results_
    classes = [EigenClip, LinearShrink, SpikeShrink, StieltjesShrink]
    for j, cls in enumerate(classes):
        # scikit-learn's cross_val_score refits the candidate on each fold
        # and calls its score (mean Gaussian log-likelihood).
        want = cross_val_score(cls(), X, cv=KFold(4))
        got = [res[f"split{k}_test_score"][j] for k in range(4)]
        assert got == pytest.approx(want, rel=1e-9)
        assert res["mean_test_score"][j] == pytest.approx(np.mean(want), rel=1e-9)


def test_cv_results_layout(rng):
    X = _data(rng, 60, 12)
    est = AutoShrink(candidates=CANDIDATES, cv=3).fit(X)
    res = est.cv_results_
    m = len(CANDIDATES)
    for key in (
        "mean_test_score",
        "std_test_score",
        "rank_test_score",
        "mean_fit_time",
        "std_fit_time",
        "mean_score_time",
        "std_score_time",
        "split0_test_score",
        "split2_test_score",
    ):
        assert res[key].shape == (m,), key
    assert "split3_test_score" not in res
    assert list(res["candidate"]) == [
        "EigenClip",
        "LinearShrink",
        "SpikeShrink",
        "StieltjesShrink",
    ]
    assert res["params"] == [{"candidate": n} for n in res["candidate"]]
    assert isinstance(res["param_candidate"], np.ma.MaskedArray)
    splits = np.array([res[f"split{k}_test_score"] for k in range(3)])
    assert res["mean_test_score"] == pytest.approx(splits.mean(axis=0))
    assert res["std_test_score"] == pytest.approx(splits.std(axis=0))
    # Ranks as scikit-learn's (1 = best, ties share the smaller rank).
    order = scipy.stats.rankdata(-res["mean_test_score"], method="min")
    assert np.array_equal(res["rank_test_score"], order)
    assert est.best_index_ == int(np.argmax(res["mean_test_score"]))
    assert est.best_score_ == res["mean_test_score"][est.best_index_]
    assert est.n_splits_ == 3
    assert est.weights_.tolist() == [float(j == est.best_index_) for j in range(m)]
    assert est.blend_score_ is None


def test_contract_attributes_are_the_refitted_winner(rng):
    X = _data(rng, 80, 20)
    est = AutoShrink(candidates=["spike", "kernel"]).fit(X)
    best = type(est.best_estimator_)().fit(X)
    assert np.array_equal(est.covariance_, best.covariance_)
    assert np.array_equal(est.precision_, best.precision_)
    assert np.array_equal(est.eigenvalues_, best.eigenvalues_)
    assert np.array_equal(est.location_, best.location_)
    assert est.n_signal_ == best.n_signal_
    X_test = _data(rng, 10, 20)
    assert est.score(X_test) == best.score(X_test)
    assert np.array_equal(est.transform(X_test), best.transform(X_test))


def test_time_series_split_and_callable_scoring(rng):
    X = _data(rng, 70, 10)
    cv = TimeSeriesSplit(n_splits=3)
    est = AutoShrink(candidates=["linear", "clip"], cv=cv).fit(X)
    assert est.n_splits_ == 3
    want = cross_val_score(LinearShrink(), X, cv=cv)
    got = [est.cv_results_[f"split{k}_test_score"][0] for k in range(3)]
    assert got == pytest.approx(want, rel=1e-9)
    # A callable receives each candidate fitted on the training rows.
    seen = []

    def scorer(estimator, X_test):
        seen.append(type(estimator).__name__)
        return estimator.score(X_test)

    other = AutoShrink(candidates=["linear", "clip"], cv=cv, scoring=scorer).fit(X)
    assert sorted(set(seen)) == ["EigenClip", "LinearShrink"]
    assert other.cv_results_["mean_test_score"] == pytest.approx(
        est.cv_results_["mean_test_score"], rel=1e-9
    )


def test_min_variance_scoring_equals_the_library_scorer_refitted(rng):
    X = _data(rng, 60, 15)
    est = AutoShrink(candidates=["kernel", "spike"], scoring="min-variance", cv=3)
    res = est.fit(X).cv_results_
    for j, cls in enumerate([KernelShrink, SpikeShrink]):
        want = cross_val_score(cls(), X, cv=KFold(3), scoring=minimum_variance_scorer)
        got = [res[f"split{k}_test_score"][j] for k in range(3)]
        assert got == pytest.approx(want, rel=1e-8)


# -- determinism, parallel folds ------------------------------------------------------
def test_same_random_state_same_fit(rng):
    X = _data(rng, 50, 12)
    a = AutoShrink(candidates=["split", "spike"], random_state=3).fit(X)
    b = AutoShrink(candidates=["split", "spike"], random_state=3).fit(X)
    for key in ("split0_test_score", "mean_test_score"):
        assert np.array_equal(a.cv_results_[key], b.cv_results_[key])
    assert np.array_equal(a.covariance_, b.covariance_)
    c = AutoShrink(candidates=["split"], random_state=np.random.default_rng(1)).fit(X)
    d = AutoShrink(candidates=["split"], random_state=np.random.default_rng(1)).fit(X)
    assert np.array_equal(c.covariance_, d.covariance_)


def test_parallel_folds_give_the_same_result(rng):
    X = _data(rng, 50, 12)
    one = AutoShrink(candidates=["clip", "spike"], random_state=0).fit(X)
    two = AutoShrink(candidates=["clip", "spike"], random_state=0, n_jobs=2).fit(X)
    assert np.array_equal(
        one.cv_results_["mean_test_score"], two.cv_results_["mean_test_score"]
    )
    assert np.array_equal(one.covariance_, two.covariance_)


# -- planted cases ------------------------------------------------------------------
def test_pure_spiked_design_picks_the_spiked_model_shrinker():
    # Three spikes over flat unit noise (the spiked model of Johnstone 2001;
    # Donoho, Gavish & Johnstone 2018 derive SpikeShrink's optimal shrinker
    # for it, from memory): every other candidate distorts the flat bulk.
    design = make_design("spiked", 60, spikes=(20.0, 10.0, 5.0), random_state=0)
    X = design.sample(240, random_state=np.random.default_rng(1))
    est = AutoShrink(random_state=0).fit(X)
    assert type(est.best_estimator_) is SpikeShrink
    assert est.n_signal_ == 3


def test_mixture_design_picks_a_nonlinear_rule():
    # Ledoit & Wolf's (2012, 2020) 1/3/10 mixture, from memory: the spiked
    # model's flat bulk is wrong, linear shrinkage cannot bend the spectrum.
    design = make_design("mixture", 60, random_state=0)
    X = design.sample(240, random_state=np.random.default_rng(1))
    est = AutoShrink(random_state=0).fit(X)
    assert type(est.best_estimator_) in (KernelShrink, StieltjesShrink, SplitShrink)


# -- blending -----------------------------------------------------------------------
def test_blend_is_the_weighted_eigenvalues_of_the_candidates(rng):
    X = _data(rng, 60, 20)
    names = ["linear", "spike", "kernel"]
    est = AutoShrink(candidates=names, combine="blend").fit(X)
    w = est.weights_
    assert np.all(w >= 0) and w.sum() == pytest.approx(1.0)
    assert est.blend_score_ >= est.best_score_
    # Each candidate fitted on all rows keeps the same sample eigenvectors.
    fits = [cls().fit(X) for cls in (LinearShrink, SpikeShrink, KernelShrink)]
    want = sum(wj * f.spectrum_.to_dense() for wj, f in zip(w, fits, strict=True))
    assert np.allclose(est.covariance_, want, rtol=1e-8, atol=0)
    # one count per data set: the spectrum report's, on the same spectrum
    assert est.n_signal_ == report_count(est)
    assert type(est.best_estimator_) is type(fits[int(np.argmax(w))])


def test_blend_takes_other_bases_through_their_variances(rng):
    # LinearShrink's diagonal target has its own eigenvectors: in the blend
    # it is u_i' C u_i along the sample eigenvectors u_i (numpy reference).
    X = _data(rng, 40, 8)
    diag = LinearShrink(target="diagonal")
    est = AutoShrink(candidates=[diag, "clip"], combine="blend").fit(X)
    U = np.linalg.eigh(np.cov(X.T))[1][:, ::-1]  # descending, as rmtclean's
    projected = np.diag(U.T @ LinearShrink(target="diagonal").fit(X).covariance_ @ U)
    clip = EigenClip().fit(X).eigenvalues_
    want = est.weights_[0] * projected + est.weights_[1] * clip
    assert np.allclose(est.eigenvalues_, want, rtol=1e-9)


def test_blend_refuses_candidates_with_different_spectra(rng):
    X = _data(rng, 40, 8)
    est = AutoShrink(candidates=[EigenClip(standardize=True), "clip"], combine="blend")
    with pytest.raises(ValueError, match="share one"):
        est.fit(X)


# -- failures on small folds --------------------------------------------------------
class _NeedsTwentyRows(SpectralCovariance):
    """A cleaner that refuses fewer than 20 degrees of freedom."""

    def _clean(self, spectrum):
        if spectrum.n_samples < 20:
            raise ValueError(f"n_samples = {spectrum.n_samples} < 20")
        return CleanedEigenvalues(spectrum.eigenvalues.copy(), 1.0)


def test_a_failing_candidate_scores_minus_inf_with_a_warning(rng):
    X = _data(rng, 24, 6)  # 19 or 20 training rows in 5 folds: dof < 20
    est = AutoShrink(candidates=[_NeedsTwentyRows(), "clip"])
    with pytest.warns(
        CandidateFailedWarning, match=r"_NeedsTwentyRows failed on 5 of 5"
    ):
        est.fit(X)
    assert np.all(est.cv_results_["split0_test_score"][:1] == -np.inf)
    assert est.cv_results_["rank_test_score"].tolist() == [2, 1]
    assert type(est.best_estimator_) is EigenClip


def test_no_scorable_candidate_falls_back_to_the_first_that_fits():
    X = np.random.default_rng(0).standard_normal((2, 4))  # 1 training row
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        est = AutoShrink(candidates=["clip", "spike"]).fit(X)
    kinds = [w.category for w in caught]
    assert WeakEstimateWarning in kinds and CandidateFailedWarning not in kinds
    assert any("too small to score any candidate" in str(w.message) for w in caught)
    assert type(est.best_estimator_) is EigenClip
    assert np.all(np.isfinite(est.covariance_))


# -- parameters ---------------------------------------------------------------------
@pytest.mark.parametrize(
    "params, match",
    [
        ({"candidates": ["bogus"]}, r"'candidates' parameter of AutoShrink"),
        ({"candidates": ["auto"]}, r"cannot hold AutoShrink"),
        ({"candidates": [AutoShrink()]}, r"must list rmtclean estimators"),
        ({"candidates": [object()]}, r"must list rmtclean estimators"),
        ({"candidates": ["clip", "EigenClip"]}, r"lists 'EigenClip' more than once"),
    ],
)
def test_bad_candidates_are_refused(rng, params, match):
    with pytest.raises(ValueError, match=match):
        AutoShrink(**params).fit(_data(rng, 30, 5))


@pytest.mark.parametrize(
    "params, match",
    [
        ({"candidates": []}, r"'candidates' parameter of AutoShrink must be"),
        ({"cv": 1}, r"'cv' parameter of AutoShrink"),
        ({"scoring": "bogus"}, r"'scoring' parameter of AutoShrink"),
        ({"combine": "mean"}, r"'combine' parameter of AutoShrink"),
        ({"n_jobs": 0}, r"'n_jobs' parameter of AutoShrink"),
    ],
)
def test_bad_parameters_are_refused(rng, params, match):
    with pytest.raises(InvalidParameterError, match=match):
        AutoShrink(**params).fit(_data(rng, 30, 5))


def test_candidates_by_name_get_the_common_parameters(rng):
    X = _data(rng, 40, 6)
    est = AutoShrink(candidates=["split", "clip"], standardize=True, random_state=4)
    est.fit(X)
    split, clip = est.candidates_
    assert split.standardize and clip.standardize
    assert split.random_state == 4
    assert est.scale_ is not None


def test_describe_choice_names_the_winner_and_the_scores(rng):
    X = _data(rng, 80, 12)
    est = AutoShrink(candidates=["spike", "linear"]).fit(X)
    line = est.describe_choice()
    res = est.cv_results_
    winner = res["candidate"][est.best_index_]
    assert line.startswith(f"chosen by held-out loglik over 5 folds: {winner} (")
    assert f"{res['mean_test_score'][est.best_index_]:.6g}" in line
    blend = AutoShrink(candidates=["spike", "linear"], combine="blend").fit(X)
    assert "blend of" in blend.describe_choice()


def test_cli_clean_with_auto_says_what_it_chose(tmp_path, capsys):
    from rmtclean.cli import main

    # A common factor (a market) over noise: the held-out choice is used.
    X = _data(np.random.default_rng(0), 80, 6, spikes=(4.0,))
    path = tmp_path / "returns.csv"
    np.savetxt(path, X * 0.01, delimiter=",", header="a,b,c,d,e,f", comments="")
    assert (
        main(["clean", str(path), "--method", "auto", "--out", str(tmp_path / "c.csv")])
        == 0
    )
    assert "chosen by held-out loglik over 5 folds:" in capsys.readouterr().out
