"""Messages of rmtclean.io for files a new user gets wrong: each names the file,
the first offending cell (column, row, value) and what to do."""

import re

import numpy as np
import pandas as pd
import pytest

from rmtclean.cli import main
from rmtclean.io import numeric_matrix, prices_to_returns, read_table


def _dated_returns(rng, T=30):
    idx = pd.date_range("2024-01-02", periods=T, freq="D", name="date")
    values = 0.01 * rng.standard_normal((T, 3))
    return pd.DataFrame(values, index=idx, columns=["Food", "Energy", "Tech"])


def _run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


# -- 1. --from-prices on a file of returns ----------------------------------------
def test_prices_to_returns_on_returns_names_source_first_cell_and_hint(rng):
    returns = _dated_returns(rng)
    returns.iloc[0] = [0.004, 0.002, 0.001]  # the first negative is in row 2
    returns.loc["2024-01-03", "Food"] = -0.012
    n_negative = int((returns.to_numpy() < 0).sum())
    message = (
        f"DATA 'returns.csv' has {n_negative} negative value(s) (first: column "
        "'Food', row '2024-01-03', value -0.012): prices must be positive, so "
        "these seem to be returns already: use them as they are, without "
        "converting them (on the command line, leave out --from-prices)."
    )
    with pytest.raises(ValueError) as info:
        prices_to_returns(returns, source="DATA 'returns.csv'")
    assert str(info.value) == message
    # The library's default source reads as well.
    with pytest.raises(ValueError, match=r"^the data has \d+ negative value\(s\)"):
        prices_to_returns(returns)


def test_prices_to_returns_names_a_zero_price_as_a_missing_value_marker():
    prices = pd.DataFrame(
        {"a": [100.0, 101.0, 0.0, 0.0], "b": [50.0, 0.0, 51.0, np.nan]},
        index=pd.Index(["d1", "d2", "d3", "d4"], name="day"),
    )
    with pytest.raises(ValueError) as info:
        prices_to_returns(prices, source="DATA 'p.csv'")
    assert str(info.value) == (
        "DATA 'p.csv' has 3 price(s) of 0 (first: column 'b', row 'd2', value 0): "
        "a price must be positive to take its log return; if 0 marks a missing "
        "price, leave the cell empty (NaN) instead."
    )


def test_unlabelled_rows_are_counted_from_one():
    prices = pd.DataFrame({"a": [1.0, 2.0, 3.0, -1.0]})
    with pytest.raises(ValueError, match=r"\(first: column 'a', 4th row, value -1\)"):
        prices_to_returns(prices)


def test_cli_from_prices_on_returns_says_to_leave_out_the_flag(rng, tmp_path, capsys):
    path = tmp_path / "returns.csv"
    _dated_returns(rng).to_csv(path)
    code, _, err = _run(["clean", path, "--from-prices", "--method", "linear"], capsys)
    assert code == 1 and err.count("\n") == 1
    assert "negative value(s) (first: column '" in err
    assert err.rstrip().endswith("(on the command line, leave out --from-prices).")


def test_cli_from_prices_on_returns_names_the_file(rng, tmp_path, capsys):
    path = tmp_path / "returns.csv"
    _dated_returns(rng).to_csv(path)
    code, _, err = _run(["analyze", path, "--from-prices"], capsys)
    assert code == 1
    assert f"error: DATA {str(path)!r} has " in err


# -- 2. a cell that is not a number -------------------------------------------------
def _csv(tmp_path, text, name="data.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_decimal_comma_cell_is_named_and_semicolons_suggested(tmp_path, capsys):
    text = (
        'date,a,b\n2024-01-02,0.1,0.2\n2024-01-03,0.3,"1,5"\n'
        "2024-01-04,0.2,0.4\n2024-01-05,0.1,0.3\n"
    )
    frame = read_table(_csv(tmp_path, text))
    message = (
        "DATA 'data.csv' has 1 non-numeric column(s): 'b' (first: column 'b', row "
        "'2024-01-03', value '1,5'); it looks like a decimal comma: save the file "
        "with semicolons as separators (commas in the numbers are then read as "
        "decimal commas), or write the numbers with decimal points."
    )
    with pytest.raises(ValueError) as info:
        numeric_matrix(frame, source="DATA 'data.csv'")
    assert str(info.value) == message
    # The CLI says the same, naming the file as given.
    path = tmp_path / "data.csv"
    code, _, err = _run(["analyze", path], capsys)
    assert code == 1
    assert err == f"rmtclean analyze: error: {message}\n".replace(
        "'data.csv'", repr(str(path))
    )
    # The advice holds: the same table saved with semicolons reads as numbers.
    fixed = text.replace(",", ";").replace('"1;5"', "1,5").replace("0.", "0,")
    got = numeric_matrix(read_table(_csv(tmp_path, fixed, "semicolons.csv")))
    assert got.loc["2024-01-03", "b"] == 1.5
    assert got.loc["2024-01-02", "a"] == 0.1


def test_text_cell_is_named_with_its_row_label_and_raw_value(tmp_path):
    text = "date,a,b\n2024-01-02,0.1,0.2\n2024-01-03,n/a-x,0.1\n2024-01-04,0.2,x\n"
    with pytest.raises(ValueError) as info:
        numeric_matrix(read_table(_csv(tmp_path, text)), source="DATA 'data.csv'")
    assert str(info.value) == (
        "DATA 'data.csv' has 2 non-numeric column(s): 'a', 'b' (first: column 'a', "
        "row '2024-01-03', value 'n/a-x'); every cell must be a number, or empty "
        "for a missing value (an index column of labels is detected when it "
        "comes first)."
    )


def test_text_cell_in_unlabelled_rows_is_counted_from_one(tmp_path):
    text = "a,b\n0.1,0.2\n0.3,0.1\n0.2,foo\n"
    with pytest.raises(
        ValueError, match=r"\(first: column 'b', 3rd row, value 'foo'\)"
    ):
        numeric_matrix(read_table(_csv(tmp_path, text)))


def test_thousands_or_decimal_comma_gives_both_readings():
    frame = pd.DataFrame({"a": ["1,234", "2,000"], "b": [0.1, 0.2]})
    with pytest.raises(ValueError) as info:
        numeric_matrix(frame)
    assert "value '1,234'); if the comma is a decimal comma" in str(info.value)
    assert "if it groups thousands, save the numbers without it." in str(info.value)


def test_numbers_stored_as_text_are_named_without_a_cell():
    frame = pd.DataFrame({"a": ["0.1", "0.2", None], "b": [0.1, 0.2, 0.3]})
    with pytest.raises(ValueError) as info:
        numeric_matrix(frame, source="DATA 'p.parquet'")
    assert str(info.value) == (
        "DATA 'p.parquet' has 1 non-numeric column(s): 'a', whose values are "
        "numbers stored as text: store them as numbers."
    )


def test_bool_column_names_its_first_value():
    frame = pd.DataFrame({"a": [0.1, 0.2], "flag": [True, False]})
    with pytest.raises(
        ValueError, match=r"\(first: column 'flag', 1st row, value True\)"
    ):
        numeric_matrix(frame)


@pytest.mark.parametrize(
    "n, word",
    [
        (1, "1st"),
        (2, "2nd"),
        (3, "3rd"),
        (4, "4th"),
        (11, "11th"),
        (12, "12th"),
        (13, "13th"),
        (21, "21st"),
        (112, "112th"),
    ],
)
def test_ordinals(n, word):
    from rmtclean.io import _ordinal

    assert _ordinal(n) == word


# -- 3. missing values after --from-prices ------------------------------------------
def test_cli_counts_the_missing_cells_of_the_price_file(rng, tmp_path, capsys):
    prices = 100 * np.exp(_dated_returns(rng).cumsum())
    prices.iloc[10, 1] = np.nan  # one empty cell: two missing returns
    path = tmp_path / "prices.csv"
    prices.to_csv(path)
    code, _, err = _run(["analyze", path, "--from-prices"], capsys)
    assert code == 1
    assert re.search(r"has 1 missing value\(s\) in 1 column\(s\) \('Energy'\)", err)
    assert "(2 missing returns after --from-prices)" in err
    code, _, err = _run(["analyze", path, "--from-prices", "--missing", "drop"], capsys)
    assert code == 0, err
    n_returns = prices.shape[0] - 1
    assert f"dropped 2 of {n_returns} rows of returns with missing" in err
