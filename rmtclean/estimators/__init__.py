"""scikit-learn estimators: one thin class per rule, and their registry."""

from rmtclean.estimators._base import SpectralCovariance
from rmtclean.estimators._clip import EigenClip
from rmtclean.estimators._kernel import KernelShrink
from rmtclean.estimators._linear import LinearShrink
from rmtclean.estimators._registry import CLEANERS, CleanerEntry, find_cleaner
from rmtclean.estimators._spiked import SpikeShrink
from rmtclean.estimators._split import SplitShrink
from rmtclean.estimators._stieltjes import StieltjesShrink

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
