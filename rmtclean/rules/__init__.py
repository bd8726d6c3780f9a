"""Rules: pure functions from a sample spectrum to cleaned eigenvalues."""

from rmtclean.rules._clipping import eigen_clip
from rmtclean.rules._kernel import KERNEL_ENGINES, KERNEL_FORMULAS, kernel_shrink
from rmtclean.rules._linear import (
    INTENSITY_METHODS,
    SHRINKAGE_TARGETS,
    linear_shrink,
    linear_shrink_covariance,
    shrinkage_intensity,
    shrinkage_target,
)
from rmtclean.rules._spiked import (
    SPIKE_SHRINKERS,
    optimal_hard_threshold,
    spike_shrink,
)
from rmtclean.rules._split import NULL_SPACE_METHODS, split_covariance, split_shrink
from rmtclean.rules._stieltjes import stieltjes_shrink
from rmtclean.rules._types import CleanedEigenvalues

__all__ = sorted(
    [
        "CleanedEigenvalues",
        "eigen_clip",
        "INTENSITY_METHODS",
        "SHRINKAGE_TARGETS",
        "linear_shrink",
        "linear_shrink_covariance",
        "shrinkage_intensity",
        "shrinkage_target",
        "NULL_SPACE_METHODS",
        "split_covariance",
        "split_shrink",
        "SPIKE_SHRINKERS",
        "optimal_hard_threshold",
        "spike_shrink",
        "KERNEL_ENGINES",
        "KERNEL_FORMULAS",
        "kernel_shrink",
        "stieltjes_shrink",
    ]
)
