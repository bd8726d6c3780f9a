"""Tests of rmtclean.laws.largest_eigenvalue_scaling.

Source: Johnstone 2001, Ann. Statist. 29(2) (centring and scaling [paper]).
"""

import math

import numpy as np
import pytest
from scipy import stats

from rmtclean.laws import TracyWidom, largest_eigenvalue_scaling

TW1 = TracyWidom(beta=1)
N_REPS = 100_000


@pytest.mark.parametrize(
    "n, p, constants, mu, sigma",
    [
        # [computed] from Johnstone (2001, Ann. Statist. 29(2),
        # abstract [paper]) and the half-integer constants of Ma (2012) [memory].
        (100, 25, "johnstone", 223.498744, 10.013537),
        (100, 25, "half-integer", 222.747152, 10.016360),
        (600, 200, "johnstone", 1491.242732, 18.590430),
    ],
)
def test_reference_values(n, p, constants, mu, sigma):
    got = largest_eigenvalue_scaling(n, p, constants=constants)
    assert got.mu == pytest.approx(mu, abs=5e-7)
    assert got.sigma == pytest.approx(sigma, abs=5e-7)
    assert tuple(got) == (got.mu, got.sigma)


def test_formulas_and_default():
    # Johnstone (2001) abstract [paper]: mu = (sqrt(n-1) + sqrt p)^2,
    # sigma = (sqrt(n-1) + sqrt p)(1/sqrt(n-1) + 1/sqrt p)^(1/3).
    n, p = 37.5, 11
    a, b = math.sqrt(n - 1), math.sqrt(p)
    mu, sigma = largest_eigenvalue_scaling(n, p, constants="johnstone")
    assert mu == pytest.approx((a + b) ** 2, rel=1e-15, abs=0)
    assert sigma == pytest.approx(
        (a + b) * (1 / a + 1 / b) ** (1 / 3), rel=1e-15, abs=0
    )
    assert largest_eigenvalue_scaling(n, p) == largest_eigenvalue_scaling(
        n, p, constants="half-integer"
    )
    # the half-integer form is symmetric in (n, p); Johnstone's is not
    assert largest_eigenvalue_scaling(30, 12) == largest_eigenvalue_scaling(12, 30)


def _largest_eigenvalues(n, p, n_reps, seed):
    """l1 of X'X for n x p standard Gaussian X (not demeaned), n_reps draws."""
    rng = np.random.default_rng(seed)
    out = []
    chunk = 10_000
    for _ in range(n_reps // chunk):
        x = rng.standard_normal((chunk, n, p))
        out.append(np.linalg.eigvalsh(np.matmul(x.transpose(0, 2, 1), x))[:, -1])
    return np.concatenate(out)


@pytest.mark.parametrize(
    "n, p, rate_johnstone, rate_half",
    # An earlier Monte Carlo [computed, 20k-40k reps, se 0.001-0.0015]:
    # P((l1 - mu)/sigma > 0.9793) at nominal 0.05.
    [(50, 10, 0.0391, 0.0462), (20, 5, 0.0386, 0.0474)],
)
def test_rejection_rate_at_tw1_95_quantile(n, p, rate_johnstone, rate_half):
    l1 = _largest_eigenvalues(n, p, N_REPS, seed=2001 + n)
    q95 = TW1.ppf(0.95)  # 0.9793 (Johnstone 2001, Table 1, from memory)
    rates = {}
    for constants, ref in (("johnstone", rate_johnstone), ("half-integer", rate_half)):
        mu, sigma = largest_eigenvalue_scaling(n, p, constants=constants)
        rates[constants] = np.mean((l1 - mu) / sigma > q95)
        # Monte Carlo error of both estimates (ours: 1e5 reps; the earlier run: se
        # 0.0015), 3.5 standard errors
        se = math.hypot(math.sqrt(ref * (1 - ref) / N_REPS), 0.0015)
        assert abs(rates[constants] - ref) < 3.5 * se
        # the same through the p-values that edge tests use
        p_values = TW1.sf((l1 - mu) / sigma)
        assert np.mean(p_values < 0.05) == rates[constants]
    # Johnstone's constants are conservative at small n; the half-integer ones are
    # closer to nominal (paired on the same draws: se of the difference < 3e-4).
    assert rates["half-integer"] - rates["johnstone"] > 0.005
    assert rates["johnstone"] < 0.045
    assert abs(rates["half-integer"] - 0.05) < 0.005


def test_ks_distance_to_tw1():
    # Johnstone (2001): "informative for n and p as small as 5"; KS distance of the
    # standardised l1 to TW1 at n = 50, p = 10, 1e5 reps (sampling error ~0.004).
    # Measured 0.026 (half-integer), 0.032 (Johnstone); the complex-case centring
    # (sqrt n + sqrt p)^2 (Johansson 2000, CMP 209, from memory), wrong here, is at
    # 0.090.
    n, p = 50, 10
    l1 = _largest_eigenvalues(n, p, N_REPS, seed=77)
    ks = {}
    for constants in ("half-integer", "johnstone"):
        mu, sigma = largest_eigenvalue_scaling(n, p, constants=constants)
        ks[constants] = stats.kstest((l1 - mu) / sigma, TW1.cdf).statistic
    assert ks["half-integer"] < 0.035 and ks["johnstone"] < 0.04
    a, b = math.sqrt(n), math.sqrt(p)
    wrong = (l1 - (a + b) ** 2) / ((a + b) * (1 / a + 1 / b) ** (1 / 3))
    assert stats.kstest(wrong, TW1.cdf).statistic > 2 * ks["johnstone"]


@pytest.mark.parametrize(
    "kwargs, name",
    [
        ({"n_samples": 1, "n_features": 5, "constants": "johnstone"}, "n_samples"),
        ({"n_samples": 0.5, "n_features": 5}, "n_samples"),
        ({"n_samples": 10, "n_features": 0.5}, "n_features"),
        ({"n_samples": 10, "n_features": 0, "constants": "johnstone"}, "n_features"),
        ({"n_samples": float("nan"), "n_features": 5}, "n_samples"),
        ({"n_samples": 10, "n_features": "5"}, "n_features"),
        ({"n_samples": 10, "n_features": 5, "constants": "ma"}, "constants"),
    ],
)
def test_invalid_input(kwargs, name):
    with pytest.raises(ValueError, match=f"'{name}' parameter of largest_eigenvalue_"):
        largest_eigenvalue_scaling(**kwargs)
