"""rmtclean: clean large sample covariance matrices with random-matrix theory.

The public names load on first access (module ``__getattr__``), so
``import rmtclean`` and the ``rmtclean`` command's parser stay fast: the
estimators, scikit-learn and the compiled kernels are imported when first
used.
"""

import importlib

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

# Where each public name lives; the estimators (every other name) live in
# rmtclean.estimators.
_HOMES = {
    "CleanedEigenvalues": "rmtclean.rules",
    "CleanedSpectrum": "rmtclean.spectrum",
    "SampleSpectrum": "rmtclean.spectrum",
    "SpectrumReport": "rmtclean.spectrum",
    "analyze_spectrum": "rmtclean.spectrum",
    "sample_spectrum": "rmtclean.spectrum",
}


def __getattr__(name: str):
    if name not in __all__:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    home = _HOMES.get(name, "rmtclean.estimators")
    value = getattr(importlib.import_module(home), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
