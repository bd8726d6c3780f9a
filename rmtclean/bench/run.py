"""Running the grid: thread limits, one draw's cells, the resumable runner.

All cleaners of a draw are fitted to the same samples (common random
numbers); finished draws are appended to the results file, and a rerun
computes only the cells the file does not hold.
"""

from __future__ import annotations

import json
import math
import sys
import time
import tracemalloc
import warnings
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from sklearn.base import clone

from rmtclean._validation import Interval, check_value
from rmtclean.bench.plan import METRICS, BenchConfig, _cell_key, draw, plan_cells
from rmtclean.bench.registry import CleanerSpec
from rmtclean.bench.store import _jsonable, _open_for_append, load_results
from rmtclean.metrics import (
    frobenius_loss,
    gaussian_log_likelihood,
    minimum_variance_loss,
    oracle_covariance,
    stein_loss,
)

__all__ = ["BenchRun", "limit_threads", "run_benchmark"]


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
                row.update(
                    _run_cell(
                        config,
                        specs[cell["cleaner"]],
                        truth,
                        X,
                        X_test,
                        measure_memory=_measures_memory(config, cell["rep"]),
                    )
                )
            except Exception as exc:  # a failing cleaner must not stop the grid
                row["status"] = f"error: {type(exc).__name__}: {exc}"[:300]
        if caught:  # kept in the results instead of flooding the terminal
            first = caught[0]
            row["warning"] = f"{first.category.__name__}: {first.message}"[:300]
        rows.append(row)
    return rows


def _measures_memory(config: BenchConfig, rep: int) -> bool:
    """Whether the cells of repetition ``rep`` get a traced memory refit."""
    if not config.measure_memory:
        return False
    return config.memory_repeats is None or rep < config.memory_repeats


def _run_cell(
    config, spec: CleanerSpec, truth, X, X_test, *, measure_memory: bool = True
) -> dict:
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
    if measure_memory:
        out["peak_mib"] = _peak_mib(lambda: clone(prototype).fit(X))
    return out


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
    BLAS/LAPACK allocate internally is not traced; NaN on the repetitions
    ``config.memory_repeats`` leaves out). A singular estimate
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
