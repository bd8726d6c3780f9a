"""rmtclean: clean large sample covariance matrices with random-matrix theory.

The public names load on first access (module ``__getattr__``), so
``import rmtclean`` and the ``rmtclean`` command's parser stay fast: the
estimators, scikit-learn and the compiled kernels are imported when first
used.
"""

__version__ = "0.1.0"

__all__ = [
    "AutoShrink",
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
    "TylerShrink",
    "analyze_spectrum",
    "sample_spectrum",
]

# The public names that do not live in rmtclean.estimators.
_SPECTRUM = {
    "CleanedSpectrum",
    "SampleSpectrum",
    "SpectrumReport",
    "analyze_spectrum",
    "sample_spectrum",
}


def __getattr__(name: str):
    if name not in __all__:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    if name in _SPECTRUM:
        from rmtclean import spectrum as home
    elif name == "CleanedEigenvalues":
        from rmtclean import rules as home
    else:
        from rmtclean import estimators as home
    value = getattr(home, name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
