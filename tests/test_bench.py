"""The benchmark runner: grid structure, oracle bounds, resume, CLI."""

from __future__ import annotations

import json
import math
from collections import Counter
from dataclasses import replace

import numpy as np
import pytest

from rmtclean.bench import (
    METRICS,
    ORACLE,
    SAMPLE,
    BenchConfig,
    available_cleaners,
    format_markdown,
    load_results,
    plan_cells,
    run_benchmark,
    summarize,
)
from rmtclean.cli import main
from rmtclean.demo import CAUTION
from rmtclean.estimators import CLEANERS
from rmtclean.metrics import prial

# The quick grid at a tiny size: every design, ratio and cleaner of --quick.
TINY = BenchConfig.quick(sizes=(30,), repeats=4, seed=11)
# Cleaners that return the sample covariance itself (divisors T - 1 and T).
SAMPLE_LIKE = (SAMPLE, "sk.Empirical")
KEY = ("design", "n_features", "ratio", "rep", "cleaner")


def _key(row):
    return tuple(row[k] for k in KEY)


@pytest.fixture(scope="module")
def tiny_run():
    return run_benchmark(TINY)


def _by_cell(rows):
    cells = {}
    for row in rows:
        cells.setdefault((row["design"], row["ratio"], row["cleaner"]), []).append(row)
    for group in cells.values():
        group.sort(key=lambda r: r["rep"])
    return cells


def test_every_cell_present_once(tiny_run):
    planned = plan_cells(TINY)
    keys = [_key(r) for r in tiny_run.rows]
    assert len(keys) == len(set(keys)) == len(planned)
    assert set(keys) == {_key(c) for c in planned}
    # every draw was scored by every cleaner of the quick grid
    names = set(TINY.cleaner_specs())
    assert {ORACLE, SAMPLE} <= names
    draws = Counter((r["design"], r["ratio"], r["rep"]) for r in tiny_run.rows)
    n_draws = len(TINY.designs) * len(TINY.ratios) * TINY.repeats
    assert len(draws) == n_draws
    assert set(draws.values()) == {len(names)}
    assert tiny_run.n_computed == len(planned) and tiny_run.n_reused == 0


def test_metrics_are_finite_except_for_a_singular_sample(tiny_run):
    failed = [(r["cleaner"], r["status"]) for r in tiny_run.rows if r["status"] != "ok"]
    assert failed == []
    for row in tiny_run.rows:
        assert math.isfinite(row["frobenius"]), row
        if row["cleaner"] != ORACLE:
            assert row["fit_seconds"] > 0, row
            # the quick grid measures memory on the first repetition only
            if row["rep"] < TINY.memory_repeats:
                assert row["peak_mib"] >= 0, row
            else:
                assert math.isnan(row["peak_mib"]), row
        singular = row["cleaner"] in SAMPLE_LIKE and row["n_features"] >= (
            row["n_samples"] - 1
        )
        for name in ("stein", "min_variance", "condition"):
            # the runner's documented convention for a singular estimate
            assert (row[name] == math.inf) if singular else math.isfinite(row[name])
        assert (
            (row["loglik"] == -math.inf) if singular else math.isfinite(row["loglik"])
        )


def test_oracle_not_beaten_beyond_monte_carlo_error(tiny_run):
    # Ledoit & Wolf (2012, Ann. Statist. 40(2)) [memory]: U diag(u' Sigma u) U'
    # minimises the Frobenius loss over estimates with the sample eigenvectors.
    # A cleaner with other eigenvectors (split samples, graphical lasso) could
    # beat it, but not on average by more than Monte Carlo error.
    cells = _by_cell(tiny_run.rows)
    for (design, ratio, cleaner), rows in cells.items():
        oracle = [r["frobenius"] for r in cells[(design, ratio, ORACLE)]]
        diff = np.array([r["frobenius"] for r in rows]) - np.array(oracle)
        se = diff.std(ddof=1) / math.sqrt(diff.size)
        assert diff.mean() >= -3 * se - 1e-12, (design, ratio, cleaner, diff)


def test_sample_covariance_never_better_than_oracle(tiny_run):
    # Per draw, not just on average: the sample covariance has the sample
    # eigenvectors, so the oracle's optimality (Ledoit & Wolf 2012) applies exactly.
    cells = _by_cell(tiny_run.rows)
    for (design, ratio, cleaner), rows in cells.items():
        if cleaner not in SAMPLE_LIKE:
            continue
        oracle = cells[(design, ratio, ORACLE)]
        for row, ref in zip(rows, oracle, strict=True):
            assert row["frobenius"] >= ref["frobenius"] * (1 - 1e-12), (row, ref)


def test_summary_means_and_prial(tiny_run):
    summary = summarize(tiny_run.rows)
    assert len(summary) == len(TINY.designs) * len(TINY.ratios) * len(
        TINY.cleaner_specs()
    )
    cells = _by_cell(tiny_run.rows)
    for entry in summary:
        rows = cells[(entry["design"], entry["ratio"], entry["cleaner"])]
        assert entry["n_reps"] == TINY.repeats
        # [computed] mean and standard error recomputed from the rows
        values = np.array([r["frobenius"] for r in rows])
        assert entry["frobenius"] == pytest.approx(values.mean(), rel=1e-12)
        assert entry["frobenius_se"] == pytest.approx(
            values.std(ddof=1) / math.sqrt(values.size), rel=1e-12
        )
        # [computed] PRIAL as the ratio of mean losses (Ledoit & Wolf 2012)
        sample = [
            r["frobenius"] for r in cells[(entry["design"], entry["ratio"], SAMPLE)]
        ]
        oracle = [
            r["frobenius"] for r in cells[(entry["design"], entry["ratio"], ORACLE)]
        ]
        assert entry["prial"] == pytest.approx(prial(values, sample, oracle), abs=1e-9)
    by_name = {(e["design"], e["ratio"], e["cleaner"]): e for e in summary}
    for design in TINY.designs:
        for ratio in TINY.ratios:
            assert by_name[(design, ratio, ORACLE)]["prial"] == pytest.approx(100.0)
            assert by_name[(design, ratio, SAMPLE)]["prial"] == pytest.approx(0.0)


def test_memory_measured_on_the_first_repetitions_only(tiny_run):
    # BenchConfig.quick() traces memory on rep 0 only; the summary averages
    # the measured values and shows where the column comes from.
    assert TINY.memory_repeats == 1
    summary = summarize(tiny_run.rows)
    cells = _by_cell(tiny_run.rows)
    for entry in summary:
        if entry["cleaner"] == ORACLE:
            assert math.isnan(entry["peak_mib"])
            continue
        (first, *_) = cells[(entry["design"], entry["ratio"], entry["cleaner"])]
        assert entry["peak_mib"] == pytest.approx(first["peak_mib"], rel=1e-12)
        assert math.isnan(entry["peak_mib_se"])
        assert entry["n_reps"] == TINY.repeats
    text = format_markdown(summary, TINY)
    assert "traced numpy memory of a fit (first repetition only)." in text
    every = replace(TINY, memory_repeats=None)
    assert "memory of a fit." in format_markdown(summary, every)
    with pytest.raises(ValueError, match="memory_repeats"):
        replace(TINY, memory_repeats=0)


def test_prial_standard_error_is_the_delta_method():
    # [computed] delta-method SE of a ratio of paired means, by hand
    est = np.array([1.0, 2.0, 1.5, 1.2])
    sample = np.array([4.0, 5.0, 4.5, 4.1])
    oracle = np.array([0.5, 1.0, 0.8, 0.7])
    rows = []
    for name, losses in ((ORACLE, oracle), (SAMPLE, sample), ("x", est)):
        for rep, loss in enumerate(losses):
            row = {"design": "d", "n_features": 10, "ratio": 1.0, "rep": rep}
            row.update(cleaner=name, status="ok", n_samples=10)
            row.update({m: 1.0 for m in METRICS}, frobenius=loss)
            rows.append(row)
    entry = next(e for e in summarize(rows) if e["cleaner"] == "x")
    a, b = sample - est, sample - oracle
    r = a.mean() / b.mean()
    expected = 100 * np.std(a - r * b, ddof=1) / np.sqrt(4) / b.mean()
    assert entry["prial"] == pytest.approx(100 * r, rel=1e-12)
    assert entry["prial_se"] == pytest.approx(expected, rel=1e-12)


def test_markdown_has_every_row_and_the_caution(tiny_run):
    text = format_markdown(summarize(tiny_run.rows), TINY, command="rmtclean bench")
    assert CAUTION in text
    for design in TINY.designs:
        assert f"## {design}" in text
    table_rows = [line for line in text.splitlines() if line.startswith("| 30 |")]
    assert len(table_rows) == len(TINY.designs) * len(TINY.ratios) * len(
        TINY.cleaner_specs()
    )


SMALL = BenchConfig(
    designs=("spiked", "identity"),
    sizes=(20,),
    ratios=(2.0,),
    repeats=2,
    cleaners=("sk.LedoitWolf", "LinearShrink"),
    measure_memory=False,
    seed=5,
)


def test_resume_computes_no_cell_twice(tmp_path):
    path = tmp_path / "results.jsonl"
    subset = replace(SMALL, designs=("spiked",), cleaners=("sk.LedoitWolf",))
    first = run_benchmark(subset, path)
    assert first.n_computed == len(plan_cells(subset)) and first.n_reused == 0
    first_lines = path.read_text().splitlines()
    # an interrupt in the middle of a write leaves half a line
    with path.open("a") as fh:
        fh.write('{"design": "spiked", "n_fea')
    full = run_benchmark(SMALL, path)
    n_full = len(plan_cells(SMALL))
    assert full.n_reused == len(first_lines)
    assert full.n_computed == n_full - len(first_lines)
    lines = path.read_text().splitlines()
    assert lines[: len(first_lines)] == first_lines  # first run's rows untouched
    rows = load_results(path)
    assert len(rows) == n_full  # the torn line is skipped, nothing duplicated
    assert len({_key(r) for r in rows}) == n_full
    again = run_benchmark(SMALL, path)
    assert again.n_computed == 0 and again.n_reused == n_full
    # rows read back equal the rows computed, timings included
    np.testing.assert_array_equal(
        [r["fit_seconds"] for r in again.rows], [r["fit_seconds"] for r in full.rows]
    )


def test_results_do_not_depend_on_order_or_parallelism():
    # A draw's data depend only on the seed and its coordinates.
    serial = run_benchmark(SMALL)
    one = run_benchmark(replace(SMALL, designs=("identity",)))
    parallel = run_benchmark(SMALL, n_jobs=2)
    ref = {_key(r): r["frobenius"] for r in serial.rows}
    assert {_key(r): r["frobenius"] for r in parallel.rows} == ref
    for row in one.rows:
        assert row["frobenius"] == ref[_key(row)]


def test_config_rejects_bad_values():
    with pytest.raises(ValueError, match="'designs' parameter of BenchConfig"):
        BenchConfig(designs=("nope",))
    with pytest.raises(ValueError, match="'sizes' parameter of BenchConfig"):
        BenchConfig(sizes=(4,))
    with pytest.raises(ValueError, match="'ratios' parameter of BenchConfig"):
        BenchConfig(ratios=(0.0,))
    with pytest.raises(ValueError, match="'repeats' parameter of BenchConfig"):
        BenchConfig(repeats=0)
    with pytest.raises(ValueError, match="'cleaners' parameter of BenchConfig"):
        BenchConfig(cleaners=("nope",)).cleaner_specs()
    with pytest.raises(ValueError, match="'n_jobs' parameter of run_benchmark"):
        run_benchmark(SMALL, n_jobs=0)


def test_registry_holds_baselines_and_every_registered_cleaner():
    names = list(available_cleaners())
    assert names[:5] == [ORACLE, SAMPLE, "sk.Empirical", "sk.LedoitWolf", "sk.OAS"]
    # The library's cleaners follow the baselines, in the registry's order.
    assert names[-len(CLEANERS) :] == [entry.name for entry in CLEANERS]


def test_cli_bench_quick_end_to_end(tmp_path, capsys):
    out = tmp_path / "bench-out"
    # --quick with a tiny size and fewer points, to keep the test fast
    argv = ["bench", "--quick", "--sizes", "24", "--ratios", "0.5,2", "--repeats"]
    argv += ["2", "--designs", "spiked,mixture", "--out", str(out), "--no-progress"]
    code = main(argv)
    printed = capsys.readouterr().out
    assert code == 0
    assert CAUTION in printed
    summary = (out / "summary.md").read_text()
    assert CAUTION in summary
    assert "rmtclean bench --quick --designs spiked,mixture --sizes 24" in summary
    rows = load_results(out / "results.jsonl")
    n_cleaners = len(BenchConfig.quick().cleaner_specs())
    assert len(rows) == 2 * 2 * 2 * n_cleaners
    for name in ("prial.png", "shrinkage.png", "spectrum.png"):
        assert (out / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    for name in ("summary.csv", "results.csv"):
        assert (out / name).stat().st_size > 0
    assert main(argv) == 0  # resumed: nothing left to compute
    assert "(0 computed," in capsys.readouterr().out


def test_cli_bench_reports_bad_options(tmp_path, capsys):
    code = main(["bench", "--designs", "nope", "--out", str(tmp_path)])
    assert code == 1
    # The CLI names its own flag, not the library's parameter.
    err = capsys.readouterr().err
    assert "--designs must list names among" in err and "'nope'" in err
    assert "BenchConfig" not in err


def test_jsonl_round_trips_infinities(tmp_path):
    rows = run_benchmark(
        replace(SMALL, ratios=(0.5,), designs=("spiked",)), tmp_path / "r.jsonl"
    ).rows
    back = load_results(tmp_path / "r.jsonl")
    sample = [r for r in back if r["cleaner"] == SAMPLE]
    assert sample and all(r["stein"] == math.inf for r in sample)
    assert all(r["loglik"] == -math.inf for r in sample)
    for line in (tmp_path / "r.jsonl").read_text().splitlines():
        # strict JSON: no bare Infinity or NaN tokens
        json.loads(line, parse_constant=lambda token: pytest.fail(token))
    assert len(back) == len(rows)


def test_thread_limit_is_restored():
    import numba

    from rmtclean.bench import limit_threads

    before = numba.get_num_threads()
    with pytest.raises(RuntimeError), limit_threads(1):
        assert numba.get_num_threads() == 1
        raise RuntimeError("inside")
    assert numba.get_num_threads() == before


def test_sample_covariance_reference_matches_numpy_and_scipy():
    # The PRIAL reference: np.cov's T - 1 divisor, and the precision equal to
    # scipy.linalg.pinvh of it (numpy / scipy as reference libraries).
    import scipy.linalg

    from rmtclean.bench import SampleCovariance

    rng = np.random.default_rng(3)
    X = rng.standard_normal((40, 12)) @ rng.standard_normal((12, 12))
    est = SampleCovariance().fit(X)
    np.testing.assert_allclose(est.covariance_, np.cov(X, rowvar=False), rtol=1e-12)
    ref = scipy.linalg.pinvh(est.covariance_)
    np.testing.assert_allclose(
        est.precision_, ref, rtol=1e-9, atol=1e-12 * np.abs(ref).max()
    )
    wide = rng.standard_normal((8, 12))  # rank 7: the pseudo-inverse
    est = SampleCovariance().fit(wide)
    ref = scipy.linalg.pinvh(est.covariance_)
    np.testing.assert_allclose(
        est.precision_, ref, rtol=1e-8, atol=1e-10 * np.abs(ref).max()
    )
