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

The names below are imported from their modules on first use, so listing
the cleaners and the grid's defaults (``rmtclean bench --help``) loads
neither scikit-learn nor the runner.
"""

import importlib

#: Public name -> the module of the package that defines it.
_HOMES = {
    "METRICS": "plan",
    "BenchConfig": "plan",
    "draw": "plan",
    "n_samples_for": "plan",
    "plan_cells": "plan",
    "GRAPHICAL_LASSO_MAX_FEATURES": "registry",
    "ORACLE": "registry",
    "SAMPLE": "registry",
    "CleanerSpec": "registry",
    "available_cleaners": "registry",
    "SampleCovariance": "_sample",
    "format_markdown": "report",
    "shrinkage_curves": "report",
    "write_report": "report",
    "BenchRun": "run",
    "limit_threads": "run",
    "run_benchmark": "run",
    "summarize": "stats",
    "load_results": "store",
}

__all__ = sorted(_HOMES, key=lambda name: (not name.isupper(), name))


def __getattr__(name: str):
    if name not in _HOMES:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{_HOMES[name]}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
