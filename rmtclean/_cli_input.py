"""Reading the data of ``rmtclean clean`` and ``analyze``: the shared pre-steps.

Read the table, refuse a transposed one, check the values are numeric,
refuse or convert prices, and handle missing values (``--missing``) the same
way for every method and for ``analyze``.
"""

from __future__ import annotations

import argparse

from rmtclean._cli_messages import FLAGS, plural, warn

__all__ = [
    "MIN_ROWS",
    "check_missing_option",
    "load_returns",
    "missing_values_error",
    "positive_rows",
    "repeated_columns",
    "spectrum_report_of",
]

#: Fewest observations (after any price conversion) the data commands accept.
MIN_ROWS = 3
# Share of column names reading as dates above which a file looks transposed.
_DATE_HEADER_SHARE = 0.8
# Rows per column from which rows labelled by names (not dates) look like
# variables: an expression table saved genes by samples, as most are.
_NAMED_ROWS_PER_COLUMN = 2


def positive_rows(text: str) -> float:
    """argparse type of ``--half-life``-like options: a positive number of rows."""
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(
            f"expected a positive number of rows, got {text!r}"
        )
    return value


def _source(args) -> str:
    return f"DATA {args.data!r}"


def _refuse_if_transposed(frame, args) -> None:
    """Refuse a table whose column names read as dates: rows should be dates.

    Read as it stands, such a file would give the covariance of the dates
    (a T x T matrix, hundreds of megabytes for a few thousand days).
    """
    from rmtclean.io import date_like_labels

    n_dates = date_like_labels(frame.columns)
    n_columns = frame.shape[1]
    if n_columns >= 3 and n_dates >= _DATE_HEADER_SHARE * n_columns:
        raise ValueError(
            f"{n_dates} of the {n_columns} column names of {args.data} read as "
            "dates: the file seems to hold one variable per row, but rows must "
            "be observations and columns variables. Pass --transpose to read "
            "it that way."
        )


def rows_are_named(labels) -> bool:
    """Whether row labels are names (samples), not dates nor row numbers.

    Most labels are text, unique, and few read as dates: the rows are then
    not a time series in any known order (an expression panel's samples,
    often sorted by tissue).
    """
    from rmtclean.io import date_like_labels

    names = [x for x in labels if isinstance(x, str)]
    if len(names) < _DATE_HEADER_SHARE * len(labels) or not labels.is_unique:
        return False
    return date_like_labels(names) <= (1 - _DATE_HEADER_SHARE) * len(names)


def _say_if_rows_look_like_variables(frame, args) -> None:
    """Warn when rows labelled by names outnumber the columns.

    Expression tables are mostly saved one gene per row, one sample per
    column; read as they stand they give the covariance of the samples. Rows
    labelled by dates (a returns panel) or by nothing are left alone.
    """
    from rmtclean.io import _first_names

    n_rows, n_columns = frame.shape
    if n_columns < 3 or n_rows < _NAMED_ROWS_PER_COLUMN * n_columns:
        return
    if not args.named_rows:
        return
    labels = frame.index
    warn(
        args,
        f"the {n_rows} rows of {args.data} are labelled by names, not dates "
        f"({_first_names(labels)}), and outnumber its {n_columns} columns "
        f"({_first_names(frame.columns)}): if each row is a variable (a gene, "
        "an asset) and each column an observation, pass --transpose; as read, "
        f"the rows are the observations and the matrix is {n_columns} x "
        f"{n_columns}, of the columns.",
    )


def _named_pairs(labels, pairs, most: int = 3) -> str:
    """``'b' = 'a', ...``: the first ``most`` (copy, original) pairs by label."""
    shown = [f"{labels[j]!r} = {labels[i]!r}" for j, i in pairs[:most]]
    return ", ".join(shown) + (" ..." if len(pairs) > most else "")


def _say_repeated_rows(frame, args) -> list:
    """Warn about rows equal to an earlier row; return their (j, i) pairs.

    A duplicated date or sample counts twice in the covariance (the dslabs
    tissue panel holds 4 such samples); rows of zeros on days without
    trading weigh the variances down. Rows with every value missing are a
    --missing matter and left out.
    """
    import numpy as np

    empty = frame.isna().all(axis=1).to_numpy()
    repeats = repeated_columns(frame.T, skip=empty)
    if not repeats:
        return []
    zeros = all(not np.any(frame.iloc[j].to_numpy()) for j, _ in repeats)
    why = (
        "rows of zeros (days without trading filled with 0?) pull the variances down"
        if zeros
        else "each copy counts that observation twice (a duplicated date or "
        "sample) and adds a zero eigenvalue when N > T"
    )
    warn(
        args,
        f"{len(repeats)} row(s) of {args.data} repeat an earlier row "
        f"({_named_pairs(frame.index, repeats)}): {why}; remove the copies to count "
        "each once.",
    )
    return repeats


def load_returns(args):
    """The returns table of ``args.data``: read, checked, prices handled."""
    from rmtclean.io import (
        _first_names,
        looks_like_prices,
        numeric_matrix,
        prices_to_returns,
        read_table,
        successive_difference_ratio,
    )

    source = _source(args)
    frame = read_table(args.data)
    if args.transpose:
        frame = frame.T
    else:
        _refuse_if_transposed(frame, args)
    extra = 1 if args.from_prices else 0
    frame = numeric_matrix(frame, min_rows=MIN_ROWS + extra, source=source)
    args.named_rows = len(frame.index) > 0 and rows_are_named(frame.index)
    if not args.transpose:
        _say_if_rows_look_like_variables(frame, args)
    frame = _oldest_first(frame, args)
    observed = frame.count()
    sparse = frame.columns[observed < 2]
    if sparse.size:  # no --missing method can give these a variance
        raise ValueError(
            f"{source} has {sparse.size} column(s) with fewer than 2 values "
            f"({_first_names(sparse)}): no --missing method can estimate their "
            "variance; remove them from the file."
        )
    # one value seen at least twice (a column of NaN is a missing-value matter)
    is_constant = (frame.nunique(dropna=True) <= 1) & (observed >= 2)
    constant = frame.columns[is_constant]
    if constant.size and args.standardize:
        raise ValueError(
            f"--standardize needs every column to vary, but {constant.size} "
            f"column(s) of {args.data} are constant ({_first_names(constant)}): "
            "remove them, or leave out --standardize."
        )
    copies = repeated_columns(frame, skip=is_constant.to_numpy())
    if copies:
        warn(
            args,
            f"{len(copies)} column(s) of {args.data} repeat an earlier column "
            f"({_named_pairs(frame.columns, copies)}): each copy adds a zero "
            "eigenvalue to the spectrum; remove the copies to leave them out.",
        )
    # All constant: every row is the same one, which the cleaners refuse.
    rows_vary = constant.size < frame.shape[1]
    repeats = (
        _say_repeated_rows(frame, args) if rows_vary and not args.from_prices else []
    )
    # The rank deficiency these explain is not said again (warn's filter).
    args.known_zeros = (
        int(constant.size) + len(copies),
        frame.shape[1],
        len(repeats),
        frame.shape[0],
    )
    # All constant: the cleaners refuse it with their own message.
    if constant.size and constant.size < frame.shape[1]:
        warn(
            args,
            f"{constant.size} column(s) of {args.data} are constant "
            f"({_first_names(constant)}): they carry no covariance"
            + (
                " (each adds a zero eigenvalue to the spectrum)."
                if args.command == "analyze"
                else ", yet the cleaned matrix gives them a small positive variance "
                "(a cleaner lifts every zero eigenvalue); drop them to leave them out."
            ),
        )
    if args.from_prices:
        args.missing_prices = _missing_summary(frame)  # the file's own cells
        frame = prices_to_returns(frame, source=source)
    elif not args.assume_returns and looks_like_prices(frame.to_numpy()):
        import numpy as np

        ratio = float(np.nanmedian(successive_difference_ratio(frame.to_numpy())))
        raise ValueError(
            f"{source} looks like prices, not returns: every value is positive "
            f"and the columns move in small steps (median successive-difference "
            f"ratio {ratio:.3g}, returns give about 1). Pass --from-prices to "
            "convert to log returns, or --assume-returns to use them as they are."
        )
    _warn_long_half_lives(frame.shape[0], args)
    return _handle_missing(frame, args)


def spectrum_report_of(frame, args):
    """``analyze_spectrum`` of the table, through --missing pairwise/em if asked."""
    from rmtclean.spectrum import analyze_spectrum, spectrum_report
    from rmtclean.volatility import devolatilise
    from rmtclean.weights import half_life_weights

    weights = None
    if args.half_life is not None:
        weights = half_life_weights(frame.shape[0], args.half_life)  # as clean's
    if args.missing in ("pairwise", "em") and frame.isna().to_numpy().any():
        from rmtclean.missing import missing_sample_spectrum

        # check_missing_option has refused --half-life with pairwise/em.
        spectrum = missing_sample_spectrum(
            frame.to_numpy(), method=args.missing, standardize=args.standardize
        )
        return spectrum_report(
            spectrum.eigenvalues,
            spectrum.n_samples,
            spectrum.n_features,
            standardized=spectrum.scale is not None,
            n_observations=frame.shape[0],
        )
    X, standardize = frame.to_numpy(), args.standardize
    if args.vol_half_life is not None:
        owner = "the devolatilised series"
        X, _, _ = devolatilise(
            X, args.vol_half_life, sample_weight=weights, owner=owner
        )
        standardize = True
    return analyze_spectrum(X, standardize=standardize, sample_weight=weights)


#: Date formats of row labels: vectorised parsing, both day/month orders.
_DATE_FORMATS = (
    "ISO8601",
    "%Y%m%d",
    "%m/%d/%Y",
    "%d/%m/%Y",
    "%m/%d/%y",
    "%d/%m/%y",
    "%d.%m.%Y",
    "%d-%m-%Y",
    "%m-%d-%Y",
    "%Y/%m/%d",
)


def _row_dates(index) -> list:
    """The readings of the row labels as dates (each label read; may be []).

    A label such as ``03/04/2024`` reads both month first and day first;
    each format that reads every label is one reading. Two-digit years are
    put in the past (no row of data is dated in the future: ``1/2/70`` is
    1970, not 2070).
    """
    import numpy as np
    import pandas as pd

    if isinstance(index, pd.DatetimeIndex):
        return [] if index.hasnans else [index]
    if index.size < 2 or not all(isinstance(label, str) for label in index):
        return []
    labels = pd.Series(np.asarray(index, dtype=object)).str.strip()
    now = pd.Timestamp.now() + pd.Timedelta(days=1)
    readings = []
    for fmt in _DATE_FORMATS:
        try:  # a few labels first: most formats fail fast
            if pd.to_datetime(labels[:20], format=fmt, errors="coerce").hasnans:
                continue
            dates = pd.to_datetime(labels, format=fmt, errors="coerce")
        except (ValueError, TypeError):  # mixed time zones and the like
            continue
        if dates.isna().any():
            continue
        if dates.dt.tz is not None:
            dates = dates.dt.tz_convert(None)
        future = dates > now
        if future.any():
            dates = dates.mask(future, dates - pd.DateOffset(years=100))
        readings.append(pd.DatetimeIndex(dates))
    return readings


def _order_flags(args) -> list[str]:
    """The options used that read the rows as a time series, oldest first."""
    used = ["--from-prices"] if args.from_prices else []
    return used + [
        FLAGS[name]
        for name in ("half_life", "vol_half_life")
        if getattr(args, name, None) is not None
    ]


def _oldest_first(frame, args):
    """Rows dated newest first are turned round; rows out of date order refused.

    Order matters to --from-prices (a return is this row over the one
    before), --half-life (the last row weighs most) and --vol-half-life (the
    volatility of the rows before). A file saved newest first (as many
    downloads are) is read oldest first, with a warning when one of these is
    used; a file whose dates jump back and forth is refused when one is.
    Rows whose labels are not dates (or not all in one known format) are
    taken in file order.
    """
    import numpy as np

    readings = _row_dates(frame.index)
    if not readings:
        return frame
    steps = [np.diff(dates.asi8) for dates in readings]
    if any(np.all(step > 0) for step in steps):
        return frame
    flags = _order_flags(args)
    if any(np.all(step < 0) for step in steps):
        if flags:
            warn(
                args,
                f"the rows of {args.data} run newest first ({frame.index[0]} "
                f"down to {frame.index[-1]}): they are read oldest first, as "
                f"{' and '.join(flags)} {'needs' if len(flags) == 1 else 'need'}.",
            )
        return frame.iloc[::-1]
    if not flags:
        return frame
    back = int(np.flatnonzero(steps[0] <= 0)[0])
    raise ValueError(
        f"the rows of {args.data} are not in date order (row "
        f"{frame.index[back + 1]} comes after {frame.index[back]}), but "
        f"{' and '.join(flags)} read the rows as a time series: sort the file "
        "by date, oldest first."
    )


def repeated_columns(frame, skip=None) -> list[tuple[int, int]]:
    """``(j, i)`` for each column ``j`` equal to an earlier column ``i``.

    Equal means the same value in every row, missing values in the same
    rows. Columns flagged in ``skip`` (constant ones) are left out. One
    pass over the data: columns are ordered by a random projection and only
    neighbours with equal projections (to rounding) are compared in full.
    """
    import numpy as np

    X = frame.to_numpy(dtype=np.float64)
    keep = np.arange(X.shape[1]) if skip is None else np.flatnonzero(~skip)
    if keep.size < 2:
        return []
    missing = np.isnan(X[:, keep])
    values = np.where(missing, 0.0, X[:, keep])
    weights = np.random.default_rng(0).standard_normal((2, X.shape[0]))
    prints = weights[0] @ values + weights[1] @ missing
    order = np.argsort(prints, kind="stable")
    close = np.diff(prints[order]) <= 1e-9 * (np.abs(prints).max() + 1.0)
    # Runs of equal projections; within a run each column is compared with
    # the run's distinct columns so far, in column order (first occurrence).
    runs = np.split(order, np.flatnonzero(~close) + 1)
    out: dict[int, int] = {}
    for run in runs:
        distinct: list[int] = []
        for j in sorted(int(keep[k]) for k in run):
            same = (i for i in distinct if np.array_equal(X[:, i], X[:, j], True))
            i = next(same, None)
            if i is None:
                distinct.append(j)
            else:
                out[j] = i
    return sorted(out.items())


def _warn_long_half_lives(n_rows: int, args) -> None:
    """Say when a half-life spans the whole table: it then changes little."""
    effects = {
        "half_life": "the row weights are all within a factor 2 of each other",
        "vol_half_life": "the volatility it divides by is nearly constant",
    }
    for name, effect in effects.items():
        value = getattr(args, name, None)
        if value is not None and value >= n_rows:
            warn(
                args,
                f"{FLAGS[name]} {value:g} is as long as the {n_rows} rows or "
                f"longer: {effect}, so it changes the estimate little.",
            )


def _missing_choices(args) -> str:
    """The ``--missing`` values that work for this command and method."""
    from rmtclean.estimators import find_cleaner

    method = getattr(args, "method", None)
    if method is None or find_cleaner(method).takes_missing:
        return "--missing drop, --missing pairwise or --missing em"
    return "--missing drop"


def check_missing_option(args) -> None:
    """Refuse, before reading anything, a --missing value the run cannot use."""
    from rmtclean.estimators import CLEANERS, find_cleaner

    if args.missing not in ("pairwise", "em"):
        return
    method = getattr(args, "method", None)
    if method is not None and not find_cleaner(method).takes_missing:
        entry = find_cleaner(method)
        able = ", ".join(e.short for e in CLEANERS if e.takes_missing)
        raise ValueError(
            f"--missing {args.missing} needs a method that works from a "
            f"covariance estimate ({able}); --method {entry.short} needs complete "
            "rows: use --missing drop to drop the incomplete rows."
        )
    for name in ("half_life", "vol_half_life"):
        if getattr(args, name, None) is not None:
            raise ValueError(
                f"--missing {args.missing} cannot weight rows ({FLAGS[name]}); "
                "use --missing drop to drop the incomplete rows."
            )


def _missing_summary(frame):
    """``(n_missing, rows, "'a', 'b' ...")``: the NaN entries of ``frame``."""
    mask = frame.isna()
    from rmtclean.io import _first_names

    cols = frame.columns[mask.any(axis=0).to_numpy()]
    return int(mask.to_numpy().sum()), cols.size, _first_names(cols)


def missing_values_error(frame, args) -> ValueError | None:
    """The CLI's message for data the library refused, if they hold NaN.

    Without ``--missing`` the NaN entries reach the estimator (or
    ``analyze_spectrum``), whose validation is the one check; when it
    fails, this names the columns and the ``--missing`` values that work.
    """
    if args.missing is not None:
        return None
    n_missing, n_columns, where = _missing_summary(frame)
    if not n_missing:
        return None
    returns = ""
    if getattr(args, "missing_prices", None):  # count the cells of the file
        returns = f" ({plural(n_missing, 'missing return')} after --from-prices)"
        n_missing, n_columns, where = args.missing_prices
    return ValueError(
        f"{_source(args)} has {n_missing} missing value(s) in {n_columns} "
        f"column(s) ({where}){returns}; pass {_missing_choices(args)}."
    )


def _handle_missing(frame, args):
    """The shared pre-step of clean and analyze for missing values (NaN).

    ``--missing drop`` drops incomplete rows (every method); ``pairwise``
    and ``em`` keep them for the estimate. Without ``--missing`` the
    library's validation refuses them (see :func:`missing_values_error`).
    """
    if args.missing != "drop":
        return frame
    kept = frame.dropna()
    if kept.shape[0] == frame.shape[0]:
        return frame
    if kept.shape[0] < MIN_ROWS:
        raise ValueError(
            f"--missing drop leaves {kept.shape[0]} complete row(s) of "
            f"{frame.shape[0]} in {_source(args)}; at least {MIN_ROWS} are "
            "needed: try --missing pairwise or --missing em."
        )
    _, _, where = _missing_summary(frame)
    rows = "rows of returns" if args.from_prices else "rows"
    warn(
        args,
        f"--missing drop: dropped {frame.shape[0] - kept.shape[0]} of "
        f"{frame.shape[0]} {rows} with missing values ({where}).",
    )
    return kept
