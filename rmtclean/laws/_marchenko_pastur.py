"""The Marchenko-Pastur law of the eigenvalues of a white sample covariance."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from rmtclean._validation import Interval, check_value
from rmtclean.laws._common import (
    InverseSampling,
    bisect_increasing,
    check_positive,
    finish,
    real_array,
)

__all__ = ["MarchenkoPastur"]

#: 8-point Gauss-Legendre nodes and weights of the edge quadratures (computed
#: once: numpy builds them from an eigenproblem on every call).
_GAUSS8 = np.polynomial.legendre.leggauss(8)


@dataclass(frozen=True)
class MarchenkoPastur(InverseSampling):
    r"""Marchenko-Pastur law with ratio ``q = N/T`` and noise variance ``s2``.

    The limit of the eigenvalue distribution of ``S = X'X / T`` for a
    ``T x N`` matrix ``X`` of iid entries with mean 0 and variance ``s2``,
    as ``N, T -> inf`` with ``N/T -> q``. Methods follow scipy.stats: they
    take array_like input, broadcast, and return a float for scalar input.

    Parameters
    ----------
    ratio : float
        ``q = n_features / n_samples``, in ``(0, inf)``.
    variance : float, default=1.0
        Noise variance ``s2``, in ``(0, inf)``.

    Attributes
    ----------
    lower_edge, upper_edge : float
        :math:`s^2 (1 \mp \sqrt q)^2`, the edges of the continuous part.
    atom : float
        Mass ``max(0, 1 - 1/q)`` of the point mass at 0.

    See Also
    --------
    WignerSemicircle : the law of symmetric matrices with iid entries.
    TracyWidom : fluctuations of the largest eigenvalue at ``upper_edge``.

    Notes
    -----
    With :math:`\lambda_\pm = s^2(1 \pm \sqrt q)^2` the continuous part has
    density

    .. math::

        f(x) = \frac{\sqrt{(\lambda_+ - x)(x - \lambda_-)}}{2\pi s^2 q x},
        \qquad \lambda_- \le x \le \lambda_+,

    of mass 1 for :math:`q \le 1` and :math:`1/q` for :math:`q > 1`, when
    the law also has an atom of mass :math:`1 - 1/q` at 0 (the null space
    of ``S``). ``pdf`` is the continuous part only; ``cdf`` includes the
    jump at 0. The cdf is in closed form: with :math:`m, r` the centre and
    half-width of the support and :math:`x = m - r\cos\varphi`,

    .. math::

        \int_{\lambda_-}^x \frac{\sqrt{(\lambda_+ - t)(t - \lambda_-)}}{t}dt
        = m\varphi + r\sin\varphi - 2\sqrt{\lambda_+\lambda_-}\,
          \arctan\Big(\sqrt{\lambda_+/\lambda_-}\tan\frac{\varphi}{2}\Big);

    the survival function uses the mirror formula from the upper edge, and
    close to that edge (angle below 0.1) 8-point Gauss-Legendre quadrature of
    :math:`\int_0^\theta r^2\sin^2 u/(m + r\cos u)\,du`, which keeps its
    relative accuracy where the closed form cancels. ``ppf`` inverts the cdf
    by bisection and Newton steps; ``rvs`` draws by inversion (zeros with
    probability ``atom``).

    The Stieltjes transform (physics sign, Bun, Bouchaud & Potters 2017)
    is, with principal square roots taken separately,

    .. math::

        g(z) = \int \frac{dF(t)}{z - t}
             = \frac{z + s^2(q - 1) - \sqrt{z - \lambda_+}\sqrt{z - \lambda_-}}
                    {2 q s^2 z},

    valid in both half-planes; for :math:`q > 1` it contains the atom's
    term :math:`(1 - 1/q)/z`.

    References
    ----------
    .. [1] V. A. Marchenko and L. A. Pastur, "Distribution of eigenvalues
       for some sets of random matrices", Math. USSR-Sbornik 1(4) (1967).
    .. [2] Z. Bai and J. W. Silverstein, *Spectral Analysis of Large
       Dimensional Random Matrices*, Springer (2010), Ch. 3.
    .. [3] J. Bun, J.-P. Bouchaud and M. Potters, "Cleaning large correlation
       matrices: tools from random matrix theory", Phys. Rep. 666 (2017).

    Examples
    --------
    >>> from rmtclean.laws import MarchenkoPastur
    >>> mp = MarchenkoPastur(ratio=0.5)
    >>> mp
    MarchenkoPastur(ratio=0.5, variance=1.0)
    >>> [round(e, 6) for e in mp.support()]
    [0.085786, 2.914214]
    >>> round(mp.ppf(0.5), 8)
    0.83046588
    >>> round(MarchenkoPastur(ratio=2.0).cdf(0.0), 12)
    0.5
    >>> mp.rvs(size=3, random_state=0).round(4)
    array([1.1527, 0.4266, 0.1428])
    """

    ratio: float
    variance: float = 1.0

    def __post_init__(self):
        for name in ("ratio", "variance"):
            value = check_positive(getattr(self, name), name, "MarchenkoPastur")
            object.__setattr__(self, name, value)

    @property
    def lower_edge(self) -> float:
        """Lower edge :math:`s^2 (1 - \\sqrt q)^2` of the continuous part."""
        return self.variance * (1.0 - math.sqrt(self.ratio)) ** 2

    @property
    def upper_edge(self) -> float:
        """Upper edge :math:`s^2 (1 + \\sqrt q)^2` (the bulk edge)."""
        return self.variance * (1.0 + math.sqrt(self.ratio)) ** 2

    @property
    def atom(self) -> float:
        """Mass of the point mass at 0: ``max(0, 1 - 1/ratio)``."""
        return max(0.0, 1.0 - 1.0 / self.ratio)

    def support(self) -> tuple[float, float]:
        """Edges ``(lower_edge, upper_edge)`` of the continuous part.

        For ``ratio > 1`` the atom at 0 lies below ``lower_edge``.
        """
        return (self.lower_edge, self.upper_edge)

    def pdf(self, x: ArrayLike):
        """Density of the continuous part (mass ``min(1, 1/ratio)``)."""
        x = real_array(x, "x", "MarchenkoPastur.pdf")
        a, b = self.support()
        inside = (x > a) & (x < b)
        xi = np.where(inside, x, 0.5 * (a + b))
        dens = np.sqrt((b - xi) * (xi - a)) / (
            2.0 * np.pi * self.variance * self.ratio * xi
        )
        out = np.where(inside, dens, 0.0)
        out = np.where(np.isnan(x), np.nan, out)
        if self.ratio == 1.0:
            out = np.where(x == 0.0, np.inf, out)
        return finish(out)

    def _tails(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Continuous mass below and above x, each from its own edge."""
        a, b = self.support()
        m, sqrt_ab = 0.5 * (a + b), math.sqrt(a * b)
        xc = np.clip(np.atleast_1d(x), a, b)
        root = np.sqrt((b - xc) * (xc - a))
        phi = np.arctan2(root, m - xc)  # angle from the lower edge
        theta = np.arctan2(root, xc - m)  # angle from the upper edge
        sa, sb = math.sqrt(a), math.sqrt(b)
        below = (
            m * phi
            + root
            - 2.0 * sqrt_ab * np.arctan2(sb * np.sin(phi / 2), sa * np.cos(phi / 2))
        )
        above = (
            m * theta
            - root
            - 2.0 * sqrt_ab * np.arctan2(sa * np.sin(theta / 2), sb * np.cos(theta / 2))
        )
        r = 0.5 * (b - a)
        nodes, weights = _GAUSS8
        near = theta < 0.1  # there the closed form loses eps / theta^2 relative
        if np.any(near):
            th = theta[near][..., None]
            u = 0.5 * th * (nodes + 1.0)
            integrand = r * r * np.sin(u) ** 2 / (m + r * np.cos(u))
            above[near] = 0.5 * th[..., 0] * (integrand @ weights)
        # The mirror formula at the lower edge, where the closed form loses
        # about eps a / (r phi)^2 relative (negative and non-monotone cdf
        # for small ratios); only where the integrand, whose denominator
        # a + 2 r sin^2(u/2) is written without cancellation, varies on a
        # scale wider than phi (r phi^2 < 2a), which 8 nodes resolve.
        near = (phi < 0.1) & (r * phi * phi < 2.0 * a)
        if np.any(near):
            ph = phi[near][..., None]
            u = 0.5 * ph * (nodes + 1.0)
            integrand = r * r * np.sin(u) ** 2 / (a + 2.0 * r * np.sin(0.5 * u) ** 2)
            below[near] = 0.5 * ph[..., 0] * (integrand @ weights)
        norm = 2.0 * np.pi * self.variance * self.ratio
        return (below / norm).reshape(np.shape(x)), (above / norm).reshape(np.shape(x))

    def _cdf_sf(self, x: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        x = real_array(x, "x", "MarchenkoPastur.cdf/sf")
        below, above = self._tails(x)
        mass = 1.0 - self.atom
        low_half = x < 0.5 * sum(self.support())
        cdf = np.where(low_half, self.atom + below, 1.0 - above)
        sf = np.where(low_half, mass - below, above)
        cdf = np.where(x < 0.0, 0.0, cdf)
        sf = np.where(x < 0.0, 1.0, sf)
        nan = np.isnan(x)
        return np.where(nan, np.nan, cdf), np.where(nan, np.nan, sf)

    def cdf(self, x: ArrayLike):
        """Distribution function, with the jump ``atom`` at 0 for ratio > 1."""
        return finish(self._cdf_sf(x)[0])

    def sf(self, x: ArrayLike):
        """Survival function ``1 - cdf``, accurate near the upper edge."""
        return finish(self._cdf_sf(x)[1])

    def ppf(self, q: ArrayLike):
        """Quantile function ``inf{x : cdf(x) >= q}``; 0 for ``q <= atom``.

        NaN outside [0, 1].
        """
        p = real_array(q, "q", "MarchenkoPastur.ppf")
        a, b = self.support()
        out = bisect_increasing(self.cdf, p, a, b, deriv=self.pdf)
        out = np.where(p <= self.atom, 0.0, out) if self.atom > 0 else out
        out = np.where(p == 0.0, 0.0 if self.atom > 0 else a, out)
        out = np.where(p == 1.0, b, out)
        out = np.where((p >= 0.0) & (p <= 1.0), out, np.nan)
        return finish(out)

    def isf(self, q: ArrayLike):
        """Inverse survival function, solved on ``sf`` itself.

        Accurate for tiny upper-tail probabilities (``ppf(1 - q)`` would round
        ``q`` away); 0 for ``q >= 1 - atom`` when ratio > 1. NaN outside [0, 1].
        """
        q = real_array(q, "q", "MarchenkoPastur.isf")
        a, b = self.support()

        def minus_sf(x):
            return -self._cdf_sf(x)[1]

        out = bisect_increasing(minus_sf, -q, a, b, deriv=self.pdf)
        if self.atom > 0:
            out = np.where(q >= 1.0 - self.atom, 0.0, out)
        else:
            out = np.where(q == 1.0, a, out)
        out = np.where(q == 0.0, b, out)
        return finish(np.where((q >= 0.0) & (q <= 1.0), out, np.nan))

    def moment(self, order: int) -> float:
        r"""Raw moment :math:`E[X^k]` by the Narayana formula.

        .. math::

            m_k = s^{2k} \sum_{r=0}^{k-1} \frac{q^r}{r + 1}
                  \binom{k}{r}\binom{k - 1}{r};

        the atom at 0 adds nothing for :math:`k \ge 1`.
        """
        check_value(order, [Interval(int, 0, None)], "order", "MarchenkoPastur.moment")
        k, q = int(order), self.ratio
        if k == 0:
            return 1.0
        total = sum(
            q**r / (r + 1) * math.comb(k, r) * math.comb(k - 1, r) for r in range(k)
        )
        return self.variance**k * total

    def mean(self) -> float:
        """Mean, ``variance``."""
        return self.moment(1)

    def var(self) -> float:
        """Variance, ``variance**2 * ratio``."""
        return self.variance**2 * self.ratio

    def std(self) -> float:
        """Standard deviation."""
        return math.sqrt(self.var())

    def stieltjes(self, z: ArrayLike):
        """Stieltjes transform ``g(z) = E[1/(z - X)]`` (physics sign).

        For real ``z`` inside the support the value is the limit from the
        upper half-plane, ``z + i0`` (``Im g = -pi * pdf``), unless ``z``
        carries a negative zero imaginary part. At ``z = 0`` the value is
        ``-1/(variance (1 - ratio))`` for ratio < 1 and NaN otherwise (a
        pole, or a divergent integral at ratio = 1).
        """
        z = np.asarray(z, dtype=complex)
        a, b = self.support()
        s2, q = self.variance, self.ratio
        z_safe = np.where(z == 0, 1.0, z)
        g = (z_safe + s2 * (q - 1.0) - np.sqrt(z_safe - b) * np.sqrt(z_safe - a)) / (
            2.0 * q * s2 * z_safe
        )
        at_zero = -1.0 / (s2 * (1.0 - q)) if q < 1.0 else complex(np.nan, np.nan)
        return finish(np.where(z == 0, at_zero, g))
