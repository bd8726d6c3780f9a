"""Limit laws of random-matrix theory as small distribution objects."""

from rmtclean.laws._tracy_widom import TracyWidom

__all__ = ["TracyWidom"]
