"""SplitShrink: sample-split eigenvalues as a scikit-learn estimator."""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from rmtclean._validation import (
    BOOLEAN,
    RANDOM_STATE,
    Interval,
    Options,
)
from rmtclean.estimators._base import (
    SpectralCovariance,
    estimator_dataclass,
)
from rmtclean.estimators._docs import estimator_doc
from rmtclean.rules._split import (
    NULL_SPACE_METHODS,
    _generator,
    _split_rule,
    _train_size_rows,
    split_shrink,
)
from rmtclean.rules._types import CleanedEigenvalues
from rmtclean.spectrum import SampleSpectrum

__all__ = ["SplitShrink"]

_DOC = r"""Split-sample shrinkage: eigenvectors from one part, variances from the other.

    Keeps the full-sample eigenvectors ``u_i`` and gives each the variance
    measured along it by Lam's (2016) averaged split estimate,
    ``d_i = u_i' Sigma_{m,M} u_i`` (see :func:`rmtclean.rules.split_shrink`
    and, for the published matrix itself, :func:`rmtclean.rules.split_covariance`).
    For independent rows the split eigenvalues are unbiased for the
    finite-sample oracle of the train eigenvectors.

    Parameters
    ----------
    train_size : float in (0, 1), int or "auto", default=0.8
        Rows in the train part (the eigenvectors): a fraction or a number;
        ``"auto"`` picks it from Lam's grid (dense N x N work). A fraction
        adapts to any sample of 2 or more rows (leave-one-out splits when it
        would leave one evaluation row, see
        :func:`rmtclean.rules.split_shrink`); a number of rows must leave 2
        rows in each part (1 with ``assume_centered``).
    n_splits : int, default=10
        Number of splits averaged.
    shuffle : bool, default=True
        Random splits; False gives time-ordered contiguous splits for time
        series (with one split, eigenvectors from the first rows and
        eigenvalues from the last ones).
    null_space : {"pooled", "eigh"}, default="pooled"
        Treatment of the null space of the train covariance when it is rank
        deficient: one common value (basis-free, the default) or the null
        vectors ``eigh`` returns (Lam's literal formula).
    random_state : None, int, numpy Generator or RandomState, default=None
        Seed of the random splits.
%(common)s
    Attributes
    ----------
%(fitted)s
    eigenvalues_ : ndarray of shape (n_features,)
        The split eigenvalues ``d_i``, paired with ``sample_eigenvalues_``
        (not sorted); the null space's common value last.
    eigenvectors_ : ndarray of shape (n_features, n_components)
        The full-sample eigenvectors.
%(report_count)s
    train_size_ : int
        Rows in the train part of each split (``T - 1`` for leave-one-out).
    train_size_criterion_ : dict or None
        With ``train_size="auto"``: grid point -> Lam's criterion.
    split_error_ : float or None
        How much the random splits move ``eigenvalues_``: the Monte-Carlo
        standard error of their average, relative in Frobenius norm (two
        ``random_state`` values give fits about ``sqrt(2)`` times this
        apart; it falls as ``1 / sqrt(n_splits)``). 0.0 when the splits are
        not random (``shuffle=False``, every row held out once), None for
        one random split.
    degrees_of_freedom_ : float
        Degrees of freedom of the full-sample covariance.
%(fitted_end)s

    See Also
    --------
    rmtclean.rules.split_shrink : the same on arrays.
    rmtclean.rules.split_covariance : Lam's averaged matrix.

    Notes
    -----
    The rule needs the data rows, not only the spectrum: the fit keeps the
    centred (and standardised) rows for it, so dask arrays and
    ``missing`` data are not supported. Each split demeans its parts with
    their own (weighted) means. ``sample_weight`` and ``half_life`` act as
    frequency weights on each part; splits are drawn over rows.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.estimators import SplitShrink
    >>> X = np.random.default_rng(0).standard_normal((120, 40))
    >>> est = SplitShrink(random_state=0).fit(X)
    >>> est.covariance_.shape, est.train_size_
    ((40, 40), 96)
    >>> bool(est.eigenvalues_[0] < est.sample_eigenvalues_[0])
    True
    """


@estimator_dataclass
class SplitShrink(SpectralCovariance):
    __doc__ = estimator_doc(_DOC, exclude=("missing",), references=split_shrink)

    _parameter_specs: ClassVar[dict] = {
        "train_size": [
            Interval(float, 0.0, 1.0, closed="neither"),
            Interval(int, 1, None),
            Options({"auto"}),
        ],
        "n_splits": [Interval(int, 1, None)],
        "shuffle": [BOOLEAN],
        "null_space": [Options(NULL_SPACE_METHODS)],
        "random_state": [RANDOM_STATE],
    }
    _needs_samples = True

    train_size: float | int | str = 0.8
    n_splits: int = 10
    shuffle: bool = True
    null_space: str = "pooled"
    random_state: int | np.random.Generator | np.random.RandomState | None = None

    def _clean(self, spectrum: SampleSpectrum) -> CleanedEigenvalues:
        X, w = spectrum.samples, spectrum.weights
        owner = type(self).__name__
        m = _train_size_rows(
            self.train_size, X.shape[0], self.n_splits, self.shuffle,
            self.assume_centered, owner,
        )  # fmt: skip
        rng = _generator(self.random_state) if self.shuffle else None
        out = _split_rule(
            X, w, spectrum.eigenvectors, spectrum.eigenvalues, m, self.n_splits,
            self.shuffle, rng, self.assume_centered, self.null_space,
        )  # fmt: skip
        self.train_size_ = int(out.details.train_size)
        self.train_size_criterion_ = out.details.train_size_criterion
        self.split_error_ = out.details.split_error
        return out
