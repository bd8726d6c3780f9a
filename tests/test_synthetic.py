"""Tests for rmtclean.synthetic: designs and samplers."""

import numpy as np
import pytest
import scipy.linalg
import scipy.stats

from rmtclean.synthetic import DESIGNS, Design, make_design, random_rotation

N_BATCHES = 40


def _max_standardised_deviation(products: np.ndarray, target: np.ndarray) -> float:
    """Largest |mean - target| / standard error over entries.

    ``products`` has one row per time step. The standard error comes from
    batch means (common practice for serially correlated series; valid for
    independent rows too), so one check serves every sampler.
    """
    batches = products[: len(products) // N_BATCHES * N_BATCHES]
    batch_means = batches.reshape(N_BATCHES, -1, *products.shape[1:]).mean(axis=1)
    se = batch_means.std(axis=0, ddof=1) / np.sqrt(N_BATCHES)
    return float(np.max(np.abs(products.mean(axis=0) - target) / se))


def _covariance_deviation(X, truth):
    # mean-zero samples: E[x x'] = Sigma; each entry's sample mean of x_i x_j
    # is asymptotically normal (CLT) with the batch-means standard error.
    iu = np.triu_indices(X.shape[1])
    products = (X[:, :, None] * X[:, None, :])[:, iu[0], iu[1]]
    return _max_standardised_deviation(products, truth[iu])


SAMPLERS = [
    {"distribution": "gaussian"},
    {"distribution": "student-t", "df": 10.0},
    {"distribution": "multivariate-t", "df": 12.0},
    {"distribution": "rademacher"},
    {"distribution": "gaussian", "ar_coefficient": 0.5},
    {"distribution": "student-t", "df": 10.0, "ar_coefficient": -0.4},
]


@pytest.mark.parametrize(
    "kwargs", SAMPLERS, ids=lambda k: "-".join(map(str, k.values()))
)
@pytest.mark.parametrize("name", ["toeplitz", "block-factor", "mixture"])
def test_sample_covariance_converges_to_design(name, kwargs):
    # CLT tolerance: max over 21 entries of |z| < 5 (false-alarm probability
    # about 21 * P(|t_39| > 5) ~ 3e-4 at a fixed seed) [common practice].
    design = make_design(name, 6, rotate=name == "mixture", random_state=3)
    X = design.sample(20_000, random_state=11, **kwargs)
    assert _covariance_deviation(X, design.covariance) < 5
    # The same check rejects a 10% error in scale (the test has power).
    assert _covariance_deviation(1.1 * X, design.covariance) > 5


def test_mean_is_zero():
    design = make_design("spiked", 5, spikes=[20.0])
    X = design.sample(20_000, distribution="student-t", df=8.0, random_state=2)
    assert _max_standardised_deviation(X, np.zeros(5)) < 5


@pytest.mark.parametrize("phi", [0.6, -0.3])
def test_ar_lag_one_autocovariance(phi):
    # z_t = phi z_{t-1} + sqrt(1 - phi^2) e_t: E[x_t x_{t+1}'] = phi Sigma
    # [computed: AR(1) autocovariance, textbook].
    design = make_design("toeplitz", 4, rho=0.3)
    X = design.sample(30_000, ar_coefficient=phi, random_state=5)
    products = (X[:-1, :, None] * X[1:, None, :]).reshape(len(X) - 1, -1)
    target = (phi * design.covariance).ravel()
    assert _max_standardised_deviation(products, target) < 5
    lag2 = (X[:-2, 0] * X[2:, 0]).mean()
    assert lag2 == pytest.approx(phi**2 * design.covariance[0, 0], abs=0.05)


def test_ar_first_row_has_the_marginal_law():
    # z_0 = e_0 (stationary start): the first row of many draws has Sigma.
    design = make_design("identity", 3)
    first = np.array(
        [design.sample(2, ar_coefficient=0.9, random_state=s)[0] for s in range(4000)]
    )
    assert _covariance_deviation(first, design.covariance) < 5


def test_student_t_entries_have_t_marginals():
    # Student-t scaled to unit variance by sqrt((df - 2)/df) [textbook].
    design = make_design("spiked", 3, spikes=[4.0])
    X = design.sample(5000, distribution="student-t", df=5.0, random_state=1)
    z = X[:, 0] / np.sqrt(4.0) / np.sqrt(3.0 / 5.0)
    assert scipy.stats.kstest(z, "t", args=(5.0,)).pvalue > 1e-3
    assert scipy.stats.kstest(z, "norm").pvalue < 1e-3


def test_multivariate_t_row_norms_follow_f():
    # [computed] x = c z / sqrt(w/df), c^2 = (df-2)/df, identity design:
    # ||x||^2 / (N c^2) ~ F(N, df).
    df, n = 6.0, 4
    X = make_design("identity", n).sample(
        5000, distribution="multivariate-t", df=df, random_state=4
    )
    stat = np.sum(X**2, axis=1) / (n * (df - 2) / df)
    assert scipy.stats.kstest(stat, "f", args=(n, df)).pvalue > 1e-3


def test_rademacher_entries_are_signs():
    design = make_design("mixture", 5)
    X = design.sample(50, distribution="rademacher", random_state=0)
    np.testing.assert_array_equal(
        np.abs(X), np.broadcast_to(np.sqrt(design.eigenvalues), X.shape)
    )


def test_rademacher_colours_with_symmetric_root():
    design = make_design("toeplitz", 4, rho=0.7)
    X = design.sample(10, distribution="rademacher", random_state=0)
    root = scipy.linalg.sqrtm(design.covariance).real
    signs = X @ np.linalg.inv(root)
    np.testing.assert_allclose(np.abs(signs), 1.0, atol=1e-10)


# ----------------------------------------------------------------- designs
def test_mixture_counts_and_levels():
    # Ledoit & Wolf design, 20% at 1, 40% at 3, 40% at 10 (Ledoit & Wolf
    # 2020, Ann. Statist. 48(5), from memory): N = 200 -> 40, 80, 80.
    values = make_design("mixture", 200).eigenvalues
    assert [np.sum(values == v) for v in (1.0, 3.0, 10.0)] == [40, 80, 80]
    # [computed by hand] N = 7: 1.4, 2.8, 2.8 -> floors 1, 2, 2, the two
    # largest remainders get one each -> 1, 3, 3.
    values = make_design("mixture", 7).eigenvalues
    np.testing.assert_array_equal(values, [10, 10, 10, 3, 3, 3, 1])


def test_spiked_and_identity_and_power_law_eigenvalues():
    np.testing.assert_array_equal(
        make_design("spiked", 5, spikes=[2.0, 8.0], noise_variance=0.5).eigenvalues,
        [8.0, 2.0, 0.5, 0.5, 0.5],
    )
    np.testing.assert_array_equal(
        make_design("identity", 3, variance=2.0).covariance, 2 * np.eye(3)
    )
    values = make_design("power-law", 4, exponent=2.0).eigenvalues
    expected = np.array([1, 1 / 4, 1 / 9, 1 / 16])
    np.testing.assert_allclose(values, expected / expected.mean(), rtol=1e-14)


def test_toeplitz_matrix_and_spectrum_bounds():
    design = make_design("toeplitz", 50, rho=0.6, variance=2.0)
    expected = 2.0 * scipy.linalg.toeplitz(0.6 ** np.arange(50))
    np.testing.assert_allclose(design.covariance, expected, atol=1e-12)
    # Eigenvalues lie inside the range of the symbol
    # v (1 - rho^2) / (1 - 2 rho cos w + rho^2) (Grenander & Szego 1958, from
    # memory): [v (1 - rho)/(1 + rho), v (1 + rho)/(1 - rho)].
    assert design.eigenvalues.max() < 2.0 * 1.6 / 0.4
    assert design.eigenvalues.min() > 2.0 * 0.4 / 1.6
    assert np.all(np.diff(design.eigenvalues) <= 0)


def test_block_factor_matches_documented_formula():
    # [computed] Sigma = s_m^2 beta beta' + s_b^2 (gamma gamma') o B + diag(psi),
    # drawn in the documented order from the design's generator.
    design = make_design(
        "block-factor", 12, n_blocks=3, market_variance=0.8, random_state=0
    )
    rng = np.random.default_rng(0)
    beta = rng.uniform(0.7, 1.3, 12)
    gamma = rng.uniform(0.7, 1.3, 12)
    psi = rng.uniform(0.5, 2.0, 12)
    blocks = np.kron(np.eye(3), np.ones((4, 4)))
    expected = 0.8 * np.outer(beta, beta) + 0.5 * np.outer(gamma, gamma) * blocks
    expected += np.diag(psi)
    np.testing.assert_allclose(design.covariance, expected, rtol=1e-12)


@pytest.mark.parametrize("name", sorted(DESIGNS))
def test_eigendecomposition_is_consistent(name):
    design = make_design(name, 9, rotate=True, random_state=7)
    cov = design.covariance
    np.testing.assert_allclose(cov, cov.T, atol=0)
    np.testing.assert_allclose(
        np.linalg.eigvalsh(cov)[::-1], design.eigenvalues, rtol=1e-10, atol=1e-12
    )
    np.testing.assert_allclose(cov @ design.precision, np.eye(9), atol=1e-10)
    assert np.all(np.diff(design.eigenvalues) <= 0)
    unrotated = make_design(name, 9, random_state=7)
    np.testing.assert_allclose(unrotated.eigenvalues, design.eigenvalues, rtol=1e-10)


def test_rotation_makes_truth_non_diagonal():
    design = make_design("mixture", 10, rotate=True, random_state=1)
    off = design.covariance - np.diag(np.diag(design.covariance))
    assert np.max(np.abs(off)) > 0.1
    assert design.params["rotate"] is True


def test_arrays_are_read_only():
    design = make_design("toeplitz", 3)
    with pytest.raises(ValueError):
        design.covariance[0, 0] = 5.0
    with pytest.raises(ValueError):
        design.eigenvalues[0] = 5.0


# ----------------------------------------------------------------- rotation
def test_random_rotation_is_orthogonal():
    q = random_rotation(30, random_state=0)
    np.testing.assert_allclose(q.T @ q, np.eye(30), atol=1e-12)


def test_random_rotation_is_haar():
    # Haar measure (Mezzadri 2007, from memory): the first column is uniform
    # on the sphere, so Q_11^2 ~ Beta(1/2, (N - 1)/2) and E[Q_11] = 0.
    # Without the sign fix a Householder QR gives Q_11 < 0 always.
    rng = np.random.default_rng(0)
    q11 = np.array([random_rotation(3, random_state=rng)[0, 0] for _ in range(3000)])
    assert abs(q11.mean()) < 5 * q11.std() / np.sqrt(q11.size)
    assert scipy.stats.kstest(q11**2, "beta", args=(0.5, 1.0)).pvalue > 1e-3
    # a later column too: Q_33 has the same law by invariance
    q33 = np.array([random_rotation(3, random_state=rng)[2, 2] for _ in range(3000)])
    assert abs(q33.mean()) < 5 * q33.std() / np.sqrt(q33.size)


# ------------------------------------------------------------- determinism
def test_determinism():
    a = make_design("block-factor", 8, rotate=True, random_state=3)
    b = make_design("block-factor", 8, rotate=True, random_state=3)
    c = make_design("block-factor", 8, rotate=True, random_state=4)
    np.testing.assert_array_equal(a.covariance, b.covariance)
    assert not np.allclose(a.covariance, c.covariance)
    for kwargs in SAMPLERS:
        x1 = a.sample(20, random_state=9, **kwargs)
        x2 = a.sample(20, random_state=9, **kwargs)
        x3 = a.sample(20, random_state=10, **kwargs)
        np.testing.assert_array_equal(x1, x2)
        assert not np.array_equal(x1, x3)


def test_repr_names_design():
    design = make_design("toeplitz", 3, rho=0.2)
    assert repr(design) == "Design('toeplitz', n_features=3, rho=0.2)"
    assert isinstance(design, Design)


# ------------------------------------------------------------ bad parameters
@pytest.mark.parametrize(
    "name, params, match",
    [
        ("nope", {}, "'name' parameter of make_design must be one of"),
        ("spiked", {"spikes": [1.0, -2.0]}, "'spikes' parameter"),
        ("spiked", {"spikes": [1.0] * 5}, "more than n_features=4"),
        ("mixture", {"weights": (0.5, 0.4, 0.4)}, "summing to 1"),
        ("mixture", {"levels": (1.0, 2.0)}, "one positive weight per level"),
        ("power-law", {"exponent": -1.0}, "'exponent' parameter.*Got -1.0"),
        ("toeplitz", {"rho": 1.0}, "'rho' parameter.*\\(-1, 1\\)"),
        ("identity", {"variance": 0.0}, "'variance' parameter"),
        ("identity", {"variance": np.inf}, "'variance'.*finite"),
        ("block-factor", {"n_blocks": 5}, "'n_blocks'.*<= n_features=4"),
        (
            "block-factor",
            {"n_blocks": 2, "idiosyncratic_range": (2.0, 1.0)},
            "idiosyncratic_range",
        ),
        ("block-factor", {"n_blocks": 2, "loading_spread": 1.5}, "'loading_spread'"),
        ("toeplitz", {"rh0": 0.5}, "unknown parameter"),
    ],
)
def test_bad_design_parameters(name, params, match):
    with pytest.raises(ValueError, match=match):
        make_design(name, 4, **params)


def test_bad_sizes_and_states():
    with pytest.raises(ValueError, match="'n_features' parameter of make_design"):
        make_design("identity", 0)
    with pytest.raises(TypeError, match="'n_features'"):
        make_design("identity", 2.5)
    with pytest.raises(TypeError, match="random_state"):
        make_design("identity", 2, random_state="seed")


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"distribution": "cauchy"}, "'distribution' parameter of Design.sample"),
        ({"distribution": "student-t"}, "'df' parameter.*required"),
        ({"distribution": "student-t", "df": 2.0}, "'df' parameter.*\\(2, inf\\)"),
        ({"distribution": "gaussian", "df": 5.0}, "only to the t laws"),
        ({"ar_coefficient": 1.0}, "'ar_coefficient'.*Got 1.0"),
    ],
)
def test_bad_sample_parameters(kwargs, match):
    with pytest.raises(ValueError, match=match):
        make_design("identity", 2).sample(5, **kwargs)
    with pytest.raises(ValueError, match="'n_samples'"):
        make_design("identity", 2).sample(0)
