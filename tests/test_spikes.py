"""Tests of the spiked-model maps in rmtclean.spectrum._spikes."""

import dataclasses

import numpy as np
import pytest

from rmtclean.spectrum._spikes import (
    SpikeInversion,
    critical_spike,
    eigenvalue_to_spike,
    invert_spikes,
    is_above_bulk_edge,
    spike_overlap,
    spike_to_eigenvalue,
)

# Spiked-model table: Baik, Ben Arous & Peche 2005; Paul 2007, Thm 4
# (Ann. Probab. 33(5); Statist. Sinica 17; from memory, checked by Monte Carlo). The
# table's 10-digit values are the fractions written here (e.g. 0.8611111111 = 31/36,
# 12.2222222222 = 110/9). Columns: q, ell, lambda(ell), c^2.
SPIKE_TABLE = [
    (0.5, 5.0, 5.625, 31 / 36),
    (0.5, 2.0, 3.0, 1 / 3),
    (0.25, 3.0, 3.375, 5 / 6),
    (1.0, 4.0, 16 / 3, 2 / 3),
    (0.1, 1.5, 1.8, 0.5),
    (2.0, 10.0, 110 / 9, 79 / 99),
]


@pytest.mark.parametrize("q, ell, lam, c2", SPIKE_TABLE)
def test_table_values(q, ell, lam, c2):
    # BBP 2005 eigenvalue and Paul 2007 overlap [memory+checked], exact to 1e-12.
    assert spike_to_eigenvalue(ell, q) == pytest.approx(lam, rel=1e-12)
    assert eigenvalue_to_spike(lam, q) == pytest.approx(ell, rel=1e-12)
    assert spike_overlap(ell, q) == pytest.approx(c2, rel=1e-12)


def test_table_values_vectorised():
    # Same table [memory+checked], one array call per ratio.
    for q in {row[0] for row in SPIKE_TABLE}:
        rows = np.array([row[1:] for row in SPIKE_TABLE if row[0] == q])
        np.testing.assert_allclose(spike_to_eigenvalue(rows[:, 0], q), rows[:, 1])
        np.testing.assert_allclose(eigenvalue_to_spike(rows[:, 1], q), rows[:, 0])
        np.testing.assert_allclose(spike_overlap(rows[:, 0], q), rows[:, 2])


@pytest.mark.parametrize("q", [0.01, 0.3, 1.0, 2.0, 7.5])
def test_round_trip(q):
    # The inverse undoes the forward map above the threshold and vice versa
    # (BBP 2005, Ann. Probab. 33(5), formula and its root) [computed].
    rng = np.random.default_rng(0)
    threshold = 1 + np.sqrt(q)
    spikes = threshold * (1 + np.geomspace(1e-6, 1e3, 200)) * rng.uniform(1, 1.01)
    np.testing.assert_allclose(
        eigenvalue_to_spike(spike_to_eigenvalue(spikes, q), q), spikes, rtol=1e-12
    )
    edge = threshold**2
    eigenvalues = edge * (1 + np.geomspace(1e-6, 1e3, 200))
    np.testing.assert_allclose(
        spike_to_eigenvalue(eigenvalue_to_spike(eigenvalues, q), q),
        eigenvalues,
        rtol=1e-12,
    )


def test_forward_map_is_increasing_above_threshold():
    # The limit eigenvalue grows with the spike beyond 1 + sqrt(q) (BBP 2005)
    # and the overlap grows from 0 towards 1 (Paul 2007) [computed].
    q = 0.5
    spikes = np.linspace(critical_spike(q), 100, 1000)
    assert np.all(np.diff(spike_to_eigenvalue(spikes, q)) > 0)
    overlaps = spike_overlap(spikes, q)
    assert overlaps[0] == 0.0
    assert np.all(np.diff(overlaps) > 0)
    assert 0.98 < overlaps[-1] < 1.0


@pytest.mark.parametrize("q", [0.25, 1.0, 2.0])
def test_below_threshold(q):
    # Below 1 + sqrt(q) the top eigenvalue sticks to the edge (1 + sqrt q)^2
    # and the overlap is 0 (BBP 2005, Ann. Probab. 33(5); Paul 2007, Statist. Sinica
    # 17).
    threshold = 1 + np.sqrt(q)
    edge = threshold**2
    assert critical_spike(q) == pytest.approx(threshold, rel=1e-15)
    spikes = np.array([0.2, 1.0, threshold - 1e-9, threshold])
    np.testing.assert_allclose(spike_to_eigenvalue(spikes, q), edge, rtol=1e-15)
    np.testing.assert_array_equal(spike_overlap(spikes, q), 0.0)
    # Documented choice: bulk eigenvalues map to the noise variance.
    bulk = np.array([0.0, 0.5, edge - 1e-9, edge])
    np.testing.assert_array_equal(eigenvalue_to_spike(bulk, q), 1.0)
    np.testing.assert_array_equal(eigenvalue_to_spike(bulk * 3, q, 3.0), 3.0)
    np.testing.assert_array_equal(is_above_bulk_edge(bulk, q), False)
    assert is_above_bulk_edge(edge * (1 + 1e-12), q) is True
    assert is_above_bulk_edge(edge, q) is False
    # Just above the edge the spike is just above the threshold (continuity
    # of the inverse from the right) [computed].
    assert eigenvalue_to_spike(edge * (1 + 1e-10), q) == pytest.approx(
        threshold, rel=1e-4
    )


@pytest.mark.parametrize("s2", [1e-3, 0.7, 4.0, 250.0])
def test_noise_variance_scaling(s2):
    # General s2: lambda = s2 lambda(ell / s2), c^2 depends on ell / s2 only
    # (BBP 2005; Paul 2007; general noise level) [memory+checked].
    for q, ell, lam, c2 in SPIKE_TABLE:
        assert spike_to_eigenvalue(s2 * ell, q, s2) == pytest.approx(
            s2 * lam, rel=1e-12
        )
        assert eigenvalue_to_spike(s2 * lam, q, s2) == pytest.approx(
            s2 * ell, rel=1e-12
        )
        assert spike_overlap(s2 * ell, q, s2) == pytest.approx(c2, rel=1e-12)
        assert critical_spike(q, s2) == pytest.approx(s2 * (1 + np.sqrt(q)))
        assert is_above_bulk_edge(s2 * lam, q, s2)


def test_scalar_and_array_outputs():
    assert isinstance(spike_to_eigenvalue(5.0, 0.5), float)
    assert isinstance(eigenvalue_to_spike(5.625, 0.5), float)
    assert isinstance(spike_overlap(5.0, 0.5), float)
    assert isinstance(is_above_bulk_edge(5.625, 0.5), bool)
    grid = np.full((2, 3), 5.0)
    assert spike_to_eigenvalue(grid, 0.5).shape == (2, 3)
    assert spike_overlap(grid.tolist(), 0.5).shape == (2, 3)


def _top_eigenpairs(rng, n_features, n_samples, spike, n_reps):
    """Top sample eigenvalue and squared overlap with e_1 over repetitions."""
    top, overlap = [], []
    scale = np.ones(n_features)
    scale[0] = np.sqrt(spike)
    for _ in range(n_reps):
        X = rng.standard_normal((n_samples, n_features)) * scale
        values, vectors = np.linalg.eigh(X.T @ X / n_samples)
        top.append(values[-1])
        overlap.append(vectors[0, -1] ** 2)
    return np.array(top), np.array(overlap)


@pytest.mark.parametrize(
    "n_features, n_samples, spike",
    [
        (400, 800, 5.0),  # q = 0.5, our Monte Carlo design
        (400, 200, 10.0),  # q = 2: the same limits with a null space
    ],
)
def test_monte_carlo_agrees_with_limits(n_features, n_samples, spike):
    # Monte Carlo (Gaussian, known zero mean) against the BBP 2005 eigenvalue
    # and the Paul 2007 Thm 4 overlap; an earlier run [computed] gave 5.6407
    # +- 0.0233 and 0.8601 +- 0.0013 at 100 reps for the first design
    # [computed]. Agreement within 4 standard errors.
    q = n_features / n_samples
    rng = np.random.default_rng(20240611)
    top, overlap = _top_eigenpairs(rng, n_features, n_samples, spike, n_reps=40)
    for sample, limit in [
        (top, spike_to_eigenvalue(spike, q)),
        (overlap, spike_overlap(spike, q)),
    ]:
        standard_error = sample.std(ddof=1) / np.sqrt(sample.size)
        assert abs(sample.mean() - limit) < 4 * standard_error


def test_monte_carlo_inversion_recovers_spike():
    # Inverting the observed top eigenvalues recovers the planted spike
    # (BBP 2005, Ann. Probab. 33(5), inverse) within Monte Carlo error.
    rng = np.random.default_rng(7)
    top, _ = _top_eigenpairs(rng, 400, 800, 5.0, n_reps=30)
    estimates = eigenvalue_to_spike(top, 0.5)
    standard_error = estimates.std(ddof=1) / np.sqrt(estimates.size)
    assert abs(estimates.mean() - 5.0) < 4 * standard_error


def test_invert_spikes_result():
    eigenvalues = np.array([3 * 5.625, 3 * 3.0, 2.0, 0.1])
    kept = eigenvalues.copy()
    result = invert_spikes(eigenvalues, 0.5, noise_variance=3.0)
    assert isinstance(result, SpikeInversion)
    np.testing.assert_array_equal(eigenvalues, kept)
    np.testing.assert_array_equal(result.eigenvalues, eigenvalues)
    # BBP 2005 / Paul 2007 values at q = 0.5 scaled by s2 = 3 [memory+checked].
    np.testing.assert_allclose(result.spikes, [15.0, 6.0, 3.0, 3.0], rtol=1e-12)
    np.testing.assert_allclose(result.overlaps, [31 / 36, 1 / 3, 0, 0], rtol=1e-12)
    np.testing.assert_array_equal(result.is_signal, [True, True, False, False])
    assert result.n_signal == 2
    assert result.ratio == 0.5 and result.noise_variance == 3.0
    assert result.bulk_edge == pytest.approx(3 * (1 + np.sqrt(0.5)) ** 2)
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.ratio = 1.0
    text = str(result)
    assert "2 of 4 eigenvalue(s) above the bulk edge" in text
    assert "16.875" in text and "0.861111" in text
    assert "noise variance 3" in text
    assert "overlap" not in str(invert_spikes([1.0, 0.5], 0.5))


def test_invert_spikes_matches_elementwise_functions():
    rng = np.random.default_rng(3)
    eigenvalues = np.sort(rng.uniform(0, 20, 50))[::-1]
    result = invert_spikes(eigenvalues, 1.7, 1.3)
    np.testing.assert_array_equal(
        result.spikes, eigenvalue_to_spike(eigenvalues, 1.7, 1.3)
    )
    np.testing.assert_array_equal(
        result.overlaps, spike_overlap(result.spikes, 1.7, 1.3)
    )
    np.testing.assert_array_equal(
        result.is_signal, is_above_bulk_edge(eigenvalues, 1.7, 1.3)
    )


@pytest.mark.parametrize(
    "function", [spike_to_eigenvalue, eigenvalue_to_spike, spike_overlap]
)
def test_bad_input(function):
    name = function.__name__
    for ratio in [0.0, -1.0, np.nan, np.inf, "0.5", None, True]:
        with pytest.raises(ValueError, match=f"'ratio' parameter of {name}"):
            function(5.0, ratio)
    with pytest.raises(ValueError, match=f"'noise_variance' parameter of {name}"):
        function(5.0, 0.5, noise_variance=0.0)
    with pytest.raises(ValueError, match=r"must be finite. Got 1 NaN"):
        function([5.0, np.nan], 0.5)
    with pytest.raises(TypeError, match=f"of {name} must hold real numbers"):
        function(["a"], 0.5)
    with pytest.raises(TypeError, match="dtype complex128"):
        function([1j], 0.5)


def test_invert_spikes_bad_input():
    with pytest.raises(ValueError, match="'eigenvalues' input of invert_spikes must"):
        invert_spikes(np.ones((2, 2)), 0.5)
    with pytest.raises(ValueError, match="Got -0.5 instead"):
        invert_spikes([1.0], -0.5)
