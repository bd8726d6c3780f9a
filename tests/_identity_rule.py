"""A test-only estimator whose rule returns the sample eigenvalues unchanged.

It exercises the base class: its covariance must equal the sample covariance.
"""

from rmtclean.estimators._base import SpectralCovariance
from rmtclean.rules._types import CleanedEigenvalues


class KeepSample(SpectralCovariance):
    def _clean(self, spectrum):
        null = 0.0 if spectrum.n_components < spectrum.n_features else None
        return CleanedEigenvalues(spectrum.eigenvalues.copy(), null_value=null)
