import numpy as np
import pytest


@pytest.fixture
def rng():
    """A fresh seeded generator for each test (never the global RNG)."""
    return np.random.default_rng(20261202)
