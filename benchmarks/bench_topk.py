"""Cleaners whose bulk is one value: eigenvectors for the top of the spectrum only.

EigenClip and SpikeShrink give every bulk eigenvalue one value, so the
cleaned matrix ``c I + V_k diag(d_k - c) V_k'`` needs the eigenvectors of
the ``k`` signal eigenvalues only. This script times, interleaved and
repeated, at one N and T:

- the reference ``np.cov`` + ``np.linalg.eigh`` (all eigenvectors);
- ``fit`` of EigenClip and SpikeShrink with ``eigen_solver="partial"`` (the
  default: one reduction to tridiagonal form, all eigenvalues, the top
  eigenvectors back-transformed) and ``"full"`` (every eigenvector);
- the eigen-solvers alone on the sample covariance, for the top ``k``
  eigenvectors and all eigenvalues: one ``dsytrd`` + ``dsterf`` + selected
  vectors of the tridiagonal matrix + ``dormqr`` back-transformation
  (rmtclean's TridiagonalEigh), against ``scipy.linalg.eigh`` called twice
  (``eigvals_only`` for all eigenvalues, then ``subset_by_index`` with the
  ``evr`` or ``evx`` driver: two reductions), and ``np.linalg.eigh``.

A second table (``--shapes``) times the randomized route
(``eigen_solver="randomized"``: randomized subspace iteration on the data,
no N x N or T x T matrix; Halko, Martinsson & Tropp 2011) against the
partial route, for EigenClip with ``n_keep`` set to the planted count and
SpikeShrink with the noise variance given (1), and prints its error against
the partial route: the largest entry of the covariance difference over the
largest entry of the covariance, the same in Frobenius norm, the largest
relative error of the kept eigenvalues, and the difference of the mean
log-likelihood on the data.

Run::

    python benchmarks/bench_topk.py --threads 1
    python benchmarks/bench_topk.py --threads 2 --n-features 2000 --n-samples 4000

It prints the BLAS/thread setup first, then medians and ratios to the
reference. The data have ``--spikes`` planted signal directions (variances
``--spike-range``, from 6 down to 3 by default, noise variance 1), so the
rules keep about that many.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np
import scipy
import scipy.linalg
from threadpoolctl import threadpool_limits

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_speed import print_environment  # noqa: E402

from rmtclean import EigenClip, SpikeShrink  # noqa: E402
from rmtclean.spectrum._partial import TridiagonalEigh  # noqa: E402


def spiked(rng, n_samples, n_features, n_spikes, top=6.0, bottom=3.0) -> np.ndarray:
    sd = np.ones(n_features)
    sd[:n_spikes] = np.sqrt(np.linspace(top, bottom, n_spikes))
    return rng.standard_normal((n_samples, n_features)) * sd


def reference(X):
    return np.linalg.eigh(np.cov(X, rowvar=False))


def tridiagonal_top(S, k):
    eig = TridiagonalEigh(S)
    return eig.eigenvalues, eig.leading(k)


def scipy_twice(S, k, driver):
    n = S.shape[0]
    vals = scipy.linalg.eigh(S, eigvals_only=True, check_finite=False)
    _, vecs = scipy.linalg.eigh(
        S, subset_by_index=(n - k, n - 1), driver=driver, check_finite=False
    )
    return vals, vecs


def timed(calls: dict, repeats: int) -> dict:
    """Median wall time of each call, runs interleaved with the order rotated."""
    names = list(calls)
    times = {name: [] for name in names}
    for rep in range(repeats):
        shift = rep % len(names)
        for name in names[shift:] + names[:shift]:
            start = time.perf_counter()
            calls[name]()
            times[name].append(time.perf_counter() - start)
    return {name: float(np.median(t)) for name, t in times.items()}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--n-features", type=int, default=2000, help="0 skips the first table"
    )
    parser.add_argument("--n-samples", type=int, default=4000)
    parser.add_argument("--spikes", type=int, default=10)
    parser.add_argument(
        "--spike-range",
        default="6,3",
        help="largest,smallest planted variance (noise variance 1)",
    )
    parser.add_argument("--repeats", type=int, default=5, help="timed runs each")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument(
        "--shapes",
        default="2000x4000,1000x20000",
        help="comma-separated NxT for the randomized table ('' to skip)",
    )
    parser.add_argument(
        "--threads", type=int, default=None, help="limit BLAS/OpenMP threads"
    )
    args = parser.parse_args(argv)
    with threadpool_limits(limits=args.threads):
        print_environment()
        rng = np.random.default_rng(args.seed)
        for make in (EigenClip, SpikeShrink):  # warm the JIT and caches
            make().fit(spiked(rng, 80, 40, 3))
        top, bottom = (float(v) for v in args.spike_range.split(","))
        if args.n_features:
            partial_table(rng, args, top, bottom)
        for shape in filter(None, args.shapes.split(",")):
            n, t = (int(v) for v in shape.lower().split("x"))
            randomized_table(spiked(rng, t, n, args.spikes, top, bottom), args)
    return 0


def partial_table(rng, args, top: float, bottom: float) -> None:
    """The partial and full routes against np.cov + eigh, and the solvers alone."""
    X = spiked(rng, args.n_samples, args.n_features, args.spikes, top, bottom)
    S = np.cov(X, rowvar=False)
    k = EigenClip().fit(X).n_signal_
    n, t = args.n_features, args.n_samples
    print(f"N = {n}, T = {t}, {args.spikes} planted spikes, EigenClip keeps {k}")
    calls = {
        "np.cov + np.linalg.eigh": lambda: reference(X),
        "EigenClip partial": lambda: EigenClip().fit(X),
        "EigenClip full": lambda: EigenClip(eigen_solver="full").fit(X),
        "SpikeShrink partial": lambda: SpikeShrink().fit(X),
        "SpikeShrink full": lambda: SpikeShrink(eigen_solver="full").fit(X),
        "np.linalg.eigh (S)": lambda: np.linalg.eigh(S),
        "eigvalsh (S)": lambda: scipy.linalg.eigh(S, eigvals_only=True),
        "sytrd+sterf+top k+ormqr": lambda: tridiagonal_top(S, k),
        "eigh twice, evr": lambda: scipy_twice(S, k, "evr"),
        "eigh twice, evx": lambda: scipy_twice(S, k, "evx"),
    }
    med = timed(calls, args.repeats)
    ref = med["np.cov + np.linalg.eigh"]
    print(f"  {'':<26}{'median s':>10}{'/ reference':>13}")
    for name, value in med.items():
        print(f"  {name:<26}{value:>10.3f}{value / ref:>13.2f}")
    print()


def randomized_table(X, args) -> None:
    """Partial against randomized route: times and the randomized error."""
    t, n = X.shape
    makers = {
        "EigenClip(n_keep)": lambda solver: EigenClip(
            n_keep=args.spikes, eigen_solver=solver
        ),
        "SpikeShrink(s2=1)": lambda solver: SpikeShrink(
            noise_variance=1.0, eigen_solver=solver
        ),
    }
    calls = {"np.cov + np.linalg.eigh": lambda: reference(X)}
    for name, make in makers.items():
        for solver in ("partial", "randomized"):
            calls[f"{name} {solver}"] = lambda make=make, s=solver: make(s).fit(X)
    med = timed(calls, args.repeats)
    ref = med["np.cov + np.linalg.eigh"]
    print(
        f"Randomized route: N = {n}, T = {t}, {args.spikes} planted spikes "
        f"(variances {args.spike_range})"
    )
    print(f"  {'':<30}{'median s':>10}{'/ reference':>13}{'/ partial':>11}")
    for name, value in med.items():
        partial = med.get(name.replace("randomized", "partial"), np.nan)
        print(f"  {name:<30}{value:>10.3f}{value / ref:>13.2f}{value / partial:>11.2f}")
    print(
        f"  {'error of randomized':<22}{'max entry':>12}{'Frobenius':>12}"
        f"{'eigenvalues':>13}{'score diff':>12}{'k':>5}"
    )
    for name, make in makers.items():
        exact, fast = make("partial").fit(X), make("randomized").fit(X)
        diff = fast.covariance_ - exact.covariance_
        k = exact.n_signal_
        top = np.abs(fast.eigenvalues_[:k] / exact.eigenvalues_[:k] - 1.0).max()
        print(
            f"  {name:<22}"
            f"{np.abs(diff).max() / np.abs(exact.covariance_).max():>12.1e}"
            f"{np.linalg.norm(diff) / np.linalg.norm(exact.covariance_):>12.1e}"
            f"{top:>13.1e}{abs(fast.score(X) - exact.score(X)):>12.1e}{k:>5}"
        )
    print()


if __name__ == "__main__":
    raise SystemExit(main())
