"""AutoShrink's sphericity gate: pure noise gets a multiple of the identity.

The test is John's (1972, Biometrika 59(1)) on spatial signs
(``rmtclean.spectrum.sign_sphericity``, checked in tests/test_sphericity.py);
the estimate it leads to, ``tr(S) / N`` times ``I`` with the divisor
``T - 1``, is compared with numpy's ``np.cov``. Designs: the bench's
identity and spiked designs (``rmtclean.synthetic.make_design``; the spiked
model of Johnstone 2001).
"""

from __future__ import annotations

import numpy as np
import pytest

from rmtclean import AutoShrink, LinearShrink
from rmtclean.exceptions import InvalidParameterError
from rmtclean.spectrum import sign_sphericity
from rmtclean.synthetic import make_design


def _noise(n_rows=200, n_features=50, seed=0, df=None):
    design = make_design("identity", n_features)
    kind = {} if df is None else {"distribution": "multivariate-t", "df": df}
    return design.sample(n_rows, random_state=seed, **kind)


def _spiked(seed=0):
    design = make_design("spiked", 50, spikes=(8.0, 4.0), random_state=0)
    return design.sample(200, random_state=seed)


def test_pure_noise_gives_the_scaled_identity():
    X = _noise()
    est = AutoShrink(random_state=0).fit(X)
    assert est.sphericity_pvalue_ == sign_sphericity(X).p_value
    assert est.sphericity_pvalue_ > 0.05 and est.spherical_
    level = np.trace(np.cov(X, rowvar=False)) / X.shape[1]
    np.testing.assert_allclose(est.covariance_, level * np.eye(X.shape[1]), atol=1e-14)
    assert type(est.best_estimator_) is LinearShrink
    assert est.best_estimator_.intensity == 1.0
    assert not est.weights_.any()
    # The held-out scores are still there, and said.
    assert est.cv_results_["rank_test_score"][est.best_index_] == 1
    line = est.describe_choice()
    assert line.startswith("sphericity not rejected (John's test on spatial signs")
    assert "the scaled identity" in line
    assert est.cv_results_["candidate"][est.best_index_] in line


def test_heavy_tailed_noise_is_spherical_too():
    # Multivariate t rows (4 degrees of freedom) of identity shape: their
    # covariance is a multiple of I; John's test on the raw rows would
    # reject it (random row scales spread the spectrum), on the signs not.
    X = _noise(df=4, seed=3)
    est = AutoShrink(random_state=0).fit(X)
    assert est.spherical_
    level = np.trace(np.cov(X, rowvar=False)) / X.shape[1]
    np.testing.assert_allclose(np.diag(est.covariance_), level, rtol=1e-12)


def test_structure_keeps_the_heldout_choice():
    X = _spiked()
    gated = AutoShrink(random_state=0).fit(X)
    plain = AutoShrink(random_state=0, sphericity_level=None).fit(X)
    assert gated.sphericity_pvalue_ < 1e-12 and not gated.spherical_
    assert plain.sphericity_pvalue_ is None and not plain.spherical_
    assert np.array_equal(gated.covariance_, plain.covariance_)
    assert np.array_equal(gated.weights_, plain.weights_)
    assert gated.describe_choice() == plain.describe_choice()


def test_level_none_keeps_the_heldout_choice_on_noise():
    X = _noise()
    est = AutoShrink(random_state=0, sphericity_level=None).fit(X)
    assert not est.spherical_
    assert est.weights_.sum() == 1.0
    assert est.describe_choice().startswith("chosen by held-out loglik")


@pytest.mark.parametrize(
    "params, weighted",
    [({"half_life": 50.0}, False), ({"vol_half_life": 20.0}, False), ({}, True)],
    ids=["half_life", "vol_half_life", "sample_weight"],
)
def test_weighted_rows_skip_the_test(params, weighted):
    X = _noise(n_rows=120, n_features=20)
    weights = np.linspace(0.5, 1.5, X.shape[0]) if weighted else None
    est = AutoShrink(random_state=0, **params).fit(X, sample_weight=weights)
    assert est.sphericity_pvalue_ is None and not est.spherical_


def test_blend_on_noise_is_the_scaled_identity_too():
    X = _noise()
    est = AutoShrink(random_state=0, combine="blend").fit(X)
    assert est.spherical_ and est.blend_score_ is None
    assert not est.weights_.any()
    level = np.trace(np.cov(X, rowvar=False)) / X.shape[1]
    np.testing.assert_allclose(est.covariance_, level * np.eye(X.shape[1]), atol=1e-14)


def test_standardize_gives_the_identity_correlation():
    # Equal variances (the test's null), standardised: the correlation is
    # the identity, scaled back by the sample standard deviations.
    X = _noise(n_rows=150, n_features=30, seed=1)
    est = AutoShrink(random_state=0, standardize=True).fit(X)
    assert est.spherical_
    np.testing.assert_allclose(
        est.covariance_, np.diag(np.var(X, axis=0, ddof=1)), atol=1e-14
    )
    assert "identity correlation" in est.describe_choice()


@pytest.mark.parametrize("level", [0.0, 1.0, -0.1, "5%"])
def test_bad_levels_are_refused(level):
    with pytest.raises(InvalidParameterError, match="'sphericity_level' parameter"):
        AutoShrink(sphericity_level=level).fit(_noise(n_rows=30, n_features=5))


def test_one_column_skips_the_test():
    X = _noise(n_rows=40, n_features=1)
    est = AutoShrink(random_state=0).fit(X)
    assert est.sphericity_pvalue_ is None


def test_cli_says_sphericity_was_not_rejected(tmp_path, capsys):
    from rmtclean.cli import main

    path = tmp_path / "noise.csv"
    header = ",".join(f"s{j}" for j in range(20))
    np.savetxt(
        path, _noise(120, 20, seed=2) * 0.01, delimiter=",", header=header, comments=""
    )
    out = tmp_path / "c.csv"
    assert main(["clean", str(path), "--method", "auto", "--out", str(out)]) == 0
    assert "sphericity not rejected" in capsys.readouterr().out
