r"""Robust shape estimation for heavy-tailed elliptical data.

Three pure pieces under :class:`rmtclean.estimators.TylerShrink`:

- :func:`spatial_signs`: each row divided by its norm (times ``sqrt(N)``),
  which removes the random scale of every row of an elliptical law;
- :func:`tyler_shape`: Tyler's (1987) M-estimator of shape, with the
  shrinkage toward the identity of Chen, Wiesel & Hero (2011), and
  :func:`chen_wiesel_hero_intensity`, their plug-in intensity;
- :func:`robust_variance_level`: a median-based level that turns a shape
  (trace N) into a covariance.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg
import scipy.stats

from rmtclean._validation import Interval, Options, check_value
from rmtclean.spectrum._sample import complete_basis, gram_pairs

__all__ = [
    "SHAPE_ROUTES",
    "TylerShape",
    "chen_wiesel_hero_intensity",
    "robust_variance_level",
    "spatial_signs",
    "tyler_shape",
]

#: How :func:`tyler_shape` iterates: on the N x N matrix or the T x T Gram.
SHAPE_ROUTES = ("auto", "dense", "gram")


def _power_of_two_scale(values: np.ndarray) -> float:
    """A power of two near ``max |values|`` (1 for zeros): exact to divide by."""
    top = float(np.max(np.abs(values))) if values.size else 0.0
    return float(np.ldexp(1.0, np.frexp(top)[1])) if top > 0 else 1.0


def _squared_norms(X: np.ndarray) -> tuple[np.ndarray, float]:
    """Squared row norms of ``X / unit`` and ``unit`` (no overflow/underflow)."""
    unit = _power_of_two_scale(X)
    Z = X / unit
    return np.einsum("ij,ij->i", Z, Z), unit


def spatial_signs(X) -> np.ndarray:
    r"""Rows scaled to norm ``sqrt(N)``: ``u_i = sqrt(N) x_i / ||x_i||``.

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Centred rows.

    Returns
    -------
    U : ndarray of shape (n_samples, n_features)
        Zero rows stay zero.

    Notes
    -----
    For an elliptical row ``x = sqrt(tau) A z`` the sign does not depend on
    the random scale ``tau``; in high dimension ``||A z||^2 / N``
    concentrates at ``tr(Sigma) / N`` (Sigma = A A'), so the signs behave
    like Gaussian rows of covariance ``N Sigma / tr(Sigma)``, the shape.
    The spatial sign covariance matrix (Visuri, Koivunen & Oja 2000, J.
    Statist. Plann. Inference 91) is their sample covariance.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import spatial_signs
    >>> U = spatial_signs(np.array([[3.0, 4.0], [0.0, 0.0]]))
    >>> U.round(4).tolist()
    [[0.8485, 1.1314], [0.0, 0.0]]
    """
    X = np.asarray(X, dtype=np.float64)
    # Each row by a power of two near its largest entry first: no overflow or
    # underflow of the squares, whatever the scale of the row.
    top = np.max(np.abs(X), axis=1, keepdims=True) if X.size else np.ones((len(X), 1))
    unit = np.ldexp(1.0, np.frexp(np.where(top > 0, top, 1.0))[1])
    Z = X / unit
    norms = np.sqrt(np.einsum("ij,ij->i", Z, Z))[:, None]
    return np.divide(
        np.sqrt(X.shape[1]) * Z, norms, out=np.zeros_like(Z), where=norms > 0
    )


def chen_wiesel_hero_intensity(
    sign_eigenvalues, n_samples: float, n_features: int
) -> float:
    r"""Chen, Wiesel & Hero's (2011) plug-in shrinkage intensity for Tyler's estimator.

    Parameters
    ----------
    sign_eigenvalues : array_like of shape (k,)
        Eigenvalues of the normalised spatial sign covariance
        ``R = (N / n) sum_i u_i u_i'`` with ``u_i = x_i / ||x_i||``; only
        their ratios matter (they are rescaled to ``tr R = N``). Zeros may
        be left out.
    n_samples : float
        The sample size ``n``.
    n_features : int
        The dimension ``N``.

    Returns
    -------
    rho : float
        In ``(0, 1]``; 1 when ``N = 1`` (a shape of dimension one is 1
        whatever the data).

    Notes
    -----
    .. math::

        \rho = \min\left(1, \frac{N^2 + (1 - 2/N)\,\mathrm{tr}(R^2)}
        {(N^2 - nN - 2n) + (n + 1 + 2(n - 1)/N)\,\mathrm{tr}(R^2)}\right).

    ``tr(R^2) >= N`` makes the denominator at least ``N^2 + N - 2 > 0``.

    References
    ----------
    .. [1] Y. Chen, A. Wiesel and A. O. Hero, "Robust shrinkage estimation
       of high-dimensional covariance matrices", IEEE Trans. Signal
       Process. 59(9), 4097-4107, 2011 (the plug-in intensity, from a
       third-party transcription, not read in the paper).

    Examples
    --------
    >>> from rmtclean.rules import chen_wiesel_hero_intensity
    >>> round(chen_wiesel_hero_intensity([2.0, 1.0, 1.0], 50, 3), 6)
    0.244713
    """
    owner = "chen_wiesel_hero_intensity"
    check_value(
        n_samples, [Interval(float, 0.0, None, closed="neither")], "n_samples", owner
    )
    check_value(n_features, [Interval(int, 1, None)], "n_features", owner)
    vals = np.asarray(sign_eigenvalues, dtype=np.float64)
    if (
        vals.ndim != 1
        or not np.all(np.isfinite(vals))
        or np.any(vals < 0)
        or not vals.sum() > 0
    ):
        raise ValueError(
            f"The 'sign_eigenvalues' parameter of {owner} must be a 1-D array of "
            "finite non-negative numbers with a positive sum."
        )
    return _chen_wiesel_hero_intensity(vals, float(n_samples), int(n_features))


def _chen_wiesel_hero_intensity(vals, n: float, p: int) -> float:
    if p == 1:
        return 1.0
    r = vals * (p / vals.sum())
    tr2 = float(np.dot(r, r))
    num = p * p + (1.0 - 2.0 / p) * tr2
    den = (p * p - n * p - 2.0 * n) + (n + 1.0 + 2.0 * (n - 1.0) / p) * tr2
    return min(1.0, num / den)


@dataclass(frozen=True)
class TylerShape:
    """A shape matrix ``V = Q diag(d) Q' + c (I - Q Q')`` of trace N.

    Attributes
    ----------
    eigenvalues : ndarray of shape (k,)
        Descending.
    eigenvectors : ndarray of shape (n_features, k)
        Orthonormal.
    null_value : float or None
        ``c`` on the complement of the eigenvectors (k < N: the Gram route).
    shrinkage : float
        The intensity ``rho`` used.
    n_iter : int
        Fixed-point iterations run.
    converged : bool
        Whether the relative change fell below ``tol``.
    """

    eigenvalues: np.ndarray
    eigenvectors: np.ndarray
    null_value: float | None
    shrinkage: float
    n_iter: int
    converged: bool

    def to_dense(self) -> np.ndarray:
        """The N x N shape matrix."""
        Q, d = self.eigenvectors, self.eigenvalues
        out = (Q * d) @ Q.T
        if self.null_value is not None:
            out += self.null_value * (np.eye(Q.shape[0]) - Q @ Q.T)
        return out


def tyler_shape(
    X,
    *,
    shrinkage: float,
    sample_weight=None,
    route: str = "auto",
    tol: float = 1e-10,
    max_iter: int = 1000,
) -> TylerShape:
    r"""Tyler's M-estimator of shape, shrunk toward the identity.

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Centred rows (only their directions matter; zero rows are ignored).
    shrinkage : float
        ``rho`` in ``[0, 1]``; 0 is Tyler's (1987) estimator, which needs
        more (weighted) rows than features, in general position.
    sample_weight : array_like of shape (n_samples,), optional
        Non-negative frequency weights.
    route : {"auto", "dense", "gram"}, default="auto"
        Iterate with the N x N matrix (Cholesky) or, with ``rho > 0``, with
        the T x T Gram matrix of the rows (no N x N matrix); ``"auto"``
        takes ``"gram"`` when N exceeds the number of rows.
    tol : float, default=1e-10
        Stop when no row's weight changes by more than ``tol`` relatively.
    max_iter : int, default=1000

    Returns
    -------
    TylerShape

    Notes
    -----
    With ``n = sum_i w_i`` over the nonzero rows and ``V_0 = I``:

    .. math::

        \tilde V = (1 - \rho)\,\frac{N}{n} \sum_i w_i
            \frac{x_i x_i'}{x_i' V_k^{-1} x_i} + \rho I, \qquad
        V_{k+1} = N \tilde V / \mathrm{tr}\,\tilde V.

    Every iterate is ``a I + X' diag(c) X``: the Gram route updates
    ``(a, c)`` and evaluates ``x_i' V^{-1} x_i`` from the T x T matrix
    ``a I + C^{1/2} G C^{1/2}`` (Woodbury). Weights ``w`` act as
    repetitions of rows.

    References
    ----------
    .. [1] D. E. Tyler, "A distribution-free M-estimator of multivariate
       scatter", Ann. Statist. 15(1), 234-251, 1987.
    .. [2] Y. Chen, A. Wiesel and A. O. Hero, "Robust shrinkage estimation
       of high-dimensional covariance matrices", IEEE Trans. Signal
       Process. 59(9), 4097-4107, 2011.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import tyler_shape
    >>> rng = np.random.default_rng(0)
    >>> X = rng.standard_normal((400, 3)) * [3.0, 1.0, 1.0]
    >>> X /= rng.chisquare(3, size=(400, 1)) ** 0.5     # heavy tails
    >>> shape = tyler_shape(X, shrinkage=0.0)
    >>> np.round(np.diag(shape.to_dense()) / 3 * 11, 1).tolist()   # ~ 9 : 1 : 1
    [9.0, 1.0, 1.0]
    """
    owner = "tyler_shape"
    check_value(shrinkage, [Interval(float, 0.0, 1.0)], "shrinkage", owner)
    check_value(route, [Options(SHAPE_ROUTES)], "route", owner)
    check_value(tol, [Interval(float, 0.0, None, closed="neither")], "tol", owner)
    check_value(max_iter, [Interval(int, 1, None)], "max_iter", owner)
    X = np.asarray(X, dtype=np.float64)
    if X.ndim != 2 or not np.all(np.isfinite(X)):
        raise ValueError(f"The 'X' parameter of {owner} must be a finite 2-D array.")
    w = (
        np.ones(X.shape[0])
        if sample_weight is None
        else np.asarray(sample_weight, float)
    )
    return _tyler_shape(X, w, float(shrinkage), route, float(tol), int(max_iter))


def _tyler_shape(X, w, rho, route, tol, max_iter) -> TylerShape:
    U = spatial_signs(X)
    keep = (w > 0) & np.any(U != 0, axis=1)
    U, w = U[keep], w[keep]
    n_rows, p = U.shape
    if route == "auto":
        route = "gram" if p > n_rows else "dense"
    if rho == 0.0 and (route == "gram" or w.sum() <= p):
        raise ValueError(
            "Tyler's estimator without shrinkage needs more weighted nonzero rows "
            f"than features and the dense route; got {w.sum():g} rows for {p} "
            f"features on the {route} route. Use a positive shrinkage."
        )
    if rho == 1.0 or n_rows == 0:  # the target itself (no direction: too)
        vecs = np.eye(p) if route == "dense" else np.zeros((p, 0))
        null = None if route == "dense" else 1.0
        return TylerShape(np.ones(vecs.shape[1]), vecs, null, rho, 0, True)
    step = _gram_step if route == "gram" else _dense_step
    n = float(w.sum())
    a, c = 1.0, np.zeros(n_rows)  # V_0 = I
    converged = False
    state = None
    n_iter = 0
    while n_iter < max_iter:
        n_iter += 1
        q, state = step(U, a, c, state)
        if np.any(~(q > 0)):
            raise ValueError(
                "Tyler's fixed point became singular (the rows lie in a subspace); "
                "use a positive shrinkage."
            )
        c_new = (1.0 - rho) * (p / n) * w / q
        # tr(a I + U' diag(c) U) = a N + N sum(c): the rows have norm sqrt(N).
        trace = rho * p + p * c_new.sum()
        a_new, c_new = rho * p / trace, c_new * (p / trace)
        change = max(
            abs(a_new - a) / a_new if a_new > 0 else 0.0,
            float(np.max(np.abs(c_new - c) / c_new)),
        )
        a, c = a_new, c_new
        if change <= tol:
            converged = True
            break
    vals, vecs, null = _shape_eigen(U, a, c, route)
    return TylerShape(vals, vecs, null, rho, n_iter, converged)


def _dense_step(U, a, c, state):
    V = (U * c[:, None]).T @ U
    V[np.diag_indices_from(V)] += a
    factor = scipy.linalg.cholesky(V, lower=True, check_finite=False)
    Z = scipy.linalg.solve_triangular(factor, U.T, lower=True, check_finite=False)
    return np.einsum("ij,ij->j", Z, Z), state


def _gram_step(U, a, c, G):
    if G is None:
        G = U @ U.T
    root = np.sqrt(c)
    M = G * np.outer(root, root)
    M[np.diag_indices_from(M)] += a
    B = G * root[:, None]  # C^{1/2} G
    factor = scipy.linalg.cho_factor(M, lower=True, check_finite=False)
    Y = scipy.linalg.cho_solve(factor, B, check_finite=False)
    # x_i' V^{-1} x_i = (G - G C^{1/2} M^{-1} C^{1/2} G)_ii / a (Woodbury).
    q = (np.diagonal(G) - np.einsum("ki,ki->i", B, Y)) / a
    return q, G


def _shape_eigen(U, a, c, route):
    if route == "dense":
        V = (U * c[:, None]).T @ U
        V[np.diag_indices_from(V)] += a
        vals, vecs = np.linalg.eigh(V)
        return vals[::-1].copy(), np.ascontiguousarray(vecs[:, ::-1]), None
    Y = U * np.sqrt(c)[:, None]
    rank = min(Y.shape)
    vals, coef, tiny = gram_pairs(Y @ Y.T, rank)
    vecs = complete_basis(Y.T @ coef, tiny)
    null = a if vecs.shape[1] < U.shape[1] else None
    return vals + a, vecs, null


def _weighted_median(values: np.ndarray, weights: np.ndarray) -> float:
    """Median of ``values`` repeated ``weights`` times (frequency weights).

    Where the cumulative weight reaches exactly half, the two middle values
    are averaged, as :func:`numpy.median` does for an even count.
    """
    order = np.argsort(values, kind="stable")
    v, cw = values[order], np.cumsum(weights[order])
    half = cw[-1] / 2.0
    i = int(np.searchsorted(cw, half, side="left"))
    if cw[i] == half:
        j = int(np.searchsorted(cw, half, side="right"))
        return 0.5 * (v[i] + v[min(j, v.size - 1)])
    return float(v[i])


def robust_variance_level(
    squared_norms, shape_eigenvalues, n_features: int, sample_weight=None
) -> float:
    r"""Mean variance ``s`` that makes ``s V`` a covariance, from the median row norm.

    Parameters
    ----------
    squared_norms : array_like of shape (n_samples,)
        ``||x_i||^2`` of the centred rows.
    shape_eigenvalues : array_like of shape (n_features,)
        All eigenvalues of the shape ``V`` (any scale; only ratios matter).
    n_features : int
    sample_weight : array_like of shape (n_samples,), optional
        Frequency weights (rows of weight 0 are left out).

    Returns
    -------
    level : float

    Notes
    -----
    For Gaussian rows of covariance ``s V`` (``tr V = N``), ``||x||^2`` is a
    weighted sum of chi-square(1) variables, approximated by ``g chi2_h``
    with the same mean and variance (Satterthwaite 1946, Biometrics Bull.
    2(6), from memory): ``h = N^2 / tr(V^2)``. Its median is then
    ``s N med(chi2_h) / h``, so

    .. math:: s = \frac{h}{N\,\mathrm{med}(\chi^2_h)}\,
        \mathrm{med}_i \|x_i\|^2.

    The median makes the level robust to heavy tails and outlying rows; for
    an elliptical law it is the level of the Gaussian law with the same
    median norm, below the covariance (which may not exist): for a
    multivariate t with 3 degrees of freedom and unit covariance, about
    0.42 (the median of ``3 / chi2_3`` divided by 3, [computed]).

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import robust_variance_level
    >>> X = np.random.default_rng(0).standard_normal((4000, 50)) * 2.0
    >>> level = robust_variance_level((X ** 2).sum(axis=1), np.ones(50), 50)
    >>> round(float(level), 1)
    4.0
    """
    norms = np.asarray(squared_norms, dtype=np.float64)
    vals = np.asarray(shape_eigenvalues, dtype=np.float64)
    w = (
        np.ones(norms.size)
        if sample_weight is None
        else np.asarray(sample_weight, float)
    )
    keep = w > 0
    med = _weighted_median(norms[keep], w[keep])
    total = vals.sum()
    h = total * total / float(np.dot(vals, vals)) if total > 0 else 1.0
    return med * h / (n_features * float(scipy.stats.chi2.median(h)))
