"""Sample spectra, cleaned spectra, bulk fits, edge tests and spike inversion."""

from rmtclean.spectrum._bulk import BulkFit, fit_bulk
from rmtclean.spectrum._cleaned import CleanedSpectrum
from rmtclean.spectrum._edge import EdgeTest, detect_signal
from rmtclean.spectrum._report import SpectrumReport, analyze_spectrum
from rmtclean.spectrum._sample import DENSE_LIMIT, SampleSpectrum, sample_spectrum

__all__ = sorted(
    [
        "BulkFit",
        "CleanedSpectrum",
        "DENSE_LIMIT",
        "EdgeTest",
        "SpectrumReport",
        "analyze_spectrum",
        "detect_signal",
        "fit_bulk",
        "SampleSpectrum",
        "sample_spectrum",
    ]
)
