"""KernelShrink: analytical nonlinear shrinkage as a scikit-learn estimator."""

from __future__ import annotations

import math
from typing import ClassVar

import numpy as np

from rmtclean._validation import Interval, Options
from rmtclean.estimators._base import (
    SpectralCovariance,
    TakesMissing,
    estimator_dataclass,
)
from rmtclean.estimators._docs import estimator_doc
from rmtclean.rules._combine import (
    _crossvalidated_linear_weight,
    blend_linear,
    crossvalidated_linear_weight,
    plateau_phase,
)
from rmtclean.rules._kernel import KERNEL_FORMULAS, _kernel_rule
from rmtclean.rules._linear import _linear_shrink
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import SampleSpectrum

__all__ = ["NEAR_SINGULAR_METHODS", "KernelShrink"]

#: "kernel": the kernel values of ``formula``; "cross-validated": blended with
#: Ledoit-Wolf (2004) linear shrinkage near N/n = 1, the weight by K-fold CV.
NEAR_SINGULAR_METHODS = ("kernel", "cross-validated")


_DOC = r"""Analytical nonlinear shrinkage of the sample eigenvalues.

    Ledoit & Wolf's (2020) estimator: each sample eigenvalue is replaced by
    an estimate of ``u_i' Sigma u_i`` built from an Epanechnikov kernel
    estimate of the sample spectral density and its Hilbert transform, with
    locally adaptive bandwidths; when N exceeds the degrees of freedom the
    null space gets one common value. See :func:`rmtclean.rules.kernel_shrink`
    for the formulas and for the default remedy near N/T = 1.

    Parameters
    ----------
    bandwidth : float or None, default=None
        Global bandwidth ``h``; ``None`` is ``dof^(-1/3)`` as in the paper.
    formula : {"stabilized", "published"}, default="stabilized"
        ``"published"`` is Ledoit & Wolf (2020) exactly; ``"stabilized"``
        equals it when ``|N/dof - 1| > 0.2`` and floors the collapsed
        smallest eigenvalues near the singular ratio.
    n_jobs : int or None, default=None
        Numba threads for the O(N^2) kernel sums (``-1``: all).
    near_singular : {"kernel", "cross-validated"}, default="kernel"
        ``"kernel"`` keeps the kernel values of ``formula``.
        ``"cross-validated"`` blends them, inside the zone ``|N/dof - 1| <
        0.2`` only, with Ledoit & Wolf's (2004) linear shrinkage of the same
        eigenvalues: ``d = d_K + tau w (d_L - d_K)``, ``w`` in [0, 1] the
        held-out Frobenius weight of ``n_folds`` contiguous folds
        (:func:`rmtclean.rules._combine.crossvalidated_linear_weight`) and
        ``tau`` 1 on ``|N/dof - 1| <= 0.1``, falling linearly to 0 at 0.2.
        Outside the zone it is ``"kernel"`` exactly; inside, a fit costs
        about ``n_folds`` more cleanings (see Notes). Needs the data rows:
        not with ``sample_weight``, ``half_life``, dask arrays or NaN
        entries (``missing``), which raise a ValueError.
    n_folds : int, default=10
        Number of contiguous folds (in row order) for
        ``near_singular="cross-validated"``; at least 2.
%(common)s
    Attributes
    ----------
%(fitted)s
    eigenvalues_ : ndarray of shape (n_features,)
        The shrunk eigenvalues, paired with ``sample_eigenvalues_``.
    eigenvectors_ : ndarray of shape (n_features, n_components)
        The sample eigenvectors.
%(report_count)s
    bandwidth_ : float
        The global bandwidth used.
    n_floored_ : int
        Number of values raised by the hard-edge floor (0 with
        ``formula="published"`` or away from N/dof = 1).
    combination_weight_ : float
        The weight ``tau w`` of linear shrinkage applied; 0.0 with
        ``near_singular="kernel"`` and outside ``|N/dof - 1| < 0.2``.
    degrees_of_freedom_ : float
%(fitted_end)s

    See Also
    --------
    rmtclean.rules.kernel_shrink : the same on eigenvalues.
    StieltjesShrink : the RIE of Bun, Allez, Bouchaud & Potters.

    Notes
    -----
    Works on the gram route (``T < N``) without an N x N matrix: the rule
    needs only the nonzero eigenvalues. Sample eigenvalues that are zero
    beyond what the sample size explains (collinear columns) are treated as
    null space: the rank replaces the degrees of freedom in the formulas
    (the bandwidth still follows the degrees of freedom). With N above that
    effective sample size, the closed form of ``H~(0)`` needs ``sqrt5 h <
    1`` (12 or more degrees of freedom with the default bandwidth); below,
    the null directions get OAS linear shrinkage's value (Chen et al. 2010),
    chosen by held-out likelihood on an expression panel (see
    :func:`rmtclean.rules.kernel_shrink`), and ``fit`` warns
    (``WeakEstimateWarning``). Any panel of 2 or more rows (1 with
    ``assume_centered``) is accepted.

    ``near_singular="cross-validated"`` (opt-in). On each fold the other
    rows give the eigenvectors and both shrunk spectra (kernel with the
    same ``formula`` and ``bandwidth``, linear with the Ledoit-Wolf
    intensity); the held-out rows give unbiased estimates ``u_i' S_test
    u_i`` of the oracle ``u_i' Sigma u_i`` (the split idea of Abadir,
    Distaso & Zikes 2014 and Lam 2016). Folds are contiguous, so serially
    dependent rows stay together; the estimates assume independent rows.
    With ``standardize`` the folds use the rows scaled by the full-sample
    standard deviations; with ``assume_centered`` they are not demeaned.
    It trades a few folds' cost for a weight the spectrum alone does not
    estimate; the evidence (losses against sklearn's LedoitWolf, costs) is
    in ``benchmarks/near_singular_crossvalidated.md``.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.estimators import KernelShrink
    >>> rng = np.random.default_rng(0)
    >>> scale = np.sqrt(np.r_[np.full(50, 4.0), np.ones(50)])
    >>> X = rng.standard_normal((200, 100)) * scale
    >>> est = KernelShrink().fit(X)
    >>> ev = est.eigenvalues_
    >>> bool(ev[:40].mean() > 3 and ev[-40:].mean() < 1.6)
    True

    Near N/dof = 1 the opt-in blend with linear shrinkage:

    >>> Y = rng.standard_normal((101, 100)) * scale
    >>> cv = KernelShrink(near_singular="cross-validated", n_folds=5).fit(Y)
    >>> bool(0.0 <= cv.combination_weight_ <= 1.0)
    True
    >>> far = KernelShrink(near_singular="cross-validated").fit(X)  # N/dof = 0.5
    >>> far.combination_weight_, bool(np.all(far.eigenvalues_ == est.eigenvalues_))
    (0.0, True)
    """


@estimator_dataclass
class KernelShrink(TakesMissing, SpectralCovariance):
    __doc__ = estimator_doc(_DOC, references=crossvalidated_linear_weight)

    _parameter_specs: ClassVar[dict] = {
        "bandwidth": [None, Interval(float, 0.0, None, closed="neither")],
        "formula": [Options(KERNEL_FORMULAS)],
        "n_jobs": [None, Interval(int, -1, -1), Interval(int, 1, None)],
        "near_singular": [Options(NEAR_SINGULAR_METHODS)],
        "n_folds": [Interval(int, 2, None)],
    }

    @property
    def _needs_samples(self) -> bool:
        # The held-out weight needs the data rows; the default needs only
        # the spectrum (and so keeps the dask and missing-data routes).
        return getattr(self, "near_singular", "kernel") == "cross-validated"

    bandwidth: float | None = None
    formula: str = "stabilized"
    n_jobs: int | None = None
    near_singular: str = "kernel"
    n_folds: int = 10

    def _clean(self, spectrum: SampleSpectrum) -> CleanedEigenvalues:
        cross_validated = self.near_singular == "cross-validated"
        if cross_validated and spectrum.weights is not None:
            raise ValueError(
                "KernelShrink.fit: near_singular='cross-validated' does not "
                "support sample_weight or half_life (its folds are unweighted "
                "rows); drop the weights or use near_singular='kernel'."
            )
        self.combination_weight_ = 0.0
        out = _kernel_rule(
            spectrum.eigenvalues,
            spectrum.n_samples,
            spectrum.n_features,
            bandwidth=self.bandwidth,
            formula=self.formula,
            n_jobs=self.n_jobs,
            warn_as="KernelShrink.fit",
        )
        if out.details is None:  # constant data: a zero covariance
            self.bandwidth_, self.n_floored_ = math.nan, 0
            return out
        self.bandwidth_ = out.details.bandwidth
        self.n_floored_ = out.details.n_floored
        tau = plateau_phase(out.details.ratio)
        if cross_validated and tau > 0.0:
            out = self._blend(spectrum, out, tau)
        return out

    def _blend(self, spectrum, kernel, tau) -> CleanedEigenvalues:
        """The kernel values blended with linear shrinkage, weight tau * w."""
        rows = spectrum.samples
        w = _crossvalidated_linear_weight(
            rows,
            self.n_folds,
            self.assume_centered,
            self.bandwidth,
            self.formula,
            self.n_jobs,
            "KernelShrink.fit (near_singular='cross-validated')",
        )
        linear = _linear_shrink(
            spectrum.eigenvalues,
            float(spectrum.n_samples),
            spectrum.n_features,
            intensity="ledoit-wolf",
            squared_norms=np.einsum("ij,ij->i", rows, rows),
        )
        self.combination_weight_ = tau * w
        return blend_linear(kernel, linear, tau * w)

    def _unsupported_route(self, what: str) -> None:
        if self.near_singular == "cross-validated":
            raise ValueError(
                f"KernelShrink.fit: near_singular='cross-validated' does not "
                f"support {what}: its folds need the complete data rows in "
                "memory. Use near_singular='kernel' or pass a complete numpy array."
            )

    def _fit_dask(self, X, sample_weight):
        self._unsupported_route("dask arrays")
        return super()._fit_dask(X, sample_weight)

    def _fit_missing(self, X, sample_weight):
        self._unsupported_route(f"missing={self.missing!r} with NaN entries")
        return super()._fit_missing(X, sample_weight)
