"""TylerShrink's cleaner route on wide panels (N at least the dof)."""

import warnings

import numpy as np

import rmtclean
from rmtclean.exceptions import NotConvergedWarning
from tests._registry import sample_data


def test_wide_panel_uses_the_spatial_sign_pass():
    # Tyler's (1987) fixed point assumes n > p; on 8 rows of 100
    # heterogeneous columns the reweighting piled weight on two rows and
    # drove the other cleaned eigenvalues to ~1e-9 of the largest (float32
    # fits were not positive definite). Wide panels take the first pass (the
    # rule on the spatial signs), which max_iter=1 computes directly.
    X = sample_data(8100, 8, 100)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        est = rmtclean.TylerShrink().fit(X)
    assert not any(issubclass(w.category, NotConvergedWarning) for w in caught)
    assert est.n_iter_ == 1
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NotConvergedWarning)
        one_pass = rmtclean.TylerShrink(max_iter=1).fit(X)
    np.testing.assert_allclose(est.covariance_, one_pass.covariance_, rtol=1e-12)
    C = rmtclean.TylerShrink().fit(X.astype(np.float32)).covariance_
    assert np.linalg.eigvalsh(C.astype(np.float64)).min() > 0


def test_tall_panel_still_iterates():
    X = sample_data(8101, 300, 20)
    est = rmtclean.TylerShrink().fit(X)
    assert est.n_iter_ > 1
