"""The cleaners a benchmark can run: baselines, the oracle and the registry's.

Each is a :class:`CleanerSpec`, a name and a factory; the library's cleaners
come from :data:`rmtclean.estimators.CLEANERS`.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from dataclasses import dataclass

from rmtclean.estimators import CLEANERS

__all__ = [
    "GRAPHICAL_LASSO_MAX_FEATURES",
    "ORACLE",
    "SAMPLE",
    "CleanerSpec",
    "available_cleaners",
]

#: Name of the oracle pseudo-cleaner (the 100% mark of PRIAL).
ORACLE = "oracle"
#: Name of the sample covariance (the 0% mark of PRIAL).
SAMPLE = "sample"
# Largest N for which GraphicalLasso is run: its coordinate descent costs
# O(N^3) per sweep and takes many sweeps; beyond this it dominates a run.
GRAPHICAL_LASSO_MAX_FEATURES = 100


@dataclass(frozen=True)
class CleanerSpec:
    """How the runner builds one cleaner.

    Attributes
    ----------
    name : str
        Name in the results and tables.
    factory : callable or None
        ``factory(random_state) -> estimator`` with ``fit(X)`` and
        ``covariance_``; ``None`` for the oracle, which the runner computes
        from the truth.
    description : str
        One line for ``--help`` and the report.
    max_features : int or None
        Largest N the cleaner is run at (``None``: no limit); larger cells
        are left out of the grid.
    """

    name: str
    factory: Callable | None
    description: str
    max_features: int | None = None

    def feasible(self, n_features: int) -> bool:
        """Whether the cleaner runs at this dimension."""
        return self.max_features is None or n_features <= self.max_features


def _sklearn_factory(name: str, module: str = "sklearn.covariance", **params):
    """A factory of the estimator class ``module.name``, imported at call.

    The registry lists the baselines without importing scikit-learn, so
    ``rmtclean bench --help`` starts as fast as the other commands.
    """

    def factory(random_state):
        return getattr(importlib.import_module(module), name)(**params)

    factory.__qualname__ = f"{name}_factory"
    return factory


class _RmtcleanFactory:
    """Picklable factory of an rmtclean estimator by class name."""

    def __init__(self, name: str):
        self.name = name

    def __call__(self, random_state):
        from rmtclean.estimators import find_cleaner

        est = find_cleaner(self.name).cls()
        if "random_state" in est.get_params(deep=False):
            est.set_params(random_state=random_state)
        return est


def available_cleaners() -> dict[str, CleanerSpec]:
    """The cleaner registry: name -> :class:`CleanerSpec`.

    Always holds the oracle, the sample covariance
    (:class:`SampleCovariance`, divisor ``T - 1``) and scikit-learn's
    ``EmpiricalCovariance`` (divisor ``T``), ``LedoitWolf``, ``OAS`` and
    ``GraphicalLasso`` (the last only up to ``N = 100``), plus each
    cleaner of :data:`rmtclean.estimators.CLEANERS`.

    Returns
    -------
    dict
        Insertion-ordered: oracle, baselines, then rmtclean's estimators.

    Examples
    --------
    >>> from rmtclean.bench import available_cleaners
    >>> specs = available_cleaners()
    >>> list(specs)[:4]
    ['oracle', 'sample', 'sk.Empirical', 'sk.LedoitWolf']
    """
    specs = [
        CleanerSpec(ORACLE, None, "finite-sample oracle U diag(u'Σu) U' (uses truth)"),
        CleanerSpec(
            SAMPLE,
            _sklearn_factory("SampleCovariance", "rmtclean.bench._sample"),
            "sample covariance, divisor T - 1",
        ),
        CleanerSpec(
            "sk.Empirical",
            _sklearn_factory("EmpiricalCovariance"),
            "sklearn EmpiricalCovariance (divisor T)",
        ),
        CleanerSpec(
            "sk.LedoitWolf", _sklearn_factory("LedoitWolf"), "sklearn LedoitWolf"
        ),
        CleanerSpec("sk.OAS", _sklearn_factory("OAS"), "sklearn OAS"),
        CleanerSpec(
            "sk.GraphicalLasso",
            _sklearn_factory("GraphicalLasso", alpha=0.05, max_iter=200, tol=1e-3),
            f"sklearn GraphicalLasso(alpha=0.05), N <= {GRAPHICAL_LASSO_MAX_FEATURES}",
            GRAPHICAL_LASSO_MAX_FEATURES,
        ),
    ]
    for entry in CLEANERS:
        specs.append(
            CleanerSpec(
                entry.name, _RmtcleanFactory(entry.name), f"rmtclean {entry.name}"
            )
        )
    return {spec.name: spec for spec in specs}
