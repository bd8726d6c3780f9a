"""rmtclean: clean large sample covariance matrices with random-matrix theory."""

from rmtclean.estimators import (
    EigenClip,
    KernelShrink,
    LinearShrink,
    SpectralCovariance,
    SpikeShrink,
    SplitShrink,
    StieltjesShrink,
)
from rmtclean.rules import CleanedEigenvalues
from rmtclean.spectrum import (
    CleanedSpectrum,
    SampleSpectrum,
    SpectrumReport,
    analyze_spectrum,
    sample_spectrum,
)

__version__ = "0.1.0"

__all__ = [
    "CleanedEigenvalues",
    "CleanedSpectrum",
    "EigenClip",
    "KernelShrink",
    "LinearShrink",
    "SampleSpectrum",
    "SpectralCovariance",
    "SpectrumReport",
    "SpikeShrink",
    "SplitShrink",
    "StieltjesShrink",
    "analyze_spectrum",
    "sample_spectrum",
]
