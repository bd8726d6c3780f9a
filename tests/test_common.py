"""Checks every public estimator must pass.

scikit-learn's own estimator checks (``parametrize_with_checks``), and the
documented fitted attributes of the estimator contract.
"""

import importlib

import numpy as np
import pytest
from sklearn.utils.estimator_checks import parametrize_with_checks

import rmtclean
from rmtclean.estimators import CLEANERS, AutoShrink, SplitShrink
from rmtclean.estimators._docs import references_doc

ESTIMATOR_NAMES = [entry.name for entry in CLEANERS]


def _instances():
    out = []
    for entry in CLEANERS:
        cls = entry.cls
        params = {"random_state": 0} if "random_state" in cls().get_params() else {}
        out.append(cls(**params))
    return out


def _expected_failures(estimator):
    # Sample splitting draws random row subsets: repeating a row is not the
    # same as doubling its weight for the split (both are valid estimates).
    if isinstance(estimator, SplitShrink):
        return {
            "check_sample_weight_equivalence_on_dense_data": (
                "random row splits treat a repeated row and a weight of 2 differently"
            ),
        }
    # Contiguous folds cut the rows: repeating a row moves the fold borders,
    # which a weight of 2 does not (both are valid held-out choices).
    if isinstance(estimator, AutoShrink):
        return {
            "check_sample_weight_equivalence_on_dense_data": (
                "repeated rows move the borders of the contiguous folds"
            ),
        }
    return {}


@parametrize_with_checks(_instances(), expected_failed_checks=_expected_failures)
def test_sklearn_compatible(estimator, check):
    check(estimator)


CONTRACT_ATTRIBUTES = [
    "covariance_",
    "precision_",
    "location_",
    "sample_eigenvalues_",
    "eigenvalues_",
    "eigenvectors_",
    "n_signal_",
    "n_features_in_",
    "spectrum_",
]


@pytest.mark.parametrize("estimator", _instances(), ids=ESTIMATOR_NAMES)
def test_contract_attributes(estimator, rng):
    X = rng.standard_normal((120, 30))
    est = estimator.fit(X)
    for attr in CONTRACT_ATTRIBUTES:
        assert hasattr(est, attr), attr
    assert est.covariance_.shape == (30, 30)
    assert est.sample_eigenvalues_.shape == (30,)
    assert est.eigenvalues_.shape == (30,)
    assert np.all(np.diff(est.sample_eigenvalues_) <= 0)
    doc = type(est).__doc__
    for attr in ["covariance_", "location_", "eigenvalues_", "n_signal_"]:
        assert attr in doc, f"{type(est).__name__} does not document {attr}"


@pytest.mark.parametrize("estimator", _instances(), ids=ESTIMATOR_NAMES)
def test_feature_names_kept(estimator, rng):
    pd = pytest.importorskip("pandas")
    X = pd.DataFrame(rng.standard_normal((60, 5)), columns=list("abcde"))
    est = estimator.fit(X)
    assert list(est.feature_names_in_) == list("abcde")


def test_public_names_are_sorted_and_importable():
    assert rmtclean.__all__ == sorted(rmtclean.__all__)
    for name in rmtclean.__all__:
        assert getattr(rmtclean, name) is not None


@pytest.mark.parametrize(
    "name, rule",
    [
        ("KernelShrink", "rmtclean.rules._combine.crossvalidated_linear_weight"),
        ("LinearShrink", "rmtclean.rules.linear_shrink"),
        ("SplitShrink", "rmtclean.rules.split_shrink"),
        ("StieltjesShrink", "rmtclean.rules.stieltjes_shrink"),
        ("TylerShrink", "rmtclean.rules._tyler.tyler_shape"),
    ],
)
def test_estimators_cite_the_references_of_their_rules(name, rule):
    module, _, function = rule.rpartition(".")
    entries = references_doc(getattr(importlib.import_module(module), function))
    assert entries.startswith("    .. [1] ")
    doc = getattr(rmtclean.estimators, name).__doc__
    assert "    References\n    ----------\n" + entries in doc
