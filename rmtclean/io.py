"""Reading data tables and writing results safely.

Tables are CSV or Parquet files with rows = observations and columns =
variables, optionally with an index column (dates, sample names); a CSV's
delimiter (comma, semicolon, tab or bar) is read from its header line.
Results are written atomically: to a temporary file in the target's folder,
then moved over the target with :func:`os.replace`, so a failure never
leaves a partial file behind. A new file gets the permissions the umask
allows (as ``open`` would give it); a replaced file keeps its permissions.
"""

from __future__ import annotations

import contextlib
import os
import re
import tempfile
from pathlib import Path

import numpy as np

__all__ = [
    "PRICE_RATIO_THRESHOLD",
    "TABLE_SUFFIXES",
    "atomic_path",
    "date_like_labels",
    "looks_like_prices",
    "numeric_matrix",
    "prices_to_returns",
    "read_table",
    "successive_difference_ratio",
    "write_table",
]

#: File suffixes understood by :func:`read_table` and :func:`write_table`.
TABLE_SUFFIXES = {
    ".csv": "csv",
    ".txt": "csv",
    ".tsv": "tsv",
    ".parquet": "parquet",
    ".pq": "parquet",
    ".npy": "npy",
}

#: Median successive-difference ratio below which positive data read as prices.
PRICE_RATIO_THRESHOLD = 0.2

_MIN_ROWS_FOR_PRICE_CHECK = 10
# Round-trip precision of written floats.
_FLOAT_FORMAT = "%.17g"


def _format(path: Path, what: str) -> str:
    kind = TABLE_SUFFIXES.get(path.suffix.lower())
    if kind is None:
        known = ", ".join(sorted(TABLE_SUFFIXES))
        raise ValueError(
            f"Cannot {what} {str(path)!r}: unknown file type {path.suffix!r} "
            f"(known: {known})."
        )
    return kind


def _is_label_column(series) -> bool:
    import pandas as pd

    if pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series):
        return False
    return bool(series.notna().all() and series.is_unique)


# Delimiters a CSV header is sniffed for, the comma first.
_DELIMITERS = (",", ";", "\t", "|")


def _sniff_csv(path: Path) -> dict:
    """``sep`` and ``decimal`` of a delimited text file, read from its first lines.

    The first of :data:`_DELIMITERS` in the header line is the delimiter; a
    semicolon- (or tab-, bar-) separated file whose data lines hold commas
    uses the decimal comma, as spreadsheets in many locales write them.
    """
    with open(path, encoding="utf-8", errors="replace", newline="") as handle:
        lines = [handle.readline() for _ in range(6)]
    header, body = lines[0], [line for line in lines[1:] if line.strip()]
    sep = next((d for d in _DELIMITERS if d in header), ",")
    decimal = "," if sep != "," and any("," in line for line in body) else "."
    return {"sep": sep, "decimal": decimal}


def date_like_labels(labels) -> int:
    """How many of ``labels`` read as dates (``2021-01-06``, ``01/02/21``, ...).

    Used to spot a table stored the wrong way round: dates as column names,
    variables as rows.

    Parameters
    ----------
    labels : iterable
        Column names (strings, numbers or timestamps).

    Returns
    -------
    int

    Examples
    --------
    >>> from rmtclean.io import date_like_labels
    >>> date_like_labels(["2021-01-06", "2021-01-07", "Food", "0.5"])
    2
    """
    import warnings

    import pandas as pd

    labels = list(labels)
    stamps = sum(isinstance(x, (pd.Timestamp, np.datetime64)) for x in labels)
    texts = [x for x in labels if isinstance(x, str)]
    if not texts:
        return stamps
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        parsed = pd.to_datetime(pd.Series(texts), errors="coerce", format="mixed")
    return stamps + int(parsed.notna().sum())


def read_table(path, *, index_col="auto"):
    """Read a CSV, TSV, Parquet or ``.npy`` table into a DataFrame.

    Parameters
    ----------
    path : str or Path
        The file; its suffix (``.csv``, ``.txt``, ``.tsv``, ``.parquet``,
        ``.pq``, ``.npy``) chooses the reader. A ``.csv`` or ``.txt`` file
        may be separated by commas, semicolons, tabs or bars: the first of
        these in the header line is the delimiter (with semicolons, tabs or
        bars, commas in the data are decimal commas).
    index_col : "auto", int, str or None, default="auto"
        The column holding the row labels. ``"auto"`` takes the first column
        when it is not numeric and has unique, non-missing values (dates,
        sample names), or when its header is empty and its values are unique
        and non-missing (the row numbers ``DataFrame.to_csv`` writes);
        ``None`` reads no index.

    Returns
    -------
    pandas.DataFrame
        The columns as read; no check that they are numeric (see
        :func:`numeric_matrix`). ``.npy`` files get columns ``x0, x1, ...``.

    Raises
    ------
    ValueError
        For an empty file or an unknown suffix.
    OSError
        When the file cannot be read.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> from rmtclean.io import read_table
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "r.csv"
    >>> _ = path.write_text("date,a,b\\n2024-01-02,0.1,0.2\\n2024-01-03,-0.1,0.0\\n")
    >>> frame = read_table(path)
    >>> frame.index.name, list(frame.columns)
    ('date', ['a', 'b'])
    """
    import pandas as pd

    path = Path(path)
    kind = _format(path, "read")
    if not path.is_file():
        raise OSError(f"No such file: {str(path)!r}.")
    if path.stat().st_size == 0:
        raise ValueError(f"The file {str(path)!r} is empty.")
    if kind == "npy":
        arr = np.load(path, allow_pickle=False)
        if arr.ndim != 2:
            raise ValueError(
                f"The array in {str(path)!r} must be 2-D (rows = observations). "
                f"Got shape {arr.shape} instead."
            )
        return pd.DataFrame(arr, columns=[f"x{j}" for j in range(arr.shape[1])])
    try:
        if kind == "parquet":
            frame = pd.read_parquet(path)
        else:
            options = {"sep": "\t"} if kind == "tsv" else _sniff_csv(path)
            frame = pd.read_csv(path, **options)
    except pd.errors.EmptyDataError:
        raise ValueError(f"The file {str(path)!r} has no data.") from None
    except UnicodeDecodeError as exc:  # a binary file named .csv
        raise ValueError(
            f"Cannot read {str(path)!r} as text: byte {exc.object[exc.start]:#04x} "
            f"at position {exc.start} is not UTF-8. Save the table as a UTF-8 "
            "CSV or TSV file, or as Parquet or .npy."
        ) from None
    except pd.errors.ParserError as exc:  # ragged or truncated rows, bad quoting
        detail = " ".join(str(exc).split())
        ragged = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", detail)
        if ragged:  # pandas' tokenizer words, in the file's terms
            want, line, got = ragged.groups()
            detail = f"line {line} has {got} fields where the header has {want}"
        raise ValueError(f"Cannot parse {str(path)!r} as a table: {detail}.") from exc
    except ImportError as exc:
        raise OSError(f"Cannot read {str(path)!r}: {exc}") from exc
    if frame.shape[1] == 0:
        raise ValueError(f"The file {str(path)!r} has no columns.")
    if index_col == "auto":
        first = frame.iloc[:, 0]
        # A first column without a header is the row index pandas' to_csv
        # writes (0, 1, 2, ... by default): labels, even when numeric.
        unnamed = (
            kind != "parquet"
            and str(frame.columns[0]) == "Unnamed: 0"
            and first.notna().all()
            and first.is_unique
        )
        if frame.shape[1] > 1 and (unnamed or _is_label_column(first)):
            frame = frame.set_index(frame.columns[0])
            if unnamed:
                frame.index.name = None
    elif index_col is not None:
        name = frame.columns[index_col] if isinstance(index_col, int) else index_col
        if name not in frame.columns:
            raise ValueError(
                f"The index column {index_col!r} is not in {str(path)!r}; "
                f"columns are {list(frame.columns)[:5]}..."
            )
        frame = frame.set_index(name)
    if frame.shape[0] == 0:
        raise ValueError(f"The file {str(path)!r} has a header but no rows.")
    return frame


def _first_names(names, most: int = 3) -> str:
    """``'a', 'b', 'c' ...``: the first ``most`` names quoted, then an ellipsis."""
    names = [str(name) for name in names]
    more = " ..." if len(names) > most else ""
    return ", ".join(repr(name) for name in names[:most]) + more


def _ordinal(n: int) -> str:
    """``1st``, ``2nd``, ``3rd``, ``4th``, ``11th``, ``21st`` ..."""
    if n % 100 in (11, 12, 13):
        return f"{n}th"
    return f"{n}{ {1: 'st', 2: 'nd', 3: 'rd'}.get(n % 10, 'th') }"


def _row_name(index, position: int) -> str:
    """``row '2024-01-03'`` by its label, or ``3rd row`` when rows are unlabelled.

    Unlabelled rows (the default ``0, 1, ...`` index, as a file without a
    label column is read) are counted from 1, as a reader of the file counts.
    """
    import pandas as pd

    default = (
        isinstance(index, pd.RangeIndex)
        and index.start == 0
        and index.step == 1
        and index.name is None
    )
    if default:
        return f"{_ordinal(position + 1)} row"
    label = index[position]
    if isinstance(label, pd.Timestamp) and label == label.normalize():
        label = label.date()  # 2024-01-03, not 2024-01-03 00:00:00
    return f"row {str(label)!r}"


def _cell_name(frame, row: int, col: int, value) -> str:
    """``column 'Food', row '2024-01-03', value -0.012``: one cell, for messages."""
    row, col = int(row), int(col)
    return (
        f"column {str(frame.columns[col])!r}, {_row_name(frame.index, row)}, "
        f"value {value}"
    )


# A number written with a decimal comma ("1,5", "-0,012", "2,5e-3"), and one
# that a comma may split into thousands instead ("1,234", "12,345,678").
_DECIMAL_COMMA = re.compile(r"[+-]?\d*,\d+(?:[eE][+-]?\d+)?")
_THOUSANDS = re.compile(r"[+-]?[1-9]\d{0,2}(?:,\d{3})+")


def _first_text_cell(frame, positions) -> tuple[int, int, object] | None:
    """``(row, column, raw value)`` of the first cell not a number.

    The columns at ``positions`` are searched in order, each from its first
    row; a bool column's first value counts. ``None`` when every cell reads
    as a number (numbers stored as text).
    """
    import pandas as pd

    for col in positions:
        series = frame.iloc[:, col]
        if pd.api.types.is_bool_dtype(series):
            bad = series.notna().to_numpy()
        else:
            numbers = pd.to_numeric(series, errors="coerce")
            bad = (numbers.isna() & series.notna()).to_numpy()
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            value = series.iloc[row]
            return row, col, value.item() if isinstance(value, np.generic) else value
    return None


def _text_hint(value) -> str:
    """What to do about a cell holding ``value``, a text that is not a number."""
    text = str(value).strip()
    if _THOUSANDS.fullmatch(text):
        return (
            "if the comma is a decimal comma, save the file with semicolons as "
            "separators (commas in the numbers are then read as decimal commas), "
            "and if it groups thousands, save the numbers without it"
        )
    if _DECIMAL_COMMA.fullmatch(text):
        return (
            "it looks like a decimal comma: save the file with semicolons as "
            "separators (commas in the numbers are then read as decimal "
            "commas), or write the numbers with decimal points"
        )
    return (
        "every cell must be a number, or empty for a missing value (an index "
        "column of labels is detected when it comes first)"
    )


def numeric_matrix(frame, *, min_rows: int = 2, source: str = "the data"):
    """Check that every column of ``frame`` is numeric; return it as float64.

    Parameters
    ----------
    frame : pandas.DataFrame
    min_rows : int, default=2
        Fewest rows accepted.
    source : str
        Name of the input, for messages.

    Returns
    -------
    pandas.DataFrame
        The same labels, float64 values; NaN marks a missing entry.

    Raises
    ------
    ValueError
        Naming the first non-numeric columns and the first cell in them that
        is not a number (its column, row label and value, with a hint for a
        decimal comma), the columns holding infinite values, or the number of
        rows when there are fewer than ``min_rows``.

    Examples
    --------
    >>> import pandas as pd
    >>> from rmtclean.io import numeric_matrix
    >>> numeric_matrix(pd.DataFrame({"a": [1, 2], "b": [0.5, 1.5]})).dtypes.tolist()
    [dtype('float64'), dtype('float64')]
    """
    import pandas as pd

    bad = [
        str(c)
        for c in frame.columns
        if not pd.api.types.is_numeric_dtype(frame[c])
        or pd.api.types.is_bool_dtype(frame[c])
    ]
    if bad:
        shown = _first_names(bad)
        positions = [j for j, c in enumerate(frame.columns) if str(c) in bad]
        first = _first_text_cell(frame, positions)
        if first is None:  # every cell reads as a number, stored as text
            raise ValueError(
                f"{source} has {len(bad)} non-numeric column(s): {shown}, whose "
                "values are numbers stored as text: store them as numbers."
            )
        row, col, value = first
        raise ValueError(
            f"{source} has {len(bad)} non-numeric column(s): {shown} (first: "
            f"{_cell_name(frame, row, col, repr(value))}); {_text_hint(value)}."
        )
    # Complex columns count as numeric to pandas; casting would drop the
    # imaginary parts silently.
    complex_cols = [
        str(c) for c in frame.columns if pd.api.types.is_complex_dtype(frame[c])
    ]
    if complex_cols:
        shown = ", ".join(repr(c) for c in complex_cols[:3])
        raise ValueError(
            f"{source} has {len(complex_cols)} complex column(s): {shown}; only "
            "real data are supported."
        )
    if frame.shape[0] < min_rows:
        raise ValueError(
            f"{source} has {frame.shape[0]} row(s); at least {min_rows} "
            "observations are needed."
        )
    out = frame.astype(np.float64)
    infinite = np.isinf(out.to_numpy()).sum(axis=0)
    if infinite.any():
        cols = [str(c) for c, n in zip(out.columns, infinite, strict=True) if n]
        shown = _first_names(cols)
        raise ValueError(
            f"{source} has {int(infinite.sum())} infinite value(s) in "
            f"{len(cols)} column(s) ({shown}); every value must be finite."
        )
    return out


def successive_difference_ratio(X) -> np.ndarray:
    r"""Half von Neumann's ratio per column: near 1 for returns, near 0 for prices.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Rows in time order; NaN entries are ignored.

    Returns
    -------
    ratio : ndarray of shape (n_features,)
        :math:`\frac{1}{2}\,\overline{(x_{t+1} - x_t)^2} / \widehat{\mathrm{var}}(x)`.

    Notes
    -----
    Von Neumann's ratio of the mean square successive difference to the
    variance is about 2 for independent values [1]_; for a random walk of
    length T it is of order 1/T, since the level's variance grows with T
    while the steps' does not.

    References
    ----------
    .. [1] J. von Neumann, "Distribution of the ratio of the mean square
       successive difference to the variance", Ann. Math. Statist. 12(4),
       367-395, 1941.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.io import successive_difference_ratio
    >>> steps = np.random.default_rng(0).standard_normal((500, 1))
    >>> round(float(successive_difference_ratio(steps)[0]), 1)
    1.0
    >>> bool(successive_difference_ratio(np.cumsum(steps, axis=0))[0] < 0.05)
    True
    """
    X = np.asarray(X, dtype=np.float64)
    diff = np.diff(X, axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        msd = np.nanmean(diff * diff, axis=0)
        var = np.nanvar(X, axis=0)
        return 0.5 * msd / var


def looks_like_prices(X) -> bool:
    """Whether a table looks like price (or index) levels rather than returns.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Rows in time order.

    Returns
    -------
    bool
        True when every observed value is positive, there are at least 10
        rows, and the median over columns of
        :func:`successive_difference_ratio` is below
        :data:`PRICE_RATIO_THRESHOLD` (0.2): the columns move in small steps
        relative to their range, as levels do. Returns, including gross
        returns ``1 + r``, give about 1.

    Notes
    -----
    A heuristic (common practice), not a test with a controlled error: a
    smooth positive series that is not a price (a slowly drifting
    measurement) is flagged too, and prices over very few rows may pass.

    Examples
    --------
    >>> import numpy as np
    >>> from rmtclean.io import looks_like_prices
    >>> r = 0.01 * np.random.default_rng(0).standard_normal((250, 5))
    >>> looks_like_prices(r), looks_like_prices(100 * np.exp(np.cumsum(r, axis=0)))
    (False, True)
    """
    X = np.asarray(X, dtype=np.float64)
    if X.ndim != 2 or X.shape[0] < _MIN_ROWS_FOR_PRICE_CHECK:
        return False
    observed = X[np.isfinite(X)]
    if observed.size == 0 or np.any(observed <= 0):
        return False
    ratio = successive_difference_ratio(X)
    ratio = ratio[np.isfinite(ratio)]
    return bool(ratio.size and np.median(ratio) < PRICE_RATIO_THRESHOLD)


def prices_to_returns(prices, *, source: str = "the data"):
    """Log returns ``log(p_t / p_{t-1})`` of a price table (first row dropped).

    Parameters
    ----------
    prices : pandas.DataFrame
        Positive prices, rows in time order; NaN marks a missing price.
    source : str, default="the data"
        Name of the input, for messages (the command line passes
        ``DATA 'prices.csv'``).

    Returns
    -------
    pandas.DataFrame
        One row fewer, same columns and index (less its first label).

    Raises
    ------
    ValueError
        If a price is zero or negative, naming ``source``, how many such
        values there are and the first of them (column, row and value).
        Negative values suggest the data hold returns already; a zero, a
        missing price written as 0.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> from rmtclean.io import prices_to_returns
    >>> p = pd.DataFrame({"a": [100.0, 110.0, 99.0]})
    >>> np.round(prices_to_returns(p)["a"].to_numpy(), 6).tolist()
    [0.09531, -0.105361]
    """
    values = prices.to_numpy(dtype=np.float64)
    finite = np.isfinite(values)
    negative = finite & (values < 0)
    zero = finite & (values == 0)
    if negative.any():
        row, col = np.argwhere(negative)[0]  # the first in time order
        cell = _cell_name(prices, row, col, f"{values[row, col]:.6g}")
        raise ValueError(
            f"{source} has {int(negative.sum())} negative value(s) (first: "
            f"{cell}): prices must be positive, so these seem to be returns "
            "already: use them as they are, without converting them (on the "
            "command line, leave out --from-prices)."
        )
    if zero.any():
        row, col = np.argwhere(zero)[0]
        cell = _cell_name(prices, row, col, "0")
        raise ValueError(
            f"{source} has {int(zero.sum())} price(s) of 0 (first: {cell}): a "
            "price must be positive to take its log return; if 0 marks a "
            "missing price, leave the cell empty (NaN) instead."
        )
    logs = np.log(values)
    out = prices.iloc[1:].copy().astype(np.float64)
    out.iloc[:, :] = np.diff(logs, axis=0)
    return out


def _umask() -> int:
    # os.umask only reads the mask by setting it; set it straight back.
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; on success move it over ``path``.

    The temporary file is in the same folder (so :func:`os.replace` is an
    atomic rename on POSIX and Windows) and is removed if the block raises.
    Before the move it gets the permissions of the file it replaces, or
    for a new file ``0o666`` less the umask, the mode ``open`` gives
    (:func:`tempfile.mkstemp` creates it private, ``0o600``).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> from rmtclean.io import atomic_path
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "out.txt"
    >>> with atomic_path(target) as tmp:
    ...     _ = tmp.write_text("done")
    >>> target.read_text()
    'done'
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise OSError(f"The folder of {str(path)!r} does not exist.")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    os.close(fd)
    tmp = Path(tmp)
    try:
        yield tmp
        try:
            mode = path.stat().st_mode & 0o7777
        except FileNotFoundError:
            mode = 0o666 & ~_umask()
        os.chmod(tmp, mode)
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


def write_table(frame, path) -> Path:
    """Write a labelled matrix atomically, in the format of ``path``'s suffix.

    Parameters
    ----------
    frame : pandas.DataFrame
        Written with its index as the first column (CSV) or as the index
        (Parquet); ``.npy`` keeps the values only.
    path : str or Path
        ``.csv``, ``.txt``, ``.tsv``, ``.parquet``, ``.pq`` or ``.npy``;
        ``"-"`` writes CSV to standard output.

    Returns
    -------
    Path

    Examples
    --------
    >>> import pathlib, tempfile
    >>> import pandas as pd
    >>> from rmtclean.io import read_table, write_table
    >>> names = ["a", "b"]
    >>> frame = pd.DataFrame([[1.0, 0.5], [0.5, 2.0]], index=names, columns=names)
    >>> path = write_table(frame, pathlib.Path(tempfile.mkdtemp()) / "cov.csv")
    >>> read_table(path).equals(frame)
    True
    """
    if str(path) == "-":
        import sys

        frame.to_csv(sys.stdout, float_format=_FLOAT_FORMAT)
        sys.stdout.flush()
        return Path("-")
    path = Path(path)
    kind = _format(path, "write")
    with atomic_path(path) as tmp:
        if kind == "npy":
            with open(tmp, "wb") as handle:
                np.save(handle, frame.to_numpy(dtype=np.float64), allow_pickle=False)
        elif kind == "parquet":
            try:
                frame.to_parquet(tmp)
            except ImportError as exc:
                raise OSError(f"Cannot write {str(path)!r}: {exc}") from exc
        else:
            frame.to_csv(
                tmp, sep="\t" if kind == "tsv" else ",", float_format=_FLOAT_FORMAT
            )
    return path
