"""Fit time of every cleaner, as ratios to the eigendecomposition it needs.

For each N and T/N the script times, interleaved and repeated:

- the reference of the route a fit takes: ``np.cov`` + ``np.linalg.eigh``
  when N <= T (dense route) or the thin SVD of the T x N data when N > T
  (gram route, ``scipy.linalg.svd(full_matrices=False)``);
- scikit-learn's ``LedoitWolf().fit``;
- ``fit`` of each of rmtclean's estimators importable from the package.

It prints medians, the ratio of each fit to the reference and to
LedoitWolf, and how fit time grows with N: the least-squares slope of
log(time) on log(N) at each T/N (about 3 for an O(N^3) eigendecomposition).
rmtclean's estimators form ``precision_`` on first access, so each fit is
followed by that access, timed apart: the column ``+ precision_`` is the
ratio of fit plus first access to the reference (the median of the sums).

Run::

    python benchmarks/bench_speed.py            # N in {500, 2000}, T/N in {0.5, 2}
    python benchmarks/bench_speed.py --sizes 250,500,1000,2000 --repeats 5

The environment (CPU count, BLAS and its threads via threadpoolctl) is
printed first: ratios measured in one run on one machine are comparable,
absolute times are not. The JIT is warmed on small data before timing.
"""

from __future__ import annotations

import argparse
import os
import platform
import time

import numpy as np
import scipy
import scipy.linalg
import sklearn
from sklearn.covariance import LedoitWolf
from threadpoolctl import threadpool_info, threadpool_limits

import rmtclean
from rmtclean.estimators import CLEANERS


def estimators() -> dict:
    """name -> zero-argument constructor, for each importable cleaner."""
    out = {"sk.LedoitWolf": LedoitWolf}
    for entry in CLEANERS:
        cls = entry.cls
        if "random_state" in cls().get_params():
            out[entry.name] = lambda cls=cls: cls(random_state=0)
        else:
            out[entry.name] = cls
    return out


def reference(X: np.ndarray) -> None:
    """The decomposition a fit's route needs (auto route rule)."""
    n_rows, n_features = X.shape
    if n_features > n_rows:
        scipy.linalg.svd(X - X.mean(axis=0), full_matrices=False)
    else:
        np.linalg.eigh(np.cov(X, rowvar=False))


def print_environment() -> None:
    print(
        f"python {platform.python_version()}  numpy {np.__version__}  scipy "
        f"{scipy.__version__}  scikit-learn {sklearn.__version__}  rmtclean "
        f"{rmtclean.__version__}"
    )
    print(f"machine {platform.machine()}, os.cpu_count() = {os.cpu_count()}")
    for pool in threadpool_info():
        print(
            f"  threadpool {pool['user_api']}/{pool['internal_api']}: "
            f"{pool['num_threads']} threads, {pool.get('architecture', '')} "
            f"{pool.get('version', '')}  {os.path.basename(pool['filepath'])}"
        )
    print()


def warm(methods: dict, rng) -> None:
    """Fit each cleaner once on small data of both shapes (JIT, caches)."""
    for shape in ((80, 40), (40, 80)):
        X = rng.standard_normal(shape)
        for make in methods.values():
            make().fit(X)


def time_cell(methods: dict, X: np.ndarray, repeats: int) -> tuple[dict, dict]:
    """Median wall times on X, runs interleaved with the order rotated.

    Returns the medians of each fit (and of the reference) and the medians
    of fit plus the first ``precision_`` access of the fitted estimator.
    """
    calls = {"reference": lambda: reference(X)}
    for name, make in methods.items():
        calls[name] = lambda make=make: make().fit(X)
    names = list(calls)
    times = {name: [] for name in names}
    with_precision = {name: [] for name in methods}
    for rep in range(repeats):
        shift = rep % len(names)
        for name in names[shift:] + names[:shift]:
            start = time.perf_counter()
            fitted = calls[name]()
            elapsed = time.perf_counter() - start
            times[name].append(elapsed)
            if name in with_precision:
                start = time.perf_counter()
                fitted.get_precision()  # forms precision_ on first access
                with_precision[name].append(elapsed + time.perf_counter() - start)
    med = {name: float(np.median(t)) for name, t in times.items()}
    return med, {name: float(np.median(t)) for name, t in with_precision.items()}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="500,2000", help="comma-separated N")
    parser.add_argument("--ratios", default="0.5,2", help="comma-separated T/N")
    parser.add_argument("--repeats", type=int, default=3, help="timed runs per fit")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument(
        "--threads", type=int, default=None, help="limit BLAS/OpenMP threads"
    )
    args = parser.parse_args(argv)
    sizes = [int(s) for s in args.sizes.split(",")]
    ratios = [float(r) for r in args.ratios.split(",")]
    with threadpool_limits(limits=args.threads):
        print_environment()
        rng = np.random.default_rng(args.seed)
        methods = estimators()
        warm(methods, rng)
        results = {}
        for ratio in ratios:
            for n in sizes:
                t = max(int(round(ratio * n)), 3)
                X = rng.standard_normal((t, n))
                med, full = time_cell(methods, X, args.repeats)
                results[(ratio, n)] = med
                route = "gram: thin SVD of X" if n > t else "dense: np.cov + eigh"
                print(
                    f"N = {n}, T = {t} (T/N = {ratio:g}); reference ({route}) "
                    f"{med['reference']:.3f} s, sk.LedoitWolf "
                    f"{med['sk.LedoitWolf']:.3f} s"
                )
                print(
                    f"  {'cleaner':<18}{'median s':>10}{'/ reference':>13}{'/ LW':>8}"
                    f"{'+ precision_':>14}"
                )
                for name in methods:
                    print(
                        f"  {name:<18}{med[name]:>10.3f}"
                        f"{med[name] / med['reference']:>13.2f}"
                        f"{med[name] / med['sk.LedoitWolf']:>8.2f}"
                        f"{full[name] / med['reference']:>14.2f}"
                    )
                print()
        if len(sizes) > 1:
            print("log-log slope of fit time against N (least squares over sizes)")
            names = ["reference", *methods]
            print(f"  {'T/N':<6}" + "".join(f"{name:>17}" for name in names))
            logn = np.log(sizes)
            for ratio in ratios:
                slopes = [
                    np.polyfit(
                        logn, np.log([results[(ratio, n)][name] for n in sizes]), 1
                    )[0]
                    for name in names
                ]
                print(f"  {ratio:<6g}" + "".join(f"{s:>17.2f}" for s in slopes))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
