"""scikit-learn estimators: one thin class per rule, and their registry.

The classes load on first access (module ``__getattr__``): importing this
package, or reading :data:`CLEANERS`, does not import scikit-learn or the
compiled kernels.
"""

from rmtclean.estimators._registry import CLEANERS, CleanerEntry, find_cleaner

__all__ = [
    "AutoShrink",
    "CLEANERS",
    "CleanerEntry",
    "EigenClip",
    "KernelShrink",
    "LinearShrink",
    "SpectralCovariance",
    "SpikeShrink",
    "SplitShrink",
    "StieltjesShrink",
    "TylerShrink",
    "find_cleaner",
]


def __getattr__(name: str):
    if name == "SpectralCovariance":
        from rmtclean.estimators._base import SpectralCovariance as value
    else:
        entry = next((e for e in CLEANERS if e.name == name), None)
        if entry is None:
            raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
        value = entry.cls
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
