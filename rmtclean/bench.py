"""Benchmark runner: every cleaner side by side on planted-signal designs.

The grid is designs x N x T/N ratio x repetitions. One *draw* is a
(design, N, ratio, repetition): a training sample of ``T = round(ratio N)``
rows and an independent held-out sample of the same size, drawn from the
design with a seed derived from the run's seed and the draw's coordinates.
Every cleaner is fitted to the same draw (common random numbers), which is
what makes the PRIAL of a cleaner, a ratio of mean losses against the
sample covariance and the oracle, precise with few repetitions.

A *cell* is a (draw, cleaner) pair; it is one row of the results file, a
JSON-lines file to which rows are appended as draws finish. A run pointed
at an existing file computes only the cells that file does not hold, so an
interrupted run resumes where it stopped.
"""

from __future__ import annotations

import argparse
import csv
import json
import math
import os
import platform
import sys
import time
import tracemalloc
import warnings
import zlib
from collections.abc import Callable, Iterable, Mapping
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from functools import lru_cache
from pathlib import Path

import numpy as np
import sklearn
from sklearn.base import clone
from sklearn.covariance import OAS, EmpiricalCovariance, GraphicalLasso, LedoitWolf

from rmtclean._validation import Interval, check_value
from rmtclean.estimators import CLEANERS
from rmtclean.metrics import (
    frobenius_loss,
    gaussian_log_likelihood,
    minimum_variance_loss,
    oracle_covariance,
    prial,
    stein_loss,
)
from rmtclean.synthetic import DESIGNS, DISTRIBUTIONS, make_design

__all__ = [
    "METRICS",
    "ORACLE",
    "SAMPLE",
    "BenchConfig",
    "BenchRun",
    "CleanerSpec",
    "SampleCovariance",
    "add_bench_parser",
    "available_cleaners",
    "format_markdown",
    "load_results",
    "plan_cells",
    "run_benchmark",
    "summarize",
    "write_report",
]

#: Name of the oracle pseudo-cleaner (the 100% mark of PRIAL).
ORACLE = "oracle"
#: Name of the sample covariance (the 0% mark of PRIAL).
SAMPLE = "sample"
#: Metrics stored per cell: name -> (table header, True if lower is better).
METRICS = {
    "frobenius": ("Frobenius", True),
    "stein": ("Stein", True),
    "min_variance": ("MV loss", True),
    "loglik": ("log-lik/N", False),
    "condition": ("cond", True),
    "fit_seconds": ("fit ms", True),
    "peak_mib": ("peak MiB", True),
}
# Columns of a row that identify its cell.
_KEY = (
    "design",
    "n_features",
    "ratio",
    "rep",
    "cleaner",
    "seed",
    "distribution",
    "df",
    "rotate",
)
_OWNER = "BenchConfig"
# Largest N for which GraphicalLasso is run: its coordinate descent costs
# O(N^3) per sweep and takes many sweeps; beyond this it dominates a run.
GRAPHICAL_LASSO_MAX_FEATURES = 100


# ---------------------------------------------------------------- cleaners
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


def _sklearn_factory(cls, **params):
    def factory(random_state):
        return cls(**params)

    factory.__qualname__ = f"{cls.__name__}_factory"
    return factory


class SampleCovariance(EmpiricalCovariance):
    """The sample covariance with rmtclean's divisor: ``T - 1`` after demeaning.

    scikit-learn's ``EmpiricalCovariance`` divides by ``T``; rmtclean's
    spectra, rules and oracle use the degrees of freedom, so the PRIAL
    reference does too. The precision is the pseudo-inverse, as in
    ``EmpiricalCovariance``.
    """

    def fit(self, X, y=None):
        """Fit to ``X`` of shape (n_samples, n_features); returns self."""
        super().fit(X)
        n_samples = np.shape(X)[0]
        dof = n_samples if self.assume_centered else n_samples - 1
        self.covariance_ = self.covariance_ * (n_samples / dof)
        if self.store_precision:  # pinvh(a C) = pinvh(C) / a: no second pinvh
            self.precision_ = self.precision_ * (dof / n_samples)
        return self


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
            _sklearn_factory(SampleCovariance),
            "sample covariance, divisor T - 1",
        ),
        CleanerSpec(
            "sk.Empirical",
            _sklearn_factory(EmpiricalCovariance),
            "sklearn EmpiricalCovariance (divisor T)",
        ),
        CleanerSpec(
            "sk.LedoitWolf", _sklearn_factory(LedoitWolf), "sklearn LedoitWolf"
        ),
        CleanerSpec("sk.OAS", _sklearn_factory(OAS), "sklearn OAS"),
        CleanerSpec(
            "sk.GraphicalLasso",
            _sklearn_factory(GraphicalLasso, alpha=0.05, max_iter=200, tol=1e-3),
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


# ------------------------------------------------------------------ config
def _as_tuple(value, name: str, kind, check) -> tuple:
    if isinstance(value, (str, bytes)) or not isinstance(value, Iterable):
        value = (value,)
    out = tuple(value)
    if not out:
        raise ValueError(
            f"The {name!r} parameter of {_OWNER} must not be empty. Got {value!r}."
        )
    for item in out:
        check(item)
    return tuple(kind(item) for item in out)


@dataclass(frozen=True)
class BenchConfig:
    """The grid of a benchmark run.

    Parameters
    ----------
    designs : sequence of str
        Design names from :data:`rmtclean.synthetic.DESIGNS`, with their
        default parameters.
    sizes : sequence of int
        Dimensions N (>= 8).
    ratios : sequence of float
        Ratios T/N (> 0); ``T = max(round(ratio N), 3)`` training rows.
    repeats : int
        Repetitions (draws) per (design, N, ratio).
    cleaners : sequence of str or None
        Cleaner names (see :func:`available_cleaners`); ``None`` means all.
        The oracle and the sample covariance are always added: PRIAL needs
        them.
    seed : int
        Seed of the whole run; each design and draw derives its own.
    distribution : str
        Sampler law, one of :data:`rmtclean.synthetic.DISTRIBUTIONS`.
    df : float or None
        Degrees of freedom of the t laws.
    rotate : bool
        Rotate each design by a Haar random rotation (same for every draw).
    measure_memory : bool
        Refit each cleaner once under :mod:`tracemalloc` for its peak memory.
    blas_threads : int or None
        Threads that BLAS/OpenMP and numba may use inside each draw (``None``:
        leave them alone). The default 1 suits the small matrices of a grid:
        threaded BLAS on a 100 x 100 problem gains nothing and, on a busy
        machine, spins; parallelism comes from ``n_jobs`` instead.

    Examples
    --------
    >>> from rmtclean.bench import BenchConfig
    >>> BenchConfig.quick().repeats
    3
    """

    designs: tuple = ("identity", "spiked", "mixture", "block-factor")
    sizes: tuple = (100, 200)
    ratios: tuple = (0.5, 1.0, 2.0, 4.0)
    repeats: int = 10
    cleaners: tuple | None = None
    seed: int = 0
    distribution: str = "gaussian"
    df: float | None = None
    rotate: bool = False
    measure_memory: bool = True
    blas_threads: int | None = 1

    def __post_init__(self):
        def check_design(name):
            if name not in DESIGNS:
                raise ValueError(
                    f"The 'designs' parameter of {_OWNER} must list names among "
                    f"{sorted(DESIGNS)}. Got {name!r} instead."
                )

        def check_size(n):
            check_value(n, [Interval(int, 8, None)], "sizes", _OWNER)

        def check_ratio(r):
            check_value(r, [Interval(float, 0, None, "neither")], "ratios", _OWNER)
            if not math.isfinite(r):
                raise ValueError(
                    f"The 'ratios' parameter of {_OWNER} must hold finite "
                    f"ratios. Got {r!r} instead."
                )

        set_ = object.__setattr__
        set_(self, "designs", _as_tuple(self.designs, "designs", str, check_design))
        set_(self, "sizes", _as_tuple(self.sizes, "sizes", int, check_size))
        set_(self, "ratios", _as_tuple(self.ratios, "ratios", float, check_ratio))
        check_value(self.repeats, [Interval(int, 1, None)], "repeats", _OWNER)
        check_value(self.seed, [Interval(int, 0, None)], "seed", _OWNER)
        if self.cleaners is not None:
            set_(
                self,
                "cleaners",
                _as_tuple(self.cleaners, "cleaners", str, lambda c: None),
            )
        if self.distribution not in DISTRIBUTIONS:
            raise ValueError(
                f"The 'distribution' parameter of {_OWNER} must be one of "
                f"{DISTRIBUTIONS}. Got {self.distribution!r} instead."
            )
        if self.df is not None:
            set_(self, "df", float(self.df))
        check_value(
            self.blas_threads, [None, Interval(int, 1, None)], "blas_threads", _OWNER
        )

    @classmethod
    def quick(cls, **changes) -> BenchConfig:
        """The ``--quick`` grid: four designs, N = 100, three repetitions.

        Every available cleaner but ``sk.GraphicalLasso``, whose Python-level
        coordinate descent takes over a second per fit under tracemalloc at
        N = 100 and would dominate the run.
        """
        cleaners = tuple(n for n in available_cleaners() if n != "sk.GraphicalLasso")
        base = cls(
            designs=("identity", "spiked", "mixture", "block-factor"),
            sizes=(100,),
            ratios=(0.5, 1.0, 2.0, 4.0),
            repeats=3,
            cleaners=cleaners,
        )
        return replace(base, **changes)

    def cleaner_specs(self, registry=None) -> dict[str, CleanerSpec]:
        """The specs this run uses, oracle and sample first."""
        registry = available_cleaners() if registry is None else dict(registry)
        names = list(registry) if self.cleaners is None else list(self.cleaners)
        unknown = [n for n in names if n not in registry]
        if unknown:
            raise ValueError(
                f"The 'cleaners' parameter of {_OWNER} must list names among "
                f"{list(registry)}. Got unknown {unknown!r}."
            )
        for required in (SAMPLE, ORACLE):
            if required not in names:
                names.insert(0, required)
        order = [ORACLE, SAMPLE] + [n for n in names if n not in (ORACLE, SAMPLE)]
        return {name: registry[name] for name in order}


def n_samples_for(n_features: int, ratio: float) -> int:
    """Training rows of a cell: ``max(round(ratio * N), 3)``."""
    return max(int(round(ratio * n_features)), 3)


def _cell_key(row: Mapping) -> tuple:
    return tuple(row[k] for k in _KEY)


def plan_cells(config: BenchConfig, registry=None) -> list[dict]:
    """Every cell of the grid, as the key part of a results row.

    Parameters
    ----------
    config : BenchConfig
    registry : mapping of str to CleanerSpec, optional
        Default :func:`available_cleaners`.

    Returns
    -------
    list of dict
        One dict per cell with the keys ``design, n_features, ratio, rep,
        cleaner, seed, distribution, df, rotate`` (cells a cleaner is not
        feasible for are left out).
    """
    specs = config.cleaner_specs(registry)
    cells = []
    for design in config.designs:
        for n in config.sizes:
            for ratio in config.ratios:
                for rep in range(config.repeats):
                    for name, spec in specs.items():
                        if spec.feasible(n):
                            cells.append(_cell(config, design, n, ratio, rep, name))
    return cells


def _cell(config, design, n, ratio, rep, cleaner) -> dict:
    return {
        "design": design,
        "n_features": int(n),
        "ratio": float(ratio),
        "rep": int(rep),
        "cleaner": cleaner,
        "seed": int(config.seed),
        "distribution": config.distribution,
        "df": config.df,
        "rotate": bool(config.rotate),
    }


# ------------------------------------------------------------------ draws
def _tag(text: str) -> int:
    return zlib.crc32(text.encode())


@lru_cache(maxsize=16)
def _design(name: str, n_features: int, seed: int, rotate: bool):
    # One truth per (design, N) for the whole run: every ratio and draw
    # estimates the same population covariance.
    ss = np.random.SeedSequence([seed, _tag(name), n_features])
    return make_design(
        name, n_features, rotate=rotate, random_state=np.random.default_rng(ss)
    )


def draw(config: BenchConfig, design: str, n_features: int, ratio: float, rep: int):
    """The design and the (train, test) samples of one draw.

    Returns
    -------
    design : Design
    X_train, X_test : ndarray of shape (T, N)
    """
    truth = _design(design, n_features, config.seed, config.rotate)
    n_samples = n_samples_for(n_features, ratio)
    ss = np.random.SeedSequence(
        [
            config.seed,
            _tag(design),
            n_features,
            int(round(ratio * 1_000_000)),
            rep,
            _tag(config.distribution),
        ]
    )
    train_ss, test_ss = ss.spawn(2)
    kwargs = {"distribution": config.distribution, "df": config.df}
    X = truth.sample(n_samples, random_state=np.random.default_rng(train_ss), **kwargs)
    X_test = truth.sample(
        n_samples, random_state=np.random.default_rng(test_ss), **kwargs
    )
    return truth, X, X_test


# ---------------------------------------------------------------- metrics
def _evaluate(estimate: np.ndarray, truth, X_test, location) -> dict:
    """Losses and scores of one estimate; singular estimates get inf."""
    estimate = (estimate + estimate.T) / 2
    sigma = np.asarray(truth.covariance)
    n_features = sigma.shape[0]
    eig = np.linalg.eigvalsh(estimate)
    top = max(abs(eig[-1]), np.finfo(float).tiny)
    singular = eig[0] <= n_features * np.finfo(float).eps * top
    out = {
        "frobenius": frobenius_loss(estimate, sigma),
        "condition": math.inf if singular else float(eig[-1] / eig[0]),
    }
    if singular:
        out.update(stein=math.inf, min_variance=math.inf, loglik=-math.inf)
    else:
        out["stein"] = stein_loss(estimate, sigma)
        out["min_variance"] = minimum_variance_loss(estimate, sigma)
        out["loglik"] = gaussian_log_likelihood(X_test, estimate, location) / n_features
    return out


def _peak_mib(fit) -> float:
    """Peak traced memory of ``fit()`` in MiB (numpy buffers included)."""
    was_tracing = tracemalloc.is_tracing()
    if not was_tracing:
        tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        tracemalloc.reset_peak()
        fit()
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        if not was_tracing:
            tracemalloc.stop()
    return max(peak - base, 0) / 2**20


def _dense_covariance(est) -> np.ndarray:
    cov = getattr(est, "covariance_", None)
    if cov is None:  # rmtclean estimators beyond the dense storage limit
        cov = est.spectrum_.to_dense()
    return np.asarray(cov, dtype=np.float64)


# Cleaners already fitted once in this process, per regime (N < dof or not):
# the first fit pays for numba compilation or cache loading, not timed.
_WARMED: set = set()


@contextmanager
def limit_threads(n_threads: int | None):
    """Limit BLAS/OpenMP (threadpoolctl) and numba threads inside the block.

    Parameters
    ----------
    n_threads : int or None
        Threads allowed; ``None`` changes nothing. The previous numba
        setting is restored on exit, also after an error.
    """
    if n_threads is None:
        yield
        return
    import numba
    from threadpoolctl import threadpool_limits

    old = numba.get_num_threads()
    numba.set_num_threads(min(n_threads, numba.config.NUMBA_NUM_THREADS))
    try:
        with threadpool_limits(limits=n_threads):
            yield
    finally:
        numba.set_num_threads(old)


def _run_draw(config: BenchConfig, cells: list[dict], specs: dict) -> list[dict]:
    """Compute the given cells, all of one draw."""
    with limit_threads(config.blas_threads):
        return _run_draw_cells(config, cells, specs)


def _run_draw_cells(config, cells, specs) -> list[dict]:
    first = cells[0]
    truth, X, X_test = draw(
        config, first["design"], first["n_features"], first["ratio"], first["rep"]
    )
    rows = []
    for cell in cells:
        row = dict(cell, n_samples=X.shape[0], status="ok", warning="")
        row.update({name: math.nan for name in METRICS})
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                row.update(_run_cell(config, specs[cell["cleaner"]], truth, X, X_test))
            except Exception as exc:  # a failing cleaner must not stop the grid
                row["status"] = f"error: {type(exc).__name__}: {exc}"[:300]
        if caught:  # kept in the results instead of flooding the terminal
            first = caught[0]
            row["warning"] = f"{first.category.__name__}: {first.message}"[:300]
        rows.append(row)
    return rows


def _run_cell(config, spec: CleanerSpec, truth, X, X_test) -> dict:
    if spec.factory is None:  # the oracle: computed from the truth
        estimate = oracle_covariance(X, truth.covariance)
        return _evaluate(estimate, truth, X_test, X.mean(axis=0))
    random_state = int(np.random.SeedSequence(config.seed).generate_state(1)[0])
    prototype = spec.factory(random_state)
    regime = (spec.name, X.shape[1] < X.shape[0] - 1)
    if regime not in _WARMED:
        clone(prototype).fit(X)
        _WARMED.add(regime)
    est = clone(prototype)
    start = time.perf_counter()
    est.fit(X)
    seconds = time.perf_counter() - start
    out = _evaluate(_dense_covariance(est), truth, X_test, est.location_)
    out["fit_seconds"] = seconds
    if config.measure_memory:
        out["peak_mib"] = _peak_mib(lambda: clone(prototype).fit(X))
    return out


# ---------------------------------------------------------------- storage
def _jsonable(row: dict) -> dict:
    out = {}
    for key, value in row.items():
        if isinstance(value, (float, np.floating)):
            value = float(value)
            if not math.isfinite(value):
                value = "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
        elif isinstance(value, np.integer):
            value = int(value)
        out[key] = value
    return out


def _from_json(row: dict) -> dict:
    for name in METRICS:
        if isinstance(row.get(name), str):
            row[name] = float(row[name])
    return row


def load_results(path) -> list[dict]:
    """Read a results file; a line cut short by an interrupt is skipped.

    Parameters
    ----------
    path : str or Path
        JSON-lines file written by :func:`run_benchmark`; missing means empty.

    Returns
    -------
    list of dict
        One dict per row, metrics as floats (``inf``/``nan`` restored).
    """
    path = Path(path)
    if not path.exists():
        return []
    rows = []
    with path.open(encoding="utf-8") as fh:
        for line in fh:
            line = line.strip()
            if not line:
                continue
            try:
                rows.append(_from_json(json.loads(line)))
            except json.JSONDecodeError:
                continue
    return rows


def _open_for_append(path: Path):
    path.parent.mkdir(parents=True, exist_ok=True)
    needs_newline = False
    if path.exists() and path.stat().st_size > 0:
        with path.open("rb") as fh:
            fh.seek(-1, os.SEEK_END)
            needs_newline = fh.read(1) != b"\n"
    fh = path.open("a", encoding="utf-8")
    if needs_newline:  # an interrupted write left half a line
        fh.write("\n")
    return fh


# ------------------------------------------------------------------ runner
@dataclass(frozen=True)
class BenchRun:
    """Outcome of :func:`run_benchmark`.

    Attributes
    ----------
    config : BenchConfig
    rows : list of dict
        One row per planned cell (computed now or read back), grid order.
    n_computed : int
        Cells computed by this call.
    n_reused : int
        Cells read back from the results file.
    path : Path or None
        The results file.
    cleaners : dict
        The :class:`CleanerSpec` of each cleaner run.
    """

    config: BenchConfig
    rows: list
    n_computed: int
    n_reused: int
    path: Path | None
    cleaners: dict = field(repr=False)


def _parallel_map(func, jobs, n_jobs):
    if n_jobs == 1 or len(jobs) <= 1:
        for job in jobs:
            yield func(*job)
        return
    from joblib import Parallel, delayed

    tasks = (delayed(func)(*job) for job in jobs)
    try:
        yield from Parallel(n_jobs=n_jobs, return_as="generator_unordered")(tasks)
    except ValueError as exc:  # joblib < 1.4: no unordered generator
        if "return_as" not in str(exc):
            raise
        yield from Parallel(n_jobs=n_jobs, return_as="generator")(
            delayed(func)(*job) for job in jobs
        )


def _progress(total: int, enabled: bool):
    if not enabled:
        return None
    try:
        from tqdm.auto import tqdm
    except ImportError:  # tqdm is optional: run without a bar
        return None
    return tqdm(total=total, desc="rmtclean bench", unit="draw", file=sys.stderr)


def run_benchmark(
    config: BenchConfig,
    path=None,
    *,
    n_jobs: int = 1,
    progress: bool = False,
    registry=None,
) -> BenchRun:
    """Run the grid, appending each finished draw's rows to ``path``.

    Parameters
    ----------
    config : BenchConfig
        The grid.
    path : str or Path, optional
        JSON-lines results file. Cells already in it (same design, N,
        ratio, repetition, cleaner, seed, distribution, df and rotation)
        are read back instead of recomputed, so rerunning an interrupted
        run finishes it. The key holds no code version: after changing a
        cleaner, write to a new file. ``None`` keeps the results in memory
        only.
    n_jobs : int, default=1
        Draws run in parallel by joblib (``-1``: all cores). Timings are
        cleanest with 1.
    progress : bool, default=False
        Show a tqdm progress bar over draws (when tqdm is installed).
    registry : mapping of str to CleanerSpec, optional
        Replace :func:`available_cleaners` (e.g. to add a cleaner).

    Returns
    -------
    BenchRun

    Notes
    -----
    Per cell: the Frobenius, Stein and minimum-variance losses of
    :mod:`rmtclean.metrics` against the design's covariance, the held-out
    mean Gaussian log-likelihood divided by N, the condition number, the
    wall-clock time of one ``fit`` (after an untimed first fit per process
    that pays for JIT compilation) and the peak memory that
    :mod:`tracemalloc` sees during a second fit (numpy buffers; memory that
    BLAS/LAPACK allocate internally is not traced). A singular estimate
    (the sample covariance when N >= T - 1) has infinite Stein and
    minimum-variance losses and condition number, and log-likelihood -inf.
    A cleaner that raises gets ``status = "error: ..."`` and NaN metrics.

    Examples
    --------
    >>> from rmtclean.bench import BenchConfig, run_benchmark
    >>> config = BenchConfig(designs=["spiked"], sizes=[20], ratios=[2.0],
    ...                      repeats=2, cleaners=["sk.LedoitWolf"])
    >>> run = run_benchmark(config)
    >>> run.n_computed, sorted({row["cleaner"] for row in run.rows})
    (6, ['oracle', 'sample', 'sk.LedoitWolf'])
    """
    check_value(n_jobs, [Interval(int, None, None)], "n_jobs", "run_benchmark")
    if n_jobs == 0:
        raise ValueError(
            "The 'n_jobs' parameter of run_benchmark must be a non-zero int. "
            "Got 0 instead."
        )
    specs = config.cleaner_specs(registry)
    planned = plan_cells(config, specs)
    path = None if path is None else Path(path)
    done = {}
    for row in load_results(path) if path is not None else []:
        done[_cell_key(row)] = row
    todo: dict[tuple, list[dict]] = {}
    for cell in planned:
        if _cell_key(cell) not in done:
            draw_key = (cell["design"], cell["n_features"], cell["ratio"], cell["rep"])
            todo.setdefault(draw_key, []).append(cell)
    n_reused = len(planned) - sum(len(cells) for cells in todo.values())
    jobs = [(config, cells, specs) for cells in todo.values()]
    bar = _progress(len(jobs), progress)
    fh = _open_for_append(path) if (path is not None and jobs) else None
    n_computed = 0
    try:
        for rows in _parallel_map(_run_draw, jobs, n_jobs):
            for row in rows:
                done[_cell_key(row)] = row
                if fh is not None:
                    fh.write(json.dumps(_jsonable(row)) + "\n")
            if fh is not None:
                fh.flush()
            n_computed += len(rows)
            if bar is not None:
                bar.update(1)
    finally:
        if fh is not None:
            fh.close()
        if bar is not None:
            bar.close()
    rows = [done[_cell_key(cell)] for cell in planned]
    return BenchRun(config, rows, n_computed, n_reused, path, specs)


# ---------------------------------------------------------------- summary
def _mean_se(values) -> tuple[float, float]:
    arr = np.asarray(values, dtype=np.float64)
    if arr.size == 0:
        return math.nan, math.nan
    if not np.all(np.isfinite(arr)):
        return float(np.mean(arr)), math.nan
    se = float(np.std(arr, ddof=1) / math.sqrt(arr.size)) if arr.size > 1 else math.nan
    return float(np.mean(arr)), se


def _prial_se(est, sample, oracle, value) -> float:
    """Delta-method standard error of a ratio of means (paired draws)."""
    n = est.size
    if n < 2 or not math.isfinite(value):
        return math.nan
    a = sample - est
    b = sample - oracle
    ratio = value / 100.0
    return float(100.0 * np.std(a - ratio * b, ddof=1) / math.sqrt(n) / np.mean(b))


def _prial_of(rows: list[dict], by_rep: dict, metric: str) -> tuple[float, float]:
    est, sample, oracle = [], [], []
    for row in rows:
        ref = by_rep.get(row["rep"], {})
        if SAMPLE in ref and ORACLE in ref:
            est.append(row[metric])
            sample.append(ref[SAMPLE][metric])
            oracle.append(ref[ORACLE][metric])
    if not est:
        return math.nan, math.nan
    est, sample, oracle = (
        np.asarray(v, dtype=np.float64) for v in (est, sample, oracle)
    )
    try:
        value = prial(est, sample, oracle)
    except ValueError:  # infinite losses (singular sample) or no gap
        return math.nan, math.nan
    return value, _prial_se(est, sample, oracle, value)


def summarize(rows: Iterable[Mapping]) -> list[dict]:
    """Mean and standard error over repetitions, per (design, N, ratio, cleaner).

    Parameters
    ----------
    rows : iterable of dict
        Results rows (:attr:`BenchRun.rows` or :func:`load_results`), of
        one seed, distribution and rotation.

    Returns
    -------
    list of dict
        Keys ``design, n_features, ratio, n_samples, cleaner, n_reps,
        n_errors``, ``<metric>`` and ``<metric>_se`` for each of
        :data:`METRICS`, and ``prial``, ``prial_se`` (Frobenius loss) and
        ``prial_mv``, ``prial_mv_se`` (minimum-variance loss), in percent.

    Notes
    -----
    PRIAL is :func:`rmtclean.metrics.prial` over the repetitions where the
    cleaner, the sample covariance and the oracle all succeeded; its
    standard error is the delta-method one of a ratio of means on paired
    draws, :math:`100\\,\\mathrm{sd}(a_r - R b_r)/(\\sqrt{n}\\,\\bar b)` with
    :math:`a_r = L_S - L_{\\hat\\Sigma}`, :math:`b_r = L_S - L_{S^*}`. It is
    NaN where a mean loss is infinite (e.g. the minimum-variance loss of a
    singular sample covariance).
    """
    groups: dict[tuple, list[dict]] = {}
    for row in rows:
        key = (row["design"], row["n_features"], row["ratio"])
        groups.setdefault(key, []).append(dict(row))
    out = []
    for (design, n, ratio), group in groups.items():
        by_rep: dict[int, dict] = {}
        by_cleaner: dict[str, list[dict]] = {}
        for row in group:
            by_cleaner.setdefault(row["cleaner"], []).append(row)
            if row["status"] == "ok":
                by_rep.setdefault(row["rep"], {})[row["cleaner"]] = row
        for cleaner, crow in by_cleaner.items():
            ok = [r for r in crow if r["status"] == "ok"]
            entry = {
                "design": design,
                "n_features": n,
                "ratio": ratio,
                "n_samples": crow[0].get("n_samples", n_samples_for(n, ratio)),
                "cleaner": cleaner,
                "n_reps": len(ok),
                "n_errors": len(crow) - len(ok),
            }
            for metric in METRICS:
                entry[metric], entry[metric + "_se"] = _mean_se([r[metric] for r in ok])
            entry["prial"], entry["prial_se"] = _prial_of(ok, by_rep, "frobenius")
            entry["prial_mv"], entry["prial_mv_se"] = _prial_of(
                ok, by_rep, "min_variance"
            )
            out.append(entry)
    return out


def _fmt(value: float, se: float = math.nan, *, scale: float = 1.0) -> str:
    if value is None or math.isnan(value):
        return "—"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    value *= scale
    text = f"{value:.3g}" if abs(value) < 1e4 else f"{value:.2e}"
    if not math.isnan(se):
        se *= scale
        text += f" ± {se:.2g}"
    return text


_TABLE = [
    ("PRIAL %", "prial", 1.0),
    ("PRIAL-MV %", "prial_mv", 1.0),
    ("Frobenius", "frobenius", 1.0),
    ("Stein", "stein", 1.0),
    ("MV loss", "min_variance", 1.0),
    ("log-lik/N", "loglik", 1.0),
    ("cond", "condition", 1.0),
    ("fit ms", "fit_seconds", 1000.0),
    ("peak MiB", "peak_mib", 1.0),
]


def format_markdown(
    summary: list[dict], config: BenchConfig, *, command: str | None = None
) -> str:
    """The markdown report: settings, caution, one table per design.

    Parameters
    ----------
    summary : list of dict
        Output of :func:`summarize`.
    config : BenchConfig
        The grid (printed in the header).
    command : str, optional
        The command line that produced the run.

    Returns
    -------
    str
    """
    from rmtclean.demo import CAUTION

    lines = ["# rmtclean bench", ""]
    if command:
        lines += ["```", command, "```", ""]
    lines += [
        f"Designs {', '.join(config.designs)}; N in {list(config.sizes)}; "
        f"T/N in {list(config.ratios)}; {config.repeats} repetitions; seed "
        f"{config.seed}; {config.distribution} samples"
        + (f" (df {config.df:g})" if config.df is not None else "")
        + ("; rotated designs" if config.rotate else "")
        + ".",
        "",
        f"Machine: {platform.machine()}, {os.cpu_count()} cores; Python "
        f"{platform.python_version()}, numpy {np.__version__}, scikit-learn "
        f"{sklearn.__version__}.",
        "",
        "Entries are mean ± standard error over repetitions. PRIAL: 0% is the "
        "sample covariance, 100% the oracle (Frobenius loss; PRIAL-MV with the "
        "minimum-variance loss, undefined where the sample covariance is "
        "singular). Losses are normalised by N (Ledoit-Wolf); log-lik/N is the "
        "held-out Gaussian log-likelihood per sample divided by N; fit ms is one "
        "fit's wall time; peak MiB is traced numpy memory of a fit.",
        "",
        f"> {CAUTION}",
        "",
    ]
    header = "| N | T/N | cleaner | " + " | ".join(h for h, _, _ in _TABLE) + " |"
    rule = "|" + "---|" * (3 + len(_TABLE))
    for design in config.designs:
        entries = [e for e in summary if e["design"] == design]
        if not entries:
            continue
        lines += [f"## {design}", "", header, rule]
        for e in entries:
            cells = [str(e["n_features"]), f"{e['ratio']:g}", e["cleaner"]]
            for _, key, scale in _TABLE:
                cells.append(_fmt(e[key], e[key + "_se"], scale=scale))
            if e["n_errors"]:
                cells[2] += f" ({e['n_errors']} failed)"
            lines.append("| " + " | ".join(cells) + " |")
        lines.append("")
    return "\n".join(lines)


def _write_csv(path: Path, rows: list[dict]) -> None:
    if not rows:
        path.write_text("", encoding="utf-8")
        return
    fields = list(rows[0])
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=fields, extrasaction="ignore")
        writer.writeheader()
        for row in rows:
            writer.writerow(row)


# ---------------------------------------------------------------- figures
def shrinkage_curves(
    config: BenchConfig, design: str, n_features: int, ratio: float, specs
) -> tuple[np.ndarray, dict, np.ndarray, int]:
    """Sample vs cleaned eigenvalues of draw 0 for every cleaner.

    The cleaned value of sample eigenvector ``u_i`` is ``u_i' C u_i``, which
    for a cleaner that keeps the sample eigenvectors is its cleaned
    eigenvalue; the oracle's is ``u_i' Sigma u_i``.

    Returns
    -------
    sample : ndarray of shape (N,)
        Sample eigenvalues, descending (null space's zeros last).
    cleaned : dict of str to ndarray of shape (N,)
    oracle : ndarray of shape (N,)
    n_samples : int
        Training rows T.
    """
    truth, X, _ = draw(config, design, n_features, ratio, 0)
    centred = X - X.mean(axis=0)
    values, vectors = np.linalg.eigh(centred.T @ centred / (X.shape[0] - 1))
    values, vectors = np.maximum(values[::-1], 0.0), vectors[:, ::-1]

    def along(cov):
        return np.einsum("ij,ij->j", vectors, cov @ vectors)

    oracle = along(np.asarray(truth.covariance))
    cleaned = {}
    random_state = int(np.random.SeedSequence(config.seed).generate_state(1)[0])
    for name, spec in specs.items():
        if spec.factory is None or name == SAMPLE or not spec.feasible(n_features):
            continue
        try:
            est = spec.factory(random_state).fit(X)
        except Exception:  # the tables record the failure; skip the curve
            continue
        cleaned[name] = along(_dense_covariance(est))
    return values, cleaned, oracle, X.shape[0]


def write_report(run: BenchRun, out_dir, *, command: str | None = None) -> dict:
    """Write summary.md, summary.csv, results.csv and the PNG figures.

    Parameters
    ----------
    run : BenchRun
    out_dir : str or Path
    command : str, optional
        Command line shown in the report.

    Returns
    -------
    dict
        Name -> Path of each file written (figures only when matplotlib is
        installed).
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    summary = summarize(run.rows)
    written = {}
    md = out_dir / "summary.md"
    md.write_text(format_markdown(summary, run.config, command=command) + "\n")
    written["summary.md"] = md
    _write_csv(out_dir / "summary.csv", summary)
    written["summary.csv"] = out_dir / "summary.csv"
    _write_csv(out_dir / "results.csv", run.rows)
    written["results.csv"] = out_dir / "results.csv"
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        return written
    written.update(_write_figures(run, summary, out_dir))
    return written


def _write_figures(run: BenchRun, summary, out_dir: Path) -> dict:
    from rmtclean import plotting

    config = run.config
    n = max(config.sizes)
    ratio = sorted(config.ratios)[len(config.ratios) // 2]
    written = {}
    fig = plotting.plot_prial(summary, n_features=n)
    written["prial.png"] = plotting.save_figure(fig, out_dir / "prial.png")
    curves = {
        d: shrinkage_curves(config, d, n, ratio, run.cleaners) for d in config.designs
    }
    fig, axes = plotting.panel_grid(len(config.designs))
    for ax, (design, (sample, cleaned, oracle, t)) in zip(
        axes, curves.items(), strict=True
    ):
        plotting.plot_shrinkage(
            sample, cleaned, oracle, ax=ax, title=f"{design}: N={n}, T={t}"
        )
    written["shrinkage.png"] = plotting.save_figure(fig, out_dir / "shrinkage.png")
    fig, axes = plotting.panel_grid(len(config.designs))
    for ax, (design, (sample, _, _, t)) in zip(axes, curves.items(), strict=True):
        plotting.plot_spectrum(
            sample[: min(n, t - 1)], t - 1, n, ax=ax, title=f"{design}: N={n}, T={t}"
        )
    written["spectrum.png"] = plotting.save_figure(fig, out_dir / "spectrum.png")
    return written


# -------------------------------------------------------------------- CLI
def _csv_list(kind):
    def parse(text: str):
        try:
            return [kind(item) for item in text.split(",") if item.strip()]
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"expected a comma-separated list of {kind.__name__}, got {text!r}"
            ) from None

    return parse


def add_bench_parser(subparsers) -> argparse.ArgumentParser:
    """Add the ``bench`` subcommand to the ``rmtclean`` command's subparsers.

    Parameters
    ----------
    subparsers : argparse._SubParsersAction
        What ``ArgumentParser.add_subparsers`` returned.

    Returns
    -------
    argparse.ArgumentParser
        The ``bench`` parser (its ``func`` default runs the benchmark).
    """
    bench = subparsers.add_parser(
        "bench",
        help="compare cleaners on planted-signal designs",
        description="Compare every cleaner on planted-signal designs with known "
        "truth: losses, PRIAL, held-out likelihood, condition number, fit time "
        "and memory. Results are appended to OUT/results.jsonl, so rerunning an "
        "interrupted command resumes it.",
        epilog="example: rmtclean bench --quick --out bench-out",
    )
    bench.add_argument(
        "--designs",
        type=_csv_list(str),
        help=f"comma-separated designs among {', '.join(DESIGNS)}",
    )
    bench.add_argument("--sizes", type=_csv_list(int), help="comma-separated N")
    bench.add_argument("--ratios", type=_csv_list(float), help="comma-separated T/N")
    bench.add_argument("--repeats", type=int, help="repetitions per grid point")
    bench.add_argument(
        "--cleaners",
        type=_csv_list(str),
        help="comma-separated cleaners (default all; oracle and sample always run): "
        + ", ".join(available_cleaners()),
    )
    bench.add_argument(
        "--quick",
        action="store_true",
        help="small grid (4 designs, N=100, 4 ratios, 3 repetitions), < 60 s",
    )
    bench.add_argument(
        "--out", default="bench-out", help="output directory (default bench-out)"
    )
    bench.add_argument(
        "--n-jobs", type=int, default=1, help="parallel draws (joblib), -1 = all"
    )
    bench.add_argument("--seed", type=int, help="seed of the run (default 0)")
    bench.add_argument(
        "--distribution", choices=DISTRIBUTIONS, help="sampler law (default gaussian)"
    )
    bench.add_argument("--df", type=float, help="degrees of freedom of the t laws")
    bench.add_argument("--rotate", action="store_true", help="Haar-rotate the designs")
    bench.add_argument(
        "--blas-threads",
        type=int,
        default=1,
        help="BLAS/numba threads per draw (default 1; 0 = leave as is)",
    )
    bench.add_argument("--no-progress", action="store_true", help="no progress bar")
    bench.set_defaults(func=_cmd_bench)
    return bench


def config_from_args(args) -> BenchConfig:
    """The :class:`BenchConfig` that parsed ``bench`` arguments describe."""
    base = BenchConfig.quick() if args.quick else BenchConfig()
    changes = {}
    for name in ("designs", "sizes", "ratios", "repeats", "cleaners", "seed"):
        if getattr(args, name) is not None:
            changes[name] = getattr(args, name)
    if args.distribution is not None:
        changes["distribution"] = args.distribution
    if args.df is not None:
        changes["df"] = args.df
    if args.rotate:
        changes["rotate"] = True
    changes["blas_threads"] = args.blas_threads or None
    return replace(base, **changes)


def _command_line(args) -> str:
    parts = ["rmtclean", "bench"]
    if args.quick:
        parts.append("--quick")
    for name in ("designs", "sizes", "ratios", "cleaners"):
        value = getattr(args, name)
        if value is not None:
            parts += [
                f"--{name}",
                ",".join(f"{v:g}" if isinstance(v, float) else str(v) for v in value),
            ]
    for name in ("repeats", "seed", "distribution", "df"):
        value = getattr(args, name)
        if value is not None:
            parts += [
                f"--{name}",
                f"{value:g}" if isinstance(value, float) else str(value),
            ]
    if args.rotate:
        parts.append("--rotate")
    if args.n_jobs != 1:
        parts += ["--n-jobs", str(args.n_jobs)]
    if args.blas_threads != 1:
        parts += ["--blas-threads", str(args.blas_threads)]
    parts += ["--out", str(args.out)]
    return " ".join(parts)


def _cmd_bench(args) -> int:
    from rmtclean.demo import CAUTION

    config = config_from_args(args)
    out = Path(args.out)
    start = time.perf_counter()
    run = run_benchmark(
        config,
        out / "results.jsonl",
        n_jobs=args.n_jobs,
        progress=not args.no_progress,
    )
    written = write_report(run, out, command=_command_line(args))
    seconds = time.perf_counter() - start
    print(
        f"{len(run.rows)} cells ({run.n_computed} computed, {run.n_reused} read "
        f"back from {out / 'results.jsonl'}) in {seconds:.1f} s."
    )
    for path in written.values():
        print(f"  wrote {path}")
    print()
    print(CAUTION)
    return 0
