"""The grid of a benchmark run: its configuration, cells and seeded draws.

A *draw* is a (design, N, ratio, repetition) with its training and held-out
samples; a *cell* is a (draw, cleaner) pair, one row of the results.
"""

from __future__ import annotations

import math
import zlib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from rmtclean._validation import Interval, check_value
from rmtclean.bench.registry import ORACLE, SAMPLE, CleanerSpec, available_cleaners
from rmtclean.synthetic import DESIGNS, DISTRIBUTIONS, make_design

__all__ = ["METRICS", "BenchConfig", "draw", "n_samples_for", "plan_cells"]

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
    memory_repeats : int or None
        Measure the peak memory on the first ``memory_repeats`` repetitions
        only (``None``: on all). The traced refit costs 2-3 plain fits and
        the memory of a fit depends on the shape (N, T), hardly on the draw:
        on the quick grid its standard error over three draws was a median
        0.01% of the mean, at most 7% (192 cells). The other repetitions'
        rows hold NaN (not measured).
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
    memory_repeats: int | None = None

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
        check_value(
            self.memory_repeats,
            [None, Interval(int, 1, None)],
            "memory_repeats",
            _OWNER,
        )

    @classmethod
    def quick(cls, **changes) -> BenchConfig:
        """The ``--quick`` grid: four designs, N = 100, three repetitions.

        Every available cleaner but ``sk.GraphicalLasso``, whose Python-level
        coordinate descent takes over a second per fit under tracemalloc at
        N = 100 and would dominate the run. Peak memory is measured on the
        first repetition only (``memory_repeats=1``): the traced refits took
        two thirds of the grid's time (AutoShrink's alone 29 of 63 s), and
        memory varies little between draws of one shape.
        """
        cleaners = tuple(n for n in available_cleaners() if n != "sk.GraphicalLasso")
        base = cls(
            designs=("identity", "spiked", "mixture", "block-factor"),
            sizes=(100,),
            ratios=(0.5, 1.0, 2.0, 4.0),
            repeats=3,
            cleaners=cleaners,
            memory_repeats=1,
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
