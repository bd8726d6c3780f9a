"""scikit-learn estimators: one thin class per rule."""

from rmtclean.estimators._base import SpectralCovariance
from rmtclean.estimators._clip import EigenClip
from rmtclean.estimators._linear import LinearShrink
from rmtclean.estimators._spiked import SpikeShrink
from rmtclean.estimators._split import SplitShrink

__all__ = sorted(
    [
        "EigenClip",
        "LinearShrink",
        "SpectralCovariance",
        "SpikeShrink",
        "SplitShrink",
    ]
)
