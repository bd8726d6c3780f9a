"""KernelShrink near N/T = 1 against sklearn's LedoitWolf, paired over draws.

For each design, distribution and ratio N/n (n = T - 1 after demeaning) the
script draws ``--reps`` samples and evaluates on each the same draw with
sklearn.covariance.LedoitWolf, kernel_shrink(formula="published"),
kernel_shrink(formula="stabilized") (the default) and the oracle
U diag(u_i' Sigma u_i) U'. It prints mean losses and the *paired*
differences (estimator minus LedoitWolf, draw by draw) with their standard
errors sd(diff) / sqrt(reps) and t = mean / SE, for the Frobenius loss
||Sigma^ - Sigma||_F^2 / N and the minimum-variance loss (Ledoit & Wolf
2017, Rev. Financial Stud. 30(12)):
[tr(E^-1 Sigma E^-1)/N] / [tr(E^-1)/N]^2 - 1 / [tr(Sigma^-1)/N].

Two further columns are *infeasible bounds* (they use Sigma): the convex
combination (1 - w) d_stabilized + w d_linear with the Ledoit-Wolf (2004)
linear shrinkage of the same eigenvalues and, per draw, the Frobenius-optimal
w in [0, 1], phased in by tau(N/n) -- "lin": tau = 1 - |N/n - 1|/0.2;
"plat": tau = 1 on |N/n - 1| <= 0.1, falling linearly to 0 at 0.2. They bound
what any data-driven weight for that combination could achieve.

The numbers in near_singular_ratio.md come from

    OMP_NUM_THREADS=1 python benchmarks/near_singular_ratio.py --reps 40
"""

from __future__ import annotations

import argparse
import math

import numpy as np
from sklearn.covariance import LedoitWolf
from threadpoolctl import threadpool_info, threadpool_limits

from rmtclean._kernels import numba_threads
from rmtclean.rules import linear_shrink
from rmtclean.rules._combine import plateau_phase
from rmtclean.rules._kernel import HARD_EDGE_ZONE, kernel_shrink
from rmtclean.synthetic import make_design

RATIOS = [0.8, 0.85, 0.9, 0.95, 0.98, 1.0, 1.02, 1.05, 1.1, 1.15, 1.2]
COLUMNS = ("LW", "published", "stabilized", "oracle", "comb*lin", "comb*plat")


def _phase_linear(ratio: float) -> float:
    return max(0.0, 1.0 - abs(ratio - 1.0) / HARD_EDGE_ZONE)


class _Losses:
    """Frobenius and MV losses of U diag(d) U' + d0 (I - U U') for one draw."""

    def __init__(self, oracle, null_trace, sigma_fro2, sigma_inv_trace, n_features):
        self.o, self.null_trace, self.N = oracle, null_trace, n_features
        self.fro2, self.inv_trace = sigma_fro2, sigma_inv_trace
        self.null_dim = n_features - oracle.size

    def frobenius(self, d, d0):
        v = d @ d - 2.0 * d @ self.o + self.fro2
        if self.null_dim:
            v += self.null_dim * d0 * d0 - 2.0 * d0 * self.null_trace
        return v / self.N

    def min_variance(self, d, d0):
        num, den = np.sum(self.o / d**2), np.sum(1.0 / d)
        if self.null_dim:
            num += self.null_trace / d0**2
            den += self.null_dim / d0
        return (num / self.N) / (den / self.N) ** 2 - self.N / self.inv_trace


def _optimal_weight(a, a0, b, b0, loss):
    """Frobenius-optimal w in [0, 1] for (1 - w) a + w b (uses Sigma)."""
    diff, resid = a - b, a - loss.o
    num, den = diff @ resid, diff @ diff
    if loss.null_dim:
        num += (a0 - b0) * (loss.null_dim * a0 - loss.null_trace)
        den += loss.null_dim * (a0 - b0) ** 2
    return min(max(num / den, 0.0), 1.0) if den > 0 else 0.0


def draw_losses(design, T, dist, reps, seed):
    """Per-draw (Frobenius, MV) losses of COLUMNS: array (reps, 2, 6)."""
    Sig = design.covariance
    N = design.n_features
    fro2, inv_trace = float(np.sum(Sig**2)), float(np.trace(np.linalg.inv(Sig)))
    rng = np.random.default_rng(seed)
    out = np.empty((reps, 2, len(COLUMNS)))
    n = T - 1
    ratio = N / n
    for r in range(reps):
        X = design.sample(
            T,
            distribution=dist,
            df=5 if dist == "student-t" else None,
            random_state=rng,
        )
        Xc = X - X.mean(0)
        U, s, _ = np.linalg.svd(Xc.T, full_matrices=False)
        m = min(N, n)
        lam, U = s[:m] ** 2 / n, U[:, :m]
        o = np.einsum("ij,ij->j", U, Sig @ U)
        loss = _Losses(o, float(np.trace(Sig)) - o.sum(), fro2, inv_trace, N)
        E = LedoitWolf().fit(X).covariance_
        Ei = np.linalg.inv(E)
        out[r, 0, 0] = np.sum((E - Sig) ** 2) / N
        out[r, 1, 0] = (np.trace(Ei @ Sig @ Ei) / N) / (np.trace(Ei) / N) ** 2 - (
            N / inv_trace
        )
        est = {}
        for formula in ("published", "stabilized"):
            res = kernel_shrink(lam, n, N, formula=formula)
            est[formula] = (res.values, res.null_value)
        null_oracle = loss.null_trace / loss.null_dim if loss.null_dim else None
        est["oracle"] = (o, null_oracle)
        a, a0 = est["stabilized"]
        lin = linear_shrink(
            lam, n, N, intensity="ledoit-wolf", squared_norms=np.sum(Xc**2, axis=1)
        )
        b, b0 = lin.values, lin.null_value
        w = _optimal_weight(a, a0, b, b0, loss)
        for name, phase in (("comb*lin", _phase_linear), ("comb*plat", plateau_phase)):
            t = phase(ratio) * w
            est[name] = (
                (1 - t) * a + t * b,
                None if a0 is None else (1 - t) * a0 + t * b0,
            )
        for k, name in enumerate(COLUMNS[1:], start=1):
            out[r, 0, k] = loss.frobenius(*est[name])
            out[r, 1, k] = loss.min_variance(*est[name])
    return out


def _paired(x, ref):
    diff = x - ref
    se = diff.std(ddof=1) / math.sqrt(diff.size)
    t = diff.mean() / se if se > 0 else 0.0
    return f"{diff.mean():+.4f} ({se:.4f}) {t:+.1f}"


def setup(description: str):
    """Parse the common options, print the thread pools; (args, designs)."""
    parser = argparse.ArgumentParser(description=description)
    parser.add_argument("--n-features", type=int, default=150)
    parser.add_argument("--reps", type=int, default=40)
    parser.add_argument("--seed", type=int, default=7)
    args = parser.parse_args()
    for pool in threadpool_info():
        print(f"# {pool['internal_api']} {pool.get('version')}: {pool['num_threads']}")
    N = args.n_features
    designs = {
        "mixture 1/3/10": make_design("mixture", N),
        "AR(1) rho=0.5": make_design("toeplitz", N, rho=0.5),
        "AR(1) rho=0.9": make_design("toeplitz", N, rho=0.9),
    }
    return args, designs


def cell_seed(seed: int, ratio_index: int, dist: str) -> int:
    """The seed of the draws of one cell (ratio RATIOS[ratio_index], dist)."""
    return seed + 1000 * ratio_index + (0 if dist == "gaussian" else 500)


def main():
    args, designs = setup(__doc__)
    N = args.n_features
    cells = []
    for name, design in designs.items():
        for dist in ("gaussian", "student-t"):
            for i, c in enumerate(RATIOS):
                T = int(round(N / c)) + 1
                seed = cell_seed(args.seed, i, dist)
                loss = draw_losses(design, T, dist, args.reps, seed)
                cells.append(
                    (name, "Gaussian" if dist == "gaussian" else "t5", T, loss)
                )
    for j, title in enumerate(("Frobenius", "minimum-variance")):
        print(
            f"\n{title} loss, N = {N}, {args.reps} draws per row; paired "
            "differences vs LW: mean (SE) t\n"
        )
        print(
            "| design | data | N/n | "
            + " | ".join(COLUMNS)
            + " | stab - LW | pub - LW | comb*lin - LW | comb*plat - LW |"
        )
        print("|---" * (3 + len(COLUMNS) + 4) + "|")
        for name, label, T, loss in cells:
            L = loss[:, j, :]
            means = " | ".join(f"{v:.4f}" for v in L.mean(0))
            diffs = " | ".join(_paired(L[:, k], L[:, 0]) for k in (2, 1, 4, 5))
            print(
                f"| {name} | {label} | {N / (T - 1):.3f} | {means} | {diffs} |",
                flush=True,
            )


if __name__ == "__main__":
    with threadpool_limits(1), numba_threads(1):  # small problems
        main()
