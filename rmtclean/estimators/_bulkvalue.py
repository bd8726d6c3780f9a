"""Cleaners whose bulk is one value: eigenvectors for the other eigenvalues only."""

from __future__ import annotations

from typing import ClassVar

from rmtclean._validation import Options
from rmtclean.estimators._base import mixin_dataclass

__all__ = ["OneBulkValue"]

_PARAMETER_DOC = (
    ('    eigen_solver : {"partial", "full", "randomized"}, default="partial"\n')
    + """        ``"partial"``: all eigenvalues from one reduction to tridiagonal form,
        then eigenvectors only for the eigenvalues the rule moves off the
        bulk value (``n_signal_`` of them), so ``eigenvectors_`` has that
        many columns and ``spectrum_`` stores ``c I + V_k diag(d_k - c) V_k'``
        (at N = 2000, T = 4000 the fit costs 0.5 to 0.6 times ``np.cov`` plus
        ``np.linalg.eigh``; see benchmarks/bench_topk.py). ``"full"``: every
        eigenvector, as ``numpy.linalg.eigh`` gives them; the same covariance
        to rounding. ``"randomized"``: forms neither the N x N covariance nor
        the T x T Gram matrix; randomized subspace iteration (Halko,
        Martinsson & Tropp 2011) gives the leading eigenpairs. The rest of
        the spectrum is known only through its trace, so this route needs
        %(randomized)s.
        ``sample_eigenvalues_`` then holds the computed eigenvalues followed
        by the mean of the others. It wins when T and N are both large and
        the signal count small (see the README's cost table); its error
        against the exact route is measured by benchmarks/bench_topk.py.
        Dask arrays are refused; data with missing entries (``missing``)
        take the exact route.
"""
)

_ATTRIBUTE_DOC = """    eigenvectors_ : ndarray of shape (n_features, n_vectors)
        The sample eigenvectors kept in ``spectrum_``: with
        ``eigen_solver="partial"`` those of the eigenvalues whose cleaned
        value differs from the bulk value (``n_vectors = n_signal_``; every
        other direction has the bulk value); with ``"full"`` all
        ``n_components`` of them.
"""


@mixin_dataclass
class OneBulkValue:
    """Mixin of a :class:`SpectralCovariance` whose rule gives every bulk
    eigenvalue (and the null space) one value and reads eigenvalues only: it
    adds the ``eigen_solver`` parameter and fills ``%(eigen_solver)s`` and
    ``%(eigenvectors)s`` in the class docstring."""

    _parameter_specs: ClassVar[dict] = {
        "eigen_solver": [Options({"partial", "full", "randomized"})]
    }

    eigen_solver: str = "partial"

    def _eigenvectors_needed(self) -> str:
        return {"partial": "leading", "full": "all"}.get(
            self.eigen_solver, "randomized"
        )

    def _spectrum_options(self) -> dict:
        options = {"eigenvectors": self._eigenvectors_needed()}
        if options["eigenvectors"] == "randomized":
            self._randomized_request(1.0, 1)  # refuse unsupported settings early
            options["randomized_request"] = self._randomized_request
        return options

    def _randomized_request(self, dof: float, n_features: int):
        """``(n_leading, threshold)`` for the randomized route (see
        :meth:`rmtclean.spectrum.SampleSpectrum.from_data`)."""
        raise NotImplementedError  # pragma: no cover

    def _refuse_randomized(self, needs: str, got: str) -> None:
        raise ValueError(
            f"{type(self).__name__}(eigen_solver='randomized') needs {needs}: "
            "a rule fitted to the whole spectrum cannot run on its leading part. "
            f"Got {got}."
        )

    @staticmethod
    def fill_doc(doc: str, randomized: str) -> str:
        return (
            doc.replace("%(eigen_solver)s\n", _PARAMETER_DOC)
            .replace("%(eigenvectors)s\n", _ATTRIBUTE_DOC)
            .replace("%(randomized)s", randomized)
        )
