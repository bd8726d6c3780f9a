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
from rmtclean.rules._stieltjes import STIELTJES_ENGINES, stieltjes_shrink
from rmtclean.rules._tyler import (
    SHAPE_ROUTES,
    TylerShape,
    chen_wiesel_hero_intensity,
    robust_variance_level,
    spatial_signs,
    tyler_shape,
)
from rmtclean.rules._types import (
    CleanedEigenvalues,
    ClipDetails,
    KernelDetails,
    LinearDetails,
    SpikeDetails,
    SplitDetails,
    StieltjesDetails,
)

__all__ = [
    "CleanedEigenvalues",
    "ClipDetails",
    "INTENSITY_METHODS",
    "KERNEL_ENGINES",
    "KERNEL_FORMULAS",
    "KernelDetails",
    "LinearDetails",
    "NULL_SPACE_METHODS",
    "SHAPE_ROUTES",
    "SHRINKAGE_TARGETS",
    "SPIKE_SHRINKERS",
    "STIELTJES_ENGINES",
    "SpikeDetails",
    "SplitDetails",
    "StieltjesDetails",
    "TylerShape",
    "chen_wiesel_hero_intensity",
    "eigen_clip",
    "kernel_shrink",
    "linear_shrink",
    "linear_shrink_covariance",
    "optimal_hard_threshold",
    "robust_variance_level",
    "shrinkage_intensity",
    "shrinkage_target",
    "spatial_signs",
    "spike_shrink",
    "split_covariance",
    "split_shrink",
    "stieltjes_shrink",
    "tyler_shape",
]
