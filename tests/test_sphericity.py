"""John's sphericity test on spatial signs (rmtclean/spectrum/_sphericity.py).

Sources: John (1972, Biometrika 59(1)) defines the statistic
``U = tr[(S / (tr S / N) - I)^2] / N``; Ledoit & Wolf (2002, Ann. Statist.
30(4)) give its Gaussian null ``n U - N -> N(1, 4)`` as N grows with n
(recalled from memory, not read in the paper). The sign version's exact
null moments, ``E[n U] = N - 1`` and ``Var[n U] = 4 (n - 1)(N - 1) / (n (N
+ 2))`` for rows uniform on the sphere, are derived in the module's
docstring from the Beta(1/2, (N - 1)/2) law of a squared cosine [computed]
and checked here by Monte Carlo. Reference library: numpy's ``eigvalsh``
for ``U`` itself, scipy's ``minimize`` for the spatial median. Open data:
French's 49 industries (Fama & French 1997), the dslabs tissue panel and
Ecdat's CRSPday, through ``tests/_opendata.py``.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.optimize

from rmtclean.exceptions import InvalidParameterError
from rmtclean.rules import spatial_signs
from rmtclean.spectrum import sign_sphericity
from rmtclean.spectrum._sphericity import spatial_median
from tests._opendata import crsp_daily, industry_returns, tissue_expression


def _john_by_eigenvalues(U: np.ndarray, n: float) -> float:
    """John's U of the sign covariance ``U'U / n``, from numpy's eigenvalues."""
    lam = np.linalg.eigvalsh(U.T @ U / n)
    return float(np.mean((lam / lam.mean() - 1.0) ** 2))


@pytest.mark.parametrize("shape", [(40, 12), (15, 60)], ids=["long", "wide"])
def test_spread_is_johns_statistic_of_the_signs(rng, shape):
    X = rng.standard_normal(shape) * np.linspace(1.0, 2.0, shape[1])
    test = sign_sphericity(X, assume_centered=True)
    expected = _john_by_eigenvalues(spatial_signs(X), shape[0])
    np.testing.assert_allclose(test.spread, expected, rtol=1e-12)
    assert test.n_samples == shape[0] and test.n_features == shape[1]
    # Centred at the spatial median, one degree of freedom less.
    centred = sign_sphericity(X)
    U = spatial_signs(X - spatial_median(X))
    np.testing.assert_allclose(
        centred.spread, _john_by_eigenvalues(U, shape[0] - 1), rtol=1e-12
    )
    assert centred.n_samples == shape[0] - 1


@pytest.mark.parametrize("n_features, n_rows", [(2, 20), (10, 30), (60, 20)])
def test_null_moments_on_the_sphere(n_features, n_rows):
    # Rows uniform on the sphere (any spherical law, here Student-t with 3
    # degrees of freedom), known centre: the standardised statistic has
    # mean 0 and variance 1 exactly [computed]; 4000 draws put the Monte
    # Carlo standard error of the mean at 0.016 and of the variance near
    # 0.03 to 0.05 (the law is skewed for small N).
    rng = np.random.default_rng(11)
    stats = []
    for _ in range(4000):
        X = rng.standard_normal((n_rows, n_features))
        X /= np.sqrt(rng.chisquare(3, size=(n_rows, 1)))
        stats.append(sign_sphericity(X, assume_centered=True).statistic)
    stats = np.array(stats)
    assert abs(stats.mean()) < 4 * 0.016
    assert abs(stats.var() - 1.0) < 0.2


def test_heavy_tails_and_unknown_centre_keep_the_level():
    # Student-t rows (3 degrees of freedom) around a nonzero centre, N = 300
    # wider than T = 60: centred at the spatial median the test rejects at
    # 5% in about 5% of draws (centred at the mean, about 88%, [computed]).
    rng = np.random.default_rng(12)
    centre = rng.normal(size=300)
    rejections = 0
    for _ in range(200):
        X = rng.standard_normal((60, 300)) / np.sqrt(rng.chisquare(3, (60, 1)))
        rejections += sign_sphericity(X + centre).p_value < 0.05
    # Binomial(200, 0.05): 10 expected, 21 lies 3.6 standard errors above.
    assert rejections <= 21


def test_the_random_scale_of_each_row_does_not_matter(rng):
    X = rng.standard_normal((50, 20)) * np.linspace(1.0, 3.0, 20)
    scaled = X * rng.chisquare(2, size=(50, 1))
    a = sign_sphericity(X, assume_centered=True)
    b = sign_sphericity(scaled, assume_centered=True)
    np.testing.assert_allclose(b.statistic, a.statistic, rtol=1e-10)


def test_open_panels_reject_sphericity():
    # Real panels have structure: a market factor (French's industries,
    # last 500 days and even the last 10), tissues (dslabs, 185 x 500),
    # the four CRSPday series (their last 20 days).
    returns = industry_returns(last=500).to_numpy()
    assert sign_sphericity(returns).p_value < 1e-12
    assert sign_sphericity(returns[-10:]).p_value < 1e-12
    genes, _ = tissue_expression()
    assert sign_sphericity(genes).p_value < 1e-12
    crsp = crsp_daily().to_numpy()
    assert sign_sphericity(crsp).p_value < 1e-12
    assert sign_sphericity(crsp[-20:]).p_value < 1e-4


def test_spatial_median_minimises_the_sum_of_distances(rng):
    X = rng.standard_normal((40, 5)) ** 3  # skewed, heavy-tailed
    ours = spatial_median(X)

    def total(m):
        return np.sum(np.sqrt(np.sum((X - m) ** 2, axis=1)))

    ref = scipy.optimize.minimize(
        total,
        X.mean(axis=0),
        method="Nelder-Mead",
        options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000, "maxfev": 20000},
    )
    assert total(ours) <= ref.fun + 1e-9
    np.testing.assert_allclose(ours, ref.x, atol=1e-4)


@pytest.mark.parametrize(
    "X, match",
    [
        (np.ones((10, 1)), "at least 2 columns"),
        (np.zeros((10, 3)), "3 rows with a direction"),
        (np.array([[1.0, np.nan], [0.0, 1.0], [1.0, 1.0]]), "finite 2-D"),
        (np.ones(5), "finite 2-D"),
    ],
)
def test_bad_input_is_refused(X, match):
    with pytest.raises(ValueError, match=match):
        sign_sphericity(X)


def test_bad_parameter_is_refused(rng):
    with pytest.raises(InvalidParameterError, match="assume_centered"):
        sign_sphericity(rng.standard_normal((5, 3)), assume_centered="yes")
