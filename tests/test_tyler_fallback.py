"""TylerShrink's cleaner route on a wide panel whose fixed point diverges."""

import warnings

import numpy as np

import rmtclean
from rmtclean.exceptions import NotConvergedWarning
from tests._registry import sample_data


def test_unconverged_fixed_point_falls_back_to_the_spatial_sign_pass():
    # 8 rows of 100 heterogeneous columns: the reweighting of Tyler (1987)
    # piles weight on two rows and drives the other cleaned eigenvalues to
    # ~1e-9 of the largest. Without convergence the first pass (the rule on
    # the spatial signs) is used, which max_iter=1 computes directly.
    X = sample_data(8100, 8, 100)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        est = rmtclean.TylerShrink().fit(X)
    assert any(issubclass(w.category, NotConvergedWarning) for w in caught)
    assert any("spatial-sign pass" in str(w.message) for w in caught)
    one_pass = rmtclean.TylerShrink(max_iter=1)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NotConvergedWarning)
        one_pass.fit(X)
    np.testing.assert_allclose(est.covariance_, one_pass.covariance_, rtol=1e-12)
    # Well conditioned: the float32 fit is positive definite.
    C = rmtclean.TylerShrink().fit(X.astype(np.float32)).covariance_
    assert np.linalg.eigvalsh(C.astype(np.float64)).min() > 0
