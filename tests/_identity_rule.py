"""A test-only estimator whose rule returns the sample eigenvalues unchanged.

It exercises the base class: its covariance must equal the sample covariance.
"""

from rmtclean.estimators._base import (
    SpectralCovariance,
    TakesMissing,
    estimator_dataclass,
)
from rmtclean.rules._types import CleanedEigenvalues


@estimator_dataclass
class KeepSample(TakesMissing, SpectralCovariance):
    def _clean(self, spectrum):
        null = 0.0 if spectrum.n_components < spectrum.n_features else None
        return CleanedEigenvalues(spectrum.eigenvalues.copy(), null_value=null)
