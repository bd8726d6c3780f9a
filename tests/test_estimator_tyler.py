"""TylerShrink and the robust shape rules (rmtclean.rules._tyler).

Sources: Tyler (1987, Ann. Statist. 15(1)) fixed point and the shrinkage
iteration and plug-in intensity of Chen, Wiesel & Hero (2011, IEEE Trans.
Signal Process. 59(9)) as transcribed by third-party code citing the paper
(not read in the paper itself): both are written out in numpy inside the
tests. Multivariate t rows z / sqrt(w / nu), w ~ chi2(nu) (Kotz &
Nadarajah 2004, from memory) come from rmtclean.synthetic.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.stats

from rmtclean import EigenClip, KernelShrink, LinearShrink, TylerShrink
from rmtclean.estimators import find_cleaner
from rmtclean.estimators._tyler import _SIGN_RULES
from rmtclean.exceptions import NotConvergedWarning
from rmtclean.metrics import frobenius_loss
from rmtclean.rules import (
    chen_wiesel_hero_intensity,
    robust_variance_level,
    spatial_signs,
    tyler_shape,
)
from rmtclean.rules._tyler import _weighted_median
from rmtclean.synthetic import make_design

pytestmark = pytest.mark.filterwarnings(
    "ignore::rmtclean.exceptions.RankDeficientWarning"
)


def _t_rows(n_rows, scales, seed, df=3.0):
    rng = np.random.default_rng(seed)
    Z = rng.standard_normal((n_rows, len(scales))) * np.sqrt(scales)
    return Z / np.sqrt(rng.chisquare(df, size=(n_rows, 1)) / df)


def _direct_tyler(X, rho, n_iter=3000):
    """Tyler / Chen-Wiesel-Hero iteration written out with numpy.linalg.inv."""
    n, p = X.shape
    V = np.eye(p)
    for _ in range(n_iter):
        q = np.einsum("ij,jk,ik->i", X, np.linalg.inv(V), X)
        V = (1.0 - rho) * (p / n) * (X.T / q) @ X + rho * np.eye(p)
        V *= p / np.trace(V)
    return V


def _shape(est):
    C = est.covariance_
    return C * (C.shape[0] / np.trace(C))


@pytest.mark.parametrize("rho", [0.0, 0.3])
def test_fixed_point_matches_a_direct_iteration(rho):
    X = _t_rows(40, [4.0, 2.0, 1.0, 1.0, 0.5], seed=1)
    ref = _direct_tyler(X, rho)
    est = TylerShrink(rule="fixed-point", shrinkage=rho, assume_centered=True).fit(X)
    np.testing.assert_allclose(_shape(est), ref, rtol=1e-8, atol=1e-9)
    np.testing.assert_allclose(est.shape_eigenvalues_.sum(), 5.0, rtol=1e-12)
    assert est.shrinkage_ == rho and 1 < est.n_iter_ < 1000
    # The rule function is the same fixed point.
    shape = tyler_shape(X, shrinkage=rho)
    np.testing.assert_allclose(shape.to_dense(), ref, rtol=1e-8, atol=1e-9)


def test_fixed_point_gram_route_equals_the_dense_route():
    # N > T: the T x T Woodbury iteration against the N x N one.
    X = _t_rows(30, np.linspace(3.0, 0.5, 45), seed=2)
    dense = tyler_shape(X, shrinkage=0.4, route="dense")
    gram = tyler_shape(X, shrinkage=0.4, route="gram")
    assert gram.null_value is not None and gram.eigenvectors.shape[1] < 45
    np.testing.assert_allclose(gram.to_dense(), dense.to_dense(), atol=1e-9)
    np.testing.assert_allclose(gram.to_dense(), _direct_tyler(X, 0.4), atol=1e-8)
    a = TylerShrink(rule="fixed-point", route="dense").fit(X).covariance_
    b = TylerShrink(rule="fixed-point", route="gram").fit(X).covariance_
    np.testing.assert_allclose(b, a, rtol=1e-7, atol=1e-9 * np.abs(a).max())


@pytest.mark.parametrize("assume_centered", [True, False])
def test_chen_wiesel_hero_intensity_against_its_formula(assume_centered):
    X = _t_rows(60, np.linspace(2.0, 0.5, 12), seed=3) + 0.2
    est = TylerShrink(rule="fixed-point", assume_centered=assume_centered).fit(X)
    Xc = X if assume_centered else X - X.mean(axis=0)
    n, p = len(X) - (0 if assume_centered else 1), X.shape[1]
    U = Xc / np.linalg.norm(Xc, axis=1, keepdims=True)
    R = (p / len(X)) * U.T @ U  # tr R = p
    tr2 = np.trace(R @ R)
    rho = (p**2 + (1 - 2 / p) * tr2) / (
        (1 - n / p - 2 * n / p**2) * p**2 + (n + 1 + 2 * (n - 1) / p) * tr2
    )
    assert 0 < rho < 1
    assert est.shrinkage_ == pytest.approx(min(rho, 1.0), rel=1e-12)
    vals = np.linalg.eigvalsh(R)
    assert chen_wiesel_hero_intensity(vals, n, p) == pytest.approx(rho, rel=1e-12)
    # Only the ratios of the eigenvalues matter; one feature: rho = 1.
    assert chen_wiesel_hero_intensity(7 * vals, n, p) == pytest.approx(rho, rel=1e-12)
    assert chen_wiesel_hero_intensity([3.0], 10, 1) == 1.0


@pytest.mark.parametrize("rule", ["kernel", "fixed-point"])
def test_scale_and_permutation_equivariance(rule):
    X = _t_rows(80, np.linspace(3.0, 0.5, 20), seed=4)
    base = TylerShrink(rule=rule).fit(X).covariance_
    for c in (1e-120, 3.7, 2e100):
        scaled = TylerShrink(rule=rule).fit(X * c).covariance_
        np.testing.assert_allclose(scaled / c**2, base, rtol=1e-8, atol=0)
    perm = np.random.default_rng(5).permutation(20)
    moved = TylerShrink(rule=rule).fit(X[:, perm]).covariance_
    np.testing.assert_allclose(moved, base[np.ix_(perm, perm)], rtol=1e-8, atol=0)
    q, _ = np.linalg.qr(np.random.default_rng(6).standard_normal((20, 20)))
    rotated = TylerShrink(rule=rule).fit(X @ q).covariance_
    np.testing.assert_allclose(rotated, q.T @ base @ q, atol=1e-8 * np.abs(base).max())


# -- accuracy on heavy-tailed and Gaussian data -----------------------------------
DESIGNS = {"1/3/10": ("mixture", {}), "toeplitz": ("toeplitz", {"rho": 0.5})}
SEEDS = range(4)


def _shape_loss(C, truth):
    """Frobenius loss (tr((A - B)^2) / N, Ledoit & Wolf's) of the trace-N shapes."""
    p = truth.shape[0]
    return frobenius_loss(C * (p / np.trace(C)), truth * (p / np.trace(truth)))


def _mean_losses(design, distribution, **kw):
    losses = {"tyler": [], "linear": [], "kernel": []}
    for seed in SEEDS:
        X = design.sample(200, distribution=distribution, random_state=seed, **kw)
        truth = design.covariance
        losses["tyler"].append(_shape_loss(TylerShrink().fit(X).covariance_, truth))
        losses["linear"].append(_shape_loss(LinearShrink().fit(X).covariance_, truth))
        losses["kernel"].append(_shape_loss(KernelShrink().fit(X).covariance_, truth))
    return {k: float(np.mean(v)) for k, v in losses.items()}


@pytest.mark.parametrize("name", list(DESIGNS))
def test_heavy_tails_shape_loss(name):
    # Multivariate t, 3 degrees of freedom, N = 100, T = 200, mean over 4
    # seeds. Measured [computed]: tyler/linear 0.48 (1/3/10) and 0.50
    # (Toeplitz), tyler/kernel 0.03 and 0.04.
    kind, params = DESIGNS[name]
    design = make_design(kind, 100, **params)
    m = _mean_losses(design, "multivariate-t", df=3.0)
    assert m["tyler"] <= 0.6 * m["linear"], m
    assert m["tyler"] <= 0.25 * m["kernel"], m


@pytest.mark.parametrize("name", list(DESIGNS))
def test_gaussian_shape_loss_close_to_kernel(name):
    # Gaussian rows: nothing to gain, little to lose; measured ratio 1.00-1.01.
    kind, params = DESIGNS[name]
    m = _mean_losses(make_design(kind, 100, **params), "gaussian")
    assert m["tyler"] <= 1.1 * m["kernel"], m


# -- the pieces ----------------------------------------------------------------------
def test_sign_rules_are_the_registry_cleaners():
    for short, cls in _SIGN_RULES.items():
        assert find_cleaner(short).cls is cls


def test_other_rules_are_the_registry_cleaner_on_the_signs(rng):
    X = _t_rows(90, np.linspace(4.0, 0.5, 25), seed=7)
    U = spatial_signs(X)
    np.testing.assert_allclose(np.linalg.norm(U, axis=1), 5.0, rtol=1e-14)
    for rule in ["kernel", "stieltjes", "linear", "clip", "spike"]:
        # One pass: the cleaner on the spatial signs, not reweighted.
        with pytest.warns(NotConvergedWarning):
            est = TylerShrink(rule=rule, assume_centered=True, max_iter=1).fit(X)
        ref = find_cleaner(rule).cls(assume_centered=True).fit(U).covariance_
        np.testing.assert_allclose(
            _shape(est), ref * (25 / np.trace(ref)), rtol=1e-9, atol=1e-12
        )
        assert type(est.rule_estimator_) is find_cleaner(rule).cls
    with pytest.warns(NotConvergedWarning):
        clip = TylerShrink(rule="clip", max_iter=1).fit(X)
    assert (
        clip.n_signal_ == EigenClip().fit(spatial_signs(X - X.mean(axis=0))).n_signal_
    )


@pytest.mark.parametrize("rule", ["kernel", "linear", "stieltjes"])
def test_cleaner_rules_reach_tylers_fixed_point(rule):
    # At the fixed point V, cleaning the sample covariance of the rows
    # sqrt(N / d_i) u_i, d_i = u_i' V^{-1} u_i (Tyler's weights), gives V
    # back (trace N), written out with numpy and the registry cleaner.
    design = make_design("block-factor", 30, random_state=0)
    X = design.sample(120, distribution="multivariate-t", df=3.0, random_state=1)
    est = TylerShrink(rule=rule, assume_centered=True).fit(X)
    V = _shape(est)
    U = spatial_signs(X)
    d = np.einsum("ij,ij->i", U, np.linalg.solve(V, U.T).T)
    Y = U * np.sqrt(30 / d)[:, None]
    again = find_cleaner(rule).cls(assume_centered=True).fit(Y).covariance_
    np.testing.assert_allclose(again * (30 / np.trace(again)), V, atol=1e-8)
    assert 2 < est.n_iter_ < 200


def test_reweighting_repairs_a_strong_common_factor():
    # A market factor dominates the row norms: the spatial signs alone
    # distort the shape; Tyler's reweighting restores KernelShrink's
    # accuracy on Gaussian rows (measured: 1.5 against 0.30, [computed]).
    design = make_design("block-factor", 100, n_blocks=6, random_state=1)
    X = design.sample(250, random_state=0)
    truth = design.covariance
    with pytest.warns(NotConvergedWarning):
        one_pass = _shape_loss(TylerShrink(max_iter=1).fit(X).covariance_, truth)
    fixed = _shape_loss(TylerShrink().fit(X).covariance_, truth)
    kernel = _shape_loss(KernelShrink().fit(X).covariance_, truth)
    assert fixed <= 1.1 * kernel < one_pass


def test_spatial_signs_keep_zero_rows():
    U = spatial_signs(
        np.array([[0.0, 0.0, 0.0], [1e-200, 0.0, 0.0], [2e200, 2e200, 0]])
    )
    np.testing.assert_allclose(
        U, [[0, 0, 0], [np.sqrt(3), 0, 0], [np.sqrt(1.5)] * 2 + [0]]
    )


def test_robust_level_is_gaussian_consistent():
    # Gaussian rows of covariance s V: the level recovers s (Satterthwaite's
    # approximation of the median of a chi-square mixture; 1% at N = 50).
    design = make_design("mixture", 50)
    X = design.sample(20000, random_state=1)
    V = design.eigenvalues * (50 / design.eigenvalues.sum())
    level = robust_variance_level(np.sum(X * X, axis=1), V, 50)
    assert level == pytest.approx(design.eigenvalues.mean(), rel=0.01)
    # One feature: exactly the median of x^2 over that of chi2(1).
    x = np.random.default_rng(2).standard_normal(10001) * 3.0
    got = robust_variance_level(x * x, [1.0], 1)
    assert got == pytest.approx(
        np.median(x * x) / scipy.stats.chi2.median(1), rel=1e-12
    )


def test_robust_level_of_a_multivariate_t_is_the_gaussian_core():
    # t3 rows with unit covariance: the median of 3/chi2_3 over 3, i.e.
    # 1/med(chi2_3) = 0.4227 [computed with scipy below], for large N.
    design = make_design("identity", 200)
    X = design.sample(4000, distribution="multivariate-t", df=3.0, random_state=3)
    est = TylerShrink().fit(X)
    expected = 1.0 / scipy.stats.chi2.median(3)
    assert est.variance_level_ == pytest.approx(expected, rel=0.05)
    sample = TylerShrink(scale_estimate="sample").fit(X)
    assert sample.variance_level_ == pytest.approx(
        np.trace(np.cov(X.T)) / 200, rel=1e-10
    )


def test_weighted_median_is_the_median_of_repeated_values(rng):
    values = rng.standard_normal(9)
    weights = rng.integers(0, 4, size=9).astype(float)
    weights[0] = 1.0
    repeated = np.repeat(values, weights.astype(int))
    assert _weighted_median(values, weights) == np.median(repeated)
    assert _weighted_median(np.array([1.0, 2.0]), np.array([1.0, 1.0])) == 1.5


@pytest.mark.parametrize("rule", ["kernel", "fixed-point"])
def test_integer_weights_repeat_rows(rule):
    X = _t_rows(50, np.linspace(2.0, 0.5, 10), seed=8)
    w = np.random.default_rng(9).integers(0, 3, size=50)
    weighted = TylerShrink(rule=rule).fit(X, sample_weight=w).covariance_
    repeated = TylerShrink(rule=rule).fit(np.repeat(X, w, axis=0)).covariance_
    np.testing.assert_allclose(weighted, repeated, rtol=1e-8, atol=1e-12)


def test_wide_data_on_the_gram_route(rng):
    X = _t_rows(40, np.linspace(3.0, 0.5, 120), seed=10)
    for rule in ["kernel", "fixed-point"]:
        est = TylerShrink(rule=rule, store_covariance=False).fit(X)
        assert est.spectrum_.has_null_space and est.covariance_ is None
        dense = TylerShrink(rule=rule, route="dense").fit(X).covariance_
        np.testing.assert_allclose(
            est.spectrum_.to_dense(), dense, rtol=1e-7, atol=1e-9 * np.abs(dense).max()
        )


@pytest.mark.parametrize("rule", ["kernel", "fixed-point"])
def test_non_convergence_warns(rule):
    X = _t_rows(60, np.linspace(2.0, 0.5, 10), seed=11)
    with pytest.warns(NotConvergedWarning, match="did not converge"):
        est = TylerShrink(rule=rule, max_iter=2).fit(X)
    assert est.n_iter_ == 2


def test_with_volatility_scaling():
    # A volatility regime shared by all series plus t3 tails: both remedies
    # compose; the output is the forecast-scaled correlation shape.
    design = make_design("toeplitz", 30, rho=0.5)
    X = design.sample(300, distribution="multivariate-t", df=3.0, random_state=12)
    X[150:] *= 3.0
    est = TylerShrink(vol_half_life=11.2).fit(X)
    C = est.covariance_ / np.outer(est.volatility_, est.volatility_)
    assert np.all(np.isfinite(C)) and np.linalg.eigvalsh(C).min() > 0
    # The forecast sees the tripled regime (t3 tails make it noisy).
    assert np.median(est.volatility_) > 2.0
