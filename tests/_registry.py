"""Registry of the cleaners the reliability suites run over.

Every cleaner of the library's registry (``rmtclean.estimators.CLEANERS``)
is picked up, so a new cleaner is covered as soon as it is registered;
``exported_estimators`` lists the SpectralCovariance subclasses exported by
:mod:`rmtclean`, which tests/test_registry.py compares with the registry. A few
variants add the parameter settings whose documented guarantees differ (the
non-rotation-invariant targets of LinearShrink).

What each case promises is read from its documentation:

- ``rotation_invariant``: rotating the data rotates the estimate: the cleaner
  keeps the sample eigenvectors (DESIGN.md: every rmtclean cleaner except
  LinearShrink with a non-identity target), or, TylerShrink, works on the
  row directions with an identity target (spatial signs and Tyler's fixed
  point are orthogonally equivariant, Tyler 1987, from memory).
- ``semidefinite``: positive semi-definite only, where the docs say why
  (SplitShrink: "p.s.d. (p.d. when S2 is)", rules/_split.py; LinearShrink
  with intensity 0 is the sample covariance itself).
- ``trace_preserving``: the trace of the cleaned spectrum equals the sample
  trace (EigenClip, Laloux, Cizeau, Bouchaud & Potters
  1999, PRL 83(7), from memory).
- ``min_rows``: fewest rows the default parameters accept: 2 for every
  cleaner (issue 14: no cleaner refuses a valid sample; SplitShrink's
  fractional ``train_size`` adapts, with leave-one-out splits below 4 rows).
- ``closed_form``: the cleaned values are closed-form linear algebra of the
  data (no fitted noise variance found by a minimiser), so equivariances
  hold to rounding; a minimiser locates its argument only to about
  sqrt(eps) of the scale of the objective's curvature (Press et al.,
  Numerical Recipes, Sec. 10.1, from memory), so fitted cleaners are
  compared more loosely. Unknown cleaners count as fitted.
- ``varying_columns``: a zero-variance column is refused (the
  constant-correlation target divides by the column scales).
- ``warns_rank_deficient``: the fit diagonalises the sample covariance and
  says when eigenvalues the sample size allows are zero. LinearShrink's
  direct dense route computes no eigendecomposition at fit (its Notes), and
  collinearity does not weaken a linear shrinkage.
"""

from __future__ import annotations

import inspect
from dataclasses import dataclass, field

import numpy as np

import rmtclean
from rmtclean.estimators import (
    CLEANERS,
    AutoShrink,
    EigenClip,
    LinearShrink,
    SpectralCovariance,
    SplitShrink,
    TylerShrink,
)

__all__ = [
    "CASES",
    "CLOSED_FORM_RULES",
    "Case",
    "RULES",
    "cleaner_classes",
    "exported_estimators",
    "make",
]


def cleaner_classes() -> list[type]:
    """The library's cleaners, in the order of ``rmtclean.estimators.CLEANERS``."""
    return [entry.cls for entry in CLEANERS]


def exported_estimators() -> list[type]:
    """Every SpectralCovariance subclass named in ``rmtclean.__all__``."""
    out = []
    for name in rmtclean.__all__:
        obj = getattr(rmtclean, name)
        if (
            isinstance(obj, type)
            and issubclass(obj, SpectralCovariance)
            and obj is not SpectralCovariance
        ):
            out.append(obj)
    return out


@dataclass(frozen=True)
class Case:
    """One estimator configuration and the guarantees its docs make."""

    cls: type
    params: dict = field(default_factory=dict)
    rotation_invariant: bool = True
    semidefinite: bool = False
    trace_preserving: bool = False
    min_rows: int = 2
    closed_form: bool = False
    varying_columns: bool = False
    warns_rank_deficient: bool = True

    def feasible(self, n_rows: int, n_features: int) -> bool:
        """Whether the default parameters accept data of this shape."""
        return n_rows >= self.min_rows

    @property
    def rtol(self) -> float:
        """Relative accuracy of equivariances (see the module docstring)."""
        return CLOSED_FORM_RTOL if self.closed_form else FITTED_RTOL

    @property
    def id(self) -> str:
        if not self.params:
            return self.cls.__name__
        inner = ",".join(f"{k}={v}" for k, v in sorted(self.params.items()))
        return f"{self.cls.__name__}({inner})"

    def make(self, **extra) -> SpectralCovariance:
        return make(self.cls, **{**self.params, **extra})


def make(cls, **params) -> SpectralCovariance:
    """An instance with ``random_state=0`` where the estimator takes one."""
    names = cls().get_params()
    if "random_state" in names and "random_state" not in params:
        params["random_state"] = 0
    return cls(**params)


#: Equivariance tolerances (max-norm error relative to the largest entry).
CLOSED_FORM_RTOL = 1e-9
FITTED_RTOL = 1e-6

# Guarantees by class, applied to the registered cleaners.
_KNOWN = {
    LinearShrink: {"closed_form": True, "warns_rank_deficient": False},
    SplitShrink: {"semidefinite": True, "closed_form": True},
    EigenClip: {"trace_preserving": True},
    # It may choose SplitShrink, positive semi-definite only.
    AutoShrink: {"semidefinite": True},
}
_VARIANTS = {
    TylerShrink: [{"params": {"rule": "fixed-point"}}],
    LinearShrink: [
        {"params": {"target": "diagonal"}, "rotation_invariant": False},
        {
            "params": {"target": "constant-correlation"},
            "rotation_invariant": False,
            "varying_columns": True,
        },
    ],
}


def _cases() -> list[Case]:
    cases = []
    for entry in CLEANERS:
        cls = entry.cls
        known = _KNOWN.get(cls, {})
        cases.append(Case(cls, **known))
        for variant in _VARIANTS.get(cls, []):
            cases.append(Case(cls, **{**known, **variant}))
    return cases


#: Every registered cleaner (with its variants).
CASES: list[Case] = _cases()


# -- rules -------------------------------------------------------------------
#: Keyword arguments that make a rule callable from eigenvalues and sizes
#: alone (Ledoit-Wolf's intensity needs the row norms; OAS does not).
_RULE_KWARGS = {"linear_shrink": {"intensity": "oas"}}
#: Rules without a fitted noise variance (see ``closed_form`` above).
CLOSED_FORM_RULES = {"linear_shrink"}


def _eigenvalue_rules() -> dict:
    """Rules called as ``rule(eigenvalues, n_samples, n_features)``."""
    import rmtclean.rules as rules

    out = {}
    for name in rules.__all__:
        func = getattr(rules, name)
        if not inspect.isfunction(func):
            continue
        params = list(inspect.signature(func).parameters)
        if params[:3] == ["eigenvalues", "n_samples", "n_features"]:
            out[name] = (func, _RULE_KWARGS.get(name, {}))
    return out


#: name -> (rule, keyword arguments) for every eigenvalue rule exported.
RULES: dict = _eigenvalue_rules()


def sample_data(seed: int, n_rows: int, n_features: int, *, spread: float = 1.0):
    """Gaussian rows with column scales ``exp(spread * z)`` and one factor."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n_rows, n_features))
    X += 0.5 * rng.standard_normal((n_rows, 1))  # a common factor: a spike
    return X * np.exp(spread * rng.standard_normal(n_features))
