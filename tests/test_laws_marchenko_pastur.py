"""Tests of rmtclean.laws.MarchenkoPastur against published values and simulation.

Source: Marchenko & Pastur 1967, Math. USSR-Sbornik 1(4) (formulas from memory,
checked by numerical integration); values [computed] by quadrature."""

import math

import numpy as np
import pytest
from scipy import integrate, stats

from rmtclean.laws import MarchenkoPastur

RATIOS = [0.25, 0.5, 1.0, 2.0]


def _quad(law, func, upper=None, near=None, eps=1e-14):
    """int_{lower}^{upper} func(x) pdf(x) dx with x = a + (b - a)(1 - cos t)/2.

    The substitution x = a + (b - a)(1 - cos t)/2 removes the square-root edges (and the
    1/sqrt(x) pole at ratio 1); written here independently of the library's cdf.
    1 - cos t is evaluated as 2 sin(t/2)^2 to keep small x accurate. ``near``: an x
    where the integrand peaks, passed to quad as a break point; ``eps``: absolute
    tolerance (relative 10 eps).
    """
    a, b = law.support()
    t_end = math.pi if upper is None else math.acos(1 - 2 * (upper - a) / (b - a))

    def integrand(t):
        x = a + (b - a) * math.sin(t / 2) ** 2
        return func(x) * law.pdf(x) * (b - a) * math.sin(t) / 2

    points = None
    if near is not None and a < near < b:
        points = [2 * math.asin(math.sqrt((near - a) / (b - a)))]
    return integrate.quad(
        integrand, 0.0, t_end, epsabs=eps, epsrel=10 * eps, limit=200, points=points
    )[0]


# --- Marchenko & Pastur (1967) values
# ---------------------------------------------------------

# Marchenko & Pastur (1967); Math. USSR-Sbornik 1(4); values [computed; quadrature]:
# q: (lambda_-, lambda_+, Q(0.10), Q(0.25), median, Q(0.75), Q(0.90))
MP_TABLE = {
    0.25: (0.25, 2.25, 0.3978807559, 0.5766285527, 0.9160040707, 1.3654806833,
           1.7514228291),
    0.5: (0.0857864376, 2.9142135624, 0.2088898864, 0.3982537717, 0.8304658816,
          1.4859216136, 2.0926948421),
    1.0: (0.0, 4.0, 0.0247249758, 0.1562525289, 0.6527759416, 1.6113996865,
          2.5945712079),
    2.0: (0.1715728753, 5.8284271247, 0.0, 0.0, 0.0, 1.6609317632, 3.3216745587),
}  # fmt: skip


@pytest.mark.parametrize("q, row", MP_TABLE.items())
def test_edges_and_quantiles(q, row):
    law = MarchenkoPastur(ratio=q)
    lower, upper, *quantiles = row
    # Edges s2 (1 -+ sqrt q)^2 [memory+checked], 10 decimals.
    assert law.lower_edge == pytest.approx(lower, abs=1e-10)
    assert law.upper_edge == pytest.approx(upper, abs=1e-10)
    assert law.support() == (law.lower_edge, law.upper_edge)
    got = law.ppf([0.10, 0.25, 0.50, 0.75, 0.90])
    np.testing.assert_allclose(got, quantiles, rtol=0, atol=1e-9)


@pytest.mark.parametrize(
    "q, x, value",
    [
        # Marchenko & Pastur 1967 densities [computed]; f(0.5) = f(0.1) = 2/pi exactly.
        (0.5, 0.5, 2 / math.pi),
        (0.5, 0.1, 2 / math.pi),
        (0.5, 1.0, 0.4210843993),
        (0.5, 2.0, 0.2105421997),
        (0.5, 2.9, 0.0219524059),
        (1.0, 1.0, 0.2756644477),
        (2.0, 1.0, 1 / (2 * math.pi)),
    ],
)
def test_density_values(q, x, value):
    assert MarchenkoPastur(ratio=q).pdf(x) == pytest.approx(value, abs=1e-10)


@pytest.mark.parametrize("q", RATIOS)
def test_pdf_mass(q):
    # Mass of the continuous part: 1 for q <= 1, 1/q for q > 1 (Marchenko & Pastur 1967,
    # [memory+checked]); recomputed here by quadrature.
    law = MarchenkoPastur(ratio=q)
    mass = _quad(law, lambda x: 1.0)
    assert mass == pytest.approx(min(1.0, 1.0 / q), abs=1e-12)
    assert law.atom == pytest.approx(max(0.0, 1 - 1 / q), abs=1e-15)


@pytest.mark.parametrize("q", RATIOS)
def test_moments_narayana(q):
    # Narayana form, Bai & Silverstein (2010, Ch. 3) from memory:
    # closed forms of m1..m4, and quadrature of the density [computed] here.
    law = MarchenkoPastur(ratio=q, variance=1.0)
    closed = [1.0, 1 + q, 1 + 3 * q + q**2, 1 + 6 * q + 6 * q**2 + q**3]
    for k in range(1, 5):
        assert law.moment(k) == pytest.approx(closed[k - 1], rel=1e-14, abs=0)
        by_quad = _quad(law, lambda x, k=k: x**k)
        assert law.moment(k) == pytest.approx(by_quad, rel=1e-11, abs=0)
    assert law.moment(0) == 1.0
    assert law.mean() == 1.0 and law.var() == pytest.approx(q, rel=1e-15, abs=0)


def test_moments_ratio_two():
    # Marchenko & Pastur 1967 [computed: q = 2 gives m2 = 3, m3 = 11, m4 = 45 by
    # quadrature].
    law = MarchenkoPastur(ratio=2.0)
    assert [law.moment(k) for k in (2, 3, 4)] == [3.0, 11.0, 45.0]


def test_scaling_with_variance():
    # Quantiles scale linearly in s2: median(q = 0.5, s2 = 2) = 1.6609317632
    # (Marchenko & Pastur 1967 [computed]).
    law = MarchenkoPastur(ratio=0.5, variance=2.0)
    base = MarchenkoPastur(ratio=0.5)
    assert law.ppf(0.5) == pytest.approx(1.6609317632, abs=1e-9)
    x = np.linspace(-0.5, 7.0, 301)
    np.testing.assert_allclose(law.cdf(x), base.cdf(x / 2), rtol=0, atol=1e-15)
    np.testing.assert_allclose(law.pdf(x), base.pdf(x / 2) / 2, rtol=1e-14, atol=0)
    assert law.moment(3) == pytest.approx(8 * base.moment(3), rel=1e-15, abs=0)
    assert law.var() == 4 * base.var()
    assert law.support() == pytest.approx((2 * base.lower_edge, 2 * base.upper_edge))


@pytest.mark.parametrize("q", RATIOS)
def test_cdf_matches_quadrature_of_pdf(q):
    # Closed-form cdf vs quadrature of the density [computed] here.
    law = MarchenkoPastur(ratio=q, variance=1.3)
    a, b = law.support()
    for x in a + (b - a) * np.array([0.001, 0.1, 0.37, 0.5, 0.81, 0.999]):
        assert law.cdf(x) == pytest.approx(
            law.atom + _quad(law, lambda t: 1.0, x), abs=1e-13
        )


@pytest.mark.parametrize("q", RATIOS)
def test_sf_relative_near_upper_edge(q):
    # sf by its own formula keeps relative accuracy where 1 - cdf cannot: compare with
    # the quadrature of the density from x to the edge [computed] here, written with
    # t = b - w^2 so that the integrand 2 w^2 sqrt(b - a - w^2) / (b - w^2) is smooth.
    law = MarchenkoPastur(ratio=q, variance=0.7)
    a, b = law.support()
    norm = 2 * math.pi * law.variance * q

    def integrand(w):
        return 2 * w * w * math.sqrt(b - a - w * w) / (b - w * w) / norm

    for delta in (0.5, 1e-1, 1e-3, 1e-6, 1e-9, 1e-12):
        x = b - delta
        width = math.sqrt(b - x)  # b - x is exact in floating point
        expected = integrate.quad(integrand, 0.0, width, epsabs=0, epsrel=2e-14)[0]
        assert law.sf(x) == pytest.approx(expected, rel=1e-13, abs=0)


@pytest.mark.parametrize("q", RATIOS)
def test_distribution_structure(q):
    law = MarchenkoPastur(ratio=q)
    a, b = law.support()
    x = np.linspace(-1.0, b + 1.0, 4001)
    cdf, sf = law.cdf(x), law.sf(x)
    assert np.all(np.diff(cdf) >= 0) and np.all(np.diff(sf) <= 0)
    np.testing.assert_allclose(cdf + sf, 1.0, rtol=0, atol=1e-15)
    assert law.cdf(b) == 1.0 and law.sf(b) == 0.0 and law.cdf(-1e-300) == 0.0
    assert np.all(law.pdf(x[(x < a) | (x > b)]) == 0.0)
    # pdf = derivative of cdf inside the support (fourth-order central difference)
    xi = a + (b - a) * np.linspace(0.05, 0.95, 37)
    h = 1e-4
    deriv = (-law.cdf(xi + 2 * h) + 8 * law.cdf(xi + h) - 8 * law.cdf(xi - h)
             + law.cdf(xi - 2 * h)) / (12 * h)  # fmt: skip
    np.testing.assert_allclose(law.pdf(xi), deriv, rtol=1e-8)
    # round trips on the continuous part
    p = np.linspace(law.atom + 1e-6, 1 - 1e-6, 201)
    np.testing.assert_allclose(law.cdf(law.ppf(p)), p, rtol=0, atol=1e-14)
    np.testing.assert_allclose(law.sf(law.isf(1 - p)), 1 - p, rtol=1e-12, atol=0)


@pytest.mark.parametrize("q", RATIOS)
def test_isf_upper_tail(q):
    # isf solves sf(x) = p directly: it resolves p far below 1e-16, where ppf(1 - p)
    # cannot; the result is the floating-point x whose neighbours bracket p.
    law = MarchenkoPastur(ratio=q, variance=1.7)
    p = np.array([1e-18, 1e-15, 1e-12, 1e-6, 0.01, 0.3])
    x = law.isf(p)
    assert np.all(x < law.upper_edge) and np.all(np.diff(x) < 0)
    assert np.all(law.sf(np.nextafter(x, np.inf)) <= p)
    assert np.all(law.sf(np.nextafter(x, -np.inf)) >= p)
    np.testing.assert_allclose(law.isf(0.4), law.ppf(0.6), rtol=1e-14)
    assert law.isf(0.0) == law.upper_edge
    assert law.isf(1.0) == (0.0 if q > 1 else law.lower_edge)
    assert np.isnan(law.isf([-0.1, 1.1])).all()


def test_atom_for_ratio_above_one():
    law = MarchenkoPastur(ratio=4.0)
    a = law.lower_edge
    # jump of 1 - 1/q at 0, flat up to the lower edge (Marchenko & Pastur 1967)
    assert law.cdf(-1e-12) == 0.0
    assert law.cdf(0.0) == 0.75
    assert law.cdf(a / 2) == 0.75 and law.sf(a / 2) == 0.25
    assert law.cdf(a) == 0.75
    np.testing.assert_array_equal(law.ppf([0.0, 0.3, 0.75]), [0.0, 0.0, 0.0])
    assert law.ppf(0.75 + 1e-9) > a
    assert MarchenkoPastur(ratio=0.5).ppf(0.0) == MarchenkoPastur(ratio=0.5).lower_edge


def test_ratio_one_pole_at_zero():
    law = MarchenkoPastur(ratio=1.0)
    assert law.pdf(0.0) == math.inf and law.cdf(0.0) == 0.0
    # f(x) ~ 1/(pi sqrt x) as x -> 0 for q = 1 (from the density formula)
    assert law.pdf(1e-10) * math.pi * 1e-5 == pytest.approx(1.0, rel=1e-9, abs=0)


# --- Stieltjes transform --------------------------------------------------------------


def test_stieltjes_reference_value():
    # Marchenko & Pastur 1967 [computed: matches quadrature at z = 1.3 - 0.05i, q =
    # 0.5].
    g = MarchenkoPastur(ratio=0.5).stieltjes(1.3 - 0.05j)
    assert isinstance(g, complex)
    assert g.real == pytest.approx(0.5800497132, abs=1e-10)
    assert g.imag == pytest.approx(1.0614717265, abs=1e-10)


@pytest.mark.parametrize("q", [0.25, 0.5, 1.0, 2.0])
@pytest.mark.parametrize("z", [1.3 - 0.05j, 1.3 + 0.05j, -0.7 + 0.2j, 6.0 + 0.0j,
                               0.05 + 0.01j, 2.0 + 3.0j])  # fmt: skip
def test_stieltjes_vs_quadrature(q, z):
    # g(z) = int dF(t)/(z - t), physics sign (Bun, Bouchaud & Potters 2017) [computed]
    # by quadrature here; for q > 1 the atom adds (1 - 1/q)/z.
    law = MarchenkoPastur(ratio=q, variance=0.8)
    # quadrature to 1e-12 suffices for the 1e-9 check (peaked integrands near the
    # support hit quad's round-off limit at tighter tolerances)
    re = _quad(law, lambda t: (1 / (z - t)).real, near=z.real, eps=1e-12)
    im = _quad(law, lambda t: (1 / (z - t)).imag, near=z.real, eps=1e-12)
    expected = complex(re, im) + law.atom / z
    assert abs(law.stieltjes(z) - expected) < 1e-9 * max(1.0, abs(expected))


def test_stieltjes_boundary_values():
    law = MarchenkoPastur(ratio=0.5)
    x = np.linspace(0.2, 2.8, 27)
    # real z inside the support: limit from above, Im g(x + i0) = -pi f(x)
    np.testing.assert_allclose(law.stieltjes(x).imag, -np.pi * law.pdf(x), rtol=1e-12)
    # g(0) = -E[1/X] = -1/(s2 (1 - q)) for q < 1 (MP inverse moment, known)
    assert law.stieltjes(0.0) == pytest.approx(-2.0, abs=1e-15)
    # g(z) ~ 1/z + m1/z^2 + m2/z^3 at large z
    z = 1e3 + 1e3j
    series = 1 / z + law.moment(1) / z**2 + law.moment(2) / z**3
    assert abs(law.stieltjes(z) - series) < 1e-11
    zs = np.array([1.0 + 0.3j, -2.0 - 1.0j])
    np.testing.assert_allclose(law.stieltjes(zs.conj()), law.stieltjes(zs).conj())
    assert np.isnan(MarchenkoPastur(ratio=2.0).stieltjes(0.0))


# --- simulation -----------------------------------------------------------------------


def _wishart_eigenvalues(entries, n_features, n_samples, n_reps, seed):
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n_reps):
        if entries == "gaussian":
            x = rng.standard_normal((n_samples, n_features))
        else:
            x = rng.choice([-1.0, 1.0], size=(n_samples, n_features))
        out.append(np.linalg.eigvalsh(x.T @ x / n_samples))
    return np.concatenate(out)


@pytest.mark.parametrize("entries", ["gaussian", "rademacher"])
def test_ks_distance_of_wishart_eigenvalues(entries):
    # N = 400, T = 800, 3 matrices pooled. Eigenvalues of one matrix are not
    # independent (they repel), so a KS p-value would be meaningless; the distance
    # itself is bounded. Measured: 0.0037 (Gaussian), 0.0045 (+-1); the laws with a
    # 10% wrong ratio or a 5% wrong variance are at 0.024 or more, so the bound 0.01
    # separates them (universality of MP: any iid entries with unit variance).
    ev = _wishart_eigenvalues(entries, 400, 800, 3, seed=20240)
    assert stats.kstest(ev, MarchenkoPastur(ratio=0.5).cdf).statistic < 0.01
    for wrong in (
        MarchenkoPastur(0.55),
        MarchenkoPastur(0.45),
        MarchenkoPastur(0.5, 1.05),
    ):
        assert stats.kstest(ev, wrong.cdf).statistic > 0.02


def test_ks_wishart_ratio_above_one():
    # N = 600 > T = 300: the N - T zero eigenvalues are the atom of mass 1 - 1/q.
    ev = _wishart_eigenvalues("gaussian", 600, 300, 1, seed=7)
    ev = np.where(np.abs(ev) < 1e-8, 0.0, ev)
    law = MarchenkoPastur(ratio=2.0)
    assert np.mean(ev == 0.0) == 0.5
    # KS needs a continuous cdf: compare the nonzero part with the continuous part.

    def cond_cdf(x):
        return (law.cdf(x) - law.atom) / (1 - law.atom)

    assert stats.kstest(ev[ev > 0], cond_cdf).statistic < 0.01


@pytest.mark.parametrize("q", [0.5, 2.0])
def test_rvs(q):
    law = MarchenkoPastur(ratio=q)
    draws = law.rvs(size=5000, random_state=11)
    np.testing.assert_array_equal(draws, law.rvs(size=5000, random_state=11))
    nonzero = draws[draws > 0]
    # iid draws by inversion: a proper KS test on the continuous part, and a
    # binomial check of the atom (4 standard errors)
    mass = 1 - law.atom

    def cond_cdf(x):
        return (law.cdf(x) - law.atom) / mass

    assert stats.kstest(nonzero, cond_cdf).pvalue > 0.01
    se = math.sqrt(law.atom * (1 - law.atom) / draws.size)
    assert abs(np.mean(draws == 0) - law.atom) <= 4 * se + 1e-12
    assert isinstance(law.rvs(random_state=np.random.RandomState(0)), float)


# --- validation and I/O ---------------------------------------------------------------


@pytest.mark.parametrize("name", ["ratio", "variance"])
@pytest.mark.parametrize("value", [0.0, -1.0, float("nan"), float("inf"), "1", None])
def test_invalid_parameters(name, value):
    kwargs = {"ratio": 0.5, "variance": 1.0, name: value}
    pattern = (
        rf"The '{name}' parameter of MarchenkoPastur must be a float in the range "
        rf"\(0, inf\)\. Got {repr(value)} instead\."
    )
    with pytest.raises(ValueError, match=pattern):
        MarchenkoPastur(**kwargs)


def test_io_and_repr():
    law = MarchenkoPastur(ratio=1, variance=2)
    assert repr(law) == "MarchenkoPastur(ratio=1.0, variance=2.0)"
    assert isinstance(law.cdf(1.0), float) and isinstance(law.pdf(1.0), float)
    assert isinstance(law.ppf(0.5), float) and isinstance(law.sf(1.0), float)
    assert law.cdf([[1.0, 2.0]]).shape == (1, 2)
    assert np.isnan(law.cdf(np.nan)) and np.isnan(law.pdf(np.nan))
    assert np.isnan(law.ppf([-0.1, 1.1])).all()
    with pytest.raises(AttributeError):
        law.ratio = 0.3
    with pytest.raises(ValueError, match="'order' parameter of MarchenkoPastur.moment"):
        law.moment(-1)
