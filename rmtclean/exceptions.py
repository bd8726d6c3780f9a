"""Warning and error classes of rmtclean."""

__all__ = [
    "CandidateFailedWarning",
    "InvalidParameterError",
    "NotConvergedWarning",
    "RankDeficientWarning",
    "WeakEstimateWarning",
]


class WeakEstimateWarning(UserWarning):
    """The estimate is legal but statistically weak (e.g. very few samples)."""


class RankDeficientWarning(UserWarning):
    """The data are rank deficient beyond what the sample size explains."""


class NotConvergedWarning(UserWarning):
    """An iteration stopped at its limit before reaching its tolerance."""


class CandidateFailedWarning(UserWarning):
    """A candidate cleaner failed on a fold of AutoShrink and scored -inf there."""


class InvalidParameterError(ValueError, TypeError):
    """A parameter has the wrong type or value.

    Subclasses both :class:`ValueError` and :class:`TypeError`, as
    scikit-learn's parameter errors do, so either ``except`` clause catches it.
    """
