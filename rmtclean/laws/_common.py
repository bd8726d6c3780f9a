"""Helpers shared by the limit laws: array handling, random draws, inversion."""

from __future__ import annotations

import numbers

import numpy as np

from rmtclean._validation import Interval, check_value

__all__ = [
    "InverseSampling",
    "bisect_increasing",
    "check_positive",
    "finish",
    "real_array",
    "uniform_draws",
]


def check_positive(value, name: str, owner: str) -> float:
    """Return ``value`` as a float after checking it is finite and > 0."""
    check_value(value, [Interval(float, 0.0, np.inf, closed="neither")], name, owner)
    return float(value)


def real_array(x, name: str, owner: str) -> np.ndarray:
    """``x`` as a float array; a TypeError naming the method for non-real input.

    Strings, complex numbers and objects that are not numbers are refused
    (numpy would convert numeric strings and fail inside with a message that
    names neither the law nor the argument).
    """
    arr = np.asarray(x)
    if arr.dtype.kind in "biuf":
        return arr.astype(float, copy=False)
    if arr.dtype.kind == "O":
        try:
            if all(isinstance(v, numbers.Real) for v in arr.ravel()):
                return arr.astype(float)
        except TypeError:
            pass
    kind = "complex" if arr.dtype.kind == "c" else f"dtype {arr.dtype}"
    raise TypeError(
        f"The {name!r} argument of {owner} must be real numbers. Got {kind} "
        f"input {x!r:.60} instead."
    )


def finish(out: np.ndarray):
    """Return a Python scalar for 0-d results, else the array."""
    out = np.asarray(out)
    if out.ndim == 0:
        return out.item()
    return out


def uniform_draws(size, random_state, owner: str) -> np.ndarray:
    """Uniform (0, 1) draws from an explicit generator (never the global one).

    ``random_state`` may be None, an int, a ``numpy.random.Generator`` or a
    ``numpy.random.RandomState``.
    """
    if isinstance(random_state, np.random.RandomState):
        u = random_state.random_sample(size)
    elif (
        random_state is None
        or isinstance(random_state, np.random.Generator)
        or (
            isinstance(random_state, numbers.Integral)
            and not isinstance(random_state, bool)
        )
    ):
        u = np.random.default_rng(random_state).random(size)
    else:
        raise TypeError(
            f"The 'random_state' parameter of {owner}.rvs must be an int, a numpy "
            f"Generator or RandomState instance, or None. Got {random_state!r} "
            "instead."
        )
    # random() draws from [0, 1); 0 would map to the lower end of the support.
    return np.where(u == 0.0, np.finfo(float).tiny, u)


def bisect_increasing(func, target, lo, hi, n_iter: int = 64, deriv=None):
    """Solve ``func(x) = target`` for a nondecreasing ``func`` on ``[lo, hi]``.

    Vectorised bisection (``n_iter = 64`` halvings reach the floating-point
    resolution of the bracket), then, if ``deriv`` (the derivative) is given,
    two Newton steps kept inside the final bracket: they restore relative
    accuracy where the root is tiny compared to the bracket, e.g. next to an
    edge of the support at 0.
    """
    target = np.asarray(target, dtype=float)
    lo = np.broadcast_to(np.asarray(lo, dtype=float), target.shape).copy()
    hi = np.broadcast_to(np.asarray(hi, dtype=float), target.shape).copy()
    for _ in range(n_iter):
        mid = 0.5 * (lo + hi)
        below = func(mid) < target
        lo = np.where(below, mid, lo)
        hi = np.where(below, hi, mid)
    x = 0.5 * (lo + hi)
    if deriv is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            for _ in range(2):
                step = (func(x) - target) / deriv(x)
                new = x - step
                ok = np.isfinite(new) & (new >= lo) & (new <= hi)
                x = np.where(ok, new, x)
    return x


class InverseSampling:
    """Mixin: ``rvs`` by inversion, ``ppf`` of uniform draws."""

    __slots__ = ()

    def rvs(self, size=None, random_state=None):
        """Random draws by inversion of the cdf: ``ppf`` of uniform draws.

        Parameters
        ----------
        size : int or tuple of int, optional
            Output shape; None gives a float.
        random_state : None, int, numpy Generator or RandomState
            Source of randomness (never the global generator).
        """
        return self.ppf(uniform_draws(size, random_state, type(self).__name__))
