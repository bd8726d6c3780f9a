"""Fit time of every cleaner on small wide panels (N = 7,000, T = 6 to 12).

Issue 14's goal: each fit under 2 s. Gaussian rows with one common factor
and log-normal column scales (``tests._registry.sample_data``); every cleaner
of the registry with its default parameters (N > 5,000: the gram route and
no dense N x N matrix). One untimed warm-up fit per cleaner loads the
compiled kernels; then the repetitions are interleaved (each repetition fits
every cleaner at every T once) and the table gives the median seconds and
the ratio to the 2 s goal.

The numbers in small_wide_likelihood.md come from

    PYTHONPATH=$PWD python benchmarks/bench_small_wide.py --repeats 7
"""

from __future__ import annotations

import argparse
import time
import warnings
from pprint import pprint

import numpy as np
from threadpoolctl import threadpool_info, threadpool_limits

from rmtclean.exceptions import RankDeficientWarning, WeakEstimateWarning
from tests._registry import cleaner_classes, make, sample_data

GOAL_SECONDS = 2.0


def run(args) -> None:
    print("threadpool_info():")
    pprint(threadpool_info())
    classes = cleaner_classes()
    data = {T: sample_data(T, T, args.n_features) for T in args.sizes}
    for cls in classes:  # warm-up: compiled kernels, first imports
        make(cls).fit(data[args.sizes[0]])
    times = {(cls.__name__, T): [] for cls in classes for T in args.sizes}
    for _ in range(args.repeats):
        for T in args.sizes:
            for cls in classes:
                start = time.perf_counter()
                make(cls).fit(data[T])
                times[cls.__name__, T].append(time.perf_counter() - start)
    print(
        f"\nN = {args.n_features}, {args.repeats} interleaved repetitions, "
        f"median fit seconds (goal < {GOAL_SECONDS:g} s)"
    )
    header = "".join(f"{f'T={T}':>10s}" for T in args.sizes)
    print(f"  {'cleaner':18s}{header}{'worst/goal':>12s}  goal")
    for cls in classes:
        name = cls.__name__
        medians = [float(np.median(times[name, T])) for T in args.sizes]
        worst = max(medians) / GOAL_SECONDS
        cells = "".join(f"{m:10.4f}" for m in medians)
        verdict = "PASS" if worst < 1.0 else "FAIL"
        print(f"  {name:18s}{cells}{worst:12.4f}  {verdict}")


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n-features", type=int, default=7000)
    parser.add_argument("--sizes", type=int, nargs="+", default=[6, 8, 10, 12])
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--threads", type=int, default=None)
    run_quietly(run, parser.parse_args(argv))


def run_quietly(run, args) -> None:
    """``run(args)`` with ``args.threads`` BLAS threads and the small-sample
    warnings silenced (small samples are the point of these benchmarks)."""
    with threadpool_limits(limits=args.threads), warnings.catch_warnings():
        warnings.simplefilter("ignore", WeakEstimateWarning)
        warnings.simplefilter("ignore", RankDeficientWarning)
        run(args)


if __name__ == "__main__":
    main()
