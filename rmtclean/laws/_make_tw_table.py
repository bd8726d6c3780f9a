"""Regenerate ``_tw_table.npz``, the Tracy-Widom table of :class:`TracyWidom`.

Run ``python -m rmtclean.laws._make_tw_table`` (a few minutes on two cores);
``--check-only`` prints the errors of the shipped table without rewriting it.

The Tracy-Widom distributions are Fredholm determinants of the Airy Hankel
operator :math:`A_s(x, y) = \\mathrm{Ai}(x + y + s)` on :math:`L^2(0, \\infty)`
(Ferrari & Spohn 2005; Sasamoto 2005):

.. math::

    F_1(s) = \\det(I - A_s), \\qquad F_2(s) = \\det(I - A_s^2),

the second because :math:`A_s^2` is the Airy kernel on :math:`L^2(s, \\infty)`
(Tracy & Widom 1994). With the eigenvalues :math:`\\mu_i` of the Nystrom
matrix (Gauss-Legendre, Bornemann 2010)

.. math::

    \\log F_1 = \\sum_i \\log(1 - \\mu_i), \\qquad
    \\log F_2 = \\sum_i \\log(1 - \\mu_i^2),

and ``sf = -expm1(log F)`` keeps full relative accuracy in the right tail.
The densities come from :math:`\\partial_s \\log\\det(I - A_s) =
-\\mathrm{tr}((I - A_s)^{-1} \\partial_s A_s)`, with
:math:`\\partial_s A_s(x, y) = \\mathrm{Ai}'(x + y + s)`.

The table holds ``log cdf``, ``log sf`` and ``log pdf`` at the Chebyshev
points of unit panels covering ``[S_MIN, S_MAX]``; the script then checks the
node count (against ``1.5x`` the nodes) and the interpolation (at five
points per panel between the Chebyshev points) and prints the errors.

References
----------
.. [1] F. Bornemann, "On the numerical evaluation of Fredholm determinants",
   Math. Comp. 79 (2010), 871-915.
.. [2] P. L. Ferrari and H. Spohn, "A determinantal formula for the GOE
   Tracy-Widom distribution", J. Phys. A 38 (2005), L557.
"""

from __future__ import annotations

import pathlib

import numpy as np
from numpy.polynomial.legendre import leggauss
from scipy.special import airy

S_MIN = -8.0
S_MAX = 16.0
PANEL_WIDTH = 1.0
N_CHEB = 32
N_NODES = 96
TABLE_PATH = pathlib.Path(__file__).with_name("_tw_table.npz")


def truncation_length(s: float) -> float:
    """Length L of (0, L) beyond which Ai(x + y + s) is negligible.

    Relative to the largest kernel value ``Ai(max(s, 0))``, the kernel on the
    cut-off part is below ``exp(-40)``: ``(2/3)((L + s)^(3/2) - s_+^(3/2)) = 40``.
    """
    return (max(s, 0.0) ** 1.5 + 60.0) ** (2.0 / 3.0) - s


def airy_fredholm(s: float, n_nodes: int = N_NODES) -> dict:
    """log F_beta(s) and d/ds log F_beta(s) for beta = 1, 2 by Nystrom quadrature."""
    length = truncation_length(s)
    x, w = leggauss(n_nodes)
    x = (x + 1.0) * length / 2.0
    sqrt_w = np.sqrt(w * length / 2.0)
    ai, aip, _, _ = airy(x[:, None] + x[None, :] + s)
    a = sqrt_w[:, None] * ai * sqrt_w[None, :]
    a_prime = sqrt_w[:, None] * aip * sqrt_w[None, :]
    mu, vecs = np.linalg.eigh(a)
    diag = np.sum(vecs * (a_prime @ vecs), axis=0)  # diag of V' A_s' V
    return {
        "logcdf1": np.sum(np.log1p(-mu)),
        "logcdf2": np.sum(np.log1p(-(mu**2))),
        "dlogcdf1": -np.sum(diag / (1.0 - mu)),
        "dlogcdf2": -np.sum(2.0 * mu * diag / (1.0 - mu**2)),
    }


def tw_logs(s: float, beta: int, n_nodes: int = N_NODES) -> tuple[float, float, float]:
    """(log cdf, log sf, log pdf) of TW_beta at s from the Fredholm determinant."""
    r = airy_fredholm(s, n_nodes)
    logcdf = r[f"logcdf{beta}"]
    logsf = np.log(-np.expm1(logcdf))
    logpdf = logcdf + np.log(r[f"dlogcdf{beta}"])
    return logcdf, logsf, logpdf


def chebyshev_points(n: int) -> np.ndarray:
    """Chebyshev points of the first kind on [-1, 1], ascending."""
    return -np.cos(np.pi * (np.arange(n) + 0.5) / n)


def panel_points(edges: np.ndarray, t: np.ndarray) -> np.ndarray:
    lo, hi = edges[:-1, None], edges[1:, None]
    return (lo + hi) / 2.0 + (hi - lo) / 2.0 * t[None, :]


def tabulate(points: np.ndarray, n_nodes: int = N_NODES) -> np.ndarray:
    """Array (beta, quantity, *points.shape), quantity = logcdf, logsf, logpdf."""
    out = np.empty((2, 3) + points.shape)
    for idx, s in np.ndenumerate(points):
        for b in (1, 2):
            out[(b - 1, slice(None)) + idx] = tw_logs(float(s), b, n_nodes)
    return out


def check() -> None:
    """Print the quadrature and interpolation errors of the shipped table."""
    from rmtclean.laws._tracy_widom import TracyWidom

    with np.load(TABLE_PATH) as data:
        edges = data["edges"]
    # five points per panel, off the Chebyshev points
    s = panel_points(edges, np.array([-0.77, -0.31, 0.05, 0.52, 0.93])).ravel()
    finer = tabulate(s, n_nodes=int(1.5 * N_NODES))
    coarse = tabulate(s)
    for b in (1, 2):
        tw = TracyWidom(beta=b)
        cdf, sf, pdf = np.exp(finer[b - 1])
        c_cdf, c_sf = np.exp(coarse[b - 1, :2])
        mid = s > -6
        print(f"beta={b}")
        print(
            f"  {N_NODES} vs {int(1.5 * N_NODES)} nodes: "
            f"max |d cdf| {np.max(np.abs(c_cdf - cdf)):.2e}, "
            f"max rel d sf {np.max(np.abs(c_sf / sf - 1.0)):.2e}"
        )
        print(
            "  table vs direct: "
            f"max |d cdf| {np.max(np.abs(tw.cdf(s) - cdf)):.2e}, "
            f"max rel d sf {np.max(np.abs(tw.sf(s) / sf - 1.0)):.2e}, "
            f"max rel d pdf (s > -6) {np.max(np.abs(tw.pdf(s) / pdf - 1.0)[mid]):.2e}"
        )


def main() -> None:
    """Write the table."""
    n_panels = round((S_MAX - S_MIN) / PANEL_WIDTH)
    edges = np.linspace(S_MIN, S_MAX, n_panels + 1)
    values = tabulate(panel_points(edges, chebyshev_points(N_CHEB)))
    np.savez_compressed(
        TABLE_PATH, edges=edges, values=values, n_nodes=N_NODES, n_cheb=N_CHEB
    )
    print(f"wrote {TABLE_PATH} with {values.size} values")


if __name__ == "__main__":
    import argparse

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--check-only", action="store_true", help="only check the existing table"
    )
    if not parser.parse_args().check_only:
        main()
    check()
