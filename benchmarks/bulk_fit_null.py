"""Kolmogorov-Smirnov distance of the bulk fit on pure noise (the warning level).

``rmtclean.analyze_spectrum`` warns that the Marchenko-Pastur law does not
describe a spectrum when the Kolmogorov-Smirnov distance of its bulk fit
exceeds ``max(0.1, 4 / m)`` for ``m`` fitted eigenvalues. This script draws
demeaned Gaussian white noise at several sizes (T, N), fits the law to the
whole spectrum with the ratio fixed (:func:`rmtclean.spectrum.fit_bulk`) and
prints the median, 95% quantile and maximum of the distance with the warning
level beside it: under the null the level must sit above every draw.

Run::

    python benchmarks/bulk_fit_null.py --reps 40 --seed 0

Result of that command (one BLAS thread; 7 s on the 2-core machine)::

         T     N     m   median     q95      max   level
        60    10    10   0.1233  0.1780   0.2183  0.4000
       100    20    20   0.0760  0.1052   0.1170  0.2000
       750    49    49   0.0384  0.0450   0.0488  0.1000
     13118    49    49   0.0399  0.0550   0.0563  0.1000
       185   500   184   0.0128  0.0159   0.0185  0.1000
      1000   200   200   0.0119  0.0152   0.0172  0.1000
       500   300   300   0.0088  0.0110   0.0127  0.1000
        50   100    49   0.0372  0.0458   0.0487  0.1000

Reading: the level is at least twice the largest null distance at every
size, so a warning means a misfit, not bad luck; the real panels of the
tests sit far above it (French 49 industries: 0.30 at T = 750, 0.42-0.48 at
T = 13,118; tissue expression 0.14-0.17).
"""

from __future__ import annotations

import argparse
import platform
import sys
import time
from pathlib import Path

import numpy as np
import scipy
from threadpoolctl import threadpool_info, threadpool_limits

from rmtclean.spectrum import fit_bulk
from rmtclean.spectrum._report import fit_warning_level

sys.path.insert(0, str(Path(__file__).resolve().parent))

from edge_false_alarm import noise_spectrum  # noqa: E402

SIZES = [
    (60, 10),
    (100, 20),
    (750, 49),
    (13118, 49),
    (185, 500),
    (1000, 200),
    (500, 300),
    (50, 100),
]


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--reps", type=int, default=40, help="draws per size")
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args(argv)
    print(f"python {platform.python_version()}, numpy {np.__version__}, ", end="")
    print(f"scipy {scipy.__version__}")
    for pool in threadpool_info():
        print(f"  {pool['internal_api']}: {pool['num_threads']} threads")
    rng = np.random.default_rng(args.seed)
    start = time.perf_counter()
    print(f"{'T':>6}{'N':>6}{'m':>6}{'median':>9}{'q95':>8}{'max':>9}{'level':>8}")
    with threadpool_limits(1):
        for n_rows, n_features in SIZES:
            stats, used = [], 0
            for _ in range(args.reps):
                values, dof = noise_spectrum(rng, n_rows, n_features, 1.0)
                fit = fit_bulk(values, dof, n_features)
                stats.append(fit.statistic)
                used = fit.n_used
            stats = np.array(stats)
            print(
                f"{n_rows:>6}{n_features:>6}{used:>6}{np.median(stats):>9.4f}"
                f"{np.quantile(stats, 0.95):>8.4f}{stats.max():>9.4f}"
                f"{fit_warning_level(used):>8.4f}"
            )
    print(f"{time.perf_counter() - start:.1f} s")


if __name__ == "__main__":
    main()
