"""The Wigner semicircle law of the eigenvalues of a symmetric random matrix."""

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

__all__ = ["WignerSemicircle"]


@dataclass(frozen=True)
class WignerSemicircle(InverseSampling):
    r"""Wigner semicircle law on ``[-radius, radius]``.

    The limit of the eigenvalue distribution of ``H / sqrt(N)`` for an
    ``N x N`` symmetric matrix ``H`` with iid off-diagonal entries of mean 0
    and variance ``radius**2 / 4`` (radius 2 for unit variance, e.g. GOE).
    Methods follow scipy.stats: they take array_like input, broadcast, and
    return a float for scalar input.

    Parameters
    ----------
    radius : float, default=2.0
        Half-width ``R`` of the support, in ``(0, inf)``.

    See Also
    --------
    MarchenkoPastur : the law of sample covariance matrices.

    Notes
    -----
    .. math::

        f(x) = \frac{2}{\pi R^2}\sqrt{R^2 - x^2}, \qquad
        1 - F(R\cos t) = \frac{t - \sin t \cos t}{\pi}, \quad 0 \le t \le \pi,

    the second written from the upper edge (with :math:`2t - \sin 2t` by its
    Taylor series for small :math:`t`), so that ``sf`` keeps its relative
    accuracy near ``R`` and ``cdf(x) = sf(-x)`` near ``-R``. The moments are
    :math:`E[X^{2k}] = (R/2)^{2k} C_k` with the Catalan numbers
    :math:`C_k = \binom{2k}{k}/(k+1)`; odd moments vanish. ``ppf`` inverts
    the cdf by bisection and Newton steps; ``rvs`` draws by inversion.

    References
    ----------
    .. [1] E. P. Wigner, "On the distribution of the roots of certain
       symmetric matrices", Ann. of Math. 67(2) (1958), 325-327.

    Examples
    --------
    >>> from rmtclean.laws import WignerSemicircle
    >>> sc = WignerSemicircle()
    >>> sc
    WignerSemicircle(radius=2.0)
    >>> round(sc.cdf(1.0), 10)
    0.8044988905
    >>> [sc.moment(k) for k in range(1, 7)]
    [0.0, 1.0, 0.0, 2.0, 0.0, 5.0]
    >>> sc.rvs(size=3, random_state=0).round(4)
    array([ 0.4337, -0.7405, -1.66  ])
    """

    radius: float = 2.0

    def __post_init__(self):
        value = check_positive(self.radius, "radius", "WignerSemicircle")
        object.__setattr__(self, "radius", value)

    def support(self) -> tuple[float, float]:
        """The support ``(-radius, radius)``."""
        return (-self.radius, self.radius)

    def pdf(self, x: ArrayLike):
        """Density :math:`2\\sqrt{R^2 - x^2}/(\\pi R^2)` on the support."""
        x = real_array(x, "x", "WignerSemicircle.pdf")
        r = self.radius
        inside = np.abs(x) < r
        xi = np.where(inside, x, 0.0)
        dens = 2.0 * np.sqrt((r - xi) * (r + xi)) / (np.pi * r * r)
        return finish(np.where(inside, dens, np.where(np.isnan(x), np.nan, 0.0)))

    def _sf(self, x: np.ndarray) -> np.ndarray:
        r = self.radius
        xc = np.clip(x, -r, r)
        u = 2.0 * np.arctan2(np.sqrt((r - xc) * (r + xc)), xc)
        # (u - sin u) / (2 pi); the Taylor series below u = 0.2 avoids cancellation
        u2 = u * u
        series = (
            u
            * u2
            / 6.0
            * (
                1.0
                - u2 / 20.0 * (1.0 - u2 / 42.0 * (1.0 - u2 / 72.0 * (1.0 - u2 / 110.0)))
            )
        )
        return np.where(u < 0.2, series, u - np.sin(u)) / (2.0 * np.pi)

    def cdf(self, x: ArrayLike):
        """Distribution function."""
        return finish(self._sf(-real_array(x, "x", "WignerSemicircle.cdf")))

    def sf(self, x: ArrayLike):
        """Survival function, accurate near the upper edge."""
        return finish(self._sf(real_array(x, "x", "WignerSemicircle.sf")))

    def ppf(self, q: ArrayLike):
        """Quantile function; NaN outside [0, 1]."""
        p = real_array(q, "q", "WignerSemicircle.ppf")
        out = bisect_increasing(self.cdf, p, -self.radius, self.radius, deriv=self.pdf)
        out = np.where(p == 0.0, -self.radius, np.where(p == 1.0, self.radius, out))
        return finish(np.where((p >= 0.0) & (p <= 1.0), out, np.nan))

    def isf(self, q: ArrayLike):
        """Inverse survival function (``-ppf(q)`` by symmetry)."""
        return finish(-np.asarray(self.ppf(q)))

    def moment(self, order: int) -> float:
        """Raw moment: ``(radius/2)**order * Catalan(order/2)`` for even order."""
        check_value(order, [Interval(int, 0, None)], "order", "WignerSemicircle.moment")
        k = int(order)
        if k % 2:
            return 0.0
        return (self.radius / 2.0) ** k * (math.comb(k, k // 2) / (k // 2 + 1))

    def mean(self) -> float:
        """Mean, 0."""
        return 0.0

    def var(self) -> float:
        """Variance, ``radius**2 / 4``."""
        return self.radius**2 / 4.0

    def std(self) -> float:
        """Standard deviation, ``radius / 2``."""
        return self.radius / 2.0
