"""Tests of rmtclean.laws.TracyWidom against published and recomputed values."""

import math

import numpy as np
import pytest
from numpy.polynomial.legendre import leggauss
from scipy import integrate, stats
from scipy.special import airy

from rmtclean.laws import TracyWidom

TW1 = TracyWidom(beta=1)
TW2 = TracyWidom(beta=2)


# --- independent Fredholm determinants, written here from the definitions ----------


def _gauss(lo, hi, n):
    x, w = leggauss(n)
    return lo + (hi - lo) * (x + 1) / 2, w * (hi - lo) / 2


def _f1_bornemann(s, n=120):
    """det(I - B_s), B_s(x, y) = Ai((x + y)/2 + s)/2 on L2(0, inf).

    Ferrari & Spohn (2005), Nystrom with Gauss-Legendre as in Bornemann (2010,
    Math. Comp. 79) [from memory, checked against the Painleve route of Tracy
    & Widom 1996, CMP 177]. Returns (cdf, sf) with sf = 1 - det from the
    eigenvalues.
    """
    # (x + y)/2 + s beyond 30 + |s| leaves Ai below 1e-40 of its largest value.
    x, w = _gauss(0.0, 2.0 * (30.0 + abs(s)), n)
    sw = np.sqrt(w)
    kernel = airy((x[:, None] + x[None, :]) / 2 + s)[0] / 2
    eig = np.linalg.eigvals(sw[:, None] * kernel * sw[None, :]).real
    logdet = np.sum(np.log1p(-eig))
    return math.exp(logdet), -math.expm1(logdet)


def _f2_airy_kernel(s, n=120):
    """det(I - K_Ai) on L2(s, inf), Tracy & Widom (1994, CMP 159)."""
    x, w = _gauss(s, s + 40.0 + abs(s), n)
    ai, aip, _, _ = airy(x)
    diff = x[:, None] - x[None, :]
    np.fill_diagonal(diff, 1.0)
    k = (ai[:, None] * aip[None, :] - aip[:, None] * ai[None, :]) / diff
    np.fill_diagonal(k, aip**2 - x * ai**2)
    sw = np.sqrt(w)
    return np.linalg.det(np.eye(n) - sw[:, None] * k * sw[None, :])


# --- published / computed check values ----------------------------------------------

# Bornemann-type (2010, Math. Comp. 79) Fredholm values [computed; stable across 48-128
# nodes; agree with the Painleve route of Tracy & Widom (1996) to 1.1e-13].
F1_CHECK = {
    -6: 2.7073193e-06,
    -4: 0.007567678599,
    -3: 0.069600118867,
    -2: 0.274320197909,
    -1: 0.583789895520,
    0: 0.831908066203,
    1: 0.951421236912,
    2: 0.989597571085,
    3: 0.998293480350,
}
F2_CHECK = {
    -3: 0.080319552939,
    -2: 0.413224142505,
    -1: 0.807214241999,
    0: 0.969372828355,
}


@pytest.mark.parametrize("s, value", F1_CHECK.items())
def test_tw1_cdf_check_values(s, value):
    # Fredholm determinant values [computed], 12 decimals (F1(-6) to 8 significant
    # digits).
    assert TW1.cdf(s) == pytest.approx(value, abs=1e-12)


@pytest.mark.parametrize("s, value", F2_CHECK.items())
def test_tw2_cdf_check_values(s, value):
    # Fredholm determinant values [computed], 12 decimals.
    assert TW2.cdf(s) == pytest.approx(value, abs=1e-12)


@pytest.mark.parametrize(
    "s, value",
    [
        (-2, 0.28138843),
        (-1.5, 0.31804554),
        (-1, 0.30409878),
        (0, 0.18141957),
        (1, 0.06787674),
    ],
)
def test_tw1_density_check_values(s, value):
    # Fredholm determinant values [computed, central difference], 8 decimals.
    assert TW1.pdf(s) == pytest.approx(value, abs=5e-9)


@pytest.mark.parametrize("s", [-7.3, -4.6, -2.5, -0.9, 0.7, 2.2, 3.3, 5.1])
def test_tw1_cdf_matches_independent_fredholm(s):
    # [computed] here: Ferrari & Spohn (2005) kernel, Bornemann (2010) quadrature.
    cdf, sf = _f1_bornemann(s)
    assert TW1.cdf(s) == pytest.approx(cdf, abs=1e-13)
    assert TW1.sf(s) == pytest.approx(sf, rel=1e-11, abs=0)


@pytest.mark.parametrize("s", [6.0, 8.5, 11.0, 13.7])
def test_tw1_sf_relative_accuracy_right_tail(s):
    # [computed] here: 1 - det by eigenvalues keeps relative accuracy; the p-values
    # run from 1e-6 down to 1e-18, far below 1 - cdf's resolution.
    sf = _f1_bornemann(s)[1]
    assert TW1.sf(s) == pytest.approx(sf, rel=1e-11, abs=0)
    assert TW1.logsf(s) == pytest.approx(math.log(sf), rel=1e-12, abs=0)


@pytest.mark.parametrize("s", [-4.2, -2.1, -0.6, 0.8, 2.5])
def test_tw2_cdf_matches_airy_kernel_determinant(s):
    # [computed] here: Airy kernel K_Ai on L2(s, inf), Tracy & Widom (1994).
    assert TW2.cdf(s) == pytest.approx(_f2_airy_kernel(s), abs=1e-13)


@pytest.mark.parametrize("s", [17.0, 20.0, 30.0])
def test_right_tail_beyond_table_equals_trace(s):
    # [computed] here by adaptive quadrature: for large s, 1 - F1 = (1/2) int_s^inf Ai
    # and 1 - F2 = int_s^inf (t - s) Ai(t)^2 dt up to a relative error of order sf.
    def ai(t):
        return airy(t)[0]

    sf1 = 0.5 * integrate.quad(ai, s, s + 30, epsabs=0, epsrel=1e-13)[0]
    sf2 = integrate.quad(
        lambda t: (t - s) * ai(t) ** 2, s, s + 30, epsabs=0, epsrel=1e-13
    )[0]
    assert TW1.sf(s) == pytest.approx(sf1, rel=1e-11, abs=0)
    assert TW2.sf(s) == pytest.approx(sf2, rel=1e-11, abs=0)
    assert TW1.pdf(s) == pytest.approx(ai(s) / 2, rel=1e-11, abs=0)


def test_right_tail_asymptotics():
    # 1 - F1(s) ~ exp(-(2/3) s^1.5) / (4 sqrt(pi) s^0.75) as s -> inf: the leading
    # term of (1/2) int_s^inf Ai (Abramowitz & Stegun 10.4.59 integrated) [memory];
    # the relative correction is O(s^-1.5).
    for s in [40.0, 60.0]:
        lead = -(2 / 3) * s**1.5 - math.log(4 * math.sqrt(math.pi)) - 0.75 * math.log(s)
        assert abs(TW1.logsf(s) - lead) < 2.0 / s**1.5


@pytest.mark.parametrize("s", [-4.0, -5.0, -6.0, -7.0, -8.0])
def test_left_tail_asymptotics(s):
    # Baik, Buckingham & DiFranco (2008, CMP 280) and Deift, Its & Krasovsky (2008),
    # from memory: log F1(s) = -|s|^3/24 - |s|^1.5/(3 sqrt2) - log|s|/16 + log tau1
    # + O(|s|^-1.5), tau1 = 2^(-11/48) e^(zeta'(-1)/2); log F2(s) = -|s|^3/12
    # - log|s|/8 + log tau2 + O(|s|^-3), tau2 = 2^(1/24) e^(zeta'(-1)). The table
    # (pure Fredholm values) confirms both with error constants 0.03 and 0.05.
    zeta_prime = -0.16542114370045092  # zeta'(-1) = 1/12 - log A (Glaisher) [memory]
    a = -s
    log_f1 = -(a**3) / 24 - a**1.5 / (3 * math.sqrt(2)) - math.log(a) / 16
    log_f1 += -11 / 48 * math.log(2) + zeta_prime / 2
    log_f2 = -(a**3) / 12 - math.log(a) / 8 + math.log(2) / 24 + zeta_prime
    assert abs(TW1.logcdf(s) - log_f1) < 0.04 * a**-1.5
    assert abs(TW2.logcdf(s) - log_f2) < 0.06 * a**-3


# --- moments -------------------------------------------------------------------------


@pytest.mark.parametrize(
    "tw, mean, var, skew, kurt",
    [
        # Bornemann (2010, Markov Process. Relat. Fields 16, table of moments), from
        # memory; the Fredholm determinant reproduces them [computed] to 12-13 digits.
        (TW1, -1.2065335745820, 1.6077810345810, 0.29346452408, 0.1652429384),
        (TW2, -1.771086807411, 0.8131947928329, 0.224084203610, 0.0934480876),
    ],
)
def test_moments_vs_bornemann(tw, mean, var, skew, kurt):
    assert tw.mean() == pytest.approx(mean, rel=1e-9, abs=0)
    assert tw.var() == pytest.approx(var, rel=1e-9, abs=0)
    assert tw.std() == pytest.approx(math.sqrt(var), rel=1e-9, abs=0)
    m = tw.mean()
    central3 = tw.moment(3) - 3 * m * tw.moment(2) + 2 * m**3
    central4 = tw.moment(4) - 4 * m * tw.moment(3) + 6 * m**2 * tw.moment(2) - 3 * m**4
    # Skewness and excess kurtosis to all the published digits.
    assert central3 / tw.var() ** 1.5 == pytest.approx(skew, abs=1e-11)
    assert central4 / tw.var() ** 2 - 3 == pytest.approx(kurt, abs=1e-10)
    assert tw.moment(0) == pytest.approx(1.0, abs=1e-13)


def test_moments_vs_tracy_widom_1996_four_digits():
    # Tracy & Widom (1996, CMP 177) 4-digit values, from memory.
    assert round(TW1.mean(), 4) == -1.2065
    assert round(TW1.std(), 4) == 1.2680
    assert round(TW2.mean(), 4) == -1.7711
    assert round(TW2.std(), 4) == 0.9018


# --- quantiles -----------------------------------------------------------------------

TW1_QUANTILES = {
    # Fredholm determinant quantiles [computed, brentq to 1e-14] and Johnstone (2001,
    # Ann. Statist. 29(2), Table 1, TW1 limit row, 2 decimals) from memory.
    0.01: (-3.8954326731, -3.90),
    0.05: (-3.1803799769, -3.18),
    0.10: (-2.7824279057, -2.78),
    0.30: (-1.9103797462, -1.91),
    0.50: (-1.2685746166, -1.27),
    0.70: (-0.5922871910, -0.59),
    0.90: (0.4501432891, 0.45),
    0.95: (0.9793160535, 0.98),
    0.99: (2.0234492814, 2.02),
}


@pytest.mark.parametrize("p, values", TW1_QUANTILES.items())
def test_tw1_quantiles(p, values):
    computed, johnstone = values
    assert TW1.ppf(p) == pytest.approx(computed, abs=1e-9)
    assert TW1.isf(1 - p) == pytest.approx(computed, abs=1e-9)
    assert round(TW1.ppf(p), 2) == johnstone


@pytest.mark.parametrize(
    "p, value",
    # Tracy & Widom 1994, CMP 159: TW2 quantiles [computed], 8 decimals.
    [
        (0.01, -3.72444595),
        (0.05, -3.19416673),
        (0.5, -1.80491241),
        (0.95, -0.23247447),
        (0.99, 0.47763605),
    ],
)
def test_tw2_quantiles(p, value):
    assert TW2.ppf(p) == pytest.approx(value, abs=1e-8)


@pytest.mark.parametrize("tw", [TW1, TW2])
def test_round_trips(tw):
    x = np.linspace(-12.0, 40.0, 521)
    lower = x < 0
    np.testing.assert_allclose(tw.ppf(tw.cdf(x[lower])), x[lower], rtol=1e-12)
    upper = x > -2
    np.testing.assert_allclose(tw.isf(tw.sf(x[upper])), x[upper], rtol=1e-12)
    p = np.array([1e-300, 1e-30, 1e-12, 1e-6, 0.2, 0.5, 0.8])
    np.testing.assert_allclose(tw.cdf(tw.ppf(p)), p, rtol=1e-12)
    np.testing.assert_allclose(tw.sf(tw.isf(p)), p, rtol=1e-12)


@pytest.mark.parametrize("tw", [TW1, TW2])
def test_quantile_edges(tw):
    out = tw.ppf([0.0, 1.0, -0.1, 1.1, np.nan])
    assert out[0] == -np.inf and out[1] == np.inf
    assert np.isnan(out[2:]).all()
    assert tw.isf(0.0) == np.inf and tw.isf(1.0) == -np.inf


# --- structure -----------------------------------------------------------------------


@pytest.mark.parametrize("tw", [TW1, TW2])
def test_monotone_and_finite_tails(tw):
    x = np.linspace(-50.0, 50.0, 40001)
    cdf, sf, pdf = tw.cdf(x), tw.sf(x), tw.pdf(x)
    assert np.all(np.isfinite(cdf)) and np.all(np.isfinite(sf)) and np.all(pdf >= 0)
    assert np.all(np.diff(cdf) >= 0) and np.all(np.diff(sf) <= 0)
    assert np.all(np.diff(tw.logcdf(x)) > 0) and np.all(np.diff(tw.logsf(x)) <= 0)
    assert tw.cdf(-50.0) == 0.0 and tw.sf(50.0) < 1e-100
    assert np.isfinite(tw.logcdf(-50.0)) and np.isfinite(tw.logsf(50.0))
    assert tw.cdf(-np.inf) == 0.0 and tw.cdf(np.inf) == 1.0
    assert tw.pdf(-np.inf) == 0.0 and tw.pdf(np.inf) == 0.0


@pytest.mark.parametrize("tw", [TW1, TW2])
def test_cdf_plus_sf_is_one(tw):
    x = np.linspace(-10.0, 20.0, 3001)
    np.testing.assert_allclose(tw.cdf(x) + tw.sf(x), 1.0, rtol=0, atol=2e-15)


def _derivative(f, x, h):
    """Fourth-order central difference."""
    return (-f(x + 2 * h) + 8 * f(x + h) - 8 * f(x - h) + f(x - 2 * h)) / (12 * h)


@pytest.mark.parametrize("tw", [TW1, TW2])
def test_pdf_is_derivative_of_cdf(tw):
    # Error h^4 f^(5)/30 + 1e-16/h: below 1e-12 for |x| <= 8 at h = 1e-3.
    x = np.linspace(-8.0, 8.0, 161)
    deriv = _derivative(tw.cdf, x, 1e-3)
    np.testing.assert_allclose(tw.pdf(x), deriv, rtol=0, atol=1e-12)
    # relatively in both tails, through log cdf (left) and log sf (right)
    xl = np.linspace(-12.0, -2.0, 40)  # avoids the table edge at -8
    deriv_left = tw.cdf(xl) * _derivative(tw.logcdf, xl, 1e-3)
    np.testing.assert_allclose(tw.pdf(xl), deriv_left, rtol=1e-6)
    xr = np.linspace(2.0, 30.0, 29)
    deriv_right = -tw.sf(xr) * _derivative(tw.logsf, xr, 1e-3)
    np.testing.assert_allclose(tw.pdf(xr), deriv_right, rtol=1e-9)


@pytest.mark.parametrize("tw", [TW1, TW2])
def test_pdf_integrates_to_one(tw):
    total = integrate.quad(tw.pdf, -np.inf, np.inf, epsabs=1e-14, limit=200)[0]
    assert total == pytest.approx(1.0, abs=1e-11)


@pytest.mark.parametrize("tw", [TW1, TW2])
@pytest.mark.parametrize("edge", [-8.0, 16.0])
def test_continuous_at_table_edges(tw, edge):
    eps = 1e-12
    for f in (tw.logcdf, tw.logsf):
        assert f(edge - eps) == pytest.approx(f(edge + eps), rel=1e-10, abs=1e-13)
    # the density switches to the tail formulas: at -8 the asymptotic log-derivative
    # is off by 3e-5 relative (of a density of 2e-11, see Notes), at 16 by < 1e-20
    rel = 1e-4 if edge < 0 else 1e-10
    assert tw.pdf(edge - eps) == pytest.approx(tw.pdf(edge + eps), rel=rel, abs=0)


def test_scalar_and_array_io():
    assert isinstance(TW1.cdf(0.0), float)
    assert isinstance(TW1.ppf(0.5), float)
    assert isinstance(TW1.rvs(random_state=0), float)
    assert TW1.cdf([[0.0, 1.0]]).shape == (1, 2)
    assert TW1.rvs(size=(2, 3), random_state=0).shape == (2, 3)
    assert np.isnan(TW1.cdf(np.nan)) and np.isnan(TW1.sf(np.nan))
    assert TW1.support() == (-math.inf, math.inf)
    assert repr(TW2) == "TracyWidom(beta=2)"
    assert repr(TracyWidom(beta=np.int64(1))) == "TracyWidom(beta=1)"


def test_rvs_reproducible_and_distributed():
    a = TW1.rvs(size=4000, random_state=np.random.default_rng(3))
    b = TW1.rvs(size=4000, random_state=3)
    np.testing.assert_array_equal(a, b)
    assert stats.kstest(a, TW1.cdf).pvalue > 0.01
    c = TW2.rvs(size=4000, random_state=np.random.RandomState(5))
    assert stats.kstest(c, TW2.cdf).pvalue > 0.01
    assert stats.kstest(c, TW1.cdf).pvalue < 1e-6


@pytest.mark.parametrize("beta", [0, 3, 1.0, "1", None, True])
def test_invalid_beta(beta):
    with pytest.raises((ValueError, TypeError), match="'beta' parameter of TracyWidom"):
        TracyWidom(beta=beta)


def test_invalid_random_state():
    with pytest.raises(TypeError, match="'random_state' parameter of TracyWidom.rvs"):
        TW1.rvs(size=2, random_state="seed")


def test_frozen():
    with pytest.raises(AttributeError):
        TW1.beta = 2
