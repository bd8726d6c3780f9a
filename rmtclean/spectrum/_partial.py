"""All eigenvalues, then only the leading eigenvectors, from one reduction.

A symmetric eigendecomposition spends most of its time on the eigenvectors:
at N = 2000 LAPACK's Householder reduction to tridiagonal form (``dsytrd``)
and the eigenvalues of the tridiagonal matrix (``dsterf``) take about a
third of ``numpy.linalg.eigh``. :class:`TridiagonalEigh` keeps that one
reduction, gives every eigenvalue at once, and computes eigenvectors for a
leading block only when asked: those of the tridiagonal matrix (bisection
and inverse iteration, ``dstebz`` + ``dstein``, for a few; the MRRR
algorithm ``dstemr`` for more, where inverse iteration's
re-orthogonalisation inside clusters grows quadratically; divide and
conquer ``dstevd`` for most), then the back-transformation by the stored
reflectors (``dormqr``, BLAS-3).
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
from scipy.linalg import lapack

__all__ = ["TridiagonalEigh"]

#: Up to this many vectors bisection + inverse iteration (dstebz + dstein) is
#: used; above it MRRR (dstemr), measured faster from about 100 vectors on
#: (N = 2000: 0.09 s both at 100 vectors, 0.28 s against 0.10 s at 200).
INVERSE_ITERATION_MAX = 100

#: From this fraction of all vectors on, divide and conquer (dstevd) on the
#: whole tridiagonal matrix replaces a selected subset.
ALL_VECTORS_FRACTION = 0.5


class TridiagonalEigh:
    """Eigenvalues of a symmetric matrix now, leading eigenvectors on demand.

    ``A = Q T Q'`` with ``T`` tridiagonal (one LAPACK ``dsytrd``). All
    eigenvalues come from ``T`` (``dsterf``, O(N^2)); :meth:`leading`
    returns the eigenvectors of the ``k`` largest, ``Q Y_k`` for the
    eigenvectors ``Y_k`` of ``T``.

    Parameters
    ----------
    matrix : ndarray of shape (n, n)
        Symmetric, float64, C- or Fortran-contiguous. Only one triangle is
        read. With ``overwrite=True`` its memory holds the reflectors
        afterwards (the caller must not use it any more).
    overwrite : bool, default=False
        Reduce in place instead of on a copy.

    Attributes
    ----------
    eigenvalues : ndarray of shape (n,)
        All eigenvalues, descending.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum._partial import TridiagonalEigh
    >>> B = np.random.default_rng(0).standard_normal((6, 6))
    >>> A = B + B.T
    >>> eig = TridiagonalEigh(A)
    >>> bool(np.allclose(eig.eigenvalues, np.linalg.eigvalsh(A)[::-1]))
    True
    >>> V = eig.leading(2)
    >>> bool(np.allclose(A @ V, V * eig.eigenvalues[:2]))
    True
    """

    def __init__(self, matrix: np.ndarray, *, overwrite: bool = False):
        n = matrix.shape[0]
        sigma = _scaling(matrix)
        if sigma != 1.0:
            if overwrite:
                matrix *= sigma
            else:
                matrix, overwrite = matrix * sigma, True
        # A symmetric C-ordered array is its own Fortran-ordered transpose:
        # hand LAPACK the transposed view and no copy is made.
        a = matrix.T if matrix.flags.c_contiguous else matrix
        lwork = int(lapack.dsytrd_lwork(n, lower=1)[0])
        reflectors, diag, off, tau, info = lapack.dsytrd(
            a, lower=1, lwork=max(lwork, 1), overwrite_a=int(overwrite)
        )
        _check(info, "dsytrd")
        self._reflectors = reflectors
        self._tau = tau
        self._diag = diag
        self._off = off
        if n == 1:
            values = diag.copy()
        else:
            values, info = lapack.dsterf(diag, off)
            _check(info, "dsterf")
        self.eigenvalues = np.ascontiguousarray(values[::-1])
        if sigma != 1.0:
            self.eigenvalues /= sigma

    @property
    def size(self) -> int:
        return int(self._diag.shape[0])

    def leading(self, k: int) -> np.ndarray:
        """Orthonormal eigenvectors of the ``k`` largest eigenvalues.

        Returns an ``(n, k)`` array, column ``i`` for ``eigenvalues[i]``.
        """
        n = self.size
        k = int(k)
        if not 0 <= k <= n:
            raise ValueError(f"k must be in [0, {n}]; got {k}.")
        if k == 0:
            return np.zeros((n, 0))
        if n == 1:
            return np.ones((1, 1))
        # Eigenvectors do not change with the scale; inverse iteration
        # overflows near the top of LAPACK's range (1e146), so solve at unit
        # norm.
        norm = max(float(np.max(np.abs(self._diag))), float(np.max(np.abs(self._off))))
        norm = norm if norm > 0 else 1.0
        d, e = self._diag / norm, self._off / norm
        if k >= ALL_VECTORS_FRACTION * n:
            _, Y = scipy.linalg.eigh_tridiagonal(
                d, e, lapack_driver="stevd", check_finite=False
            )
            Y = Y[:, n - k :]
        else:
            driver = "stebz" if k <= INVERSE_ITERATION_MAX else "stemr"
            _, Y = scipy.linalg.eigh_tridiagonal(
                d,
                e,
                select="i",
                select_range=(n - k, n - 1),
                lapack_driver=driver,
                check_finite=False,
            )
        return self._back_transform(np.asfortranarray(Y[:, ::-1]))

    def _back_transform(self, Y: np.ndarray) -> np.ndarray:
        """``Q Y``: with ``lower=1`` the reflectors of ``dsytrd`` are those of a
        QR factorisation of ``A[1:, :-1]`` acting on rows ``1:`` (LAPACK's
        ``dormtr`` does the same through ``dormqr``)."""
        n = self.size
        sub = self._reflectors[1:, : n - 1]
        rows = Y[1:]
        lwork = int(lapack.dormqr("L", "N", sub, self._tau, rows, -1)[1][0])
        out, _, info = lapack.dormqr(
            "L", "N", sub, self._tau, rows, max(lwork, 1), overwrite_c=1
        )
        _check(info, "dormqr")
        Y[1:] = out
        return np.ascontiguousarray(Y)


def _scaling(matrix: np.ndarray) -> float:
    """The factor LAPACK's drivers (``dsyevd``, ``dsyevr``) scale a matrix by
    before the reduction, so that its largest entry lies in
    ``[sqrt(safmin / eps), sqrt(eps / safmin)]``: bisection squares the
    off-diagonal entries, which overflow for entries beyond about 1e154."""
    anrm = max(float(np.max(matrix)), -float(np.min(matrix)))
    smlnum = np.finfo(np.float64).tiny / np.finfo(np.float64).eps
    rmin, rmax = np.sqrt(smlnum), np.sqrt(1.0 / smlnum)
    if 0.0 < anrm < rmin:
        return float(rmin / anrm)
    if anrm > rmax:
        return float(rmax / anrm)
    return 1.0


def _check(info: int, routine: str) -> None:
    if info != 0:
        raise np.linalg.LinAlgError(f"LAPACK {routine} failed (info={info}).")
