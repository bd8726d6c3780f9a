"""Shared helpers of the spectrum tests: planted spectra, one BLAS thread."""

import numpy as np
import pytest
from threadpoolctl import threadpool_limits

from rmtclean.spectrum import sample_spectrum


@pytest.fixture(autouse=True)
def one_blas_thread():
    """Many small eigenproblems: one BLAS thread avoids oversubscription."""
    with threadpool_limits(1):
        yield


def spiked_spectrum(rng, n_rows, n_features, variance, spikes=()):
    """Demeaned Gaussian data with planted spike variances; (eigenvalues, dof).

    Column ``j < len(spikes)`` has variance ``spikes[j]``, the others
    ``variance``.
    """
    scales = np.full(n_features, np.sqrt(variance))
    scales[: len(spikes)] = np.sqrt(spikes)
    spec = sample_spectrum(rng.standard_normal((n_rows, n_features)) * scales)
    return spec.eigenvalues, spec.n_samples


def report_count(est):
    """The spectrum report's count on a fitted estimator's sample spectrum."""
    from rmtclean.spectrum import spectrum_report

    values = est.sample_eigenvalues_
    dof = est.degrees_of_freedom_
    nonzero = values[: min(values.size, int(np.ceil(dof)))]
    return spectrum_report(nonzero, dof, values.size).n_signal
