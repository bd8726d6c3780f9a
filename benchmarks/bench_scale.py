"""Scale benchmarks: N >> T on the gram route, and tall data on dask.

Part 1 (gram route): N = 20,000 features, T = 200 samples. Prints the fit
time of a cleaner as a ratio to the thin SVD of X (goal: at most 1.5x), the
peak resident memory of the whole process (goal: under 1.5 GB) and checks
that ``score`` on held-out rows runs without an N x N matrix.

Part 2 (dask): T = 2,000,000 rows, N = 200, generated lazily in chunks and
fitted from the dask array in a child process, whose peak resident memory
is printed (goal: under 1 GB), with its throughput in rows per second beside
the in-memory numpy fit of T = 200,000 rows.

Run: ``python benchmarks/bench_scale.py`` (about two minutes on 2 cores);
``--part gram`` or ``--part dask`` for one part.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import time

import numpy as np


def _env() -> None:
    import numba
    import threadpoolctl

    print(f"python {sys.version.split()[0]}, numpy {np.__version__}")
    print(f"numba threads: {numba.get_num_threads()}")
    for info in threadpoolctl.threadpool_info():
        print(
            f"  {info.get('internal_api')}: {info.get('num_threads')} threads, "
            f"{info.get('filepath', '').split('/')[-1]}"
        )


def _peak_rss_mb() -> float:
    # ru_maxrss is in kilobytes on Linux.
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def part_gram(args) -> None:
    import scipy.linalg

    import rmtclean

    rng = np.random.default_rng(args.seed)
    n, t = args.features, args.samples
    X = rng.standard_normal((t, n))
    X_test = rng.standard_normal((50, n))
    cls = getattr(rmtclean, args.cleaner)
    cls().fit(X[:, :500])  # warm the JIT on a small problem

    def svd():
        scipy.linalg.svd(X, full_matrices=False, check_finite=False)

    def fit():
        return cls().fit(X)

    times = {"svd": [], "fit": []}
    for _ in range(args.repeats):
        for name, fn in (("svd", svd), ("fit", fit)):
            start = time.perf_counter()
            est = fn()
            times[name].append(time.perf_counter() - start)
    med = {k: float(np.median(v)) for k, v in times.items()}
    start = time.perf_counter()
    score = est.score(X_test)
    score_time = time.perf_counter() - start
    print(f"\n[gram route] N = {n}, T = {t}, cleaner {args.cleaner}")
    print(f"  thin SVD of X:       median {med['svd']:.3f} s")
    print(f"  {args.cleaner}.fit:   median {med['fit']:.3f} s")
    print(f"  ratio fit / SVD:     {med['fit'] / med['svd']:.2f}  (goal <= 1.5)")
    print(f"  covariance_ stored:  {est.covariance_ is not None}")
    print(f"  score(50 held-out rows) = {score:.2f} in {score_time:.3f} s")
    print(f"  peak RSS of the process: {_peak_rss_mb():.0f} MB  (goal < 1500)")


_CHILD = r"""
import json, sys, time
import dask, dask.array as da, numpy as np
import rmtclean
rows, n, chunk, cleaner, seed = sys.argv[1:6]
rows, n, chunk, seed = int(rows), int(n), int(chunk), int(seed)
cls = getattr(rmtclean, cleaner)
cls().fit(np.random.default_rng(0).standard_normal((500, n)))  # warm the JIT
X = da.random.default_rng(seed).standard_normal((rows, n), chunks=(chunk, n))
with dask.config.set(scheduler="threads", num_workers=2):
    start = time.perf_counter()
    cls().fit(X)
    secs = time.perf_counter() - start
# VmHWM is this process's own high-water mark; ru_maxrss would also count the
# parent's peak, which Linux carries into a child across fork + exec.
with open("/proc/self/status") as fh:
    hwm = next(line for line in fh if line.startswith("VmHWM"))
peak = int(hwm.split()[1]) / 1024.0
print(json.dumps({"seconds": secs, "peak_mb": peak}))
"""


def part_dask(args) -> None:
    import rmtclean

    n = args.tall_features
    cls = getattr(rmtclean, args.cleaner)
    rng = np.random.default_rng(args.seed)
    X = rng.standard_normal((args.memory_rows, n))
    cls().fit(X[:500])
    secs = []
    for _ in range(args.repeats):
        start = time.perf_counter()
        cls().fit(X)
        secs.append(time.perf_counter() - start)
    mem_rate = args.memory_rows / float(np.median(secs))
    del X
    out = subprocess.run(
        [
            sys.executable,
            "-c",
            _CHILD,
            str(args.tall_rows),
            str(n),
            str(args.chunk_rows),
            args.cleaner,
            str(args.seed),
        ],
        check=True,
        capture_output=True,
        text=True,
    )
    child = json.loads(out.stdout.strip().splitlines()[-1])
    dask_rate = args.tall_rows / child["seconds"]
    raw_mb = args.tall_rows * n * 8 / 2**20
    print(f"\n[dask] N = {n}, cleaner {args.cleaner}")
    print(
        f"  numpy in memory, T = {args.memory_rows:,}: "
        f"{mem_rate:,.0f} rows/s (median of {args.repeats})"
    )
    print(
        f"  dask chunked,    T = {args.tall_rows:,} ({raw_mb:,.0f} MB of data, "
        f"chunks of {args.chunk_rows:,} rows): {dask_rate:,.0f} rows/s "
        f"in {child['seconds']:.1f} s"
    )
    print(f"  peak RSS of the dask process: {child['peak_mb']:.0f} MB  (goal < 1024)")


def _cleaner_name(text: str) -> str:
    from rmtclean.estimators import find_cleaner

    return find_cleaner(text).name


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=["gram", "dask", "all"], default="all")
    parser.add_argument(
        "--cleaner",
        default="kernel",
        type=_cleaner_name,
        help="the cleaner: a short name, class name or alias (default kernel)",
    )
    parser.add_argument("--features", type=int, default=20_000)
    parser.add_argument("--samples", type=int, default=200)
    parser.add_argument("--tall-rows", type=int, default=2_000_000)
    parser.add_argument("--tall-features", type=int, default=200)
    parser.add_argument("--chunk-rows", type=int, default=50_000)
    parser.add_argument("--memory-rows", type=int, default=200_000)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args(argv)
    _env()
    if args.part in ("gram", "all"):
        part_gram(args)
    if args.part in ("dask", "all"):
        part_dask(args)


if __name__ == "__main__":
    main()
