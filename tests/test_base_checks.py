import numpy as np
from sklearn.utils.estimator_checks import parametrize_with_checks

from tests._identity_rule import KeepSample


class FloorSample(KeepSample):
    """Sample eigenvalues floored at 1e-3 times the mean: invertible always."""

    def _clean(self, spectrum):
        out = super()._clean(spectrum)
        floor = 1e-3 * max(spectrum.eigenvalues.sum() / spectrum.n_features, 1e-300)
        vals = np.maximum(out.values, floor)
        null = None if out.null_value is None else floor
        return type(out)(vals, null_value=null)


@parametrize_with_checks([FloorSample()])
def test_base_passes_sklearn_checks(estimator, check):
    check(estimator)
