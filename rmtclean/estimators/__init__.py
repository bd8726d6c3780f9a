"""scikit-learn estimators: one thin class per rule, and their registry.

The classes load on first access (module ``__getattr__``): importing this
package, or reading :data:`CLEANERS`, does not import scikit-learn or the
compiled kernels.
"""

import importlib

from rmtclean.estimators._registry import CLEANERS, CleanerEntry, find_cleaner

__all__ = [
    "CLEANERS",
    "CleanerEntry",
    "EigenClip",
    "KernelShrink",
    "LinearShrink",
    "SpectralCovariance",
    "SpikeShrink",
    "SplitShrink",
    "StieltjesShrink",
    "find_cleaner",
]

_BASE_MODULE = "rmtclean.estimators._base"


def __getattr__(name: str):
    if name == "SpectralCovariance":
        value = importlib.import_module(_BASE_MODULE).SpectralCovariance
    else:
        entry = next((e for e in CLEANERS if e.name == name), None)
        if entry is None:
            raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
        value = entry.cls
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
