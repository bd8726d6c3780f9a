r"""Sample-split eigenvalues (Abadir, Distaso & Zikes 2014; Lam 2016).

Split the rows into a *train* part (``m`` rows) and an *evaluation* part
(the other ``T - m``). The eigenvectors :math:`P_1` of the train sample
covariance :math:`S_1` are fixed, and each is given the variance the
evaluation part measures along it, :math:`b_j = p_j' S_2 p_j`. Since the two
parts are independent (for independent rows),
:math:`E[b_j \mid P_1] = p_j'\Sigma p_j`: the split eigenvalues are unbiased
for the finite-sample oracle of the train eigenvectors. One split gives

.. math:: \Sigma_{m,s} = P_1 \operatorname{diag}(P_1' S_2 P_1) P_1',

and averaging over ``M`` splits gives Lam's (2016) NERCOME estimator
:math:`\Sigma_{m,M} = M^{-1}\sum_s \Sigma_{m,s}` (:func:`split_covariance`).

rmtclean's cleaners keep the *full-sample* eigenvectors :math:`U` and
change only the eigenvalues. :math:`\Sigma_{m,M}` has other eigenvectors,
so the rule :func:`split_shrink` returns the diagonal of the averaged split
estimate in the full-sample basis, :math:`d_i = u_i'\Sigma_{m,M}u_i`: the
rotation-invariant estimator closest to :math:`\Sigma_{m,M}` in Frobenius
norm, and an estimate of the full-sample oracle :math:`u_i'\Sigma u_i`.

Null space of :math:`S_1`. When ``m - 1 < N`` (``m`` if
``assume_centered``) the train covariance has rank :math:`r_1 < N` and its
null space has no preferred basis. By default (``null_space="pooled"``) it
is one block with the common value :math:`c = \operatorname{tr}(P_0 S_2)/(N
- r_1)`, :math:`P_0` its projector, so that

.. math:: \Sigma_{m,s} = P_{1} \operatorname{diag}(b - c) P_{1}' + c I,

with :math:`P_1` the :math:`r_1` range eigenvectors: basis-free (the result
rotates exactly with the data), trace :math:`\operatorname{tr}S_2`,
positive definite when :math:`c > 0`, and computed from thin SVDs without
an N x N matrix. ``null_space="eigh"`` follows the literal formula with all
N eigenvectors that ``numpy.linalg.eigh`` returns for :math:`S_1`, null
vectors included; its values along the null space depend on the basis the
solver picks.

Splits. ``shuffle=True``: each split is a fresh random permutation of the
rows, the first ``m`` of them train. ``shuffle=False`` (time series): the
evaluation part is a contiguous block of ``T - m`` rows and the train part
is the rest. With one split the evaluation block is the last one, so the
eigenvectors come from the past and the eigenvalues from the most recent
rows. With ``M`` splits the evaluation block starts at ``M`` evenly spaced
offsets from ``m`` (the last block) down to ``0`` (the first block); interior
blocks leave a train part in two contiguous pieces, so serial dependence
leaks only across at most two boundaries (blocked cross-validation).

Small samples. A part of one row has no variance of its own after
demeaning, so when the train fraction leaves one evaluation row (the
default 0.8 with ``T <= 7``, down to ``T = 2``) each split holds out one row
``x``, centred by the mean of the ``m`` train rows: ``x - mean_1`` has
covariance :math:`\Sigma (1 + 1/m)` for independent rows, so
:math:`S_2 = \frac{m}{m + 1}(x - \bar x_1)(x - \bar x_1)'` is unbiased
for :math:`\Sigma` and independent of :math:`P_1` (leave-one-out). On the
dslabs tissue expression panel (500 genes, T = 4 and 6) this scored a higher
held-out likelihood than holding out two rows (``benchmarks/
small_wide_likelihood.md``). With ``T = 2`` the train part is one row, of
rank 0, and the estimate is the scaled identity ``tr(S) / N``.

Choice of ``train_size``. The default 0.8 comes from a measurement: on
Ledoit & Wolf's rotated 1/3/10 mixture (10 repetitions, ``n_splits=10``),
the Frobenius PRIAL of :func:`split_shrink` was 80.4, 92.6, 95.5 and 95.5%
for ``train_size`` 0.5, 0.7, 0.8, 0.9 at N = 100, T = 300, and 98.2, 99.3,
99.5, 99.3% at N = 200, T = 100. Lam's matrix (:func:`split_covariance`)
scored 76.4, 89.7, 92.5, 91.9% at N = 100, T = 300: projecting on the
full-sample eigenvectors helps. ``train_size="auto"`` (Lam's grid and
criterion, as recalled) chose ``m = 0.6 T`` in every repetition and scored
87.6%, below the fixed default.
"""

from __future__ import annotations

import numbers
from dataclasses import replace

import numpy as np

from rmtclean._data import check_data
from rmtclean._validation import (
    BOOLEAN,
    RANDOM_STATE,
    Interval,
    Options,
    check_sample_weight,
    check_value,
    rank_tolerance,
)
from rmtclean.rules._split_average import monte_carlo_error, pool_ties
from rmtclean.rules._types import CleanedEigenvalues, SplitDetails
from rmtclean.spectrum import SampleSpectrum

__all__ = ["NULL_SPACE_METHODS", "split_covariance", "split_shrink"]

#: Treatments of the null space of the train covariance.
NULL_SPACE_METHODS = ("pooled", "eigh")


# -- private cores (no validation) -----------------------------------------
def _centre(X: np.ndarray, w, assume_centered: bool) -> tuple[np.ndarray, float, int]:
    """Rows ``Z`` with ``Z'Z / dof`` the (weighted) covariance, dof, rank bound."""
    lost = 0 if assume_centered else 1
    if w is None:
        Xc = X if assume_centered else X - X.mean(axis=0)
        return Xc, X.shape[0] - lost, X.shape[0] - lost
    total = float(np.sum(w))
    Xc = X if assume_centered else X - (w @ X) / total
    dof = total - lost
    if not dof > 0:
        raise ValueError(
            "A part of a sample split has frequency weights summing to "
            f"{total!r}, leaving no degrees of freedom; give it more rows "
            "(train_size) or heavier weights."
        )
    return Xc * np.sqrt(w)[:, None], dof, int(np.count_nonzero(w)) - lost


def _held_out_row(X1: np.ndarray, w1, x: np.ndarray) -> np.ndarray:
    """One evaluation row centred by the train mean, as a 1-row part.

    For independent rows ``x - mean_1`` has covariance ``Sigma (1 + 1/m1)``
    (``m1`` the train rows, or their weights' sum), so the row is scaled by
    ``sqrt(m1 / (m1 + 1))``: its outer product is unbiased for ``Sigma``
    and independent of the train eigenvectors (leave-one-out).
    """
    if w1 is None:
        m1, mean = float(X1.shape[0]), X1.mean(axis=0)
    else:
        m1 = float(np.sum(w1))
        mean = (w1 @ X1) / m1
    return (x - mean) * np.sqrt(m1 / (m1 + 1.0))


def _range_basis(Xc: np.ndarray, rank: int) -> np.ndarray:
    """Top ``rank`` eigenvectors of ``Xc' Xc``, from the smaller Gram matrix."""
    n_rows, n_features = Xc.shape
    if rank <= 0:
        return np.zeros((n_features, 0))
    if n_features <= n_rows:
        _, vecs = np.linalg.eigh(Xc.T @ Xc)
        return vecs[:, ::-1][:, :rank]
    vals, left = np.linalg.eigh(Xc @ Xc.T)
    vals, left = vals[::-1][:rank], left[:, ::-1][:, :rank]
    keep = vals > rank_tolerance(vals[0], n_rows)
    basis = Xc.T @ (left[:, keep] / np.sqrt(vals[keep]))
    # Re-orthonormalisation removes the rounding of the Gram route.
    q = _orthonormalise(basis)
    return q * np.sign(np.sum(q * basis, axis=0))


def _orthonormalise(basis: np.ndarray) -> np.ndarray:
    """Orthonormal columns spanning those of a nearly orthonormal ``basis``.

    Two passes of Cholesky QR (``Q = B L^-T`` with ``L L' = B'B``), accurate
    to rounding when ``B`` is orthonormal to a few digits, as the Gram
    route's basis is; a Householder QR otherwise. The Cholesky passes are a
    k x k factorisation and two matrix products: on a loaded machine a
    tall-skinny Householder QR (numpy.linalg.qr, multithreaded OpenBLAS)
    took 40-100 ms for 7,000 x 8 to 7,000 x 10, the passes 3-40 ms.
    """
    q = basis
    for _ in range(2):
        try:
            chol = np.linalg.cholesky(q.T @ q)
        except np.linalg.LinAlgError:
            return np.linalg.qr(basis)[0]
        q = q @ np.linalg.inv(chol).T
    return q


def _split_once(
    X1: np.ndarray,
    X2: np.ndarray,
    assume_centered: bool,
    null_space: str,
    w1=None,
    w2=None,
) -> tuple[np.ndarray, np.ndarray, float, float]:
    """Train eigenvectors and the evaluation variances along them.

    Returns ``(P1, b, c, trace)``: ``P1`` (N x r1) the train eigenvectors
    (all N with ``null_space="eigh"``), ``b`` the variances of the
    evaluation part along them, ``c`` the pooled null-space value (0 when
    there is none) and ``trace = tr(S2)``. The split estimate is
    ``P1 diag(b - c) P1' + c I``. ``w1``, ``w2``: frequency weights or None.
    """
    n_features = X1.shape[1]
    X1c, _, rank1 = _centre(X1, w1, assume_centered)
    if X2.shape[0] == 1 and not assume_centered:
        X2c, dof2 = _held_out_row(X1, w1, X2), 1.0
    else:
        X2c, dof2, _ = _centre(X2, w2, assume_centered)
    trace = float(np.sum(X2c * X2c) / dof2)
    if null_space == "eigh":
        _, vecs = np.linalg.eigh(X1c.T @ X1c)
        basis = vecs[:, ::-1]
    else:
        basis = _range_basis(X1c, min(n_features, rank1))
    proj = X2c @ basis
    b = np.einsum("ij,ij->j", proj, proj) / dof2
    n_null = n_features - basis.shape[1]
    c = (trace - float(np.sum(b))) / n_null if n_null else 0.0
    return basis, b, max(c, 0.0), trace


def _split_indices(
    n_rows: int, train_size: int, n_splits: int, shuffle: bool, rng
) -> list[tuple[np.ndarray, np.ndarray]]:
    """(train, evaluation) row indices of each split.

    With one evaluation row and ``shuffle``, the rows held out are distinct
    (all of them when ``n_splits >= n_rows``, so at most ``n_rows`` splits).
    """
    if shuffle and n_rows - train_size == 1:
        held = rng.permutation(n_rows)[:n_splits]
        rows = np.arange(n_rows)
        return [(np.delete(rows, i), rows[i : i + 1]) for i in held]
    if shuffle:
        perms = [rng.permutation(n_rows) for _ in range(n_splits)]
        return [(p[:train_size], p[train_size:]) for p in perms]
    n_eval = n_rows - train_size
    offsets = np.rint(np.linspace(train_size, 0, n_splits)).astype(int)
    rows = np.arange(n_rows)
    out = []
    for start in offsets:
        in_eval = (rows >= start) & (rows < start + n_eval)
        out.append((rows[~in_eval], rows[in_eval]))
    return out


def _part(w, train, evaluation):
    return (None, None) if w is None else (w[train], w[evaluation])


def _split_diagonal(
    X: np.ndarray,
    w,
    eigenvectors: np.ndarray,
    splits,
    assume_centered: bool,
    null_space: str,
) -> tuple[np.ndarray, float | None, np.ndarray]:
    """``u_i' Sigma_{m,M} u_i`` for the given basis, its null-space value,
    and each split's values (rows; the null-space value last when there is
    a null space) for the Monte-Carlo error of the average."""
    n_features, n_components = eigenvectors.shape
    has_null = n_components < n_features
    per_split = np.zeros((len(splits), n_components + has_null))
    for k, (train, evaluation) in enumerate(splits):
        basis, b, c, tr = _split_once(
            X[train],
            X[evaluation],
            assume_centered,
            null_space,
            *_part(w, train, evaluation),
        )
        overlap = eigenvectors.T @ basis
        values = (overlap * overlap) @ (b - c) + c
        per_split[k, :n_components] = values
        if has_null:
            # Trace of each split estimate is tr(S2); the full-sample null
            # space gets what the stored directions leave, spread evenly.
            per_split[k, -1] = (tr - values.sum()) / (n_features - n_components)
    mean = per_split.mean(axis=0)
    if not has_null:
        return mean, None, per_split
    return mean[:-1], float(max(mean[-1], 0.0)), per_split


def _split_matrix(
    X: np.ndarray, w, splits, assume_centered: bool, null_space: str
) -> np.ndarray:
    """Lam's averaged split estimate ``Sigma_{m,M}`` (dense)."""
    n_features = X.shape[1]
    total = np.zeros((n_features, n_features))
    for train, evaluation in splits:
        basis, b, c, _ = _split_once(
            X[train],
            X[evaluation],
            assume_centered,
            null_space,
            *_part(w, train, evaluation),
        )
        total += (basis * (b - c)) @ basis.T
        total[np.diag_indices(n_features)] += c
    total /= len(splits)
    return (total + total.T) / 2


def _train_size_grid(n_rows: int, min_rows: int) -> np.ndarray:
    """Lam (2016)'s grid of train sizes, from memory, within bounds."""
    root = np.sqrt(n_rows)
    grid = np.array(
        [
            2 * root,
            0.2 * n_rows,
            0.4 * n_rows,
            0.6 * n_rows,
            0.8 * n_rows,
            n_rows - 2.5 * root,
            n_rows - 1.5 * root,
        ]
    )
    # Below 2 * min_rows rows: T - 1 train rows (leave-one-out splits).
    low = min(min_rows, n_rows - 1)
    high = max(n_rows - min_rows, low)
    grid = np.clip(np.rint(grid).astype(int), low, high)
    return np.unique(grid)


def _select_train_size(
    X: np.ndarray,
    w,
    n_splits: int,
    shuffle: bool,
    rng,
    assume_centered: bool,
    null_space: str,
) -> tuple[int, dict]:
    """Grid point minimising ``||M^-1 sum_s (Sigma_{m,s} - S2_s)||_F^2``."""
    n_rows, n_features = X.shape
    grid = _train_size_grid(n_rows, 1 if assume_centered else 2)
    # The same permutations for every grid point: the comparison is paired.
    perms = [rng.permutation(n_rows) for _ in range(n_splits)] if shuffle else None
    criteria = {}
    for m in grid:
        if shuffle:
            splits = [(p[:m], p[m:]) for p in perms]
        else:
            splits = _split_indices(n_rows, int(m), n_splits, False, None)
        gap = np.zeros((n_features, n_features))
        for train, evaluation in splits:
            parts = _part(w, train, evaluation)
            basis, b, c, _ = _split_once(
                X[train], X[evaluation], assume_centered, null_space, *parts
            )
            X2c, dof2, _ = _centre(X[evaluation], parts[1], assume_centered)
            gap += (basis * (b - c)) @ basis.T - X2c.T @ X2c / dof2
            gap[np.diag_indices(n_features)] += c
        criteria[int(m)] = float(np.sum(gap * gap) / n_splits**2)
    best = min(criteria, key=criteria.get)
    return best, criteria


# -- validation --------------------------------------------------------------
def _resolve(
    X,
    sample_weight,
    train_size,
    n_splits,
    shuffle,
    random_state,
    assume_centered,
    null_space,
    owner,
):
    check_value(n_splits, [Interval(int, 1, None)], "n_splits", owner)
    check_value(shuffle, [BOOLEAN], "shuffle", owner)
    check_value(assume_centered, [BOOLEAN], "assume_centered", owner)
    check_value(null_space, [Options(NULL_SPACE_METHODS)], "null_space", owner)
    check_value(
        train_size,
        [Interval(float, 0, 1, "neither"), Interval(int, 1, None), Options({"auto"})],
        "train_size",
        owner,
    )
    X = check_data(X, "X", owner, min_samples=2)
    n_rows = X.shape[0]
    m = _train_size_rows(train_size, n_rows, n_splits, shuffle, assume_centered, owner)
    check_value(random_state, [RANDOM_STATE], "random_state", owner)
    if sample_weight is not None:
        sample_weight = check_sample_weight(sample_weight, n_rows, owner)
    rng = _generator(random_state) if shuffle else None
    return X, sample_weight, m, rng


def _train_size_rows(
    train_size, n_rows: int, n_splits: int, shuffle: bool, assume_centered: bool, owner
):
    """The train size in rows (or "auto"), checked against the data.

    A fraction adapts to small samples: ``round(train_size * T)`` is kept
    within ``[min_rows, T - 1]``; when that leaves one evaluation row and the
    parts are demeaned, each split holds out one row, centred by the train
    mean (leave-one-out, see :func:`_held_out_row`). With ``shuffle=False``
    a fraction also caps ``n_splits`` at the ``m + 1`` distinct splits. A
    number of rows is used as given, and refused if it does not fit.
    """
    if isinstance(train_size, str):
        return "auto"
    min_rows = 1 if assume_centered else 2
    if isinstance(train_size, numbers.Integral):
        m = int(train_size)
        if not min_rows <= m <= n_rows - min_rows:
            raise ValueError(
                f"The 'train_size' parameter of {owner} must leave at least "
                f"{min_rows} rows in each part of the {n_rows} rows. Got "
                f"{train_size!r} ({m} rows) instead; a fraction adapts to "
                "small samples."
            )
        if not shuffle and n_splits > m + 1:
            raise ValueError(
                f"The 'n_splits' parameter of {owner} can be at most "
                f"train_size + 1 = {m + 1} distinct time-ordered splits. Got "
                f"{n_splits} instead."
            )
        return m
    m = int(round(train_size * n_rows))
    return min(max(m, min_rows), n_rows - 1)


def _n_splits(n_splits: int, n_rows: int, m: int, shuffle: bool) -> int:
    """Splits actually drawn: at most the distinct ones (see _split_indices)."""
    if not shuffle:
        return min(n_splits, m + 1)
    if n_rows - m == 1:
        return min(n_splits, n_rows)
    return n_splits


def _generator(random_state) -> np.random.Generator:
    """A Generator from None, an int, a Generator or a legacy RandomState."""
    if isinstance(random_state, np.random.RandomState):
        return np.random.default_rng(random_state.randint(0, 2**31 - 1))
    return np.random.default_rng(random_state)


def _prepare(X, w, m, n_splits, shuffle, rng, assume_centered, null_space):
    details = {"n_splits": n_splits, "shuffle": shuffle, "null_space": null_space}
    if m == "auto":
        m, criteria = _select_train_size(
            X, w, n_splits, shuffle, rng, assume_centered, null_space
        )
        details["train_size_criterion"] = criteria
        if not shuffle and n_splits > m + 1:
            n_splits = m + 1
    details["train_size"] = m
    n_splits = _n_splits(n_splits, X.shape[0], m, shuffle)
    details["n_splits"] = n_splits
    splits = _split_indices(X.shape[0], m, n_splits, shuffle, rng)
    return splits, SplitDetails(**details)


# -- public functions --------------------------------------------------------
_PARAMS_DOC = """
    train_size : float in (0, 1), int or "auto", default=0.8
        Size ``m`` of the train part (the eigenvectors): a fraction of the
        rows or a number of rows. A fraction adapts to any sample of 2 or
        more rows: ``round(train_size * T)`` is kept within ``[2, T - 1]``
        (``[1, T - 1]`` if ``assume_centered``), and when it leaves one
        evaluation row (``T <= 7`` for 0.8) each split holds out one row,
        centred by the train mean and scaled by ``sqrt(m / (m + 1))``
        (leave-one-out; with ``shuffle`` every row once when ``n_splits >=
        T``); with ``shuffle=False`` it also caps ``n_splits`` at the ``m +
        1`` distinct splits. A number of rows must leave at least 2 rows in
        each part (1 if ``assume_centered``). ``"auto"`` picks ``m`` from Lam's (2016)
        grid (``2 sqrt(T)``, ``0.2 T``, ``0.4 T``, ``0.6 T``, ``0.8 T``,
        ``T - 2.5 sqrt(T)``, ``T - 1.5 sqrt(T)``) minimising
        ``||M^-1 sum_s (Sigma_{m,s} - S2_s)||_F^2`` (forms N x N matrices).
    n_splits : int, default=10
        Number ``M`` of splits averaged.
    shuffle : bool, default=True
        Random splits; False gives time-ordered contiguous splits (see the
        module notes).
    random_state : None, int, numpy Generator or RandomState, default=None
        Seed of the random splits (unused when ``shuffle=False``).
    sample_weight : array-like of shape (n_samples,), default=None
        Non-negative frequency weights: each part's covariance is the
        weighted one with divisor (sum of its weights - 1). Splits are drawn
        over rows, so a row of weight 2 is not the same as a repeated row.
    assume_centered : bool, default=False
        If False, each part is demeaned with its own mean and its covariance
        uses divisor (rows - 1); if True, neither is done.
    null_space : {"pooled", "eigh"}, default="pooled"
        Treatment of the null space of the train covariance (module notes)."""


def split_shrink(
    X,
    *,
    train_size=0.8,
    n_splits: int = 10,
    shuffle: bool = True,
    random_state=None,
    assume_centered: bool = False,
    null_space: str = "pooled",
    sample_weight=None,
    eigenvectors=None,
) -> CleanedEigenvalues:
    r"""Split-sample eigenvalues for the full-sample eigenvectors.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Data, rows are observations.
    {params}
    eigenvectors : array-like of shape (n_features, n_components), optional
        Orthonormal full-sample eigenvectors (descending eigenvalues), e.g.
        ``SampleSpectrum.eigenvectors``; computed from ``X`` when omitted.

    Returns
    -------
    CleanedEigenvalues
        ``values[i] = u_i' Sigma_{{m,M}} u_i`` for each full-sample
        eigenvector; ``null_value`` is the mean of
        ``Sigma_{{m,M}}`` over the full-sample null space when
        ``n_components < n_features`` (trace left over, spread evenly);
        ``n_signal`` is None; ``details`` (a :class:`SplitDetails`) holds
        ``train_size`` (rows),
        ``n_splits``, ``shuffle``, ``null_space`` and, for ``"auto"``,
        ``train_size_criterion`` (grid point -> criterion).

    See Also
    --------
    split_covariance : Lam's averaged matrix itself.

    Notes
    -----
    The values are not sorted and need not decrease. They are non-negative,
    and their sum plus the null-space total is the average of
    :math:`\operatorname{{tr}} S_2` over the splits. When the eigenvectors
    are computed here, tied sample eigenvalues (to rounding) get the mean of
    their values, and zero ones join the null space: their eigenvectors are
    an arbitrary basis of the eigenspace, the mean is basis-free.

    References
    ----------
    .. [1] K. M. Abadir, W. Distaso and F. Zikes, "Design-free estimation of
       variance matrices", Journal of Econometrics, 2014.
    .. [2] C. Lam, "Nonparametric eigenvalue-regularized precision or
       covariance matrix estimator", Annals of Statistics 44(3), 928-953,
       2016.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import split_shrink
    >>> X = np.random.default_rng(0).standard_normal((200, 20))
    >>> result = split_shrink(X, n_splits=5, random_state=0)
    >>> result.values.shape, result.null_value
    ((20,), None)
    >>> bool(abs(result.values.mean() - 1) < 0.1)
    True
    """
    owner = "split_shrink"
    X, w, m, rng = _resolve(
        X, sample_weight, train_size, n_splits, shuffle, random_state,
        assume_centered, null_space, owner,
    )  # fmt: skip
    sample = None
    if eigenvectors is None:
        spectrum = SampleSpectrum.from_data(
            X, assume_centered=assume_centered, sample_weight=w
        )
        eigenvectors, sample = spectrum.eigenvectors, spectrum.eigenvalues
    else:
        eigenvectors = _check_eigenvectors(eigenvectors, X.shape[1], owner)
    return _split_rule(
        X, w, eigenvectors, sample, m, n_splits, shuffle, rng, assume_centered,
        null_space,
    )  # fmt: skip


def _split_rule(
    X, w, eigenvectors, sample, m, n_splits, shuffle, rng, assume_centered, null_space
) -> CleanedEigenvalues:
    """The split rule on validated rows: the one core of its callers.

    Draws the splits, averages ``diag(P1' S2 P1)`` over them along
    ``eigenvectors`` and, given the full ``sample`` eigenvalues, pools the
    values of tied sample eigenvalues.
    """
    splits, details = _prepare(
        X, w, m, n_splits, shuffle, rng, assume_centered, null_space
    )
    values, null_value, per_split = _split_diagonal(
        X, w, eigenvectors, splits, assume_centered, null_space
    )
    if sample is not None:
        values, null_value = pool_ties(values, null_value, sample, X.shape[1])
    n_rows = X.shape[0]
    error = monte_carlo_error(
        per_split, values, null_value, X.shape[1], n_rows, details.shuffle,
        leave_one_out=n_rows - details.train_size == 1,
    )  # fmt: skip
    details = replace(details, split_error=error)
    return CleanedEigenvalues(values, null_value, None, details)


def split_covariance(
    X,
    *,
    train_size=0.8,
    n_splits: int = 10,
    shuffle: bool = True,
    random_state=None,
    assume_centered: bool = False,
    null_space: str = "pooled",
    sample_weight=None,
) -> np.ndarray:
    r"""Lam's (2016) averaged split-sample covariance :math:`\Sigma_{{m,M}}`.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Data, rows are observations.
    {params}

    Returns
    -------
    covariance : ndarray of shape (n_features, n_features)
        :math:`M^{{-1}}\sum_s P_{{1,s}}\operatorname{{diag}}(P_{{1,s}}'
        S_{{2,s}} P_{{1,s}})P_{{1,s}}'` (with the null-space treatment
        chosen). Positive semi-definite; positive definite when each
        evaluation covariance is.

    See Also
    --------
    split_shrink : the rotation-invariant version (full-sample eigenvectors).

    Notes
    -----
    Unlike the other cleaners of rmtclean this matrix does not keep the
    sample eigenvectors: averaging over splits mixes the train bases. With
    the same arguments (and ``random_state``),
    ``split_shrink(X).values`` is the diagonal of ``U' split_covariance(X)
    U`` for the full-sample eigenvectors ``U``.

    References
    ----------
    .. [1] C. Lam, "Nonparametric eigenvalue-regularized precision or
       covariance matrix estimator", Annals of Statistics 44(3), 928-953,
       2016.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.rules import split_covariance
    >>> X = np.random.default_rng(0).standard_normal((40, 60))  # N > T
    >>> cov = split_covariance(X, n_splits=3, random_state=0)
    >>> bool(np.linalg.eigvalsh(cov).min() > 0)
    True
    """
    owner = "split_covariance"
    X, w, m, rng = _resolve(
        X, sample_weight, train_size, n_splits, shuffle, random_state,
        assume_centered, null_space, owner,
    )  # fmt: skip
    splits, _ = _prepare(X, w, m, n_splits, shuffle, rng, assume_centered, null_space)
    return _split_matrix(X, w, splits, assume_centered, null_space)


def _check_eigenvectors(eigenvectors, n_features: int, owner: str) -> np.ndarray:
    vecs = np.asarray(eigenvectors, dtype=np.float64)
    if vecs.ndim != 2 or vecs.shape[0] != n_features or vecs.shape[1] > n_features:
        raise ValueError(
            f"The 'eigenvectors' parameter of {owner} must have shape "
            f"({n_features}, n_components) with n_components <= {n_features}. "
            f"Got shape {vecs.shape} instead."
        )
    gram = vecs.T @ vecs
    err = float(np.max(np.abs(gram - np.eye(vecs.shape[1])))) if vecs.size else 0.0
    if not err < 1e-8:
        raise ValueError(
            f"The 'eigenvectors' parameter of {owner} must have orthonormal "
            f"columns. Got max |V'V - I| = {err:.3g} instead."
        )
    return vecs


split_shrink.__doc__ = split_shrink.__doc__.format(params=_PARAMS_DOC.strip())
split_covariance.__doc__ = split_covariance.__doc__.format(params=_PARAMS_DOC.strip())
