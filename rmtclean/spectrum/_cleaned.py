"""A cleaned covariance kept in spectral form, never densified unless asked."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["CleanedSpectrum"]


@dataclass(frozen=True, eq=False)
class CleanedSpectrum:
    r"""A covariance ``A = D (V diag(d) V' + c (I - V V')) D`` in factored form.

    ``V`` holds orthonormal eigenvectors (N x r), ``d`` their cleaned
    eigenvalues, ``c`` the value on the null space (the orthogonal complement
    of ``V``; needed only when r < N) and ``D = diag(scale)`` restores the
    variances when the spectrum is that of a correlation matrix. Products,
    solves and log-determinants cost O(N r) per vector and O(N r) memory;
    only :meth:`to_dense` builds an N x N array.

    Parameters
    ----------
    eigenvectors : ndarray of shape (n_features, n_components)
    eigenvalues : ndarray of shape (n_components,)
    null_value : float or None
        Required when ``n_components < n_features``.
    scale : ndarray of shape (n_features,) or None

    Notes
    -----
    Powers act on the inner matrix ``C = V diag(d) V' + c (I - V V')``:

    .. math:: C^p b = V (d^p \odot V' b) + c^p (b - V V' b).

    A factor ``L = D C^{1/2}`` has ``L L' = A``; :meth:`whiten` applies
    ``L^{-1} = C^{-1/2} D^{-1}`` and :meth:`colour` applies ``L``. Without
    ``scale`` they are the symmetric square roots.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.spectrum import CleanedSpectrum
    >>> V = np.linalg.qr(np.random.default_rng(0).standard_normal((5, 2)))[0]
    >>> A = CleanedSpectrum(V, np.array([4.0, 2.0]), null_value=1.0)
    >>> dense = A.to_dense()
    >>> b = np.arange(5.0)
    >>> bool(np.allclose(A.solve(b), np.linalg.solve(dense, b)))
    True
    >>> bool(np.isclose(A.logdet(), np.linalg.slogdet(dense)[1]))
    True
    """

    eigenvectors: np.ndarray
    eigenvalues: np.ndarray
    null_value: float | None = None
    scale: np.ndarray | None = None

    def __post_init__(self):
        V = np.asarray(self.eigenvectors, dtype=np.float64)
        d = np.asarray(self.eigenvalues, dtype=np.float64)
        if V.ndim != 2 or d.ndim != 1 or V.shape[1] != d.shape[0]:
            raise ValueError(
                "CleanedSpectrum needs eigenvectors of shape (n_features, k) and "
                f"k eigenvalues; got shapes {V.shape} and {d.shape}."
            )
        if V.shape[1] < V.shape[0] and self.null_value is None:
            raise ValueError(
                "CleanedSpectrum needs a null_value when there are fewer "
                f"eigenvectors ({V.shape[1]}) than features ({V.shape[0]})."
            )
        object.__setattr__(self, "eigenvectors", V)
        object.__setattr__(self, "eigenvalues", d)
        if self.scale is not None:
            s = np.asarray(self.scale, dtype=np.float64)
            if s.shape != (V.shape[0],):
                raise ValueError(
                    f"scale must have shape ({V.shape[0]},); got {s.shape}."
                )
            object.__setattr__(self, "scale", s)
        if self.null_value is not None:
            object.__setattr__(self, "null_value", float(self.null_value))

    @property
    def n_features(self) -> int:
        return int(self.eigenvectors.shape[0])

    @property
    def n_components(self) -> int:
        return int(self.eigenvectors.shape[1])

    @property
    def has_null_space(self) -> bool:
        return self.n_components < self.n_features

    def full_eigenvalues(self) -> np.ndarray:
        """Eigenvalues of the inner matrix C, the null value repeated last."""
        out = np.empty(self.n_features)
        out[: self.n_components] = self.eigenvalues
        if self.has_null_space:
            out[self.n_components :] = self.null_value
        return out

    def _inner_power(self, B, p: float) -> np.ndarray:
        B = np.asarray(B, dtype=np.float64)
        V, d = self.eigenvectors, self.eigenvalues
        coef = V.T @ B
        dp = _power(d, p)
        scaled = coef * (dp if B.ndim == 1 else dp[:, None])
        out = V @ scaled
        if self.has_null_space:
            out += _power(np.array([self.null_value]), p)[0] * (B - V @ coef)
        return out

    def power_matvec(self, B, p: float) -> np.ndarray:
        """``C^p B`` for the inner matrix (ignores ``scale``); B is (N,) or (N, k).

        Zero eigenvalues with a negative power give zero (pseudo-inverse).
        """
        return self._inner_power(B, p)

    def matvec(self, B) -> np.ndarray:
        """``A @ B`` for B of shape (N,) or (N, k)."""
        s = self._col_scale(B)
        if s is None:
            return self._inner_power(B, 1.0)
        return s * self._inner_power(s * np.asarray(B, dtype=np.float64), 1.0)

    def solve(self, B) -> np.ndarray:
        """``A^{-1} B`` (pseudo-inverse where an eigenvalue is zero)."""
        s = self._col_scale(B)
        if s is None:
            return self._inner_power(B, -1.0)
        return self._inner_power(np.asarray(B, dtype=np.float64) / s, -1.0) / s

    def whiten(self, B) -> np.ndarray:
        """``L^{-1} B`` with ``L L' = A`` (see Notes)."""
        s = self._col_scale(B)
        B = np.asarray(B, dtype=np.float64)
        return self._inner_power(B if s is None else B / s, -0.5)

    def colour(self, B) -> np.ndarray:
        """``L B`` with ``L L' = A``, the inverse of :meth:`whiten`."""
        s = self._col_scale(B)
        out = self._inner_power(B, 0.5)
        return out if s is None else s * out

    def sqrt_matvec(self, B) -> np.ndarray:
        """``A^{1/2} B`` with the symmetric square root (no ``scale`` only)."""
        self._require_unscaled("sqrt_matvec")
        return self._inner_power(B, 0.5)

    def inv_sqrt_matvec(self, B) -> np.ndarray:
        """``A^{-1/2} B`` with the symmetric square root (no ``scale`` only)."""
        self._require_unscaled("inv_sqrt_matvec")
        return self._inner_power(B, -0.5)

    def logdet(self) -> float:
        """``log det A``; ``-inf`` if an eigenvalue is zero."""
        vals = self.full_eigenvalues() if self.has_null_space else self.eigenvalues
        if np.any(vals <= 0):
            return -np.inf
        out = float(np.sum(np.log(self.eigenvalues)))
        if self.has_null_space:
            out += (self.n_features - self.n_components) * np.log(self.null_value)
        if self.scale is not None:
            out += 2.0 * float(np.sum(np.log(self.scale)))
        return out

    def trace(self) -> float:
        """``tr A`` in O(N r)."""
        return float(np.sum(self.diagonal()))

    def diagonal(self) -> np.ndarray:
        """The diagonal of A in O(N r)."""
        V, d = self.eigenvectors, self.eigenvalues
        c = self.null_value if self.has_null_space else 0.0
        diag = (V * V) @ (d - c) + c
        if self.scale is not None:
            diag = diag * self.scale**2
        return diag

    def to_dense(self, power: float = 1.0) -> np.ndarray:
        r"""The N x N matrix ``A`` (``power=-1``: its inverse). Costs N^2 memory.

        Without ``scale`` any power of the inner matrix is allowed (zero
        eigenvalues stay zero for negative powers: the pseudo-inverse).

        Notes
        -----
        With ``e = d^p`` and a value ``c`` shared by many directions (the
        null value, or the most repeated ``e_i``: a clipped bulk, a noise
        variance), the matrix is formed as

        .. math:: C^p = c I + V_s \operatorname{diag}(e_s - c) V_s',

        ``s`` the directions with ``e_i != c``; this equals ``V diag(e) V'``
        for a complete orthonormal ``V`` (and is the definition on the null
        space). ``V_s diag(w) V_s'`` is computed as ``W_+ W_+' - W_- W_-'``
        with ``W_pm = V_pm diag(sqrt(|w|))``: BLAS syrk, ``N^2 |s|`` flops
        instead of the ``2 N^3`` of a general product, and exactly symmetric.

        Examples
        --------
        >>> import numpy as np
        >>> from rmtclean.spectrum import CleanedSpectrum
        >>> V = np.linalg.qr(np.random.default_rng(0).standard_normal((6, 6)))[0]
        >>> A = CleanedSpectrum(V, np.array([5.0, 3.0, 1.0, 1.0, 1.0, 1.0]))
        >>> bool(np.allclose(A.to_dense(), (V * A.eigenvalues) @ V.T))
        True
        >>> bool(np.allclose(A.to_dense(-1.0) @ A.to_dense(), np.eye(6)))
        True
        """
        if self.scale is not None and abs(power) != 1:
            raise ValueError("to_dense with a scale supports power 1 or -1 only.")
        V, d = self.eigenvectors, self.eigenvalues
        dp = _power(d, power)
        if self.has_null_space:
            shared = _power(np.array([self.null_value]), power)[0]
        else:
            shared = _most_repeated(dp)
        out = _identity_plus_low_rank(V, dp, shared)
        if self.scale is not None:
            s = self.scale if power > 0 else 1.0 / self.scale
            # One product s_i s_j per entry keeps the result exactly symmetric.
            out *= np.outer(s, s)
        return out

    def _col_scale(self, B):
        if self.scale is None:
            return None
        return self.scale if np.ndim(B) == 1 else self.scale[:, None]

    def _require_unscaled(self, what: str) -> None:
        if self.scale is not None:
            raise ValueError(
                f"{what} needs the symmetric square root, which a scaled "
                "(correlation-based) spectrum does not factor cheaply; use "
                "whiten/colour instead."
            )


def _power(values: np.ndarray, p: float) -> np.ndarray:
    if p == 1.0:
        return values
    out = np.zeros_like(values, dtype=np.float64)
    pos = values > 0
    out[pos] = values[pos] ** p
    return out


def _most_repeated(values: np.ndarray) -> float:
    """The value shared by most entries; 0 when all are distinct."""
    if values.size == 0:
        return 0.0
    unique, counts = np.unique(values, return_counts=True)
    best = int(np.argmax(counts))
    return float(unique[best]) if counts[best] > 1 else 0.0


def _identity_plus_low_rank(V: np.ndarray, values: np.ndarray, shared: float):
    """``shared I + V_s diag(values_s - shared) V_s'`` over ``values != shared``."""
    keep = values != shared
    if np.all(keep):
        Vs, w = V, values - shared
    else:
        Vs, w = V[:, keep], values[keep] - shared
    out = _signed_gram(Vs, w)
    if shared != 0.0:
        out[np.diag_indices_from(out)] += shared
    return out


def _signed_gram(V: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``V diag(w) V'`` as ``W_+ W_+' - W_- W_-'``.

    numpy hands ``W @ W.T`` (a matrix times its own transposed view) to BLAS
    syrk, which computes one triangle and mirrors it.
    """
    n = V.shape[0]
    pos = w > 0
    neg = w < 0
    out = None
    for mask, sign in ((pos, 1.0), (neg, -1.0)):
        if not np.any(mask):
            continue
        root = V[:, mask] if not np.all(mask) else V
        root = root * np.sqrt(sign * w[mask])
        part = root @ root.T
        if out is None:
            out = part if sign > 0 else np.negative(part, out=part)
        else:
            out -= part
    return np.zeros((n, n)) if out is None else out
