"""Limit laws of random-matrix theory as small distribution objects."""

from rmtclean.laws._marchenko_pastur import MarchenkoPastur
from rmtclean.laws._semicircle import WignerSemicircle
from rmtclean.laws._tracy_widom import TracyWidom
from rmtclean.laws._wishart import LargestEigenvalueScaling, largest_eigenvalue_scaling

__all__ = [
    "LargestEigenvalueScaling",
    "MarchenkoPastur",
    "TracyWidom",
    "WignerSemicircle",
    "largest_eigenvalue_scaling",
]
