"""The demo: every cleaner runs and the oracle bounds them all."""

import numpy as np

from rmtclean.cli import main
from rmtclean.demo import CAUTION, run_demo
from rmtclean.estimators import CLEANERS


def test_demo_scores_every_cleaner_and_the_oracle_is_best():
    result = run_demo(n_assets=40, n_days=90, random_state=3)
    names = [row[0] for row in result.rows]
    for name in [*(entry.name for entry in CLEANERS), "sk.LedoitWolf"]:
        assert name in names
    losses = np.array([row[1] for row in result.rows])
    assert np.all(np.isfinite(losses)) and np.all(losses > 0)
    # Every cleaner here keeps the sample eigenvectors, and the oracle
    # U diag(u_i' Sigma u_i) U' minimises the Frobenius loss over that class
    # (Ledoit & Wolf 2012, Ann. Statist. 40(2); from memory), so no row can
    # beat it beyond rounding.
    assert np.all(losses[1:] >= losses[0] * (1 - 1e-9))
    assert "Frobenius loss" in str(result)
    # AutoShrink's row says what it chose and by which score; its loss is
    # the chosen cleaner's
    (note,) = result.notes
    assert note.startswith("AutoShrink: chosen by held-out loglik over 5 folds: ")
    assert note in str(result)
    chosen = note.split(": ")[2].split(" (")[0]
    loss = dict((row[0], row[1]) for row in result.rows)
    assert loss["AutoShrink"] == loss[chosen]


def test_demo_command_prints_report_table_and_caution(capsys):
    assert main(["demo", "--assets", "40", "--days", "90", "--seed", "2"]) == 0
    out = capsys.readouterr().out
    assert "KernelShrink" in out and "oracle" in out
    # the report's count is set against the planted factors in one line
    line = next(x for x in out.splitlines() if x.startswith("Planted factors: 11;"))
    assert "found by the report:" in line
    assert CAUTION in out


def test_demo_and_bench_share_one_vocabulary():
    from rmtclean.bench import available_cleaners
    from rmtclean.metrics import TERMS

    result = run_demo(n_assets=30, n_days=60, random_state=1)
    names = [row[0] for row in result.rows]
    assert names[:2] == ["oracle", "sample"]
    assert set(names) <= set(available_cleaners())
    text = str(result)
    for word in ("loss ratio", "oracle", "sample"):
        assert TERMS[word] in text
    # The loss ratio column: each loss over the sample covariance's.
    sample = result.rows[1][1]
    table = text.splitlines()[2 : 2 + len(result.rows)]
    for line, row in zip(table, result.rows, strict=True):
        assert line.split()[0] == row[0]
        assert float(line.split()[2]) == float(f"{row[1] / sample:.3f}")
