"""The ``rmtclean clean`` and ``rmtclean analyze`` commands."""

import json
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

from rmtclean.cli import main
from rmtclean.demo import CAUTION
from rmtclean.estimators import LinearShrink


@pytest.fixture
def returns_csv(tmp_path, rng):
    T, N = 120, 8
    factor = rng.standard_normal((T, 1))
    values = 0.01 * (rng.standard_normal((T, N)) + 0.5 * factor)
    idx = pd.date_range("2024-01-01", periods=T, freq="D", name="date")
    frame = pd.DataFrame(values, index=idx, columns=[f"S{j}" for j in range(N)])
    path = tmp_path / "returns.csv"
    frame.to_csv(path)
    return path, frame


def _run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _one_line_error(code, err):
    assert code == 1
    assert err.startswith("rmtclean ") and "error:" in err
    assert err.count("\n") == 1


def test_clean_writes_the_labelled_covariance(returns_csv, tmp_path, capsys):
    path, frame = returns_csv
    out = tmp_path / "cov.csv"
    code, stdout, _ = _run(
        ["clean", path, "--method", "linearshrink", "--out", out], capsys
    )
    assert code == 0
    got = pd.read_csv(out, index_col=0)
    assert list(got.columns) == list(got.index) == list(frame.columns)
    ref = LinearShrink().fit(frame.to_numpy()).covariance_
    np.testing.assert_allclose(got.to_numpy(), ref, rtol=1e-14)
    assert CAUTION in stdout
    assert "LinearShrink" in stdout


@pytest.mark.parametrize("suffix", [".parquet", ".npy"])
def test_clean_output_formats(returns_csv, tmp_path, capsys, suffix):
    path, frame = returns_csv
    out = tmp_path / f"m{suffix}"
    code, _, _ = _run(["clean", path, "--method", "LinearShrink", "--out", out], capsys)
    assert code == 0
    got = np.load(out) if suffix == ".npy" else pd.read_parquet(out).to_numpy()
    ref = LinearShrink().fit(frame.to_numpy()).covariance_
    np.testing.assert_allclose(got, ref, rtol=1e-14)
    if suffix == ".parquet":
        assert list(pd.read_parquet(out).columns) == list(frame.columns)


def test_standardize_writes_a_correlation(returns_csv, tmp_path, capsys):
    path, frame = returns_csv
    out = tmp_path / "corr.csv"
    args = ["clean", path, "--method", "LinearShrink", "--standardize", "--out", out]
    assert _run(args, capsys)[0] == 0
    corr = pd.read_csv(out, index_col=0).to_numpy()
    np.testing.assert_allclose(np.diag(corr), 1.0, rtol=0, atol=0)
    cov = LinearShrink(standardize=True).fit(frame.to_numpy()).covariance_
    sd = np.sqrt(np.diag(cov))
    np.testing.assert_allclose(corr, cov / np.outer(sd, sd), rtol=1e-13)
    out2 = tmp_path / "cov.csv"
    assert _run(args[:-1] + [out2, "--kind", "covariance"], capsys)[0] == 0
    np.testing.assert_allclose(pd.read_csv(out2, index_col=0).to_numpy(), cov)


def test_report_figure(returns_csv, tmp_path, capsys):
    path, _ = returns_csv
    fig = tmp_path / "spectrum.png"
    code, stdout, err = _run(
        ["clean", path, "--method", "LinearShrink", "--report", fig], capsys
    )
    assert code == 0, err
    assert fig.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "written to standard output" in err and CAUTION in err


def test_prices_are_refused_or_converted(returns_csv, tmp_path, capsys):
    path, frame = returns_csv
    prices = 100 * np.exp(frame.cumsum())
    price_path = tmp_path / "prices.csv"
    prices.to_csv(price_path)
    out = tmp_path / "cov.csv"
    out.write_text("previous result")
    code, _, err = _run(
        ["clean", price_path, "--method", "LinearShrink", "--out", out], capsys
    )
    _one_line_error(code, err)
    assert "looks like prices" in err and "--from-prices" in err
    assert out.read_text() == "previous result"
    code, _, _ = _run(
        [
            "clean",
            price_path,
            "--method",
            "LinearShrink",
            "--from-prices",
            "--out",
            out,
        ],
        capsys,
    )
    assert code == 0
    logret = np.diff(np.log(prices.to_numpy()), axis=0)
    ref = LinearShrink().fit(logret).covariance_
    np.testing.assert_allclose(pd.read_csv(out, index_col=0).to_numpy(), ref, rtol=1e-9)
    code, _, _ = _run(
        ["clean", price_path, "--method", "LinearShrink", "--assume-returns"], capsys
    )
    assert code == 0


@pytest.mark.parametrize(
    "content, match",
    [
        ("", "is empty"),
        ("a,b,c\n", "header but no rows"),
        ("a,b\n0.1,0.2\n0.3,-0.1\n", "has 2 row"),
        ("a,sector\n0.1,x\n0.2,y\n0.3,z\n0.0,w\n", "non-numeric column"),
        ("a,b\n0.1,0.2\n0.3,\n-0.2,0.1\n0.0,0.05\n", "missing value"),
    ],
)
def test_bad_inputs_give_one_line_errors(tmp_path, capsys, content, match):
    path = tmp_path / "bad.csv"
    path.write_text(content)
    out = tmp_path / "never.csv"
    for command in (
        ["clean", path, "--method", "LinearShrink", "--out", out],
        ["analyze", path],
    ):
        code, stdout, err = _run(command, capsys)
        _one_line_error(code, err)
        assert match in err
        assert not out.exists()


def test_failure_leaves_no_partial_output(returns_csv, tmp_path, capsys):
    path, _ = returns_csv
    out = tmp_path / "missing_dir" / "cov.csv"
    code, _, err = _run(
        ["clean", path, "--method", "LinearShrink", "--out", out], capsys
    )
    _one_line_error(code, err)
    assert not out.parent.exists()
    # An unknown output type fails before anything is written.
    out = tmp_path / "cov.xlsx"
    code, _, err = _run(
        ["clean", path, "--method", "LinearShrink", "--out", out], capsys
    )
    _one_line_error(code, err)
    assert list(tmp_path.iterdir()) == [path]


def test_unsupported_option_for_a_method(returns_csv, capsys):
    path, _ = returns_csv
    code, _, err = _run(
        ["clean", path, "--method", "LinearShrink", "--missing", "em"], capsys
    )
    _one_line_error(code, err)
    assert "--missing" in err


def test_unknown_method_is_a_usage_error(returns_csv, capsys):
    path, _ = returns_csv
    with pytest.raises(SystemExit) as info:
        main(["clean", str(path), "--method", "Magic"])
    assert info.value.code == 2
    assert "unknown method 'Magic'" in capsys.readouterr().err


def test_every_command_has_an_example_in_its_help(capsys):
    from rmtclean.cli import _COMMANDS

    assert {"clean", "analyze", "demo", "bench"} <= set(_COMMANDS)
    for name in _COMMANDS:
        with pytest.raises(SystemExit):
            main([name, "--help"])
        assert "example" in capsys.readouterr().out, name


def test_help_through_the_installed_entry_point():
    result = subprocess.run(
        [sys.executable, "-m", "rmtclean.cli", "clean", "--help"],
        capture_output=True,
        text=True,
        check=True,
    )
    assert "rmtclean clean returns.csv --method" in result.stdout


def test_analyze_text_and_json(returns_csv, capsys):
    path, frame = returns_csv
    code, stdout, err = _run(["analyze", path, "--standardize"], capsys)
    assert code == 0, err
    assert CAUTION in stdout
    code, stdout, err = _run(["analyze", path, "--json"], capsys)
    assert code == 0, err
    payload = json.loads(stdout)
    assert payload["caution"] == CAUTION
    assert payload["data"] == str(path)
    assert payload["n_observations"] == frame.shape[0]
    assert payload["n_features"] == frame.shape[1]
    from rmtclean.spectrum import analyze_spectrum

    ref = analyze_spectrum(frame.to_numpy(), standardize=False).to_dict()
    # the report's keys and types, flat: ints stay ints, lists stay lists
    assert {k: v for k, v in payload.items() if k not in ("data", "caution")} == ref
    assert isinstance(payload["n_observations"], int)
    assert isinstance(payload["degrees_of_freedom"], float)
    assert isinstance(payload["warnings"], list)


def test_missing_values_and_half_life_options(returns_csv, tmp_path, capsys):
    from rmtclean.weights import effective_sample_size, exponential_weights

    path, frame = returns_csv
    holes = frame.copy()
    holes.iloc[::9, 2] = np.nan
    holes_path = tmp_path / "holes.csv"
    holes.to_csv(holes_path)
    out = tmp_path / "cov.csv"
    argv = ["clean", holes_path, "--method", "SpikeShrink", "--missing", "em"]
    code, _, err = _run(argv + ["--out", out], capsys)
    assert code == 0, err
    cov = pd.read_csv(out, index_col=0).to_numpy()
    assert np.all(np.isfinite(cov)) and np.linalg.eigvalsh(cov).min() > 0
    code, stdout, err = _run(
        ["clean", path, "--method", "SpikeShrink", "--half-life", "30"], capsys
    )
    assert code == 0, err
    n_eff = effective_sample_size(exponential_weights(frame.shape[0], 30.0))
    assert f"degrees of freedom: {n_eff - 1:.6g}" in err


def test_vol_half_life_option(returns_csv, tmp_path, capsys):
    from rmtclean.estimators import KernelShrink

    path, frame = returns_csv
    out = tmp_path / "cov.csv"
    argv = ["clean", path, "--method", "KernelShrink", "--vol-half-life", "11.2"]
    code, _, err = _run(argv + ["--out", out], capsys)
    assert code == 0, err
    ref = KernelShrink(vol_half_life=11.2).fit(frame).covariance_
    np.testing.assert_allclose(
        pd.read_csv(out, index_col=0).to_numpy(), ref, rtol=1e-12
    )
    # A series without volatility in the seed rows: one line naming it.
    flat = frame.copy()
    flat.iloc[:30, 3] = 0.0
    flat_path = tmp_path / "flat.csv"
    flat.to_csv(flat_path)
    code, _, err = _run(
        ["clean", flat_path, "--method", "KernelShrink", "--vol-half-life", "11.2"],
        capsys,
    )
    _one_line_error(code, err)
    assert "'S3'" in err and "zero volatility" in err
