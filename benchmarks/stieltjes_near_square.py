# ruff: noqa: E501 (the docstring holds the output tables verbatim)
"""StieltjesShrink near N = T - 1: Frobenius loss against the sample covariance.

Prints, per design (pure noise ``identity``; Ledoit & Wolf's 1/3/10
``mixture``) and sample size T, the mean Frobenius loss
``||Sigma^ - Sigma||_F^2 / N`` (``rmtclean.metrics.frobenius_loss``) and
its Monte Carlo standard error over repetitions, for the sample covariance
(divisor T - 1), the oracle (``rmtclean.metrics.oracle_covariance``),
``StieltjesShrink()`` (relative width, the default), ``StieltjesShrink(
width="uniform")`` (the published width) and ``KernelShrink()``. Data are
Gaussian and demeaned (n = T - 1 degrees of freedom), so T = N is the case
N = n + 1 with one null direction. Seeds: the design and the samples of a
cell come from ``np.random.default_rng(seed)``.

Command (about 1 minute on 2 shared cores, one BLAS/numba thread)::

    python benchmarks/stieltjes_near_square.py --n-features 100 --reps 10

Output at commit f813a9a (before: null value from mbar at -i eta, no width
floor), run from an archive of that commit on PYTHONPATH, same command,
2 shared cores under load (only the losses matter here)::

    | design | T | N/n | sample | oracle | relative | uniform | kernel |
    |---|---|---|---|---|---|---|---|
    | identity | 50 | 2.041 | 2.072 ± 0.025 | 3.524e-31 ± 2.8e-32 | 0.0233 ± 0.0022 | 0.05342 ± 0.0058 | 0.02836 ± 0.0022 |
    | identity | 98 | 1.031 | 1.031 ± 0.014 | 8.991e-31 ± 2.6e-31 | 3.956 ± 0.032 | 3.627 ± 0.029 | 0.02207 ± 0.0029 |
    | identity | 99 | 1.020 | 1.02 ± 0.012 | 3.14e-30 ± 1.6e-30 | 6.283 ± 0.058 | 5.767 ± 0.043 | 0.02308 ± 0.0034 |
    | identity | 100 | 1.010 | 1.01 ± 0.012 | 1.57e-30 ± 8.1e-31 | 13.24 ± 0.16 | 12.13 ± 0.14 | 0.02501 ± 0.0022 |
    | identity | 101 | 1.000 | 1.001 ± 0.011 | 4.811e-30 ± 2e-31 | 0.09171 ± 0.0025 | 0.009141 ± 0.00088 | 0.02512 ± 0.0024 |
    | identity | 102 | 0.990 | 0.9951 ± 0.0088 | 4.655e-30 ± 1.9e-31 | 0.0844 ± 0.0032 | 0.01423 ± 0.0038 | 0.02018 ± 0.0031 |
    | identity | 110 | 0.917 | 0.9179 ± 0.0071 | 4.754e-30 ± 1.2e-31 | 0.04984 ± 0.0023 | 0.009757 ± 0.002 | 0.02441 ± 0.0025 |
    | identity | 200 | 0.503 | 0.5014 ± 0.0052 | 4.847e-30 ± 1.1e-31 | 0.007982 ± 0.0004 | 0.003089 ± 0.00029 | 0.005723 ± 0.00037 |
    | identity | 400 | 0.251 | 0.2527 ± 0.0018 | 4.895e-30 ± 1.3e-31 | 0.003964 ± 0.00021 | 0.001584 ± 0.00013 | 0.002239 ± 0.00014 |
    | mixture | 50 | 2.041 | 60.84 ± 0.9 | 11.25 ± 0.036 | 12.32 ± 0.097 | 14.15 ± 0.21 | 12.34 ± 0.14 |
    | mixture | 98 | 1.031 | 30.28 ± 0.47 | 8.937 ± 0.051 | 117.6 ± 1.3 | 111.5 ± 1.1 | 9.608 ± 0.054 |
    | mixture | 99 | 1.020 | 29.94 ± 0.47 | 8.862 ± 0.062 | 176.3 ± 1.9 | 167.7 ± 1.6 | 9.589 ± 0.067 |
    | mixture | 100 | 1.010 | 29.62 ± 0.43 | 8.821 ± 0.056 | 357.4 ± 4.5 | 333.8 ± 4.4 | 9.55 ± 0.078 |
    | mixture | 101 | 1.000 | 29.21 ± 0.44 | 8.772 ± 0.048 | 10.15 ± 0.073 | 9.874 ± 0.098 | 9.451 ± 0.048 |
    | mixture | 102 | 0.990 | 29.1 ± 0.43 | 8.744 ± 0.041 | 10.01 ± 0.07 | 9.853 ± 0.076 | 9.407 ± 0.058 |
    | mixture | 110 | 0.917 | 26.79 ± 0.31 | 8.467 ± 0.046 | 9.281 ± 0.049 | 9.379 ± 0.063 | 8.991 ± 0.056 |
    | mixture | 200 | 0.503 | 14.51 ± 0.21 | 5.69 ± 0.067 | 6.045 ± 0.077 | 6.143 ± 0.061 | 5.985 ± 0.074 |
    | mixture | 400 | 0.251 | 7.292 ± 0.057 | 3.012 ± 0.03 | 3.286 ± 0.035 | 3.313 ± 0.029 | 3.154 ± 0.034 |

Output after the fix (null value with mbar(0) on the real axis, hard-edge
width floor)::

    | design | T | N/n | sample | oracle | relative | uniform | kernel |
    |---|---|---|---|---|---|---|---|
    | identity | 50 | 2.041 | 2.072 ± 0.025 | 3.524e-31 ± 2.8e-32 | 0.02798 ± 0.0027 | 0.05874 ± 0.0068 | 0.02836 ± 0.0022 |
    | identity | 98 | 1.031 | 1.031 ± 0.014 | 8.991e-31 ± 2.6e-31 | 0.01328 ± 0.002 | 0.01491 ± 0.0025 | 0.02207 ± 0.0029 |
    | identity | 99 | 1.020 | 1.02 ± 0.012 | 3.14e-30 ± 1.6e-30 | 0.0121 ± 0.0017 | 0.013 ± 0.0014 | 0.02308 ± 0.0034 |
    | identity | 100 | 1.010 | 1.01 ± 0.012 | 1.57e-30 ± 8.1e-31 | 0.0131 ± 0.0021 | 0.01449 ± 0.0021 | 0.02501 ± 0.0022 |
    | identity | 101 | 1.000 | 1.001 ± 0.011 | 4.811e-30 ± 2e-31 | 0.008378 ± 0.00065 | 0.009141 ± 0.00088 | 0.02512 ± 0.0024 |
    | identity | 102 | 0.990 | 0.9951 ± 0.0088 | 4.655e-30 ± 1.9e-31 | 0.0141 ± 0.0044 | 0.01423 ± 0.0038 | 0.02018 ± 0.0031 |
    | identity | 110 | 0.917 | 0.9179 ± 0.0071 | 4.754e-30 ± 1.2e-31 | 0.009644 ± 0.0018 | 0.009757 ± 0.002 | 0.02441 ± 0.0025 |
    | identity | 200 | 0.503 | 0.5014 ± 0.0052 | 4.847e-30 ± 1.1e-31 | 0.007982 ± 0.0004 | 0.003089 ± 0.00029 | 0.005723 ± 0.00037 |
    | identity | 400 | 0.251 | 0.2527 ± 0.0018 | 4.895e-30 ± 1.3e-31 | 0.003964 ± 0.00021 | 0.001584 ± 0.00013 | 0.002239 ± 0.00014 |
    | mixture | 50 | 2.041 | 60.84 ± 0.9 | 11.25 ± 0.036 | 12.51 ± 0.12 | 14.23 ± 0.24 | 12.34 ± 0.14 |
    | mixture | 98 | 1.031 | 30.28 ± 0.47 | 8.937 ± 0.051 | 9.525 ± 0.057 | 9.918 ± 0.097 | 9.608 ± 0.054 |
    | mixture | 99 | 1.020 | 29.94 ± 0.47 | 8.862 ± 0.062 | 9.534 ± 0.083 | 9.949 ± 0.1 | 9.589 ± 0.067 |
    | mixture | 100 | 1.010 | 29.62 ± 0.43 | 8.821 ± 0.056 | 9.445 ± 0.068 | 9.819 ± 0.1 | 9.55 ± 0.078 |
    | mixture | 101 | 1.000 | 29.21 ± 0.44 | 8.772 ± 0.048 | 9.377 ± 0.064 | 9.874 ± 0.098 | 9.451 ± 0.048 |
    | mixture | 102 | 0.990 | 29.1 ± 0.43 | 8.744 ± 0.041 | 9.414 ± 0.074 | 9.853 ± 0.076 | 9.407 ± 0.058 |
    | mixture | 110 | 0.917 | 26.79 ± 0.31 | 8.467 ± 0.046 | 8.962 ± 0.048 | 9.379 ± 0.063 | 8.991 ± 0.056 |
    | mixture | 200 | 0.503 | 14.51 ± 0.21 | 5.69 ± 0.067 | 6.043 ± 0.076 | 6.143 ± 0.061 | 5.985 ± 0.074 |
    | mixture | 400 | 0.251 | 7.292 ± 0.057 | 3.012 ± 0.03 | 3.286 ± 0.035 | 3.313 ± 0.029 | 3.154 ± 0.034 |
"""

from __future__ import annotations

import argparse
import math

import numpy as np
from threadpoolctl import threadpool_info, threadpool_limits

from rmtclean._kernels import numba_threads
from rmtclean.estimators import KernelShrink, StieltjesShrink
from rmtclean.metrics import frobenius_loss, oracle_covariance
from rmtclean.synthetic import make_design


def cleaners():
    return {
        "relative": lambda X: StieltjesShrink().fit(X).covariance_,
        "uniform": lambda X: StieltjesShrink(width="uniform").fit(X).covariance_,
        "kernel": lambda X: KernelShrink().fit(X).covariance_,
    }


def cell(design_name, n_features, T, reps, seed):
    rng = np.random.default_rng(seed)
    design = make_design(design_name, n_features, random_state=rng)
    truth = design.covariance
    fits = cleaners()
    losses = {k: [] for k in ["sample", "oracle", *fits]}
    for _ in range(reps):
        X = design.sample(T, random_state=rng)
        losses["sample"].append(frobenius_loss(np.cov(X, rowvar=False), truth))
        losses["oracle"].append(frobenius_loss(oracle_covariance(X, truth), truth))
        for name, fit in fits.items():
            losses[name].append(frobenius_loss(fit(X), truth))
    return {
        k: (float(np.mean(v)), float(np.std(v, ddof=1) / math.sqrt(len(v))))
        for k, v in losses.items()
    }


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n-features", type=int, default=100)
    parser.add_argument("--reps", type=int, default=10)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--designs", default="identity,mixture")
    args = parser.parse_args(argv)
    N = args.n_features
    sizes = [N // 2, N - 2, N - 1, N, N + 1, N + 2, int(1.1 * N), 2 * N, 4 * N]
    with threadpool_limits(1), numba_threads(1):
        for info in threadpool_info():
            print(
                f"# {info['internal_api']} {info['version']}: "
                f"{info['num_threads']} thread(s)"
            )
        print(
            f"# N = {N}, {args.reps} repetitions, seed {args.seed}, Gaussian, "
            "demeaned (n = T - 1)"
        )
        header = None
        for design in args.designs.split(","):
            for T in sizes:
                res = cell(design, N, T, args.reps, args.seed)
                if header is None:
                    header = ["design", "T", "N/n", *res]
                    print("| " + " | ".join(header) + " |")
                    print("|" + "---|" * len(header))
                row = [design, str(T), f"{N / (T - 1):.3f}"]
                row += [f"{m:.4g} ± {s:.2g}" for m, s in res.values()]
                print("| " + " | ".join(row) + " |", flush=True)


if __name__ == "__main__":
    main()
