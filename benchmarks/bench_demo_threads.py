"""``rmtclean demo`` on one BLAS thread against the default threads.

The demo runs hundreds of small eigendecompositions (300 x 300 at its
default size), where threaded BLAS gains nothing and its handoffs cost a
lot when another process holds a core. ``rmtclean demo`` therefore runs on
one BLAS thread up to 1000 assets (``rmtclean/cli.py``). This script times
:func:`rmtclean.demo.run_demo` both ways, interleaved over the repetitions
(a busy period hits both alike), and prints the medians and their ratio;
``--busy`` starts a process that spins on one core for the whole run, the
shared-machine case the choice is for.

    PYTHONPATH=$PWD python benchmarks/bench_demo_threads.py --repeats 3
    PYTHONPATH=$PWD python benchmarks/bench_demo_threads.py --repeats 3 --busy
"""

from __future__ import annotations

import argparse
import multiprocessing
import os
import statistics
import time
import warnings

from rmtclean.bench.run import limit_threads
from rmtclean.demo import run_demo


def _spin() -> None:  # pragma: no cover - runs in a child process
    while True:
        pass


def _time(n_threads, args) -> float:
    start = time.perf_counter()
    with limit_threads(n_threads):
        run_demo(n_assets=args.assets, n_days=args.days, random_state=7)
    return time.perf_counter() - start


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--assets", type=int, default=300)
    parser.add_argument("--days", type=int, default=500)
    parser.add_argument(
        "--busy", action="store_true", help="keep one core busy during the run"
    )
    args = parser.parse_args(argv)
    warnings.simplefilter("ignore")
    print(f"cores: {os.cpu_count()}, load average: {os.getloadavg()}")
    busy = None
    if args.busy:
        busy = multiprocessing.Process(target=_spin, daemon=True)
        busy.start()
    try:
        _time(1, args)  # warm-up: imports and numba compilation
        times: dict = {"one BLAS thread": [], "default threads": []}
        for _ in range(args.repeats):
            times["one BLAS thread"].append(_time(1, args))
            times["default threads"].append(_time(None, args))
    finally:
        if busy is not None:
            busy.terminate()
            busy.join()
    med = {k: statistics.median(v) for k, v in times.items()}
    print(f"\ndemo, {args.assets} assets x {args.days} days, busy core: {args.busy}")
    print("| BLAS threads | median s | all runs, s |")
    print("|---|---|---|")
    for name, values in times.items():
        runs = ", ".join(f"{v:.1f}" for v in values)
        print(f"| {name} | {med[name]:.1f} | {runs} |")
    ratio = med["default threads"] / med["one BLAS thread"]
    print(f"default / one thread: {ratio:.2f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
