"""Tests for rmtclean.metrics: losses, oracle, PRIAL, scorers."""

from types import SimpleNamespace

import numpy as np
import pytest
import scipy.stats
from sklearn.covariance import EmpiricalCovariance, ShrunkCovariance
from sklearn.model_selection import GridSearchCV, KFold, cross_val_score

from rmtclean.metrics import (
    frobenius_loss,
    gaussian_log_likelihood,
    minimum_variance_loss,
    minimum_variance_scorer,
    oracle_covariance,
    prial,
    stein_loss,
)


@pytest.fixture
def rng():
    return np.random.default_rng(20240601)


def _random_spd(rng, n, spread=5.0):
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    return (q * np.linspace(1.0, spread, n)) @ q.T


# ---------------------------------------------------------------- Frobenius
def test_frobenius_hand_value():
    # [computed by hand] E - S = [[1, 1], [1, 2]]: (1 + 1 + 1 + 4) / 2 = 3.5
    assert frobenius_loss([[2.0, 1.0], [1.0, 3.0]], np.eye(2)) == pytest.approx(3.5)


def test_frobenius_equals_sklearn_error_norm(rng):
    # scikit-learn 1.9.1 error_norm: ||A - B||_F^2 / p by default
    # (source [paper])
    truth = _random_spd(rng, 6)
    X = rng.standard_normal((40, 6))
    est = EmpiricalCovariance().fit(X)
    assert frobenius_loss(est.covariance_, truth) == pytest.approx(
        est.error_norm(truth), rel=1e-12
    )


# --------------------------------------------------------------------- Stein
def test_stein_hand_values():
    # [computed by hand] Ledoit & Wolf 2018, Bernoulli 24(4B), normalisation (from
    # memory): truth diag(1, 2), estimate 2 I: truth^-1 estimate = diag(2, 1), (3 - log
    # 2) / 2 - 1 = 0.5 - log(2) / 2.
    assert stein_loss(2 * np.eye(2), np.diag([1.0, 2.0])) == pytest.approx(
        0.5 - np.log(2) / 2, rel=1e-13
    )
    # truth [[2, 1], [1, 2]], estimate I: truth^-1 = [[2, -1], [-1, 2]] / 3,
    # trace 4/3, det 1/3: (4/3)/2 + log(3)/2 - 1.
    truth = np.array([[2.0, 1.0], [1.0, 2.0]])
    expected = 2 / 3 + np.log(3) / 2 - 1
    assert stein_loss(np.eye(2), truth) == pytest.approx(expected, rel=1e-13)
    # The loss is not symmetric; swapping the arguments gives 2 - log(3)/2 - 1.
    assert stein_loss(truth, np.eye(2)) == pytest.approx(1 - np.log(3) / 2, rel=1e-13)


def test_stein_matches_direct_formula(rng):
    # [computed] direct evaluation of tr(S^-1 E)/p - logdet(S^-1 E)/p - 1
    truth = _random_spd(rng, 5)
    estimate = _random_spd(rng, 5, spread=3.0)
    m = np.linalg.solve(truth, estimate)
    direct = np.trace(m) / 5 - np.linalg.slogdet(m)[1] / 5 - 1
    assert stein_loss(estimate, truth) == pytest.approx(direct, rel=1e-11)
    assert stein_loss(truth, truth) == pytest.approx(0.0, abs=1e-13)


def test_stein_singular_estimate_is_infinite(rng):
    X = rng.standard_normal((3, 5))
    singular = X.T @ X
    assert stein_loss(singular, np.eye(5)) == np.inf


def test_stein_errors():
    with pytest.raises(ValueError, match="'truth' argument of stein_loss must be"):
        stein_loss(np.eye(2), np.diag([1.0, -1.0]))
    with pytest.raises(ValueError, match="'estimate' argument of stein_loss.*semi"):
        stein_loss(np.diag([1.0, -1.0]), np.eye(2))


# ------------------------------------------------------------ minimum variance
def test_minimum_variance_hand_values():
    # [computed by hand] Ledoit & Wolf 2017, Rev. Financial Stud. 30(12) (from memory).
    # truth diag(1, 3), E = diag(1, 2): E^-1 = diag(1, 1/2);
    # tr(E^-1 S E^-1)/2 = (1 + 3/4)/2 = 7/8, (tr(E^-1)/2)^2 = 9/16,
    # 1/(tr(S^-1)/2) = 3/2: 14/9 - 3/2 = 1/18.
    assert minimum_variance_loss(
        np.diag([1.0, 2.0]), np.diag([1.0, 3.0])
    ) == pytest.approx(1 / 18, rel=1e-13)


def test_minimum_variance_properties(rng):
    # [computed] zero at E proportional to truth, scale invariant, and
    # non-negative (Cauchy-Schwarz).
    truth = _random_spd(rng, 6)
    assert minimum_variance_loss(3.0 * truth, truth) == pytest.approx(0, abs=1e-12)
    estimate = _random_spd(rng, 6)
    loss = minimum_variance_loss(estimate, truth)
    assert loss > 0
    assert minimum_variance_loss(7.0 * estimate, truth) == pytest.approx(loss)


# ---------------------------------------------------------- log-likelihood
def test_log_likelihood_matches_scipy(rng):
    # scipy.stats.multivariate_normal.logpdf (reference library)
    cov = _random_spd(rng, 4)
    loc = rng.standard_normal(4)
    X = rng.standard_normal((30, 4))
    expected = scipy.stats.multivariate_normal(loc, cov).logpdf(X).mean()
    got = gaussian_log_likelihood(X, cov, location=loc)
    assert got == pytest.approx(expected, rel=1e-12)
    expected0 = scipy.stats.multivariate_normal(np.zeros(4), cov).logpdf(X).mean()
    assert gaussian_log_likelihood(X, cov) == pytest.approx(expected0, rel=1e-12)


def test_log_likelihood_matches_sklearn_score(rng):
    # scikit-learn 1.9.1 EmpiricalCovariance.score (source [paper])
    X = rng.standard_normal((60, 5))
    est = EmpiricalCovariance().fit(X[:40])
    got = gaussian_log_likelihood(X[40:], est.covariance_, location=est.location_)
    assert got == pytest.approx(est.score(X[40:]), rel=1e-12)


def test_log_likelihood_errors():
    with pytest.raises(ValueError, match="'covariance' argument of gaussian_log"):
        gaussian_log_likelihood(np.zeros((3, 2)), np.eye(3))
    with pytest.raises(ValueError, match="'location' argument.*shape \\(2,\\)"):
        gaussian_log_likelihood(np.zeros((3, 2)), np.eye(2), location=np.zeros(3))
    with pytest.raises(ValueError, match="positive definite"):
        gaussian_log_likelihood(np.zeros((3, 2)), np.zeros((2, 2)))


# -------------------------------------------------------------------- oracle
def test_oracle_matches_direct_evaluation(rng):
    # Ledoit & Wolf 2012, Ann. Statist. 40(2) (from memory): U diag(u'Su) U'
    truth = _random_spd(rng, 5)
    X = rng.standard_normal((30, 5)) @ np.linalg.cholesky(truth).T + 3.0
    sample = np.cov(X, rowvar=False)  # demeaned, divisor T - 1
    _, u = np.linalg.eigh(sample)
    direct = u @ np.diag(np.diag(u.T @ truth @ u)) @ u.T
    oracle, values = oracle_covariance(X, truth, return_eigenvalues=True)
    np.testing.assert_allclose(oracle, direct, atol=1e-12)
    np.testing.assert_allclose(
        np.sort(values), np.sort(np.diag(u.T @ truth @ u)), rtol=1e-12
    )
    # Stein variant: 1 / (u' S^-1 u) (LW 2018 Bernoulli, from memory)
    inv = np.linalg.inv(truth)
    direct_stein = u @ np.diag(1 / np.diag(u.T @ inv @ u)) @ u.T
    np.testing.assert_allclose(
        oracle_covariance(X, truth, loss="stein"), direct_stein, atol=1e-12
    )


def test_oracle_values_follow_descending_sample_order(rng):
    truth = _random_spd(rng, 4)
    X = rng.standard_normal((25, 4))
    _, values = oracle_covariance(X, truth, return_eigenvalues=True)
    lam, u = np.linalg.eigh(np.cov(X, rowvar=False))
    expected = np.diag(u.T @ truth @ u)[np.argsort(lam)[::-1]]
    np.testing.assert_allclose(values, expected, rtol=1e-12)


def test_oracle_assume_centered_uses_uncentred_eigenvectors(rng):
    truth = _random_spd(rng, 4)
    X = rng.standard_normal((20, 4)) + 2.0
    _, u = np.linalg.eigh(X.T @ X / 20)
    direct = u @ np.diag(np.diag(u.T @ truth @ u)) @ u.T
    got = oracle_covariance(X, truth, assume_centered=True)
    np.testing.assert_allclose(got, direct, atol=1e-12)


@pytest.mark.parametrize("loss", ["frobenius", "stein"])
def test_oracle_minimises_its_loss_over_u_d_ut(rng, loss):
    # [computed] no perturbation of d lowers the loss the oracle is built for;
    # the Frobenius oracle also minimises the (scale-free) MV loss
    # (Ledoit & Wolf 2017, Rev. Financial Stud. 30(12), from memory).
    truth = _random_spd(rng, 6)
    X = rng.standard_normal((15, 6)) @ np.linalg.cholesky(truth).T
    oracle, d = oracle_covariance(X, truth, loss=loss, return_eigenvalues=True)
    lam, u = np.linalg.eigh(np.cov(X, rowvar=False))
    u = u[:, ::-1]
    loss_fn = frobenius_loss if loss == "frobenius" else stein_loss
    best = loss_fn(oracle, truth)
    best_mv = minimum_variance_loss(oracle, truth)
    for _ in range(50):
        d_new = d * np.exp(0.05 * rng.standard_normal(6))
        other = (u * d_new) @ u.T
        assert loss_fn(other, truth) > best
        if loss == "frobenius":
            assert minimum_variance_loss(other, truth) > best_mv
    assert frobenius_loss(oracle, truth) < frobenius_loss(np.cov(X.T), truth)


@pytest.mark.parametrize("loss", ["frobenius", "stein"])
def test_oracle_rank_deficient_null_block(rng, loss):
    # N > T - 1: the null space gets one value, the optimum over the block
    # [computed]: the mean of u'Su (Frobenius) or harmonic form (Stein) over
    # any orthonormal null basis, and perturbing it raises the loss.
    truth = _random_spd(rng, 8)
    X = rng.standard_normal((5, 8)) @ np.linalg.cholesky(truth).T
    oracle, d = oracle_covariance(X, truth, loss=loss, return_eigenvalues=True)
    lam, u = np.linalg.eigh(np.cov(X, rowvar=False))
    null = u[:, :4]  # rank is T - 1 = 4, the 4 smallest are the null space
    if loss == "frobenius":
        expected_null = np.mean(np.diag(null.T @ truth @ null))
    else:
        expected_null = 1 / np.mean(np.diag(null.T @ np.linalg.inv(truth) @ null))
    np.testing.assert_allclose(d[4:], expected_null, rtol=1e-10)
    loss_fn = frobenius_loss if loss == "frobenius" else stein_loss
    best = loss_fn(oracle, truth)
    for factor in (0.97, 1.03):
        d_new = d.copy()
        d_new[4:] *= factor
        other = (u[:, ::-1] * d_new) @ u[:, ::-1].T
        assert loss_fn(other, truth) > best


def test_oracle_of_identity_is_identity(rng):
    X = rng.standard_normal((10, 4))
    np.testing.assert_allclose(oracle_covariance(X, np.eye(4)), np.eye(4), atol=1e-13)


def test_oracle_errors(rng):
    X = rng.standard_normal((10, 3))
    with pytest.raises(ValueError, match="'true_covariance'.*shape \\(3, 3\\)"):
        oracle_covariance(X, np.eye(4))
    with pytest.raises(ValueError, match="'true_covariance'.*symmetric"):
        oracle_covariance(X, np.triu(np.ones((3, 3))))
    with pytest.raises(ValueError, match="'true_covariance'.*square"):
        oracle_covariance(X, np.ones((3, 2)))
    with pytest.raises(ValueError, match="'loss' parameter of oracle_covariance"):
        oracle_covariance(X, np.eye(3), loss="spectral")
    with pytest.raises(ValueError, match="at least 2 samples"):
        oracle_covariance(X[:1], np.eye(3))
    with pytest.raises(ValueError, match="X of oracle_covariance contains NaN"):
        oracle_covariance(np.full((4, 3), np.nan), np.eye(3))


# --------------------------------------------------------------------- PRIAL
def test_prial_hand_values():
    # Ledoit & Wolf 2012, Ann. Statist. 40(2) (from memory): ratio of averages.
    # [computed by hand] means 4, 6, 3.5: (6 - 4)/(6 - 3.5) = 80%; the mean of
    # per-repetition ratios would be (75% + 100%)/2 = 87.5%.
    assert prial([2.0, 6.0], [5.0, 7.0], [1.0, 6.0]) == pytest.approx(80.0)
    sample, oracle = [3.0, 4.0, 5.0], [1.0, 1.5, 2.0]
    assert prial(sample, sample, oracle) == 0.0
    assert prial(oracle, sample, oracle) == pytest.approx(100.0)


def test_prial_errors():
    with pytest.raises(ValueError, match="same length"):
        prial([1.0], [2.0, 3.0], [0.0, 0.0])
    with pytest.raises(ValueError, match="exceed"):
        prial([1.0], [1.0], [2.0])
    with pytest.raises(ValueError, match="'losses_oracle'.*finite"):
        prial([1.0], [2.0], [np.nan])


# ------------------------------------------------------------- shared checks
@pytest.mark.parametrize("loss", [frobenius_loss, stein_loss, minimum_variance_loss])
def test_loss_input_validation(loss):
    name = loss.__name__
    with pytest.raises(ValueError, match=f"same shape.*{name}|{name}.*same shape"):
        loss(np.eye(2), np.eye(3))
    with pytest.raises(ValueError, match=f"'estimate' argument of {name}.*square"):
        loss(np.ones((2, 3)), np.eye(2))
    with pytest.raises(ValueError, match=f"'truth' argument of {name}.*symmetric"):
        loss(np.eye(2), np.array([[1.0, 0.5], [0.0, 1.0]]))
    with pytest.raises(TypeError, match="real numeric"):
        loss(np.eye(2, dtype=complex), np.eye(2))


# ------------------------------------------------------------------- scorer
def test_minimum_variance_scorer_hand_value():
    # [computed by hand] P = diag(1, 1/4): w = (1, 1/4)/1.25 = (0.8, 0.2);
    # returns 0.8 + 0.4 = 1.2 and -0.8: -(1.44 + 0.64)/2 = -1.04.
    est = SimpleNamespace(covariance_=np.diag([1.0, 4.0]), location_=np.zeros(2))
    got = minimum_variance_scorer(est, np.array([[1.0, 2.0], [-1.0, 0.0]]))
    assert got == pytest.approx(-1.04, rel=1e-13)
    # centred at location_: shifting location and data together changes nothing
    est.location_ = np.array([1.0, 1.0])
    got = minimum_variance_scorer(est, np.array([[2.0, 3.0], [0.0, 1.0]]))
    assert got == pytest.approx(-1.04, rel=1e-13)


def test_minimum_variance_scorer_in_model_selection(rng):
    X = rng.standard_normal((90, 5)) @ np.linalg.cholesky(_random_spd(rng, 5)).T
    cv = KFold(3)
    scores = cross_val_score(
        ShrunkCovariance(shrinkage=0.3), X, cv=cv, scoring=minimum_variance_scorer
    )
    for score, (train, test) in zip(scores, cv.split(X), strict=True):
        est = ShrunkCovariance(shrinkage=0.3).fit(X[train])
        w = np.linalg.solve(est.covariance_, np.ones(5))
        w /= w.sum()
        r = (X[test] - est.location_) @ w
        assert score == pytest.approx(-np.mean(r**2), rel=1e-12)
    search = GridSearchCV(
        ShrunkCovariance(),
        {"shrinkage": [0.0, 0.5, 1.0]},
        cv=cv,
        scoring=minimum_variance_scorer,
    ).fit(X)
    assert search.best_params_["shrinkage"] in (0.0, 0.5, 1.0)
    assert np.isfinite(search.best_score_)


def test_minimum_variance_scorer_from_spectrum(rng):
    # store_covariance=False: the scorer uses spectrum_.solve, same result.
    from rmtclean import SplitShrink

    X = rng.standard_normal((80, 6))
    dense = SplitShrink(random_state=0).fit(X[:60])
    lean = SplitShrink(random_state=0, store_covariance=False).fit(X[:60])
    assert lean.covariance_ is None
    assert minimum_variance_scorer(lean, X[60:]) == pytest.approx(
        minimum_variance_scorer(dense, X[60:]), rel=1e-10
    )


def test_minimum_variance_scorer_errors():
    with pytest.raises(TypeError, match="'covariance_' attribute"):
        minimum_variance_scorer(object(), np.zeros((2, 2)))
    est = SimpleNamespace(covariance_=np.eye(3))
    with pytest.raises(ValueError, match="3 features"):
        minimum_variance_scorer(est, np.zeros((4, 2)))
