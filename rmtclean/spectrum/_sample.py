"""The sample spectrum: eigen-decomposition of a sample covariance."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from rmtclean._validation import numerical_rank
from rmtclean.spectrum._cleaned import CleanedSpectrum
from rmtclean.spectrum._partial import TridiagonalEigh
from rmtclean.spectrum._randomized import randomized_leading

__all__ = ["SampleSpectrum", "sample_spectrum"]

#: Largest number of features for which rmtclean forms an N x N matrix by
#: default: ``route="auto"`` diagonalises it, ``store_covariance="auto"``
#: keeps it.
DENSE_LIMIT = 5000


@dataclass(frozen=True, eq=False)
class SampleSpectrum:
    """Eigenvalues and eigenvectors of a sample covariance (or correlation).

    The sample covariance is ``S = sum_t w_t (x_t - m)(x_t - m)' / dof`` with
    the frequency weights ``w`` (all one by default), the weighted mean ``m``
    (zero when ``assume_centered``) and ``dof = sum(w) - 1`` (``sum(w)`` when
    ``assume_centered``), so unweighted demeaned data use ``T - 1``.

    Attributes
    ----------
    eigenvalues : ndarray of shape (n_components,)
        The nonzero part of the spectrum, in descending order.
        ``n_components = min(n_features, rank)`` with ``rank`` the number of
        rows with positive weight, less one after demeaning. The remaining
        ``n_features - n_components`` eigenvalues are zero.
    eigenvectors : ndarray of shape (n_features, n_components) or None
        Orthonormal eigenvectors, column ``k`` for ``eigenvalues[k]``;
        ``None`` when they were deferred (``eigenvectors="leading"``):
        :meth:`leading_eigenvectors` then computes the ones asked for.
    n_samples : float
        The degrees of freedom ``dof`` (the effective sample size every rule
        receives as ``n_samples``).
    n_features : int
        Dimension N.
    location : ndarray of shape (n_features,)
        The (weighted) mean removed from the data, zeros if assume_centered.
    scale : ndarray of shape (n_features,) or None
        Column standard deviations when the spectrum is that of the
        correlation matrix (``standardize=True``), else ``None``.
    route : {"dense", "gram", "randomized"}
        How the spectrum was computed.
    samples : ndarray of shape (n_rows, n_features) or None
        The centred (and standardised) rows, kept for rules that need the
        data themselves (sample splitting); ``None`` when not kept.
    weights : ndarray of shape (n_rows,) or None
        The frequency weights of ``samples``; ``None`` means all one.
    leading : callable or None
        ``leading(k)`` returns the eigenvectors of the ``k`` largest
        eigenvalues, ``(n_features, k)``, when ``eigenvectors`` is ``None``.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum import SampleSpectrum
    >>> X = np.random.default_rng(0).standard_normal((200, 50))
    >>> spec = SampleSpectrum.from_data(X)
    >>> spec.n_samples, spec.n_features, spec.eigenvalues.shape
    (199.0, 50, (50,))
    >>> bool(np.all(np.diff(spec.eigenvalues) <= 0))
    True
    """

    eigenvalues: np.ndarray
    eigenvectors: np.ndarray
    n_samples: float
    n_features: int
    location: np.ndarray
    scale: np.ndarray | None = None
    route: str = "dense"
    samples: np.ndarray | None = None
    weights: np.ndarray | None = None
    leading: Callable[[int], np.ndarray] | None = field(default=None, repr=False)

    @property
    def n_components(self) -> int:
        """Number of stored (nonzero) eigenvalues."""
        return int(self.eigenvalues.shape[0])

    @property
    def ratio(self) -> float:
        """Aspect ratio ``n_features / n_samples`` (N / dof)."""
        return self.n_features / self.n_samples

    def full_eigenvalues(self) -> np.ndarray:
        """All ``n_features`` eigenvalues, the null space's zeros last."""
        out = np.zeros(self.n_features)
        out[: self.n_components] = self.eigenvalues
        return out

    def leading_eigenvectors(self, k: int) -> np.ndarray:
        """Eigenvectors of the ``k`` largest eigenvalues, ``(n_features, k)``."""
        if not 0 <= k <= self.n_components:
            raise ValueError(f"k must be in [0, {self.n_components}]; got {k}.")
        if self.eigenvectors is not None:
            return self.eigenvectors[:, :k]
        return self.leading(k)

    def cleaned(self, values, null_value=None) -> CleanedSpectrum:
        """The :class:`CleanedSpectrum` of cleaned eigenvalues ``values``.

        ``values`` pairs with :attr:`eigenvalues`; ``null_value`` is the
        value on the null space (``n_components < n_features``). With
        deferred eigenvectors only the leading ones whose value differs from
        the bulk value ``c`` (the null value, or the last value when there is
        no null space) are computed: every other direction shares ``c``,
        and the result is stored as ``c I + V_k diag(d_k - c) V_k'``. With
        all eigenvectors at hand they are all kept, as before.
        """
        values = np.asarray(values, dtype=np.float64)
        has_null = self.n_components < self.n_features
        null = null_value if has_null else None
        if self.eigenvectors is not None:
            return CleanedSpectrum(
                self.eigenvectors, values, null_value=null, scale=self.scale
            )
        bulk = float(values[-1]) if null is None else float(null)
        k = n_moved(values, bulk)
        return CleanedSpectrum(
            self.leading_eigenvectors(k),
            values[:k],
            null_value=bulk if k < self.n_features else None,
            scale=self.scale,
        )

    @classmethod
    def from_data(
        cls,
        X,
        *,
        assume_centered: bool = False,
        sample_weight=None,
        standardize: bool = False,
        route: str = "auto",
        keep_samples: bool = False,
        eigenvectors: str = "all",
        randomized_request: Callable | None = None,
    ) -> SampleSpectrum:
        """Decompose the sample covariance of ``X`` (rows are observations).

        Parameters
        ----------
        X : array_like of shape (n_samples, n_features)
            Finite real data; validated by the caller (estimators) or by
            :func:`sample_spectrum`.
        assume_centered : bool, default=False
            If True, do not remove the mean and use ``sum(w)`` as the
            degrees of freedom.
        sample_weight : array_like of shape (n_samples,), optional
            Non-negative frequency weights: an integer weight ``k`` counts a
            row ``k`` times, exactly as repeating it.
        standardize : bool, default=False
            Decompose the correlation matrix instead; ``scale`` then holds
            the column standard deviations.
        route : {"auto", "dense", "gram"}, default="auto"
            ``"dense"`` forms the N x N matrix and calls ``eigh``; ``"gram"``
            diagonalises the T x T Gram matrix of the data and maps its
            eigenvectors back, never forming an N x N matrix. ``"auto"``
            takes ``"gram"`` when N exceeds the number of rows or
            :data:`DENSE_LIMIT`.
        keep_samples : bool, default=False
            Keep the centred rows in ``samples``.
        eigenvectors : {"all", "leading"}, default="all"
            ``"all"`` computes every eigenvector (LAPACK ``syevd`` through
            ``numpy.linalg.eigh``). ``"leading"`` computes the eigenvalues
            from one reduction to tridiagonal form and defers the
            eigenvectors: ``eigenvectors`` is ``None`` and
            :meth:`leading_eigenvectors` (or :meth:`cleaned`) computes the
            leading ones from the kept reduction (see
            :class:`rmtclean.spectrum._partial.TridiagonalEigh`).
            ``"randomized"`` forms neither the N x N nor the T x T matrix:
            randomized subspace iteration on the scaled rows gives the
            leading eigenpairs only (Halko, Martinsson & Tropp 2011; see
            :func:`rmtclean.spectrum._randomized.randomized_leading`); the
            other eigenvalues are all set to their mean, and ``route`` is
            ``"randomized"``.
        randomized_request : callable, optional
            For ``eigenvectors="randomized"``: ``request(dof, n_features)``
            returns ``(n_leading, threshold)``, how many eigenpairs to
            compute, or (``n_leading`` None) the eigenvalue level the
            computed ones must reach down to.
        """
        X = np.asarray(X, dtype=np.float64)
        n_rows, n_features = X.shape
        if sample_weight is None:
            total = float(n_rows)
            probs = None
            n_positive = n_rows
        else:
            w = np.asarray(sample_weight, dtype=np.float64)
            total = float(w.sum())
            probs = w / total
            n_positive = int(np.count_nonzero(w))
        dof, rank, route = sample_layout(
            n_rows, n_features, total, n_positive, assume_centered, route
        )
        if assume_centered:
            location = np.zeros(n_features)
            Xc = X  # the caller's array: never written in place
        else:
            location = X.mean(axis=0) if probs is None else probs @ X
            Xc = X - location
        if eigenvectors not in ("all", "leading", "randomized"):
            raise ValueError(
                "eigenvectors must be 'all', 'leading' or 'randomized'. "
                f"Got {eigenvectors!r} instead."
            )
        if eigenvectors == "randomized":
            route = "randomized"  # the scaled rows Z, no N x N or T x T matrix
        scale = None
        if route == "dense" and probs is None:
            # No scaled T x N copy: Xc' Xc (BLAS syrk: numpy passes a matrix
            # times its own transposed view to it), then divide the N x N result.
            cov = Xc.T @ Xc
            cov *= 1.0 / dof
            if standardize:
                scale = column_scale(
                    cov.diagonal().copy(), location=location, n_rows=n_rows
                )
                cov /= np.outer(scale, scale)
        else:
            if probs is None:
                Z = Xc * np.sqrt(1.0 / dof)
            else:
                Z = Xc * np.sqrt(probs * (total / dof))[:, None]
            if standardize:
                scale = column_scale(
                    np.einsum("ij,ij->j", Z, Z), location=location, n_rows=n_rows
                )
                Z /= scale
            cov = Z.T @ Z if route == "dense" else None
        if standardize and keep_samples:
            Xc = Xc / scale
        elif keep_samples and Xc is X:
            Xc = X.copy()
        leading = None
        if eigenvectors == "randomized":
            vals, leading = randomized_leading(
                Z, rank, *randomized_request(dof, n_features)
            )
            vecs = None
        elif eigenvectors == "leading":
            if route == "dense":
                vals, leading = dense_leading(cov)
            else:
                vals, leading = gram_leading(Z, Z @ Z.T, rank)
            vals, vecs = vals[:rank], None
            del cov
        elif route == "dense":
            vals, vecs = np.linalg.eigh(cov)
            del cov
            vals = vals[::-1][:rank]
            vecs = np.ascontiguousarray(vecs[:, ::-1][:, :rank])
        else:
            vals, vecs = _gram_eigh(Z, rank)
            vecs = np.ascontiguousarray(vecs)
        vals = np.maximum(vals, 0.0)
        return cls(
            eigenvalues=np.ascontiguousarray(vals),
            eigenvectors=vecs,
            n_samples=dof,
            n_features=n_features,
            location=location,
            scale=scale,
            route=route,
            samples=Xc if keep_samples else None,
            weights=None if sample_weight is None else np.asarray(sample_weight, float),
            leading=leading,
        )


def sample_layout(
    n_rows: int,
    n_features: int,
    total: float,
    n_positive: int,
    assume_centered: bool,
    route: str,
) -> tuple[float, int, str]:
    """``(dof, rank, route)`` of a (weighted) sample: the one rule of every path.

    ``total`` is the sum of the frequency weights (``n_rows`` without
    weights) and ``n_positive`` the number of rows with a positive weight.
    The degrees of freedom are ``total - 1`` after demeaning (``total`` with
    ``assume_centered``); the rank of the sample covariance is at most
    ``min(N, n_positive - 1)`` (at least 1); ``route="auto"`` takes
    ``"gram"`` when N exceeds the rows or :data:`DENSE_LIMIT`. The in-memory
    (:meth:`SampleSpectrum.from_data`), dask
    (:func:`rmtclean.distributed.dask_sample_spectrum`) and LinearShrink's
    direct paths call it.
    """
    dof = total if assume_centered else total - 1.0
    if dof <= 0:
        raise ValueError(
            "The sample covariance needs more than one effective sample: "
            f"the weights sum to {total!r}, leaving {dof!r} degrees of freedom."
        )
    rank = max(1, min(n_features, n_positive - (0 if assume_centered else 1)))
    if route == "auto":
        route = "gram" if (n_features > n_rows or n_features > DENSE_LIMIT) else "dense"
    if route not in ("dense", "gram"):
        raise ValueError(
            f"route must be one of 'auto', 'dense' or 'gram'. Got {route!r} instead."
        )
    return dof, rank, route


def n_moved(values: np.ndarray, bulk: float) -> int:
    """One past the last index whose value differs from ``bulk`` (0 if none)."""
    moved = np.flatnonzero(values != bulk)
    return int(moved[-1]) + 1 if moved.size else 0


def dense_leading(cov: np.ndarray):
    """Descending eigenvalues of ``cov`` and a function for its leading vectors.

    ``cov`` is overwritten by the reflectors of its tridiagonal reduction.
    """
    reduction = TridiagonalEigh(cov, overwrite=True)
    return reduction.eigenvalues, reduction.leading


def gram_leading(Z, gram: np.ndarray, rank: int):
    """As :func:`dense_leading` for ``Z' Z`` through its Gram matrix ``Z Z'``.

    The eigenvectors of the ``k`` largest are ``Z' U_k / sqrt(vals_k)``,
    completed to an orthonormal basis as :func:`complete_basis` does; ``Z``
    (numpy or dask) is kept for that product. ``gram`` is overwritten.
    """
    reduction = TridiagonalEigh(gram, overwrite=True)
    vals = np.maximum(reduction.eigenvalues[:rank], 0.0)

    def leading(k: int) -> np.ndarray:
        coef, tiny = _gram_coefficients(reduction.leading(k), vals[:k], vals[0])
        return complete_basis(np.asarray(Z.T @ coef), tiny)

    return vals, leading


def rank_deficiency(spectrum: SampleSpectrum) -> str | None:
    """Words for round-off zeros among the eigenvalues the sample size allows.

    Duplicated or collinear columns, or repeated rows, leave sample
    eigenvalues at rounding-error level (numpy's ``matrix_rank``
    tolerance) where the sample size allows nonzero ones. ``None`` when
    there are none (or the spectrum is all zero).
    """
    vals = spectrum.eigenvalues
    if not vals.size or not vals[0] > 0:
        return None
    n_zero = vals.size - numerical_rank(vals, spectrum.n_features, vals.size + 1)
    if not n_zero:
        return None
    return (
        f"the data are rank deficient beyond what the sample size explains: "
        f"{n_zero} of the {vals.size} sample eigenvalues that can be nonzero are zero "
        "(duplicated or collinear columns, or repeated rows); the cleaned "
        "spectrum treats them as noise."
    )


def column_scale(
    var: np.ndarray,
    needed_by: str = "standardize=True",
    *,
    location: np.ndarray | None = None,
    n_rows: int = 1,
) -> np.ndarray:
    """Column standard deviations from variances; zero variance is an error.

    ``needed_by`` names what needs the scales, in the error message. With
    the columns' ``location`` (their means) and ``n_rows``, a variance at or
    below rounding error of the column's level, ``(n_rows eps |location|)^2``,
    counts as zero: a constant column whose value is not a binary fraction
    (0.01) centres to residuals of order ``eps |mean|``, not to 0, and
    divided by their spread it would become a column of +-1.
    """
    floor = 0.0
    if location is not None:
        floor = (n_rows * np.finfo(np.float64).eps * np.abs(location)) ** 2
    bad = np.flatnonzero(~(var > floor))
    if bad.size:
        raise ValueError(
            f"{needed_by} needs every column to vary, but "
            f"{bad.size} column(s) have zero variance (first index "
            f"{int(bad[0])})."
        )
    return np.sqrt(var)


def _gram_eigh(Z: np.ndarray, rank: int) -> tuple[np.ndarray, np.ndarray]:
    """Top ``rank`` eigenpairs of ``Z'Z`` from the n_rows x n_rows Gram ``Z Z'``.

    Never forms an N x N matrix: O(T^2 N) time and O(T N) memory.
    """
    vals, coef, tiny = gram_pairs(Z @ Z.T, rank)
    return vals, complete_basis(Z.T @ coef, tiny)


def gram_pairs(gram: np.ndarray, rank: int):
    """Eigenvalues of a Gram matrix and the map back to feature space.

    Returns the top ``rank`` eigenvalues (descending), the coefficients
    ``U / sqrt(vals)`` so that ``Z' @ coef`` are the feature-space
    eigenvectors, and a mask of the numerically zero eigenvalues.
    """
    vals, U = np.linalg.eigh(gram)
    vals = np.maximum(vals[::-1][:rank], 0.0)
    coef, tiny = _gram_coefficients(U[:, ::-1][:, :rank], vals, vals[0])
    return vals, coef, tiny


def _gram_coefficients(U, vals, top):
    """``U / sqrt(vals)`` and the mask of numerically zero ``vals`` (relative
    to the largest eigenvalue ``top``), whose columns are left as they are."""
    tiny = vals <= top * 1e-10 if top > 0 else np.ones(vals.size, bool)
    return U / np.sqrt(np.where(tiny, 1.0, vals)), tiny


def complete_basis(vecs: np.ndarray, tiny: np.ndarray) -> np.ndarray:
    """Make the Gram-route eigenvectors ``vecs`` orthonormal.

    ``Z' U / sqrt(vals)`` is orthonormal only to about
    ``eps * vals[0] / vals[i]`` (7e-10 for data of condition number 1e6),
    which the inverse ``V diag(1/d) V' + (I - V V') / c`` amplifies by the
    spread of the cleaned values; columns of zero eigenvalue (``tiny``) are
    garbage. When none is, two Cholesky-QR passes (``V <- V L^{-T}`` with
    ``V'V = L L'``, BLAS-3 only) restore orthonormality to rounding in a
    fraction of the time of Householder QR (0.3 s against 8.9 s at
    N = 20,000, r = 200 here); with garbage columns, or when the Cholesky
    factor fails, one Householder QR step (signs kept; columns in descending
    order, so the accurate leading vectors stay as they are) completes the
    basis: any direction of the null space is a valid eigenvector for them.
    """
    if not np.any(tiny):
        try:
            out = vecs
            for _ in range(2):
                chol = np.linalg.cholesky(out.T @ out)
                out = scipy.linalg.solve_triangular(
                    chol, out.T, lower=True, check_finite=False
                ).T
            return out
        except np.linalg.LinAlgError:
            pass
    q, r = np.linalg.qr(vecs)
    return q * np.where(np.diag(r) < 0, -1.0, 1.0)


def sample_spectrum(
    X,
    *,
    assume_centered: bool = False,
    sample_weight=None,
    standardize: bool = False,
    route: str = "auto",
) -> SampleSpectrum:
    """Validate ``X`` and return its :class:`SampleSpectrum`.

    Parameters
    ----------
    X : array_like of shape (n_samples, n_features)
        Rows are observations. Must be finite, real and two-dimensional with
        at least two rows.
    assume_centered, sample_weight, standardize, route
        As in :meth:`SampleSpectrum.from_data`.

    Returns
    -------
    SampleSpectrum

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum import sample_spectrum
    >>> X = np.random.default_rng(1).standard_normal((30, 100))  # N > T
    >>> spec = sample_spectrum(X)
    >>> spec.route, spec.n_components
    ('gram', 29)
    """
    from rmtclean._data import check_data
    from rmtclean._validation import check_sample_weight

    X = check_data(X, "X", "sample_spectrum")
    if sample_weight is not None:
        sample_weight = check_sample_weight(
            sample_weight, X.shape[0], "sample_spectrum"
        )
    return SampleSpectrum.from_data(
        X,
        assume_centered=assume_centered,
        sample_weight=sample_weight,
        standardize=standardize,
        route=route,
    )
