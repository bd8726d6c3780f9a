"""Property-based tests (hypothesis) of every exported cleaner and rule.

The invariants are those of DESIGN.md ("Invariants every cleaner keeps"):
finite, symmetric, positive definite (semi-definite where documented)
output of the input's dtype family, ``precision_ @ covariance_ = I``,
equivariance under feature permutation, scaling and (rotation-invariant
rules) orthogonal rotation, trace preservation where promised, inputs never
modified, determinism for a given ``random_state``, and pickling.

The estimators come from tests/_registry.py, which collects every
SpectralCovariance subclass that ``rmtclean`` exports. Shapes cover N > T,
T = 2, N = 1 and N = T; data scales run from 1e-150 to 1e150 (float64).
The hypothesis profile (deterministic, no deadline) is in conftest.py.
"""

from __future__ import annotations

import pickle

import numpy as np
import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from rmtclean.estimators import EigenClip, LinearShrink, SpikeShrink
from tests._registry import (
    CASES,
    CLOSED_FORM_RTOL,
    CLOSED_FORM_RULES,
    FITTED_RTOL,
    RULES,
    sample_data,
)

# Degenerate draws (T = 2, repeated integer rows) warn by design; the
# warnings themselves are tested in test_robustness.py.
pytestmark = [
    pytest.mark.filterwarnings("ignore::rmtclean.exceptions.WeakEstimateWarning"),
    pytest.mark.filterwarnings("ignore::rmtclean.exceptions.RankDeficientWarning"),
]

CASE_IDS = [case.id for case in CASES]
ROTATION_CASES = [case for case in CASES if case.rotation_invariant]
TRACE_CASES = [case for case in CASES if case.trace_preserving]

MAX_ROWS = 40
MAX_FEATURES = 24


# -- strategies ----------------------------------------------------------------
@st.composite
def shapes(draw, min_rows: int = 2, min_features: int = 1):
    """(T, N) with the edge cases N > T, T = 2, N = 1 and N = T drawn often."""
    kind = draw(st.sampled_from(["free", "square", "one-feature", "wide", "tiny"]))
    low = max(min_rows, 2)
    if kind == "tiny":
        n_rows = low
        n_features = draw(st.integers(max(min_features, 1), 6))
    else:
        n_rows = draw(st.integers(low, MAX_ROWS))
        if kind == "square":
            n_features = max(n_rows, min_features)
        elif kind == "one-feature":
            n_features = max(1, min_features)
        elif kind == "wide":
            n_features = draw(st.integers(max(n_rows + 1, min_features), 2 * MAX_ROWS))
        else:
            n_features = draw(st.integers(max(min_features, 1), MAX_FEATURES))
    return n_rows, min(n_features, 2 * MAX_ROWS)


@st.composite
def datasets(draw, min_rows: int = 2, min_features: int = 1, varying=False):
    """(X, dtype name): Gaussian data of any scale in float64/float32/int."""
    n_rows, n_features = draw(shapes(min_rows, min_features))
    seed = draw(st.integers(0, 2**32 - 1))
    dtype = draw(st.sampled_from(["float64", "float32", "int64", "int32"]))
    X = sample_data(seed, n_rows, n_features)
    if dtype == "float64":
        X = X * 10.0 ** draw(st.integers(-150, 150))
    elif dtype == "float32":
        X = (X * 10.0 ** draw(st.integers(-8, 8))).astype(np.float32)
    else:
        X = np.rint(X * 10.0 ** draw(st.integers(2, 6))).astype(dtype)
    # All-equal rows have no covariance to clean: a bad input (test_bad_input),
    # as is a constant column where the cleaner divides by column scales.
    spread = np.ptp(X, axis=0)
    assume(spread.min() > 0 if varying else spread.max() > 0)
    return X, dtype


def _fit(case, X, **params):
    return case.make(**params).fit(X)


def _rel_err(a, b) -> float:
    a = np.asarray(a, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    return float(np.max(np.abs(a - b)) / max(np.max(np.abs(b)), np.finfo(float).tiny))


def _expects_definite(case, est, X) -> bool:
    """Positive definite unless the docs say semi-definite for this fit."""
    if case.semidefinite:
        return False
    # Two rows centre to +x and -x, so Ledoit-Wolf's estimate of the
    # dispersion of S is exactly 0 and the intensity with it (Ledoit & Wolf
    # 2004, JMVA 88(2), Lemma 3.3 b^2 [memory]); LinearShrink then uses the
    # target itself (its Notes), and the constant-correlation target of a
    # rank-one S is singular when every sample correlation is +1.
    target = case.params.get("target")
    if X.shape[0] == 2 and target == "constant-correlation":
        return False
    return True


# -- output validity ---------------------------------------------------------------
@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@given(data=st.data())
def test_fit_is_finite_symmetric_and_definite(case, data):
    X, dtype = data.draw(datasets(case.min_rows, varying=case.varying_columns))
    assume(case.feasible(*X.shape))
    n_features = X.shape[1]
    est = _fit(case, X)
    C, P = est.covariance_, est.precision_
    out_dtype = np.float32 if dtype == "float32" else np.float64
    eps = np.finfo(out_dtype).eps
    assert C.shape == P.shape == (n_features, n_features)
    assert C.dtype == out_dtype and P.dtype == out_dtype
    for name in ("covariance_", "precision_", "eigenvalues_", "location_"):
        assert np.all(np.isfinite(getattr(est, name))), name
    top = float(np.max(np.abs(C)))
    assert top > 0
    assert _rel_err(C, C.T) <= 8 * eps, "covariance_ is not symmetric"
    vals = np.asarray(est.eigenvalues_, dtype=np.float64)
    assert vals.shape == (n_features,)
    assert np.all(vals >= 0), vals.min()
    # The dense matrix is the spectrum it reports (common practice: eigvalsh).
    dense_min = np.linalg.eigvalsh(C.astype(np.float64)).min()
    assert dense_min >= -64 * n_features * eps * vals.max()
    eye = np.eye(n_features)
    if _expects_definite(case, est, X):
        assert vals.min() > 0, "a zero cleaned eigenvalue"
        cond = vals.max() / vals.min()
        err = np.abs(P.astype(np.float64) @ C.astype(np.float64) - eye).max()
        assert err <= 64 * n_features * eps * cond, (err, cond)
    else:
        # Documented semi-definite: precision_ is the pseudo-inverse, C P C = C.
        C64, P64 = C.astype(np.float64), P.astype(np.float64)
        cond = vals.max() / max(vals[vals > 0].min(), np.finfo(float).tiny)
        assert _rel_err(C64 @ P64 @ C64, C64) <= 64 * n_features * eps * cond


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@given(data=st.data())
def test_cleaned_eigenvalues_in_documented_range(case, data):
    X, _ = data.draw(datasets(case.min_rows, varying=case.varying_columns))
    assume(case.feasible(*X.shape))
    est = _fit(case, X.astype(np.float64))
    sample = est.sample_eigenvalues_
    vals = est.eigenvalues_
    assert vals.shape == sample.shape
    assert np.all(np.diff(sample) <= 0), "sample_eigenvalues_ not descending"
    if case.cls is LinearShrink and case.params.get("target", "identity") == "identity":
        # (1 - delta) lambda + delta mu, mu = tr(S)/p (LinearShrink docstring;
        # Ledoit & Wolf 2004, JMVA 88(2), eq. 14 from memory).
        delta, mu = est.shrinkage_, sample.mean()
        expected = (1 - delta) * sample + delta * mu
        assert _rel_err(vals, expected) <= 1e-10
    elif case.cls is SpikeShrink:
        # Bulk and null space get s2; separated spikes are shrunk to >= s2
        # (Donoho, Gavish & Johnstone 2018: eta*(ell) >= 1 for ell > 1 [paper]).
        s2 = est.noise_variance_
        k = est.n_signal_
        assert np.allclose(vals[k:], s2, rtol=1e-12, atol=0)
        assert np.all(vals[:k] >= s2 * (1 - 1e-12))
    elif case.cls is EigenClip:
        # Laloux et al. 1999: the signal eigenvalues are kept, the others
        # replaced by their mean (PRL 83(7) [memory]).
        k = est.n_signal_
        assert np.array_equal(vals[:k], sample[:k])
        assert np.allclose(vals[k:], est.bulk_mean_, rtol=1e-12, atol=0)
    # The spectral form and the dense matrix are the same estimate.
    dense = est.spectrum_.to_dense()
    assert _rel_err(dense, est.covariance_) <= 1e-10


@pytest.mark.parametrize("case", TRACE_CASES, ids=[c.id for c in TRACE_CASES])
@given(data=st.data())
def test_trace_preserved_where_promised(case, data):
    # Laloux, Cizeau, Bouchaud & Potters 1999: the clipped eigenvalues are
    # replaced by their mean, which keeps the trace (PRL 83(7),
    # from memory); checked to 1e-12 relative.
    X, _ = data.draw(datasets(case.min_rows, varying=case.varying_columns))
    assume(case.feasible(*X.shape))
    est = _fit(case, X.astype(np.float64))
    total = est.sample_eigenvalues_.sum()
    assert abs(est.eigenvalues_.sum() - total) <= 1e-12 * total


# -- equivariances ---------------------------------------------------------------
@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@given(data=st.data(), seed=st.integers(0, 2**32 - 1))
def test_feature_permutation_equivariance(case, data, seed):
    n_rows, n_features = data.draw(shapes(case.min_rows))
    assume(case.feasible(n_rows, n_features))
    X = sample_data(seed, n_rows, n_features)
    perm = np.random.default_rng(seed + 1).permutation(n_features)
    base = _fit(case, X)
    moved = _fit(case, X[:, perm])
    assert (
        _rel_err(moved.covariance_, base.covariance_[np.ix_(perm, perm)]) <= case.rtol
    )
    assert _rel_err(moved.location_, base.location_[perm]) <= case.rtol
    assert _rel_err(moved.eigenvalues_, base.eigenvalues_) <= case.rtol


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@given(
    data=st.data(),
    seed=st.integers(0, 2**32 - 1),
    exponent=st.integers(-150, 149),
    mantissa=st.floats(1.0, 9.99),
)
def test_scaling_equivariance(case, data, seed, exponent, mantissa):
    n_rows, n_features = data.draw(shapes(case.min_rows))
    assume(case.feasible(n_rows, n_features))
    c = mantissa * 10.0**exponent
    X = sample_data(seed, n_rows, n_features)
    base = _fit(case, X)
    scaled = _fit(case, X * c)
    # Covariance scales by c^2, precision by c^-2 (DESIGN.md invariants).
    assert _rel_err(scaled.covariance_ / c**2, base.covariance_) <= case.rtol
    assert _rel_err(scaled.precision_ * c**2, base.precision_) <= case.rtol
    assert _rel_err(scaled.eigenvalues_ / c**2, base.eigenvalues_) <= case.rtol


@pytest.mark.parametrize("case", ROTATION_CASES, ids=[c.id for c in ROTATION_CASES])
@given(data=st.data(), seed=st.integers(0, 2**32 - 1))
def test_rotation_equivariance(case, data, seed):
    n_rows, n_features = data.draw(shapes(case.min_rows, min_features=2))
    assume(case.feasible(n_rows, n_features))
    X = sample_data(seed, n_rows, n_features)
    # Haar-distributed orthogonal matrix: QR of a Gaussian with sign fix
    # (Mezzadri 2007, Notices AMS 54(5), from memory).
    q, r = np.linalg.qr(
        np.random.default_rng(seed + 2).standard_normal((n_features,) * 2)
    )
    Q = q * np.sign(np.diag(r))
    base = _fit(case, X)
    rotated = _fit(case, X @ Q)
    # Rows x' -> x' Q, so the covariance C -> Q' C Q.
    assert _rel_err(rotated.covariance_, Q.T @ base.covariance_ @ Q) <= case.rtol
    assert _rel_err(rotated.eigenvalues_, base.eigenvalues_) <= case.rtol


# -- inputs, determinism, pickling -----------------------------------------------
@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@given(
    data=st.data(),
    assume_centered=st.booleans(),
    standardize=st.booleans(),
    weighted=st.booleans(),
    fortran=st.booleans(),
)
def test_inputs_never_modified(
    case, data, assume_centered, standardize, weighted, fortran
):
    X, _ = data.draw(datasets(max(case.min_rows, 3), varying=case.varying_columns))
    assume(case.feasible(*X.shape))
    if fortran:
        X = np.asfortranarray(X)
    if standardize:
        assume(np.all(np.ptp(X, axis=0) > 0))
    rng = np.random.default_rng(X.shape[0])
    weights = rng.uniform(0.5, 2.0, X.shape[0]) if weighted else None
    X_test = sample_data(7, 5, X.shape[1]).astype(X.dtype)
    before = (X.copy(), None if weights is None else weights.copy(), X_test.copy())
    est = case.make(assume_centered=assume_centered, standardize=standardize)
    est.fit(X, sample_weight=weights)
    est.transform(X_test)
    est.score(X_test)
    est.mahalanobis(X_test)
    est.inverse_transform(X_test)
    assert np.array_equal(X, before[0]) and X.dtype == before[0].dtype
    if weights is not None:
        assert np.array_equal(weights, before[1])
    assert np.array_equal(X_test, before[2])


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@given(data=st.data(), seed=st.integers(0, 2**32 - 1))
def test_same_random_state_same_result(case, data, seed):
    n_rows, n_features = data.draw(shapes(case.min_rows))
    assume(case.feasible(n_rows, n_features))
    X = sample_data(seed, n_rows, n_features)
    first = _fit(case, X)
    second = _fit(case, X)
    assert np.array_equal(first.covariance_, second.covariance_)
    assert np.array_equal(first.precision_, second.precision_)
    if "random_state" in first.get_params():
        # A Generator seeded alike gives the same splits as the int seed does.
        third = _fit(case, X, random_state=np.random.default_rng(0))
        fourth = _fit(case, X, random_state=np.random.default_rng(0))
        assert np.array_equal(third.covariance_, fourth.covariance_)


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@given(data=st.data(), seed=st.integers(0, 2**32 - 1))
def test_pickle_round_trip_predicts_the_same(case, data, seed):
    n_rows, n_features = data.draw(shapes(case.min_rows))
    assume(case.feasible(n_rows, n_features))
    X = sample_data(seed, n_rows, n_features)
    X_test = sample_data(seed + 1, 6, n_features)
    est = _fit(case, X)
    copy = pickle.loads(pickle.dumps(est))
    assert type(copy) is type(est)
    assert np.array_equal(copy.covariance_, est.covariance_)
    assert np.array_equal(copy.precision_, est.precision_)
    assert np.array_equal(copy.transform(X_test), est.transform(X_test))
    assert np.array_equal(copy.mahalanobis(X_test), est.mahalanobis(X_test))
    assert copy.score(X_test) == est.score(X_test)
    assert np.array_equal(copy.eigenvalues_, est.eigenvalues_)


# -- rules -----------------------------------------------------------------------
@st.composite
def spectra(draw):
    """(eigenvalues, n_samples, n_features) of a sample covariance."""
    n_rows, n_features = draw(shapes(min_rows=4))
    seed = draw(st.integers(0, 2**32 - 1))
    X = sample_data(seed, n_rows, n_features)
    Xc = X - X.mean(axis=0)
    dof = n_rows - 1
    vals = np.linalg.eigvalsh(Xc.T @ Xc / dof)[::-1][: min(n_features, dof)]
    return np.maximum(vals, 0.0), float(dof), n_features


RULE_NAMES = sorted(RULES)


@pytest.mark.parametrize("name", RULE_NAMES)
@given(spectrum=spectra())
def test_rule_output_valid_and_input_untouched(name, spectrum):
    rule, kwargs = RULES[name]
    vals, n_samples, n_features = spectrum
    before = vals.copy()
    out = rule(vals, n_samples, n_features, **kwargs)
    assert np.array_equal(vals, before)
    values = np.asarray(out.values)
    assert values.shape == vals.shape
    assert np.all(np.isfinite(values)) and np.all(values >= 0)
    if vals.size < n_features:
        assert out.null_value is not None
        assert np.isfinite(out.null_value) and out.null_value >= 0
    else:
        assert out.null_value is None


@pytest.mark.parametrize("name", RULE_NAMES)
@given(spectrum=spectra(), exponent=st.integers(-100, 100))
def test_rule_scales_with_the_eigenvalues(name, spectrum, exponent):
    # Every rule is homogeneous of degree one in the eigenvalues: a change of
    # units of the data (eigenvalues times c) changes the cleaned ones alike.
    rule, kwargs = RULES[name]
    rtol = CLOSED_FORM_RTOL if name in CLOSED_FORM_RULES else FITTED_RTOL
    vals, n_samples, n_features = spectrum
    c = 10.0**exponent
    base = rule(vals, n_samples, n_features, **kwargs)
    scaled = rule(vals * c, n_samples, n_features, **kwargs)
    assert _rel_err(np.asarray(scaled.values) / c, base.values) <= rtol
    if base.null_value is not None:
        top = max(base.null_value, np.max(base.values))
        assert abs(scaled.null_value / c - base.null_value) <= rtol * top
