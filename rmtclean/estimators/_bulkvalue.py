"""Cleaners whose bulk is one value: eigenvectors for the other eigenvalues only."""

from __future__ import annotations

from rmtclean._validation import Options

__all__ = ["OneBulkValue"]

_PARAMETER_DOC = """    eigen_solver : {"partial", "full"}, default="partial"
        ``"partial"``: all eigenvalues from one reduction to tridiagonal form,
        then eigenvectors only for the eigenvalues the rule moves off the
        bulk value (``n_signal_`` of them), so ``eigenvectors_`` has that
        many columns and ``spectrum_`` stores ``c I + V_k diag(d_k - c) V_k'``
        (at N = 2000, T = 4000 the fit costs about 0.6 times ``np.cov`` plus
        ``np.linalg.eigh``; see benchmarks/bench_topk.py). ``"full"``: every
        eigenvector, as ``numpy.linalg.eigh`` gives them; the same covariance
        to rounding.
"""

_ATTRIBUTE_DOC = """    eigenvectors_ : ndarray of shape (n_features, n_vectors)
        The sample eigenvectors kept in ``spectrum_``: with
        ``eigen_solver="partial"`` those of the eigenvalues whose cleaned
        value differs from the bulk value (``n_vectors = n_signal_``; every
        other direction has the bulk value); with ``"full"`` all
        ``n_components`` of them.
"""


class OneBulkValue:
    """Mixin of a :class:`SpectralCovariance` whose rule gives every bulk
    eigenvalue (and the null space) one value and reads eigenvalues only: it
    adds the ``eigen_solver`` parameter and fills ``%(eigen_solver)s`` and
    ``%(eigenvectors)s`` in the class docstring."""

    _eigen_solver_spec: dict = {"eigen_solver": [Options({"partial", "full"})]}

    def _eigenvectors_needed(self) -> str:
        return "leading" if self.eigen_solver == "partial" else "all"

    @staticmethod
    def fill_doc(doc: str) -> str:
        return doc.replace("%(eigen_solver)s\n", _PARAMETER_DOC).replace(
            "%(eigenvectors)s\n", _ATTRIBUTE_DOC
        )
