"""Parameter and input validation with scikit-learn's message format.

The one vocabulary for checking what a caller passes: parameter specs
(:func:`check_value`, :func:`check_params`), frequency weights
(:func:`check_sample_weight`), a sample spectrum with its sizes
(:func:`check_spectrum`), arrays of real numbers
(:func:`check_real_values`; :func:`numeric_array` and :func:`check_finite`
for arrays of other shapes or with missing values), and the one tolerance
below which an eigenvalue or singular value is rounding error
(:func:`numerical_rank`).

Estimators declare ``_parameter_specs``: a dict mapping each parameter name
to a list of accepted forms. A form is ``None`` (the value ``None``), an
:class:`Interval`, an :class:`Options` set of strings, :data:`BOOLEAN`,
:data:`RANDOM_STATE`, :data:`CALLABLE` or :class:`InstanceOf`. The value is
accepted when any form accepts it; otherwise :func:`check_params` raises
:class:`~rmtclean.exceptions.InvalidParameterError` with a message such as
"The 'alpha' parameter of EigenClip must be a float in the range (0, 1).
Got 2.0 instead."
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

from rmtclean.exceptions import InvalidParameterError

__all__ = [
    "BOOLEAN",
    "CALLABLE",
    "OPEN_UNIT",
    "POSITIVE_FINITE",
    "RANDOM_STATE",
    "InstanceOf",
    "Interval",
    "Options",
    "check_finite",
    "check_params",
    "check_real_values",
    "check_sample_weight",
    "check_sizes",
    "check_spectrum",
    "check_value",
    "numeric_array",
    "numerical_rank",
    "rank_tolerance",
]


@dataclass(frozen=True)
class Interval:
    """Real or integer numbers in an interval; ``None`` bounds are infinite."""

    kind: type
    low: float | None = None
    high: float | None = None
    closed: str = "both"  # "both", "left", "right" or "neither"

    def accepts(self, value) -> bool:
        if isinstance(value, (bool, np.bool_)):
            return False
        if self.kind is int:
            if not isinstance(value, numbers.Integral):
                return False
        elif not isinstance(value, numbers.Real):
            return False
        if isinstance(value, numbers.Real) and math.isnan(value):
            return False
        left_ok = self.low is None or (
            value >= self.low if self.closed in ("both", "left") else value > self.low
        )
        right_ok = self.high is None or (
            value <= self.high
            if self.closed in ("both", "right")
            else value < self.high
        )
        return bool(left_ok and right_ok)

    def __str__(self) -> str:
        name = "an int" if self.kind is int else "a float"
        lo = "-inf" if self.low is None else f"{self.low:g}"
        hi = "inf" if self.high is None else f"{self.high:g}"
        lb = "[" if self.closed in ("both", "left") and self.low is not None else "("
        rb = "]" if self.closed in ("both", "right") and self.high is not None else ")"
        return f"{name} in the range {lb}{lo}, {hi}{rb}"


@dataclass(frozen=True)
class Options:
    """One of a fixed set of strings."""

    values: frozenset

    def __init__(self, values):
        object.__setattr__(self, "values", frozenset(values))

    def accepts(self, value) -> bool:
        return isinstance(value, str) and value in self.values

    def __str__(self) -> str:
        inner = ", ".join(repr(v) for v in sorted(self.values))
        return f"a str among {{{inner}}}"


@dataclass(frozen=True)
class InstanceOf:
    """An instance of a type."""

    kind: type

    def accepts(self, value) -> bool:
        return isinstance(value, self.kind)

    def __str__(self) -> str:
        return f"an instance of {self.kind.__name__!r}"


class _Special:
    def __init__(self, text, test):
        self._text = text
        self._test = test

    def accepts(self, value) -> bool:
        return self._test(value)

    def __str__(self) -> str:
        return self._text

    def __repr__(self) -> str:
        return f"<{self._text}>"


BOOLEAN = _Special("an instance of 'bool'", lambda v: isinstance(v, (bool, np.bool_)))
CALLABLE = _Special("a callable", callable)
RANDOM_STATE = _Special(
    "an int, a numpy Generator or RandomState instance, or None",
    lambda v: (
        v is None
        or (isinstance(v, numbers.Integral) and not isinstance(v, bool))
        or isinstance(v, (np.random.Generator, np.random.RandomState))
    ),
)

#: A level or probability strictly between 0 and 1.
OPEN_UNIT = Interval(float, 0.0, 1.0, closed="neither")

#: A positive finite real number (a variance, a ratio, a width).
POSITIVE_FINITE = Interval(float, 0.0, math.inf, closed="neither")


def _describe(forms) -> str:
    texts = ["None" if f is None else str(f) for f in forms]
    if len(texts) == 1:
        return texts[0]
    return ", ".join(texts[:-1]) + " or " + texts[-1]


def check_value(value, forms, name: str, owner: str):
    """``value``, or InvalidParameterError unless one of ``forms`` accepts it."""
    for form in forms:
        if form is None:
            if value is None:
                return value
        elif form.accepts(value):
            return value
    raise InvalidParameterError(
        f"The {name!r} parameter of {owner} must be {_describe(forms)}. "
        f"Got {value!r} instead."
    )


def check_params(estimator) -> None:
    """Validate every parameter of ``estimator`` against its specs."""
    specs = {}
    for klass in reversed(type(estimator).__mro__):
        specs.update(getattr(klass, "_parameter_specs", {}) or {})
    params = estimator.get_params(deep=False)
    owner = type(estimator).__name__
    for name, forms in specs.items():
        if name in params:
            check_value(params[name], forms, name, owner)


def check_sample_weight(sample_weight, n_samples: int, owner: str) -> np.ndarray:
    """Validate frequency weights: 1-D, length ``n_samples``, finite, >= 0.

    Returns a new float64 array (the input is never modified).
    """
    try:
        w = np.array(sample_weight, dtype=np.float64, copy=True)
    except (TypeError, ValueError) as exc:
        raise ValueError(
            f"sample_weight of {owner} must be an array of numbers. "
            f"Got {type(sample_weight).__name__} instead."
        ) from exc
    if w.ndim == 0:
        w = np.full(n_samples, float(w))
    if w.ndim != 1 or w.shape[0] != n_samples:
        raise ValueError(
            f"sample_weight of {owner} must have shape ({n_samples},), "
            f"the number of samples. Got shape {w.shape} instead."
        )
    if not np.all(np.isfinite(w)):
        raise ValueError(f"sample_weight of {owner} contains NaN or infinity.")
    if np.any(w < 0):
        raise ValueError(
            f"sample_weight of {owner} must be non-negative. "
            f"Got a minimum of {w.min()!r}."
        )
    if w.sum() <= 0:
        raise ValueError(f"sample_weight of {owner} sums to zero.")
    return w


# --------------------------------------------------------------------------
# the numerical rank


def rank_tolerance(largest: float, *sizes: float) -> float:
    """Values at or below this are rounding error: ``largest max(sizes) eps``.

    This is :func:`numpy.linalg.matrix_rank`'s tolerance (and
    :func:`scipy.linalg.pinvh`'s): the largest value times the larger
    dimension times the machine epsilon. ``largest`` is the largest
    singular value or eigenvalue, ``sizes`` the dimensions of the matrix
    whose rank is measured (for a sample covariance: the degrees of freedom
    and the number of features). A negative ``largest`` counts as 0.
    """
    return max(float(largest), 0.0) * max(sizes, default=1) * np.finfo(np.float64).eps


def numerical_rank(values: np.ndarray, *sizes: float) -> int:
    """Number of the descending ``values`` above :func:`rank_tolerance`.

    ``values`` are singular values or eigenvalues in descending order; the
    tolerance is taken on the first with the dimensions ``sizes`` and the
    number of values itself. Repeated rows or collinear columns leave
    values that are only rounding error: they are the null space, not noise.
    """
    if values.size == 0:
        return 0
    tol = rank_tolerance(values[0], values.size, *sizes)
    return int(np.count_nonzero(values > tol))


# --------------------------------------------------------------------------
# a sample spectrum and its sizes


def check_sizes(n_samples, n_features, owner: str) -> tuple[float, int]:
    """Validate the degrees of freedom (a positive finite real) and ``N``."""
    if (
        isinstance(n_samples, (bool, np.bool_))
        or not isinstance(n_samples, numbers.Real)
        or not math.isfinite(n_samples)
        or n_samples <= 0
    ):
        raise ValueError(
            f"The 'n_samples' parameter of {owner} must be a positive finite "
            f"number (the degrees of freedom). Got {n_samples!r} instead."
        )
    if (
        isinstance(n_features, (bool, np.bool_))
        or not isinstance(n_features, numbers.Integral)
        or n_features < 1
    ):
        raise ValueError(
            f"The 'n_features' parameter of {owner} must be a positive int. "
            f"Got {n_features!r} instead."
        )
    return float(n_samples), int(n_features)


def check_real_values(values, name: str, owner: str) -> np.ndarray:
    """A float64 copy of array-like ``values``: real numbers, all finite."""
    array = _real_array(values, name, owner)
    check_finite(array, name, owner)
    return array


def _real_array(values, name: str, owner: str) -> np.ndarray:
    array = np.asarray(values)
    if array.dtype == object or not (
        np.issubdtype(array.dtype, np.integer)
        or np.issubdtype(array.dtype, np.floating)
    ):
        raise TypeError(
            f"The {name!r} input of {owner} must hold real numbers. "
            f"Got an array of dtype {array.dtype} instead."
        )
    return np.array(array, dtype=np.float64)


def numeric_array(values, name: str, owner: str) -> np.ndarray:
    """``values`` as a float64 array (a copy only if needed) when their dtype
    is numeric (boolean, integer or real); a TypeError otherwise."""
    array = np.asarray(values)
    if array.dtype.kind not in "biuf":
        raise TypeError(
            f"The {name!r} input of {owner} must be a real numeric array. "
            f"Got dtype {array.dtype} instead."
        )
    return array.astype(np.float64, copy=False)


def check_finite(values: np.ndarray, name: str, owner: str) -> None:
    """A ValueError counting the NaN and infinite entries of ``values``."""
    if not np.all(np.isfinite(values)):
        raise ValueError(
            f"The {name!r} input of {owner} must be finite. Got "
            f"{np.count_nonzero(~np.isfinite(values))} NaN or infinite value(s)."
        )


def check_spectrum(
    eigenvalues,
    n_samples,
    n_features,
    owner: str,
    *,
    positive: bool = False,
    allow_zero: bool = False,
    descending: bool = True,
) -> tuple[np.ndarray, float, int]:
    """Validate a sample spectrum given to a rule or a spectrum function.

    Returns a float64 copy of ``eigenvalues`` (descending; negative values
    within rounding of zero set to zero), ``n_samples`` as a float and
    ``n_features`` as an int. ``positive`` requires every value to be
    positive (rules that take only the nonzero part of the spectrum);
    ``allow_zero`` accepts a spectrum that is all zero; ``descending=False``
    accepts any order (rules that treat each value on its own).

    Raises
    ------
    TypeError
        For values that are not real numbers.
    ValueError
        For bad sizes, an empty, non-1-D or non-finite array, more values
        than ``n_features``, values not in descending order, negative
        values, zeros when ``positive`` or an all-zero spectrum.
    """
    n_samples, n_features = check_sizes(n_samples, n_features, owner)
    values = _real_array(eigenvalues, "eigenvalues", owner)
    if values.ndim != 1 or values.size == 0:
        raise ValueError(
            f"The 'eigenvalues' input of {owner} must be a non-empty 1-D "
            f"array. Got shape {values.shape} instead."
        )
    check_finite(values, "eigenvalues", owner)
    if values.size > n_features:
        raise ValueError(
            f"The 'eigenvalues' input of {owner} has {values.size} values, "
            f"more than n_features={n_features}: the 'n_features' parameter of "
            f"{owner} must be at least len(eigenvalues)."
        )
    top = float(np.max(np.abs(values)))
    tol = 64.0 * np.finfo(np.float64).eps * max(values.size, 1) * top
    if descending and np.any(np.diff(values) > tol):
        raise ValueError(
            f"The 'eigenvalues' input of {owner} must be in descending order."
        )
    if positive and values[-1] <= 0:
        raise ValueError(
            f"The 'eigenvalues' input of {owner} must all be positive (pass only "
            f"the nonzero part of the spectrum); got a minimum of "
            f"{float(values[-1])!r}."
        )
    if values[-1] < -tol:
        raise ValueError(
            f"The 'eigenvalues' input of {owner} must be non-negative (a "
            f"sample covariance spectrum). Got a minimum of {values[-1]!r}."
        )
    np.maximum(values, 0.0, out=values)
    if top == 0.0 and not allow_zero:
        raise ValueError(
            f"The 'eigenvalues' input of {owner} is all zero: there is no "
            "spectrum to fit."
        )
    return values, n_samples, n_features
