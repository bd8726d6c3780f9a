"""KernelShrink: analytical nonlinear shrinkage as a scikit-learn estimator."""

from __future__ import annotations

import math

import numpy as np

from rmtclean._validation import Interval, Options
from rmtclean.estimators._base import SpectralCovariance, common_params_doc
from rmtclean.rules._kernel import KERNEL_FORMULAS, _kernel_shrink
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import SampleSpectrum

__all__ = ["KernelShrink"]


def _positive_part(spectrum: SampleSpectrum):
    """(positive eigenvalues, effective sample size, n_components).

    Eigenvalues below ``1e-12 * max(N, dof) * lambda_max`` count as zeros
    (collinear columns); then the rank replaces the degrees of freedom, so
    that the zeros are treated as the null space of a rank-r sample.
    """
    vals = spectrum.eigenvalues
    k = vals.size
    n = float(spectrum.n_samples)
    top = float(vals[0]) if k else 0.0
    tol = 1e-12 * max(spectrum.n_features, n) * top
    r = int(np.count_nonzero(vals > tol))
    if r < min(spectrum.n_features, n):  # rank deficient beyond the sample size
        n = float(r)
    return np.ascontiguousarray(vals[:r], dtype=np.float64), n, k


def _expand(out: CleanedEigenvalues, k: int, n_features: int) -> CleanedEigenvalues:
    """Give the ``k - r`` zero sample eigenvalues the null value."""
    r = out.values.size
    if r == k:
        return out
    values = np.concatenate([out.values, np.full(k - r, out.null_value)])
    null = out.null_value if k < n_features else None
    return CleanedEigenvalues(values, null, out.n_signal, out.details)


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
%(common)s
    Attributes
    ----------
    covariance_ : ndarray of shape (n_features, n_features) or None
        The cleaned covariance (None when not stored densely).
    precision_ : ndarray of shape (n_features, n_features) or None
        Its inverse (when stored).
    location_ : ndarray of shape (n_features,)
        The column means (zeros when ``assume_centered``).
    spectrum_ : CleanedSpectrum
        The cleaned covariance in spectral form.
    sample_eigenvalues_ : ndarray of shape (n_features,)
        Descending sample eigenvalues, the null space's zeros last.
    eigenvalues_ : ndarray of shape (n_features,)
        The shrunk eigenvalues, paired with ``sample_eigenvalues_``.
    eigenvectors_ : ndarray of shape (n_features, n_components)
        The sample eigenvectors.
    n_signal_ : None
        The rule computes no bulk edge.
    bandwidth_ : float
        The global bandwidth used.
    n_floored_ : int
        Number of values raised by the hard-edge floor (0 with
        ``formula="published"`` or away from N/dof = 1).
    scale_ : ndarray of shape (n_features,) or None
        Column standard deviations when ``standardize``.
    degrees_of_freedom_ : float
    n_features_in_ : int
    feature_names_in_ : ndarray of shape (n_features_in_,)

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
    ``fit`` raises a ValueError.

    References
    ----------
    .. [1] O. Ledoit and M. Wolf, "Analytical nonlinear shrinkage of
       large-dimensional covariance matrices", Ann. Statist. 48(5),
       3043-3065, 2020.

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
    """


class KernelShrink(SpectralCovariance):
    __doc__ = _DOC.replace("%(common)s", common_params_doc().rstrip("\n"))

    _parameter_specs: dict = {
        "bandwidth": [None, Interval(float, 0.0, None, closed="neither")],
        "formula": [Options(KERNEL_FORMULAS)],
        "n_jobs": [None, Interval(int, -1, -1), Interval(int, 1, None)],
    }

    def __init__(
        self,
        *,
        bandwidth=None,
        formula="stabilized",
        n_jobs=None,
        store_precision=True,
        assume_centered=False,
        standardize=False,
        route="auto",
        store_covariance="auto",
        half_life=None,
        missing="error",
    ):
        super().__init__(
            store_precision=store_precision,
            assume_centered=assume_centered,
            standardize=standardize,
            route=route,
            store_covariance=store_covariance,
            half_life=half_life,
            missing=missing,
        )
        self.bandwidth = bandwidth
        self.formula = formula
        self.n_jobs = n_jobs

    def _clean(self, spectrum: SampleSpectrum) -> CleanedEigenvalues:
        vals, n, k = _positive_part(spectrum)
        p = spectrum.n_features
        if vals.size == 0:  # constant data: a zero covariance
            self.bandwidth_, self.n_floored_ = math.nan, 0
            return CleanedEigenvalues(np.zeros(k), 0.0 if k < p else None)
        # The bandwidth follows the degrees of freedom (the sample size the
        # kernel estimate rests on), also when the rank is smaller.
        dof = float(spectrum.n_samples)
        h = dof ** (-1.0 / 3.0) if self.bandwidth is None else float(self.bandwidth)
        if p > n and math.sqrt(5.0) * h >= 1.0:
            raise ValueError(
                f"KernelShrink.fit: with n_features = {p} above the effective "
                f"n_samples = {n:g} (degrees of freedom, or the rank of the "
                "data), the closed form of H~(0) needs sqrt(5) * bandwidth < 1, "
                f"i.e. n_samples >= 12 with the default bandwidth. Got "
                f"bandwidth={h!r}."
            )
        out = _kernel_shrink(
            vals, n, p, bandwidth=h, formula=self.formula, n_jobs=self.n_jobs
        )
        self.bandwidth_ = out.details["bandwidth"]
        self.n_floored_ = out.details["n_floored"]
        return _expand(out, k, p)
