"""rmtclean: clean large sample covariance matrices with random-matrix theory."""

from rmtclean.estimators import (
    LinearShrink,
    SpectralCovariance,
    SpikeShrink,
    SplitShrink,
)
from rmtclean.rules import CleanedEigenvalues
from rmtclean.spectrum import CleanedSpectrum, SampleSpectrum, sample_spectrum

__version__ = "0.1.0"

__all__ = sorted(
    [
        "CleanedEigenvalues",
        "CleanedSpectrum",
        "LinearShrink",
        "SampleSpectrum",
        "SpectralCovariance",
        "SpikeShrink",
        "SplitShrink",
        "sample_spectrum",
    ]
)
