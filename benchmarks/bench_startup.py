"""Start-up time of the ``rmtclean`` command and of ``import rmtclean``.

Every call of the command pays Python's start-up and the imports of the
package; the goal is ``rmtclean --help`` under 1 s on a warm machine. Each
command runs in a fresh interpreter (``subprocess``), the commands are
interleaved over the repetitions (so a busy period affects all alike), and
the table gives medians, the spread and the ratio to a bare ``python -c
pass``. ``--checkout DIR [DIR ...]`` times copies of the project (e.g. an
older commit unpacked with ``git archive``) through ``PYTHONPATH``,
interleaved with each other.

    python benchmarks/bench_startup.py --repeats 7
    git archive 188de78 | tar -x -C /tmp/before
    python benchmarks/bench_startup.py --checkout /tmp/before .
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

COMMANDS = {
    "python -c pass": ["-c", "pass"],
    "import rmtclean": ["-c", "import rmtclean"],
    "import rmtclean (+ a class)": ["-c", "import rmtclean; rmtclean.KernelShrink"],
    "rmtclean --version": ["-m", "rmtclean.cli", "--version"],
    "rmtclean --help": ["-m", "rmtclean.cli", "--help"],
    "rmtclean clean --help": ["-m", "rmtclean.cli", "clean", "--help"],
    "rmtclean bench --help": ["-m", "rmtclean.cli", "bench", "--help"],
}


def _time(args: list[str], env: dict, cwd: Path) -> float:
    """Wall time of one run; NaN if the command fails (e.g. an older checkout)."""
    start = time.perf_counter()
    done = subprocess.run(
        [sys.executable, *args],
        env=env,
        cwd=cwd,  # "-c" and "-m" put the working folder first on sys.path
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        check=False,
    )
    seconds = time.perf_counter() - start
    return seconds if done.returncode == 0 else float("nan")


def _setup() -> None:
    print(f"python {platform.python_version()} on {platform.platform()}")
    print(f"cpus: {os.cpu_count()}  load average: {os.getloadavg()}")
    try:
        from threadpoolctl import threadpool_info

        pools = {(p["internal_api"], p["num_threads"]) for p in threadpool_info()}
        print(f"thread pools of this process: {sorted(pools) or 'none loaded'}")
    except ImportError:
        print("thread pools: threadpoolctl not installed")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--repeats", type=int, default=7, help="timed runs per command (default 7)"
    )
    parser.add_argument(
        "--checkout",
        type=Path,
        nargs="+",
        default=[ROOT],
        help="project copies to time, interleaved (default: this one)",
    )
    args = parser.parse_args(argv)
    _setup()
    checkouts = [c.resolve() for c in args.checkout]
    envs = {c: dict(os.environ, PYTHONPATH=str(c)) for c in checkouts}
    runs = [(c, name) for name in COMMANDS for c in checkouts]
    for c, name in runs:  # warm-up: file cache, numba's cache on disk
        _time(COMMANDS[name], envs[c], c)
    times = {run: [] for run in runs}
    for _ in range(args.repeats):
        for c, name in runs:
            times[(c, name)].append(_time(COMMANDS[name], envs[c], c))
    for c in checkouts:
        print(f"\ncheckout: {c}")
        base = statistics.median(times[(c, "python -c pass")])
        print(f"{'command':<30}{'median s':>10}{'min s':>8}{'max s':>8}{'x bare':>8}")
        for name in COMMANDS:
            values = times[(c, name)]
            if any(v != v for v in values):
                print(f"{name:<30}{'fails in this checkout':>34}")
                continue
            med = statistics.median(values)
            print(
                f"{name:<30}{med:>10.3f}{min(values):>8.3f}{max(values):>8.3f}"
                f"{med / base:>8.1f}"
            )
        help_s = statistics.median(times[(c, "rmtclean --help")])
        verdict = "meets" if help_s < 1.0 else "misses"
        print(f"rmtclean --help: {help_s:.3f} s median, {verdict} the 1 s goal")
    if len(checkouts) > 1:
        first = statistics.median(times[(checkouts[0], "rmtclean --help")])
        for c in checkouts[1:]:
            other = statistics.median(times[(c, "rmtclean --help")])
            print(f"--help: {c.name} / {checkouts[0].name} = {other / first:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
