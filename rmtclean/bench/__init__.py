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

Modules: ``registry`` (the cleaners a run can use), ``plan`` (the grid, its
cells and draws), ``run`` (thread limits and the resumable runner),
``store`` (the JSON-lines results file), ``stats`` (means, standard errors,
PRIAL) and ``report`` (markdown, CSV and figures). The ``rmtclean bench``
command's arguments are parsed in :mod:`rmtclean.cli`.
"""

from rmtclean.bench.plan import (
    METRICS,
    BenchConfig,
    draw,
    n_samples_for,
    plan_cells,
)
from rmtclean.bench.registry import (
    GRAPHICAL_LASSO_MAX_FEATURES,
    ORACLE,
    SAMPLE,
    CleanerSpec,
    SampleCovariance,
    available_cleaners,
)
from rmtclean.bench.report import format_markdown, shrinkage_curves, write_report
from rmtclean.bench.run import BenchRun, limit_threads, run_benchmark
from rmtclean.bench.stats import summarize
from rmtclean.bench.store import load_results

__all__ = [
    "GRAPHICAL_LASSO_MAX_FEATURES",
    "METRICS",
    "ORACLE",
    "SAMPLE",
    "BenchConfig",
    "BenchRun",
    "CleanerSpec",
    "SampleCovariance",
    "available_cleaners",
    "draw",
    "format_markdown",
    "limit_threads",
    "load_results",
    "n_samples_for",
    "plan_cells",
    "run_benchmark",
    "shrinkage_curves",
    "summarize",
    "write_report",
]
