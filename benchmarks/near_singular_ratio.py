"""KernelShrink near N/T = 1: published formula vs the hard-edge floor.

Prints, per design, distribution and ratio N/n (n = T - 1 after demeaning),
the mean Frobenius loss ||Sigma^ - Sigma||_F^2 / N over repetitions of the
sample covariance, sklearn's LedoitWolf, kernel_shrink(formula="published"),
kernel_shrink(formula="stabilized") (the default) and the oracle
U diag(u_i' Sigma u_i) U'. The numbers in near_singular_ratio.md come from

    python benchmarks/near_singular_ratio.py --n-features 150 --reps 6
"""

from __future__ import annotations

import argparse

import numpy as np
from sklearn.covariance import LedoitWolf
from threadpoolctl import threadpool_limits

from rmtclean._kernels import numba_threads
from rmtclean.rules._kernel import kernel_shrink
from rmtclean.synthetic import make_design

RATIOS = [0.5, 0.8, 0.9, 0.95, 0.98, 1.0, 1.02, 1.05, 1.1, 1.25, 2.0]


def losses(design, T, dist, reps, seed):
    Sig = design.covariance
    N = design.n_features
    rng = np.random.default_rng(seed)
    out = np.zeros(5)
    for _ in range(reps):
        X = design.sample(
            T,
            distribution=dist,
            df=5 if dist == "student-t" else None,
            random_state=rng,
        )
        Xc = X - X.mean(0)
        n = T - 1
        U, s, _ = np.linalg.svd(Xc.T, full_matrices=False)
        m = min(N, n)
        lam, U = s[:m] ** 2 / n, U[:, :m]
        S = (U * lam) @ U.T
        out[0] += np.sum((S - Sig) ** 2) / N
        out[1] += np.sum((LedoitWolf().fit(X).covariance_ - Sig) ** 2) / N
        for k, formula in ((2, "published"), (3, "stabilized")):
            res = kernel_shrink(lam, n, N, formula=formula)
            E = (U * res.values) @ U.T
            if m < N:
                E += res.null_value * (np.eye(N) - U @ U.T)
            out[k] += np.sum((E - Sig) ** 2) / N
        oracle = np.einsum("ij,ij->j", U, Sig @ U)
        E = (U * oracle) @ U.T
        if m < N:
            P = np.eye(N) - U @ U.T
            E += np.trace(P @ Sig) / (N - m) * P
        out[4] += np.sum((E - Sig) ** 2) / N
    return out / reps


def main():
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--n-features", type=int, default=150)
    parser.add_argument("--reps", type=int, default=6)
    args = parser.parse_args()
    N = args.n_features
    designs = {
        "mixture 1/3/10": make_design("mixture", N),
        "AR(1) rho=0.5": make_design("toeplitz", N, rho=0.5),
        "AR(1) rho=0.9": make_design("toeplitz", N, rho=0.9),
    }
    print(
        "| design | data | N/n | T | sample | LedoitWolf | published | stabilized"
        " | oracle | stabilized/LW |"
    )
    print("|---|---|---|---|---|---|---|---|---|---|")
    for name, design in designs.items():
        for dist in ("gaussian", "student-t"):
            for i, c in enumerate(RATIOS):
                T = int(round(N / c)) + 1
                r = losses(design, T, dist, args.reps, seed=100 + i)
                label = "Gaussian" if dist == "gaussian" else "t5"
                print(
                    f"| {name} | {label} | {N / (T - 1):.3f} | {T} | {r[0]:.4f} | "
                    f"{r[1]:.4f} | {r[2]:.4f} | {r[3]:.4f} | {r[4]:.4f} | "
                    f"{r[3] / r[1]:.3f} |",
                    flush=True,
                )


if __name__ == "__main__":
    with threadpool_limits(1), numba_threads(1):  # small problems
        main()
