import numpy as np
import pytest


@pytest.fixture
def rng():
    """A fresh seeded generator for each test (never the global RNG)."""
    return np.random.default_rng(20261202)


# Hypothesis: deterministic examples, no deadline on a loaded machine, and a
# modest number of examples per property (tests/test_properties.py).
from hypothesis import HealthCheck, Phase, settings  # noqa: E402

settings.register_profile(
    "rmtclean",
    derandomize=True,
    deadline=None,
    max_examples=30,
    database=None,
    phases=[Phase.explicit, Phase.reuse, Phase.generate, Phase.shrink],
    suppress_health_check=[HealthCheck.too_slow],
)
settings.load_profile("rmtclean")
