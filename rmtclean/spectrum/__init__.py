"""Sample spectra, cleaned spectra, bulk fits, edge tests and spike inversion."""

from rmtclean.spectrum._bulk import BulkFit, fit_bulk
from rmtclean.spectrum._cleaned import CleanedSpectrum
from rmtclean.spectrum._edge import EdgeTest, detect_signal
from rmtclean.spectrum._report import SpectrumReport, analyze_spectrum, spectrum_report
from rmtclean.spectrum._sample import DENSE_LIMIT, SampleSpectrum, sample_spectrum
from rmtclean.spectrum._sphericity import SphericityTest, sign_sphericity
from rmtclean.spectrum._spikes import (
    SpikeInversion,
    critical_spike,
    eigenvalue_to_spike,
    invert_spikes,
    is_above_bulk_edge,
    spike_overlap,
    spike_to_eigenvalue,
)

__all__ = [
    "BulkFit",
    "CleanedSpectrum",
    "DENSE_LIMIT",
    "EdgeTest",
    "SampleSpectrum",
    "SpectrumReport",
    "SphericityTest",
    "SpikeInversion",
    "analyze_spectrum",
    "critical_spike",
    "detect_signal",
    "eigenvalue_to_spike",
    "fit_bulk",
    "invert_spikes",
    "is_above_bulk_edge",
    "sample_spectrum",
    "sign_sphericity",
    "spike_overlap",
    "spike_to_eigenvalue",
    "spectrum_report",
]
