"""Parameter and input validation with scikit-learn's message format.

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
    "RANDOM_STATE",
    "InstanceOf",
    "Interval",
    "Options",
    "check_params",
    "check_sample_weight",
    "check_value",
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


def _describe(forms) -> str:
    texts = ["None" if f is None else str(f) for f in forms]
    if len(texts) == 1:
        return texts[0]
    return ", ".join(texts[:-1]) + " or " + texts[-1]


def check_value(value, forms, name: str, owner: str) -> None:
    """Raise InvalidParameterError unless one of ``forms`` accepts ``value``."""
    for form in forms:
        if form is None:
            if value is None:
                return
        elif form.accepts(value):
            return
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
