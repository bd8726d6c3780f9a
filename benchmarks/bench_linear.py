"""Fit time of LinearShrink against scikit-learn's LedoitWolf, and of EigenClip.

Prints, in one run on the same data (a made-up factor model, fixed seed):

- ``LinearShrink().fit`` against ``sklearn.covariance.LedoitWolf().fit``
  (both with their default ``store_precision=True``, and both with
  ``store_precision=False``): median times, the ratio sklearn / rmtclean
  (goal at the defaults: at least 5), and the largest absolute difference of
  ``covariance_`` (and of ``precision_``, ``shrinkage_``);
- the structured targets of LinearShrink, for information;
- ``EigenClip().fit`` against ``np.cov`` + ``np.linalg.eigh`` on the same
  data: the ratio EigenClip / reference (goal: at most 1.15), skipped when
  ``rmtclean.EigenClip`` is not available. The fit forms ``precision_`` on
  first access, so the ratio of a fit followed by that access is printed too.

Runs are interleaved (each repeat times every case once, in a rotated
order) and medians are reported, so a change in machine load hits all cases
alike.

Run::

    python benchmarks/bench_linear.py            # N = 2000, T = 4000
    python benchmarks/bench_linear.py --n-features 500 --n-samples 1000 --repeats 7
    python benchmarks/bench_linear.py --threads 1   # one BLAS thread
"""

from __future__ import annotations

import argparse
import platform
import time
from pprint import pprint

import numpy as np
import scipy
import sklearn
from sklearn.covariance import LedoitWolf
from threadpoolctl import threadpool_info, threadpool_limits

from rmtclean import LinearShrink


def make_data(n_samples: int, n_features: int, seed: int) -> np.ndarray:
    """Returns of a made-up market: 5 factors plus idiosyncratic noise."""
    rng = np.random.default_rng(seed)
    loadings = rng.standard_normal((n_features, 5)) * [3.0, 1.5, 1.0, 0.8, 0.5]
    factors = rng.standard_normal((n_samples, 5))
    noise = rng.standard_normal((n_samples, n_features)) * rng.uniform(
        0.5, 2.0, n_features
    )
    return 0.01 * (factors @ loadings.T + noise) + 1e-3


def timed(fn) -> tuple[float, object]:
    start = time.perf_counter()
    out = fn()
    return time.perf_counter() - start, out


def run_interleaved(cases: dict, repeats: int) -> tuple[dict, dict]:
    """Median time of each case over ``repeats`` rounds; the last result of each."""
    names = list(cases)
    times = {name: [] for name in names}
    results = {}
    for r in range(repeats):
        order = names[r % len(names) :] + names[: r % len(names)]
        for name in order:
            elapsed, results[name] = timed(cases[name])
            times[name].append(elapsed)
    return {name: float(np.median(v)) for name, v in times.items()}, results


def eigen_reference(X: np.ndarray):
    return np.linalg.eigh(np.cov(X.T))


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n-features", type=int, default=2000, help="N")
    parser.add_argument("--n-samples", type=int, default=4000, help="T")
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument(
        "--threads", type=int, default=None, help="limit BLAS/OpenMP threads"
    )
    args = parser.parse_args(argv)
    with threadpool_limits(limits=args.threads):
        run(args)


def run(args) -> None:

    print("threadpool_info():")
    pprint(threadpool_info())
    print(
        f"python {platform.python_version()}, numpy {np.__version__}, "
        f"scipy {scipy.__version__}, scikit-learn {sklearn.__version__}"
    )
    N, T = args.n_features, args.n_samples
    print(f"N={N} T={T} repeats={args.repeats} seed={args.seed}\n")
    X = make_data(T, N, args.seed)

    # Warm up imports, BLAS threads and caches on a small problem.
    small = X[: min(T, 200), : min(N, 100)]
    LinearShrink().fit(small)
    LedoitWolf().fit(small)
    eigen_reference(small)

    cases = {
        "LinearShrink": lambda: LinearShrink().fit(X),
        "LedoitWolf": lambda: LedoitWolf().fit(X),
        "LinearShrink(store_precision=False)": lambda: LinearShrink(
            store_precision=False
        ).fit(X),
        "LedoitWolf(store_precision=False)": lambda: LedoitWolf(
            store_precision=False
        ).fit(X),
        "LinearShrink(target='diagonal')": lambda: LinearShrink(target="diagonal").fit(
            X
        ),
        "LinearShrink(target='constant-correlation')": lambda: LinearShrink(
            target="constant-correlation"
        ).fit(X),
    }
    try:
        from rmtclean import EigenClip
    except ImportError:
        EigenClip = None
        print("rmtclean.EigenClip is not available: its comparison is skipped.\n")
    if EigenClip is not None:
        EigenClip().fit(small)
        cases["EigenClip"] = lambda: EigenClip().fit(X)
        cases["EigenClip + first precision_"] = lambda: EigenClip().fit(X).precision_
        cases["np.cov + np.linalg.eigh"] = lambda: eigen_reference(X)

    med, res = run_interleaved(cases, args.repeats)
    width = max(len(k) for k in med)
    print("median fit time (s)")
    for name, value in med.items():
        print(f"  {name:<{width}}  {value:8.3f}")

    ours, ref = res["LinearShrink"], res["LedoitWolf"]
    no_prec = "(store_precision=False)"
    cov_diff = np.abs(ours.covariance_ - ref.covariance_).max()
    prec_diff = np.abs(ours.precision_ - ref.precision_).max()
    print("\nLinearShrink vs sklearn LedoitWolf (same data)")
    print(
        "  speed-up, defaults (store_precision=True): "
        f"{med['LedoitWolf'] / med['LinearShrink']:6.2f}x   (goal >= 5)"
    )
    print(
        "  speed-up, store_precision=False:           "
        f"{med['LedoitWolf' + no_prec] / med['LinearShrink' + no_prec]:6.2f}x"
    )
    print(
        f"  max |covariance_ difference|: {cov_diff:.3e}"
        f"  (largest entry {np.abs(ref.covariance_).max():.3e})"
    )
    print(
        f"  max |precision_ difference|: {prec_diff:.3e}"
        f"  (largest entry {np.abs(ref.precision_).max():.3e})"
    )
    print(f"  |shrinkage_ difference|: {abs(ours.shrinkage_ - ref.shrinkage_):.3e}")
    for name in (
        "LinearShrink(target='diagonal')",
        "LinearShrink(target='constant-correlation')",
    ):
        print(f"  {name}: {med[name] / med['LedoitWolf']:5.2f} x LedoitWolf time")

    if EigenClip is not None:
        ratio = med["EigenClip"] / med["np.cov + np.linalg.eigh"]
        print("\nEigenClip vs np.cov + np.linalg.eigh (same data)")
        print(f"  time ratio EigenClip / reference: {ratio:5.2f}   (goal <= 1.15)")
        full = med["EigenClip + first precision_"] / med["np.cov + np.linalg.eigh"]
        print(f"  with the first precision_ access:  {full:5.2f}")


if __name__ == "__main__":
    main()
