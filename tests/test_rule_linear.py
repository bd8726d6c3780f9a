"""Tests of rmtclean.rules._linear: linear shrinkage, its targets and intensities."""

import numpy as np
import pytest
from sklearn.covariance import (
    OAS,
    LedoitWolf,
    ShrunkCovariance,
    ledoit_wolf,
    ledoit_wolf_shrinkage,
    oas,
)

from rmtclean.rules._linear import (
    _intensity,
    linear_shrink,
    linear_shrink_covariance,
    shrinkage_intensity,
    shrinkage_target,
)

# (n_samples T, n_features N): T > N, T < N, T = N, N = 1, N = 2.
SHAPES = [(60, 8), (25, 70), (40, 40), (30, 1), (15, 2)]
RTOL = 1e-10


def _data(rng, T, N, *, shift=2.0):
    """Correlated, non-centred, heavy-ish tailed data."""
    A = rng.standard_normal((N, N)) / np.sqrt(N) + np.eye(N)
    Z = rng.standard_t(df=6, size=(T, N))
    return Z @ A + shift * rng.standard_normal(N)


def _centred(X, assume_centered):
    return X if assume_centered else X - X.mean(axis=0)


# -- naive references written out in full (O(N^2 T) and more) -------------
def _naive_pi(Xc, S):
    """pi_ij = (1/n) sum_t (x_ti x_tj - s_ij)^2 (Ledoit & Wolf 2003, 2004), n = T."""
    T = Xc.shape[0]
    outer = Xc[:, :, None] * Xc[:, None, :] - S[None]
    return np.einsum("tij,tij->ij", outer, outer) / T


def _naive_constant_correlation(Xc):
    """Intensity and target as written in Ledoit & Wolf (2004), "Honey, I shrunk
    the sample covariance matrix", J. Portfolio Management 30(4), appendix
    (from memory): kappa = (pi - rho) / gamma, delta = max(0, min(1, kappa / T))."""
    T, N = Xc.shape
    S = Xc.T @ Xc / T
    var = np.diag(S)
    sd = np.sqrt(var)
    rbar = (np.sum(S / np.outer(sd, sd)) - N) / (N * (N - 1))
    F = rbar * np.outer(sd, sd)
    np.fill_diagonal(F, var)
    pi = _naive_pi(Xc, S)
    theta = np.empty((N, N))
    for i in range(N):
        for j in range(N):
            theta[i, j] = np.mean(
                (Xc[:, i] ** 2 - S[i, i]) * (Xc[:, i] * Xc[:, j] - S[i, j])
            )
    off = ~np.eye(N, dtype=bool)
    rho = np.trace(pi) + rbar / 2 * np.sum(
        (np.sqrt(var[None, :] / var[:, None]) * theta)[off]
        + (np.sqrt(var[:, None] / var[None, :]) * theta.T)[off]
    )
    gamma = np.sum((F - S) ** 2)
    return max(0.0, min(1.0, (pi.sum() - rho) / gamma / T)), F


# -- identity target: scikit-learn equality ---------------------------------
@pytest.mark.parametrize("shape", SHAPES)
@pytest.mark.parametrize("assume_centered", [False, True])
def test_ledoit_wolf_equals_sklearn(rng, shape, assume_centered):
    # scikit-learn 1.9.1 ledoit_wolf / ledoit_wolf_shrinkage / LedoitWolf
    # (scikit-learn 1.9.1 source [paper]): S = X'X / n with divisor n.
    X = _data(rng, *shape)
    cov, delta = linear_shrink_covariance(X, assume_centered=assume_centered)
    ref_cov, ref_delta = ledoit_wolf(X, assume_centered=assume_centered)
    est = LedoitWolf(assume_centered=assume_centered).fit(X)
    assert delta == pytest.approx(ref_delta, rel=RTOL, abs=1e-300)
    assert delta == pytest.approx(est.shrinkage_, rel=RTOL, abs=1e-300)
    assert delta == pytest.approx(
        ledoit_wolf_shrinkage(X, assume_centered=assume_centered), rel=RTOL, abs=1e-300
    )
    assert shrinkage_intensity(X, assume_centered=assume_centered) == pytest.approx(
        ref_delta, rel=RTOL, abs=1e-300
    )
    np.testing.assert_allclose(cov, ref_cov, rtol=RTOL, atol=0)
    np.testing.assert_allclose(cov, est.covariance_, rtol=RTOL, atol=0)
    if shape[1] > 1:
        assert 0.0 < delta < 1.0  # the comparison is not the trivial delta = 0


@pytest.mark.parametrize("shape", SHAPES)
@pytest.mark.parametrize("assume_centered", [False, True])
def test_oas_sklearn_variant_equals_sklearn(rng, shape, assume_centered):
    # scikit-learn 1.9.1 oas / OAS (source [paper]): eq. (23) of
    # Chen et al. (2010) without its 2/p terms.
    X = _data(rng, *shape)
    cov, delta = linear_shrink_covariance(
        X, intensity="oas-sklearn", assume_centered=assume_centered
    )
    ref_cov, ref_delta = oas(X, assume_centered=assume_centered)
    est = OAS(assume_centered=assume_centered).fit(X)
    assert delta == pytest.approx(ref_delta, rel=RTOL, abs=1e-300)
    assert delta == pytest.approx(est.shrinkage_, rel=RTOL, abs=1e-300)
    np.testing.assert_allclose(cov, ref_cov, rtol=RTOL, atol=0)
    np.testing.assert_allclose(cov, est.covariance_, rtol=RTOL, atol=0)


@pytest.mark.parametrize("shape", SHAPES)
@pytest.mark.parametrize("assume_centered", [False, True])
def test_fixed_intensity_equals_shrunk_covariance(rng, shape, assume_centered):
    # scikit-learn 1.9.1 ShrunkCovariance: (1 - s) S + s mu I, mu = tr(S)/p [paper].
    X = _data(rng, *shape)
    cov, delta = linear_shrink_covariance(
        X, intensity=0.3, assume_centered=assume_centered
    )
    ref = ShrunkCovariance(shrinkage=0.3, assume_centered=assume_centered).fit(X)
    assert delta == 0.3
    np.testing.assert_allclose(cov, ref.covariance_, rtol=RTOL, atol=0)


def _oas_eq23(S, n):
    """Chen, Wiesel, Eldar & Hero (2010), IEEE TSP 58(10), eq. (23), written out
    (formula from memory; equation number per sklearn)."""
    p = S.shape[0]
    tr_s2 = np.trace(S @ S)
    tr2_s = np.trace(S) ** 2
    num = (1 - 2 / p) * tr_s2 + tr2_s
    den = (n + 1 - 2 / p) * (tr_s2 - tr2_s / p)
    return min(num / den, 1.0)


@pytest.mark.parametrize("shape", [s for s in SHAPES if s[1] > 1])
@pytest.mark.parametrize("assume_centered", [False, True])
def test_oas_is_equation_23(rng, shape, assume_centered):
    X = _data(rng, *shape)
    Xc = _centred(X, assume_centered)
    n = X.shape[0]
    S = Xc.T @ Xc / n
    rho = _oas_eq23(S, n)
    cov, delta = linear_shrink_covariance(
        X, intensity="oas", assume_centered=assume_centered
    )
    assert delta == pytest.approx(rho, rel=RTOL)
    mu = np.trace(S) / S.shape[0]
    np.testing.assert_allclose(
        cov, (1 - rho) * S + rho * mu * np.eye(S.shape[0]), rtol=RTOL, atol=0
    )


def test_oas_variants_differ_at_small_p(rng):
    # Chen et al. 2010 eq. (23) vs scikit-learn 1.9.1 [computed]: the gap is about 1e-2
    # at n = 40, p = 10.
    X = rng.standard_normal((40, 10))
    _, paper = linear_shrink_covariance(X, intensity="oas")
    _, sk = linear_shrink_covariance(X, intensity="oas-sklearn")
    assert 1e-3 < abs(paper - sk) < 5e-2


def test_single_feature_is_the_sample_variance(rng):
    # sklearn returns the variance with shrinkage 0 for N = 1 [paper].
    X = _data(rng, 30, 1)
    for intensity in ("ledoit-wolf", "oas", "oas-sklearn"):
        for target in ("identity", "diagonal", "constant-correlation"):
            if target != "identity" and intensity != "ledoit-wolf":
                continue
            cov, delta = linear_shrink_covariance(X, target=target, intensity=intensity)
            assert delta == 0.0
            np.testing.assert_allclose(cov, [[X.var()]], rtol=RTOL)


# -- the rule on eigenvalues -------------------------------------------------
@pytest.mark.parametrize("shape", SHAPES)
@pytest.mark.parametrize("intensity", ["ledoit-wolf", "oas", "oas-sklearn", 0.25])
def test_rule_matches_data_function(rng, shape, intensity):
    # [computed] the eigenvalue rule and the data function implement one formula;
    # the dense reference is V diag(values) V' + null (I - V V').
    T, N = shape
    X = _data(rng, T, N)
    Xc = X - X.mean(axis=0)
    cov, delta = linear_shrink_covariance(X, intensity=intensity)
    vals, vecs = np.linalg.eigh(Xc.T @ Xc / T)
    keep = slice(N - min(N, T - 1), N)  # the nonzero part after demeaning
    vals, vecs = vals[keep][::-1], vecs[:, keep][:, ::-1]
    out = linear_shrink(
        vals,
        T,
        N,
        intensity=intensity,
        squared_norms=np.einsum("ij,ij->i", Xc, Xc),
    )
    assert out.details.intensity == pytest.approx(delta, rel=1e-9, abs=1e-300)
    dense = (vecs * out.values) @ vecs.T
    if out.null_value is not None:
        dense += out.null_value * (np.eye(N) - vecs @ vecs.T)
    np.testing.assert_allclose(dense, cov, rtol=0, atol=1e-10 * np.abs(cov).max())
    assert (out.null_value is None) == (vals.size == N)


def test_rule_null_space_value(rng):
    vals = np.array([5.0, 2.0, 1.0])
    out = linear_shrink(vals, 3, 6, intensity=0.4)
    mu = vals.sum() / 6
    np.testing.assert_allclose(out.values, 0.6 * vals + 0.4 * mu, rtol=1e-15)
    assert out.null_value == pytest.approx(0.4 * mu, rel=1e-15)
    # The trace is kept: (1 - d) tr S + d p mu = tr S.
    total = out.values.sum() + 3 * out.null_value
    assert total == pytest.approx(vals.sum(), rel=1e-14)


def lw2004_intensity(Xc, n):
    """Ledoit & Wolf (2004), J. Multivariate Anal. 88(2) (from
    memory), written out: S = X'X/n, m = tr(S)/p, d^2 = ||S - m I||^2,
    b_bar^2 = (1/n^2) sum_k ||x_k x_k' - S||^2 with ||A||^2 = tr(AA')/p,
    intensity min(b_bar^2, d^2)/d^2. Returns (intensity, S, m)."""
    N = Xc.shape[1]
    S = Xc.T @ Xc / n
    mu = np.trace(S) / N
    d2 = np.sum((S - mu * np.eye(N)) ** 2) / N
    b2 = sum(np.sum((np.outer(x, x) - S) ** 2) / N for x in Xc) / n**2
    return min(b2, d2) / d2, S, mu


def test_rule_ledoit_wolf_with_dof_divisor_is_the_published_b2(rng):
    # The published b_bar^2 evaluated with divisor n = T - 1 (rmtclean's dof).
    T, N = 30, 12
    X = _data(rng, T, N)
    Xc = X - X.mean(axis=0)
    expected, S, _ = lw2004_intensity(Xc, T - 1)
    vals = np.linalg.eigvalsh(S)[::-1][: T - 1]
    out = linear_shrink(vals, T - 1, N, squared_norms=np.einsum("ij,ij->i", Xc, Xc))
    assert out.details.intensity == pytest.approx(expected, rel=RTOL)


def test_rule_frequency_weights_repeat_rows(rng):
    # [computed] an integer weight k counts a row k times.
    T, N = 20, 6
    Xc = rng.standard_normal((T, N))
    w = rng.integers(1, 4, size=T).astype(float)
    Xr = np.repeat(Xc, w.astype(int), axis=0)
    n = float(w.sum())
    vals = np.linalg.eigvalsh(Xr.T @ Xr / n)[::-1]
    sq = np.einsum("ij,ij->i", Xc, Xc)
    weighted = linear_shrink(vals, n, N, squared_norms=sq, sample_weight=w)
    repeated = linear_shrink(vals, n, N, squared_norms=np.repeat(sq, w.astype(int)))
    assert weighted.details.intensity == pytest.approx(
        repeated.details.intensity, rel=1e-13
    )
    for target in ("identity", "diagonal", "constant-correlation"):
        a = _intensity(Xc, n, target, "ledoit-wolf", weights=w)
        b = _intensity(Xr, n, target, "ledoit-wolf")
        assert a == pytest.approx(b, rel=1e-12)


# -- structured targets --------------------------------------------------------
@pytest.mark.parametrize("shape", [(60, 8), (25, 40), (300, 5), (12, 3)])
@pytest.mark.parametrize("assume_centered", [False, True])
def test_constant_correlation_intensity_is_the_published_formula(
    rng, shape, assume_centered
):
    X = _data(rng, *shape)
    expected, F = _naive_constant_correlation(_centred(X, assume_centered))
    cov, delta = linear_shrink_covariance(
        X, target="constant-correlation", assume_centered=assume_centered
    )
    assert delta == pytest.approx(expected, rel=RTOL, abs=1e-300)
    Xc = _centred(X, assume_centered)
    S = Xc.T @ Xc / X.shape[0]
    np.testing.assert_allclose(cov, (1 - delta) * S + delta * F, rtol=RTOL, atol=0)


@pytest.mark.parametrize("shape", [(60, 8), (25, 40), (300, 5), (12, 3)])
@pytest.mark.parametrize("assume_centered", [False, True])
def test_diagonal_intensity_is_the_published_formula(rng, shape, assume_centered):
    # Ledoit & Wolf (2003, 2004) kappa = (pi - rho)/gamma with F = diag(S)
    # (from memory): rho = sum_i pi_ii, gamma = sum_{i != j} s_ij^2.
    X = _data(rng, *shape)
    Xc = _centred(X, assume_centered)
    T = X.shape[0]
    S = Xc.T @ Xc / T
    pi = _naive_pi(Xc, S)
    off = ~np.eye(S.shape[0], dtype=bool)
    expected = max(0.0, min(1.0, pi[off].sum() / np.sum(S[off] ** 2) / T))
    cov, delta = linear_shrink_covariance(
        X, target="diagonal", assume_centered=assume_centered
    )
    assert delta == pytest.approx(expected, rel=RTOL, abs=1e-300)
    F = np.diag(np.diag(S))
    np.testing.assert_allclose(cov, (1 - delta) * S + delta * F, rtol=RTOL, atol=0)


def test_intensities_follow_the_truth(rng):
    # Ledoit & Wolf (2003, 2004) (from memory): the intensity estimates the
    # optimal weight of the target, so it is large when the target is the truth
    # and small when the truth is far from the target.
    X = rng.standard_normal((2000, 4))  # truth I: the identity clip binds at 1
    assert linear_shrink_covariance(X)[1] == 1.0
    assert linear_shrink_covariance(X, target="diagonal")[1] > 0.5
    assert linear_shrink_covariance(X, intensity="oas")[1] == 1.0
    # One strong common factor: far from every target but constant correlation.
    g = rng.standard_normal((2000, 1))
    X = g + 0.5 * rng.standard_normal((2000, 30))
    for target in ("identity", "diagonal"):
        assert linear_shrink_covariance(X, target=target)[1] < 0.01
    assert linear_shrink_covariance(X, target="constant-correlation")[1] > 0.5


def test_intensities_lie_in_unit_interval(rng):
    for seed in range(20):
        g = np.random.default_rng(seed)
        T, N = int(g.integers(3, 60)), int(g.integers(2, 60))
        X = _data(g, T, N)
        for target, intensity in [
            ("identity", "ledoit-wolf"),
            ("identity", "oas"),
            ("identity", "oas-sklearn"),
            ("diagonal", "ledoit-wolf"),
            ("constant-correlation", "ledoit-wolf"),
        ]:
            delta = shrinkage_intensity(X, target=target, method=intensity)
            assert 0.0 <= delta <= 1.0


def test_diagonal_target_keeps_the_diagonal(rng):
    X = _data(rng, 50, 7)
    S = np.cov(X.T, bias=True)
    F = shrinkage_target(S, "diagonal")
    np.testing.assert_array_equal(np.diag(F), np.diag(S))
    assert np.count_nonzero(F - np.diag(np.diag(F))) == 0
    cov, _ = linear_shrink_covariance(X, target="diagonal")
    np.testing.assert_allclose(np.diag(cov), np.diag(S), rtol=1e-12)


def test_constant_correlation_target_has_constant_correlation(rng):
    X = _data(rng, 50, 7)
    S = np.cov(X.T, bias=True)
    F = shrinkage_target(S, "constant-correlation")
    np.testing.assert_array_equal(np.diag(F), np.diag(S))
    sd = np.sqrt(np.diag(S))
    R = F / np.outer(sd, sd)
    off = R[~np.eye(7, dtype=bool)]
    corr = S / np.outer(sd, sd)
    rbar = corr[~np.eye(7, dtype=bool)].mean()  # mean sample correlation
    np.testing.assert_allclose(off, rbar, rtol=1e-12)
    cov, _ = linear_shrink_covariance(X, target="constant-correlation")
    np.testing.assert_allclose(np.diag(cov), np.diag(S), rtol=1e-12)


def test_identity_target_is_mean_eigenvalue(rng):
    X = _data(rng, 30, 5)
    S = np.cov(X.T, bias=True)
    np.testing.assert_allclose(
        shrinkage_target(S, "identity"), np.trace(S) / 5 * np.eye(5), rtol=1e-15
    )


# -- O(N T) path against the path that forms S ----------------------------------
@pytest.mark.parametrize("shape", [(60, 8), (20, 90)])
@pytest.mark.parametrize(
    "target,method",
    [
        ("identity", "ledoit-wolf"),
        ("identity", "oas"),
        ("identity", "oas-sklearn"),
        ("diagonal", "ledoit-wolf"),
        ("constant-correlation", "ledoit-wolf"),
    ],
)
def test_gram_path_equals_dense_path(rng, shape, target, method):
    X = _data(rng, *shape)
    Xc = X - X.mean(axis=0)
    T = X.shape[0]
    S = Xc.T @ Xc / T
    dense = _intensity(Xc, T, target, method, frob2=float(np.sum(S * S)))
    gram = _intensity(Xc, T, target, method)  # ||S||_F^2 from the smaller Gram
    assert gram == pytest.approx(dense, rel=1e-12, abs=1e-300)
    assert 0.0 < dense


# -- invariances --------------------------------------------------------------
@pytest.mark.parametrize("target", ["identity", "diagonal", "constant-correlation"])
def test_scale_and_permutation_equivariance(rng, target):
    X = _data(rng, 40, 9)
    cov, delta = linear_shrink_covariance(X, target=target)
    cov_s, delta_s = linear_shrink_covariance(3.0 * X, target=target)
    assert delta_s == pytest.approx(delta, rel=1e-12)
    np.testing.assert_allclose(cov_s, 9.0 * cov, rtol=1e-12)
    perm = rng.permutation(9)
    cov_p, delta_p = linear_shrink_covariance(X[:, perm], target=target)
    assert delta_p == pytest.approx(delta, rel=1e-12)
    np.testing.assert_allclose(cov_p, cov[np.ix_(perm, perm)], rtol=1e-12)


def test_inputs_not_modified(rng):
    X = _data(rng, 20, 5)
    X0 = X.copy()
    linear_shrink_covariance(X, target="constant-correlation")
    shrinkage_intensity(X, assume_centered=True)
    S = np.cov(X.T)
    S0 = S.copy()
    shrinkage_target(S, "constant-correlation")
    vals = np.array([3.0, 2.0])
    sq = np.array([1.0, 2.0, 3.0])
    linear_shrink(vals, 3, 2, squared_norms=sq)
    np.testing.assert_array_equal(X, X0)
    np.testing.assert_array_equal(S, S0)
    np.testing.assert_array_equal(vals, [3.0, 2.0])
    np.testing.assert_array_equal(sq, [1.0, 2.0, 3.0])


# -- bad input ----------------------------------------------------------------
def test_errors(rng):
    X = _data(rng, 20, 4)
    with pytest.raises(ValueError, match="'target' parameter of linear_shrink_cov"):
        linear_shrink_covariance(X, target="ones")
    with pytest.raises(ValueError, match=r"'intensity' .* Got 1.5 instead"):
        linear_shrink_covariance(X, intensity=1.5)
    with pytest.raises(ValueError, match=r"'intensity' .* Got True instead"):
        linear_shrink_covariance(X, intensity=True)
    with pytest.raises(ValueError, match="OAS intensity is derived for the identity"):
        linear_shrink_covariance(X, target="diagonal", intensity="oas")
    with pytest.raises(ValueError, match="OAS intensity is derived for the identity"):
        shrinkage_intensity(X, target="constant-correlation", method="oas-sklearn")
    with pytest.raises(ValueError, match="'method' parameter of shrinkage_intensity"):
        shrinkage_intensity(X, method=0.5)
    with pytest.raises(ValueError, match="needs squared_norms"):
        linear_shrink(np.array([2.0, 1.0]), 10, 2)
    with pytest.raises(ValueError, match="'n_features' parameter of linear_shrink"):
        linear_shrink(np.array([2.0, 1.0]), 10, 1, intensity=0.1)
    with pytest.raises(ValueError, match="'n_samples' parameter of linear_shrink"):
        linear_shrink(np.array([2.0, 1.0]), 0, 2, intensity=0.1)
    Xz = X.copy()
    Xz[:, 2] = 1.0
    with pytest.raises(ValueError, match="zero variance .first index 2"):
        linear_shrink_covariance(Xz, target="constant-correlation")
    with pytest.raises(ValueError, match="must be square"):
        shrinkage_target(np.ones((2, 3)), "diagonal")
    with pytest.raises(ValueError, match="NaN or infinity"):
        linear_shrink_covariance(np.full((5, 2), np.nan))
    with pytest.raises(ValueError, match="at least 2 are needed"):
        linear_shrink_covariance(X[:1])
    with pytest.raises(TypeError, match="complex"):
        shrinkage_intensity(X.astype(complex))
