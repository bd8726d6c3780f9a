"""The sample covariance of the benchmarks (scikit-learn's, divisor ``T - 1``)."""

from __future__ import annotations

import numpy as np
from sklearn.covariance import EmpiricalCovariance

__all__ = ["SampleCovariance"]


class SampleCovariance(EmpiricalCovariance):
    """The sample covariance with rmtclean's divisor: ``T - 1`` after demeaning.

    scikit-learn's ``EmpiricalCovariance`` divides by ``T``; rmtclean's
    spectra, rules and oracle use the degrees of freedom, so the PRIAL
    reference does too. The precision is the pseudo-inverse, as in
    ``EmpiricalCovariance``.
    """

    def fit(self, X, y=None):
        """Fit to ``X`` of shape (n_samples, n_features); returns self."""
        super().fit(X)
        n_samples = np.shape(X)[0]
        dof = n_samples if self.assume_centered else n_samples - 1
        self.covariance_ = self.covariance_ * (n_samples / dof)
        if self.store_precision:  # pinvh(a C) = pinvh(C) / a: no second pinvh
            self.precision_ = self.precision_ * (dof / n_samples)
        return self
