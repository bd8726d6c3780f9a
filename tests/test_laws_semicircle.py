"""Tests of rmtclean.laws.WignerSemicircle (Wigner 1958) with GOE simulations."""

import math

import numpy as np
import pytest
from scipy import integrate, stats

from rmtclean.laws import WignerSemicircle

RADII = [2.0, 0.5, 3.7]


@pytest.mark.parametrize("radius", RADII)
def test_moments_catalan(radius):
    # E[X^2k] = (R/2)^2k C_k, C_k = 1, 1, 2, 5, 14, 42 (Catalan numbers, OEIS A000108,
    # from memory); checked against quadrature of the density [computed] here.
    law = WignerSemicircle(radius=radius)
    catalan = [1, 1, 2, 5, 14, 42]
    for k in range(0, 11):
        expected = 0.0 if k % 2 else (radius / 2) ** k * catalan[k // 2]
        assert law.moment(k) == pytest.approx(expected, rel=1e-15, abs=0)
        # density = (2/(pi R^2)) sqrt(R - x) sqrt(R + x): quad's algebraic weight
        by_quad = integrate.quad(
            lambda x, k=k: x**k * 2 / (math.pi * radius**2),
            -radius,
            radius,
            weight="alg",
            wvar=(0.5, 0.5),
        )[0]
        assert law.moment(k) == pytest.approx(by_quad, rel=1e-10, abs=1e-13)
    assert law.mean() == 0.0
    assert law.var() == pytest.approx(radius**2 / 4, rel=1e-15, abs=0)
    assert law.std() == pytest.approx(radius / 2, rel=1e-15, abs=0)


def test_closed_form_values():
    # Density 2 sqrt(R^2 - x^2)/(pi R^2) and its integral (Wigner 1958):
    # f(0) = 1/pi, F(1) = 1/2 + sqrt(3)/(4 pi) + 1/6 for R = 2 (closed form).
    law = WignerSemicircle()
    assert law.pdf(0.0) == pytest.approx(1 / math.pi, rel=1e-15, abs=0)
    assert law.cdf(1.0) == pytest.approx(0.5 + math.sqrt(3) / (4 * math.pi) + 1 / 6,
                                         abs=1e-15)  # fmt: skip
    assert law.cdf(0.0) == pytest.approx(0.5, abs=1e-16)
    assert law.ppf(0.5) == pytest.approx(0.0, abs=1e-15)
    assert law.support() == (-2.0, 2.0)


@pytest.mark.parametrize("radius", RADII)
def test_structure(radius):
    law = WignerSemicircle(radius=radius)
    x = np.linspace(-radius - 1, radius + 1, 2001)
    cdf, sf = law.cdf(x), law.sf(x)
    assert np.all(np.diff(cdf) >= 0) and np.all(np.diff(sf) <= 0)
    np.testing.assert_allclose(cdf + sf, 1.0, rtol=0, atol=1e-15)  # two closed forms
    np.testing.assert_allclose(cdf, law.sf(-x), rtol=0, atol=0)  # symmetry
    assert law.cdf(-radius) == 0.0 and law.cdf(radius) == 1.0
    assert np.all(law.pdf(x[np.abs(x) >= radius]) == 0.0)
    # pdf = derivative of cdf (fourth-order central difference)
    xi = np.linspace(-0.95, 0.95, 39) * radius
    h = 1e-4 * radius
    deriv = (-law.cdf(xi + 2 * h) + 8 * law.cdf(xi + h) - 8 * law.cdf(xi - h)
             + law.cdf(xi - 2 * h)) / (12 * h)  # fmt: skip
    np.testing.assert_allclose(law.pdf(xi), deriv, rtol=1e-8)
    # cdf vs quadrature of the density, and relative accuracy of sf at the edge
    for v in (-0.9, -0.3, 0.2, 0.8):
        expected = integrate.quad(law.pdf, -radius, v * radius, epsabs=1e-15)[0]
        assert law.cdf(v * radius) == pytest.approx(expected, abs=1e-14)
    # sf(R - d) = (2/pi R^2) int_0^sqrt(d) 2 w^2 sqrt(2R - w^2) dw with t = R - w^2
    for d in (1e-3, 1e-8, 1e-13):
        x = radius - d * radius
        w_end = math.sqrt(radius - x)  # exact difference in floating point
        expected = integrate.quad(
            lambda w: 4 * w * w * math.sqrt(2 * radius - w * w) / (math.pi * radius**2),
            0.0, w_end, epsabs=0, epsrel=1e-13,
        )[0]  # fmt: skip
        assert law.sf(x) == pytest.approx(expected, rel=1e-12, abs=0)
    # quantile round trips, both ends
    p = np.concatenate([[1e-12, 1e-6], np.linspace(0.01, 0.99, 99), [1 - 1e-6]])
    np.testing.assert_allclose(law.cdf(law.ppf(p)), p, rtol=1e-12, atol=1e-16)
    np.testing.assert_allclose(law.isf(p), -law.ppf(p), rtol=0, atol=0)
    assert law.ppf(0.0) == -radius and law.ppf(1.0) == radius
    assert np.isnan(law.ppf([-0.1, 1.1, np.nan])).all()


def _goe_eigenvalues(n, n_reps, seed):
    """Eigenvalues of (G + G')/sqrt(2 n): off-diagonal variance 1/n (GOE)."""
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n_reps):
        g = rng.standard_normal((n, n))
        out.append(np.linalg.eigvalsh((g + g.T) / math.sqrt(2 * n)))
    return np.concatenate(out)


def test_goe_eigenvalues():
    # Wigner (1958): the spectrum of a GOE matrix scaled by 1/sqrt(N) tends to the
    # semicircle of radius 2. N = 400, 3 matrices pooled. Eigenvalues are not
    # independent, so the KS distance is bounded instead of a p-value; radii 5%
    # off are at more than 0.015 (measured).
    ev = _goe_eigenvalues(400, 3, seed=314)
    assert stats.kstest(ev, WignerSemicircle(2.0).cdf).statistic < 0.006
    for wrong in (1.9, 2.1):
        assert stats.kstest(ev, WignerSemicircle(wrong).cdf).statistic > 0.015
    # empirical moments E[x^2] -> 1, E[x^4] -> 2 (Catalan), with O(1/N) corrections
    assert np.mean(ev**2) == pytest.approx(1.0, abs=0.01)
    assert np.mean(ev**4) == pytest.approx(2.0, abs=0.03)


def test_rvs():
    law = WignerSemicircle(radius=1.5)
    draws = law.rvs(size=5000, random_state=2)
    np.testing.assert_array_equal(draws, law.rvs(size=5000, random_state=2))
    assert stats.kstest(draws, law.cdf).pvalue > 0.01
    assert stats.kstest(draws, WignerSemicircle(1.7).cdf).pvalue < 1e-6
    assert isinstance(law.rvs(random_state=np.random.default_rng(0)), float)


@pytest.mark.parametrize("value", [0.0, -2.0, float("nan"), float("inf"), "2"])
def test_invalid_radius(value):
    pattern = (
        r"The 'radius' parameter of WignerSemicircle must be a float in the range "
        rf"\(0, inf\)\. Got {repr(value)} instead\."
    )
    with pytest.raises(ValueError, match=pattern):
        WignerSemicircle(radius=value)


def test_io_and_repr():
    law = WignerSemicircle(radius=3)
    assert repr(law) == "WignerSemicircle(radius=3.0)"
    assert isinstance(law.cdf(0.1), float) and isinstance(law.ppf(0.3), float)
    assert law.pdf([[0.0, 1.0]]).shape == (1, 2)
    assert np.isnan(law.cdf(np.nan)) and np.isnan(law.pdf(np.nan))
    with pytest.raises(AttributeError):
        law.radius = 1.0
