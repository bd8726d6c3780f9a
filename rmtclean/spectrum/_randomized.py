"""Leading eigenpairs of ``Z'Z`` by randomized subspace iteration, never forming it.

Halko, Martinsson & Tropp (2011), "Finding structure with randomness",
SIAM Review 53(2), 217-288: Algorithm 4.4 (randomized subspace iteration,
re-orthonormalised after every application of ``Z'Z``) followed by the
Rayleigh-Ritz step of Section 5 (here the thin SVD of ``Z Q``). Each
application costs ``4 T N l`` flops for ``l`` columns, against ``T N^2``
to form the N x N sample covariance (or ``N T^2`` for the Gram matrix)
and ``4/3 min(N, T)^3`` to reduce it.
"""

from __future__ import annotations

import numpy as np

__all__ = ["randomized_leading", "randomized_top_eigh"]

#: Extra columns beyond the eigenpairs kept (Halko et al. 2011, Sec. 4.2, and
#: scikit-learn's randomized_svd default n_oversamples=10).
N_OVERSAMPLES = 10

#: Applications of Z'Z after the first (scikit-learn's randomized_svd uses 7
#: power iterations when the rank is below a tenth of the size, else 4).
N_POWER_ITER = 7

#: First number of eigenpairs tried when a threshold decides how many.
FIRST_COUNT = 16

#: Fixed seed of the test matrices: fits are deterministic.
SEED = 0


def randomized_top_eigh(Z, n_columns: int, n_iter: int = N_POWER_ITER, rng=None):
    """Ritz values (descending) and vectors of ``Z'Z`` on a random subspace.

    Parameters
    ----------
    Z : ndarray of shape (n_rows, n_features)
    n_columns : int
        Dimension ``l`` of the subspace.
    n_iter : int
        Applications of ``Z'Z`` after the first.
    rng : numpy.random.Generator, optional

    Returns
    -------
    values : ndarray of shape (n_columns,)
    vectors : ndarray of shape (n_features, n_columns), orthonormal.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum._randomized import randomized_top_eigh
    >>> rng = np.random.default_rng(0)
    >>> Z = rng.standard_normal((500, 60)) * np.r_[10.0, 5.0, np.ones(58)]
    >>> vals, _ = randomized_top_eigh(Z, 12, rng=rng)
    >>> exact = np.linalg.eigvalsh(Z.T @ Z)[::-1][:2]
    >>> bool(np.allclose(vals[:2], exact, rtol=1e-8))
    True
    """
    rng = np.random.default_rng(SEED) if rng is None else rng
    Q = rng.standard_normal((Z.shape[1], n_columns))
    for _ in range(n_iter + 1):
        Q, _ = np.linalg.qr(Z.T @ (Z @ Q))
    _, s, vt = np.linalg.svd(Z @ Q, full_matrices=False)
    return s**2, Q @ vt.T


def randomized_leading(Z, rank: int, n_leading: int | None, threshold: float | None):
    """The leading part of the spectrum of ``Z'Z`` and its eigenvectors.

    ``n_leading`` eigenpairs are computed, or, with ``threshold``, as many
    as it takes for the smallest computed eigenvalue to be at or below the
    threshold (16 first, doubled until then). The returned ``rank``
    eigenvalues are those ``m`` computed ones, then ``rank - m`` copies of
    the mean of the rest, ``(tr(Z'Z) - sum) / (rank - m)`` (at most the
    ``m``-th eigenvalue): the trace is kept, and so is every count of
    eigenvalues above a threshold at or above the ``m``-th.

    Returns
    -------
    values : ndarray of shape (rank,)
    leading : callable
        ``leading(k)`` for ``k <= m`` returns the first ``k`` eigenvectors.
    """
    rng = np.random.default_rng(SEED)
    trace = float(np.einsum("ij,ij->", Z, Z))
    limit = min(Z.shape)
    m = FIRST_COUNT if n_leading is None else int(n_leading)
    while True:
        m = min(m, rank)
        n_columns = min(m + N_OVERSAMPLES, limit)
        vals, vecs = randomized_top_eigh(Z, n_columns, rng=rng)
        vals = np.maximum(vals, 0.0)
        m = min(m, n_columns)
        if threshold is None or m >= rank or m == 0 or vals[m - 1] <= threshold:
            break
        m *= 2
    values = np.empty(rank)
    values[:m] = vals[:m]
    if m < rank:
        rest = max(trace - float(np.sum(vals[:m])), 0.0) / (rank - m)
        values[m:] = min(rest, vals[m - 1]) if m else rest
    kept = vecs[:, :m]

    def leading(k: int) -> np.ndarray:
        if k > m:
            raise ValueError(
                f"The randomized route computed {m} leading eigenvectors; "
                f"{k} were asked for."
            )
        return np.ascontiguousarray(kept[:, :k])

    return values, leading
