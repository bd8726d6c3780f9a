"""A table-driven battery of malformed inputs across the library.

Each row names one malformed input, the exception type it must raise and a
pattern the message must contain (the problem named, DESIGN.md "Bad input
gets a clear ValueError or TypeError naming the problem"). Every estimator
row runs for every exported cleaner (tests/_registry.py). No error may come
from deep inside numpy, scipy, numba or pandas: the raising frame must be
rmtclean's (or scikit-learn's input validation, which rmtclean prefixes
with the estimator's name).
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from sklearn.exceptions import NotFittedError

from rmtclean import rules
from rmtclean.cli import main
from rmtclean.estimators import LinearShrink, SpikeShrink, SplitShrink, TylerShrink
from rmtclean.exceptions import InvalidParameterError
from rmtclean.laws import MarchenkoPastur, TracyWidom, WignerSemicircle
from rmtclean.spectrum import CleanedSpectrum, fit_bulk, sample_spectrum
from tests._registry import CASES, make

CASE_IDS = [case.id for case in CASES]
FOREIGN = ("/numpy/", "/scipy/", "/numba/", "/pandas/")

pytestmark = [
    pytest.mark.filterwarnings("ignore::rmtclean.exceptions.WeakEstimateWarning"),
    pytest.mark.filterwarnings("ignore::rmtclean.exceptions.RankDeficientWarning"),
]


def _good(n_rows=30, n_features=5):
    return np.random.default_rng(5).standard_normal((n_rows, n_features))


def _with(value, row=3, col=2):
    X = _good()
    X[row, col] = value
    return X


def _check_raises(call, exc, match):
    with pytest.raises(exc, match=match) as info:
        call()
    where = info.traceback[-1].path
    assert not any(part in str(where) for part in FOREIGN), where
    return info


# -- every estimator ---------------------------------------------------------
def _fit(X, **params):
    return lambda case: case.make(**params).fit(X)


def _fit_weighted(weights):
    return lambda case: case.make().fit(_good(), sample_weight=weights)


def _transform_wrong_width(case):
    case.make().fit(_good()).transform(_good(4, 3))


def _string_frame():
    frame = pd.DataFrame(_good(), columns=list("abcde"))
    frame["c"] = frame["c"].astype(str)
    frame.loc[2, "c"] = "n/a"
    return frame


ESTIMATOR_ROWS = [
    # (id, action on a Case, exception, message pattern)
    ("nan", _fit(_with(np.nan)), ValueError, r"\.fit: Input X contains NaN"),
    ("inf", _fit(_with(np.inf)), ValueError, r"\.fit: Input X contains infinity"),
    ("-inf", _fit(_with(-np.inf)), ValueError, r"contains infinity"),
    ("no rows", _fit(np.empty((0, 5))), ValueError, r"0 sample\(s\)"),
    ("no columns", _fit(np.empty((10, 0))), ValueError, r"0 feature\(s\)"),
    ("1-D", _fit(_good()[:, 0]), ValueError, r"Expected 2D array, got 1D"),
    ("3-D", _fit(_good().reshape(30, 5, 1)), ValueError, r"dim 3"),
    ("complex", _fit(_good() + 1j), ValueError, r"Complex data not supported"),
    (
        "object strings",
        _fit(np.where(_good() > 1.5, "x", _good()).astype(object)),
        ValueError,
        r"could not convert string to float",
    ),
    ("str array", _fit(np.full((30, 5), "a")), ValueError, r"convert string"),
    ("frame str column", _fit(_string_frame()), ValueError, r"convert string"),
    ("one row", _fit(_good()[:1]), ValueError, r"1 sample\(s\).*minimum of 2"),
    (
        "all rows equal",
        _fit(np.tile(_good()[:1], (30, 1))),
        ValueError,
        r"zero variance: all 30 rows are equal",
    ),
    (
        "all zero centred",
        _fit(np.zeros((30, 5)), assume_centered=True),
        ValueError,
        r"zero variance: every entry is zero",
    ),
    (
        "zero-variance column, standardize",
        _fit(np.c_[_good(), np.full(30, 2.0)], standardize=True),
        ValueError,
        r"standardize=True needs every column to vary.*first index 5",
    ),
    (
        "weights too short",
        _fit_weighted(np.ones(29)),
        ValueError,
        r"sample_weight of \w+ must have shape \(30,\).*\(29,\)",
    ),
    (
        "weights 2-D",
        _fit_weighted(np.ones((30, 1))),
        ValueError,
        r"must have shape \(30,\).*Got shape \(30, 1\)",
    ),
    (
        "weights negative",
        _fit_weighted(np.r_[-1.0, np.ones(29)]),
        ValueError,
        r"sample_weight of \w+ must be non-negative.*-1\.0",
    ),
    (
        "weights nan",
        _fit_weighted(np.r_[np.nan, np.ones(29)]),
        ValueError,
        r"sample_weight of \w+ contains NaN or infinity",
    ),
    ("weights all zero", _fit_weighted(np.zeros(30)), ValueError, r"sums to zero"),
    (
        "weights one row",
        _fit_weighted(np.r_[1.0, np.zeros(29)]),
        ValueError,
        r"more than one effective sample.*0\.0 degrees of freedom",
    ),
    (
        "weights strings",
        _fit_weighted(["a"] * 30),
        ValueError,
        r"sample_weight of \w+ must be an array of numbers",
    ),
    (
        "transform wrong width",
        _transform_wrong_width,
        ValueError,
        r"X has 3 features, but \w+ is expecting 5",
    ),
    (
        "transform unfitted",
        lambda case: case.make().transform(_good()),
        NotFittedError,
        r"not fitted yet",
    ),
    (
        "route unknown",
        _fit(_good(), route="fast"),
        InvalidParameterError,
        r"The 'route' parameter of \w+ must be a str among .*Got 'fast'",
    ),
    (
        "store_precision not bool",
        _fit(_good(), store_precision="yes"),
        InvalidParameterError,
        r"The 'store_precision' parameter of \w+ .*Got 'yes'",
    ),
    (
        "assume_centered int",
        _fit(_good(), assume_centered=1),
        InvalidParameterError,
        r"The 'assume_centered' parameter .*bool.*Got 1",
    ),
]


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
@pytest.mark.parametrize(
    "action, exc, match",
    [r[1:] for r in ESTIMATOR_ROWS],
    ids=[r[0] for r in ESTIMATOR_ROWS],
)
def test_every_estimator_refuses(case, action, exc, match):
    _check_raises(lambda: action(case), exc, match)


# -- particular estimators -----------------------------------------------------
def _est(cls, **params):
    return make(cls, **params)


PARTICULAR_ROWS = [
    (LinearShrink, {"target": "bogus"}, _good(), InvalidParameterError, r"'target'"),
    (
        LinearShrink,
        {"intensity": -0.1},
        _good(),
        InvalidParameterError,
        r"'intensity' parameter of LinearShrink.*\[0, 1\].*-0\.1",
    ),
    (
        LinearShrink,
        {"target": "diagonal", "intensity": "oas"},
        _good(),
        ValueError,
        r"OAS intensity is derived for the identity target only",
    ),
    (
        LinearShrink,
        {"target": "constant-correlation"},
        np.c_[_good(), np.ones(30)],
        ValueError,
        r"constant-correlation target needs every column to vary",
    ),
    (
        SpikeShrink,
        {"loss": "bogus"},
        _good(),
        InvalidParameterError,
        r"'loss' parameter of SpikeShrink.*Got 'bogus'",
    ),
    (
        SpikeShrink,
        {"noise_variance": -1.0},
        _good(),
        InvalidParameterError,
        r"'noise_variance' parameter of SpikeShrink.*Got -1\.0",
    ),
    (
        SpikeShrink,
        {"half_life": -2.0},
        _good(),
        InvalidParameterError,
        r"'half_life' parameter of SpikeShrink.*\(0, inf\).*-2\.0",
    ),
    (
        SplitShrink,
        {"n_splits": 0},
        _good(),
        InvalidParameterError,
        r"'n_splits' parameter of SplitShrink.*Got 0",
    ),
    (
        SplitShrink,
        {"train_size": 1.5},
        _good(),
        InvalidParameterError,
        r"'train_size' parameter of SplitShrink",
    ),
    (
        # A number of rows is used as given (a fraction adapts to small T).
        SplitShrink,
        {"train_size": 4},
        _good(5, 3),
        ValueError,
        r"'train_size' parameter of SplitShrink must leave at least 2 rows",
    ),
    (
        SplitShrink,
        {"random_state": "seed"},
        _good(),
        InvalidParameterError,
        r"'random_state' parameter of SplitShrink",
    ),
    (
        SplitShrink,
        {"shuffle": False, "n_splits": 40, "train_size": 24},
        _good(),
        ValueError,
        r"'n_splits' parameter of SplitShrink can be at most",
    ),
    (TylerShrink, {"rule": "bogus"}, _good(), InvalidParameterError, r"'rule'"),
    (
        TylerShrink,
        {"rule": "fixed-point", "shrinkage": 1.5},
        _good(),
        InvalidParameterError,
        r"'shrinkage' parameter of TylerShrink.*\[0, 1\].*Got 1\.5",
    ),
    (
        TylerShrink,
        {"shrinkage": 0.3},
        _good(),
        ValueError,
        r"TylerShrink.fit: shrinkage applies to rule='fixed-point' only",
    ),
    (
        TylerShrink,
        {"rule": "fixed-point", "shrinkage": 0.0},
        _good(6, 8),
        ValueError,
        r"without shrinkage needs more weighted nonzero rows than features",
    ),
    (
        TylerShrink,
        {"scale_estimate": "mad"},
        _good(),
        InvalidParameterError,
        r"'scale_estimate' parameter of TylerShrink",
    ),
    (
        TylerShrink,
        {"vol_half_life": 10.0},
        np.c_[_good(), np.r_[np.zeros(20), np.ones(10)]],
        ValueError,
        r"TylerShrink.fit: vol_half_life needs every column to vary .* column 5 is "
        r"constant there: zero volatility",
    ),
]


@pytest.mark.parametrize(
    "cls, params, X, exc, match",
    PARTICULAR_ROWS,
    ids=[f"{r[0].__name__}-{i}" for i, r in enumerate(PARTICULAR_ROWS)],
)
def test_estimator_parameters_refused(cls, params, X, exc, match):
    _check_raises(lambda: _est(cls, **params).fit(X), exc, match)


# -- rules, spectra and laws ----------------------------------------------------
DESC = np.array([3.0, 2.0, 1.0, 0.5])

FUNCTION_ROWS = [
    # (id, call, exception, pattern)
    (
        "spike_shrink 2-D",
        lambda: rules.spike_shrink(np.ones((2, 2)), 10, 2),
        ValueError,
        r"'eigenvalues' input of spike_shrink must be a non-empty 1-D array",
    ),
    (
        "spike_shrink negative",
        lambda: rules.spike_shrink(np.array([1.0, -1.0]), 10, 2),
        ValueError,
        r"must be non-negative.*-1\.0",
    ),
    (
        "spike_shrink ascending",
        lambda: rules.spike_shrink(DESC[::-1], 10, 4),
        ValueError,
        r"must be in descending order",
    ),
    (
        "spike_shrink nan",
        lambda: rules.spike_shrink(np.array([2.0, np.nan]), 10, 2),
        ValueError,
        r"must be finite.*1 NaN",
    ),
    (
        "spike_shrink all zero",
        lambda: rules.spike_shrink(np.zeros(3), 10, 3),
        ValueError,
        r"is all zero",
    ),
    (
        "spike_shrink negative ratio",
        lambda: rules.spike_shrink(DESC, -10, 4),
        ValueError,
        r"'n_samples' parameter of spike_shrink must be a positive.*-10",
    ),
    (
        "spike_shrink too many values",
        lambda: rules.spike_shrink(DESC, 10, 3),
        ValueError,
        r"has 4 values, more than n_features=3",
    ),
    (
        "spike_shrink unknown loss",
        lambda: rules.spike_shrink(DESC, 10, 4, loss="l2"),
        ValueError,
        r"'loss' parameter of spike_shrink must be one of.*'l2'",
    ),
    (
        "spike_shrink object",
        lambda: rules.spike_shrink(np.array(["a", "b"], dtype=object), 10, 2),
        TypeError,
        r"must hold real numbers.*object",
    ),
    (
        "linear_shrink inf",
        lambda: rules.linear_shrink(np.array([2.0, np.inf]), 10, 2, intensity=0.5),
        ValueError,
        r"eigenvalues of linear_shrink contain NaN or infinity",
    ),
    (
        "linear_shrink complex",
        lambda: rules.linear_shrink(DESC + 0j, 10, 4, intensity=0.5),
        TypeError,
        r"eigenvalues of linear_shrink are complex",
    ),
    (
        "linear_shrink intensity above 1",
        lambda: rules.linear_shrink(DESC, 10, 4, intensity=2.0),
        ValueError,
        r"'intensity' parameter of linear_shrink.*\[0, 1\].*2\.0",
    ),
    (
        "linear_shrink without row norms",
        lambda: rules.linear_shrink(DESC, 10, 4),
        ValueError,
        r"intensity='ledoit-wolf' needs squared_norms",
    ),
    (
        "linear_shrink weights shape",
        lambda: rules.linear_shrink(
            DESC, 10, 4, squared_norms=np.ones(3), sample_weight=np.ones(4)
        ),
        ValueError,
        r"sample_weight of linear_shrink must have shape \(3,\)",
    ),
    (
        "shrinkage_intensity unknown method",
        lambda: rules.shrinkage_intensity(_good(), method="magic"),
        ValueError,
        r"'method' parameter of shrinkage_intensity.*'magic'",
    ),
    (
        "shrinkage_target not square",
        lambda: rules.shrinkage_target(_good()),
        ValueError,
        r"covariance of shrinkage_target must be square; got shape \(30, 5\)",
    ),
    (
        "split_shrink 1-D",
        lambda: rules.split_shrink(_good()[:, 0]),
        ValueError,
        r"X of split_shrink must be 2-D",
    ),
    (
        "split_shrink eigenvectors not orthonormal",
        lambda: rules.split_shrink(_good(), eigenvectors=np.ones((5, 2))),
        ValueError,
        r"'eigenvectors' parameter of split_shrink must have orthonormal columns",
    ),
    (
        "sample_spectrum strings",
        lambda: sample_spectrum(np.array([["a", "b"], ["c", "d"]])),
        TypeError,
        r"X of sample_spectrum must be numeric",
    ),
    (
        "sample_spectrum complex",
        lambda: sample_spectrum(_good() * 1j),
        TypeError,
        r"X of sample_spectrum is complex",
    ),
    (
        "sample_spectrum weights",
        lambda: sample_spectrum(_good(), sample_weight=np.ones(3)),
        ValueError,
        r"sample_weight of sample_spectrum must have shape \(30,\)",
    ),
    (
        "CleanedSpectrum without null value",
        lambda: CleanedSpectrum(np.eye(3)[:, :2], np.ones(2)),
        ValueError,
        r"needs a null_value when there are fewer eigenvectors \(2\)",
    ),
    (
        "fit_bulk one eigenvalue",
        lambda: fit_bulk(np.array([1.0]), 10, 1),
        ValueError,
        r"'n_signal' parameter of fit_bulk",
    ),
    (
        "MarchenkoPastur negative ratio",
        lambda: MarchenkoPastur(-0.5),
        InvalidParameterError,
        r"'ratio' parameter of MarchenkoPastur must be a float in the range "
        r"\(0, inf\)\. Got -0\.5",
    ),
    (
        "MarchenkoPastur nan ratio",
        lambda: MarchenkoPastur(float("nan")),
        InvalidParameterError,
        r"'ratio' parameter of MarchenkoPastur.*Got nan",
    ),
    (
        "MarchenkoPastur zero variance",
        lambda: MarchenkoPastur(0.5, variance=0.0),
        InvalidParameterError,
        r"'variance' parameter of MarchenkoPastur.*Got 0\.0",
    ),
    (
        "MarchenkoPastur string ratio",
        lambda: MarchenkoPastur("0.5"),
        InvalidParameterError,
        r"'ratio' parameter of MarchenkoPastur.*Got '0\.5'",
    ),
    (
        "MarchenkoPastur cdf of a string",
        lambda: MarchenkoPastur(0.5).cdf("a"),
        TypeError,
        r"'x' argument of MarchenkoPastur.cdf/sf must be real numbers",
    ),
    (
        "MarchenkoPastur pdf of complex",
        lambda: MarchenkoPastur(0.5).pdf(1 + 1j),
        TypeError,
        r"'x' argument of MarchenkoPastur.pdf must be real.*complex",
    ),
    (
        "MarchenkoPastur negative moment",
        lambda: MarchenkoPastur(0.5).moment(-1),
        InvalidParameterError,
        r"'order' parameter of MarchenkoPastur.moment",
    ),
    (
        "TracyWidom beta 3",
        lambda: TracyWidom(beta=3),
        InvalidParameterError,
        r"'beta' parameter of TracyWidom must be an int in the range \[1, 2\]",
    ),
    (
        "TracyWidom float beta",
        lambda: TracyWidom(beta=1.0),
        InvalidParameterError,
        r"'beta' parameter of TracyWidom.*Got 1\.0",
    ),
    (
        "TracyWidom sf of strings",
        lambda: TracyWidom().sf(["x"]),
        TypeError,
        r"'x' argument of TracyWidom must be real numbers",
    ),
    (
        "TracyWidom ppf of a string",
        lambda: TracyWidom().ppf("0.5"),
        TypeError,
        r"'q' argument of TracyWidom.ppf/isf must be real numbers",
    ),
    (
        "TracyWidom rvs random_state",
        lambda: TracyWidom().rvs(3, random_state="seed"),
        TypeError,
        r"'random_state' parameter of TracyWidom.rvs",
    ),
    (
        "WignerSemicircle negative radius",
        lambda: WignerSemicircle(-1.0),
        InvalidParameterError,
        r"'radius' parameter of WignerSemicircle.*-1\.0",
    ),
    (
        "WignerSemicircle ppf of None",
        lambda: WignerSemicircle().ppf(None),
        TypeError,
        r"'q' argument of WignerSemicircle.ppf must be real numbers",
    ),
    (
        "chen_wiesel_hero_intensity negative eigenvalue",
        lambda: rules.chen_wiesel_hero_intensity([1.0, -1.0], 10, 2),
        ValueError,
        r"'sign_eigenvalues' parameter of chen_wiesel_hero_intensity",
    ),
    (
        "chen_wiesel_hero_intensity zero n",
        lambda: rules.chen_wiesel_hero_intensity([1.0, 1.0], 0, 2),
        InvalidParameterError,
        r"'n_samples' parameter of chen_wiesel_hero_intensity",
    ),
    (
        "tyler_shape shrinkage above 1",
        lambda: rules.tyler_shape(np.eye(3), shrinkage=2.0),
        InvalidParameterError,
        r"'shrinkage' parameter of tyler_shape.*Got 2\.0",
    ),
    (
        "tyler_shape NaN",
        lambda: rules.tyler_shape(np.full((3, 2), np.nan), shrinkage=0.5),
        ValueError,
        r"'X' parameter of tyler_shape must be a finite 2-D array",
    ),
]
if hasattr(rules, "eigen_clip"):
    FUNCTION_ROWS += [
        (
            "eigen_clip unknown edge",
            lambda: rules.eigen_clip(DESC, 10, 4, edge="magic"),
            ValueError,
            r"'edge' parameter of eigen_clip must be one of",
        ),
        (
            "eigen_clip negative n_keep",
            lambda: rules.eigen_clip(DESC, 10, 4, n_keep=-1),
            ValueError,
            r"'n_keep' parameter of eigen_clip must be None or a non-negative "
            r"int\. Got -1",
        ),
    ]


@pytest.mark.parametrize(
    "call, exc, match",
    [r[1:] for r in FUNCTION_ROWS],
    ids=[r[0] for r in FUNCTION_ROWS],
)
def test_functions_refuse(call, exc, match):
    _check_raises(call, exc, match)


# -- the command line -------------------------------------------------------------
def _frame(values, columns=None):
    values = np.asarray(values)
    columns = columns or [f"c{j}" for j in range(values.shape[1])]
    return pd.DataFrame(values, columns=columns)


def _returns():
    return _frame(0.01 * _good(60, 4))


def _prices():
    steps = 0.01 * _good(80, 4)
    return _frame(100.0 * np.exp(np.cumsum(steps, axis=0)))


def _write_csv(frame):
    return lambda path: frame.to_csv(path, index=False)


def _write_text(text):
    return lambda path: path.write_text(text)


def _write_bytes(data):
    return lambda path: path.write_bytes(data)


def _write_npy(array):
    return lambda path: np.save(path, array)


def _constant_column():
    frame = _returns()
    frame["c3"] = 0.5
    return frame


def _with_inf():
    frame = _returns()
    frame.iloc[5, 1] = np.inf
    return frame


CLI_ROWS = [
    # (id, file name, writer, extra argv, pattern)
    (
        "no such file",
        "absent.csv",
        None,
        ["clean", "--method", "SpikeShrink"],
        r"error: no such file",
    ),
    (
        "ragged csv",
        "ragged.csv",
        _write_text("a,b,c\n0.1,0.2,0.3\n0.2,0.1\n0.3,0.1,0.2,0.5,0.6\n0.1,0.1,0.1\n"),
        ["clean", "--method", "SpikeShrink"],
        r"error: cannot parse '.*ragged\.csv' as a table: line 4 has 5 fields "
        r"where the header has 3\.$",
    ),
    (
        "truncated csv",
        "truncated.csv",
        _write_text(_returns().to_csv(index=False)[:-30]),
        ["clean", "--method", "SpikeShrink"],
        r"missing value\(s\) in 1 column\(s\) \('\w+'\); pass --missing drop",
    ),
    (
        "corrupt parquet",
        "broken.parquet",
        _write_bytes(b"PAR1 this is not parquet"),
        ["analyze"],
        r"broken\.parquet",
    ),
    (
        "unknown suffix",
        "data.xlsx",
        _write_text("a,b\n1,2\n"),
        ["analyze"],
        r"unknown file type '\.xlsx'",
    ),
    (
        "3-D npy",
        "cube.npy",
        _write_npy(np.zeros((5, 4, 3))),
        ["clean", "--method", "SpikeShrink"],
        r"must be 2-D.*\(5, 4, 3\)",
    ),
    (
        "complex npy",
        "complex.npy",
        _write_npy(_good(20, 3) + 1j),
        ["clean", "--method", "SpikeShrink"],
        r"3 complex column\(s\).*only real data",
    ),
    (
        "prices instead of returns",
        "prices.csv",
        _write_csv(_prices()),
        ["clean", "--method", "SpikeShrink"],
        r"looks like prices, not returns.*--from-prices",
    ),
    (
        "constant data",
        "constant.csv",
        _write_csv(_frame(np.ones((30, 3)))),
        ["clean", "--method", "SpikeShrink", "--assume-returns"],
        r"zero variance: all 30 rows are equal",
    ),
    (
        "zero-variance column, standardize",
        "flat.csv",
        _write_csv(_constant_column()),
        ["clean", "--method", "SpikeShrink", "--standardize"],
        r"--standardize needs every column to vary, but 1 column\(s\) of "
        r".*flat\.csv are constant \('c3'\): remove them",
    ),
    (
        "infinite value",
        "inf.csv",
        _write_csv(_with_inf()),
        ["clean", "--method", "SpikeShrink"],
        r"1 infinite value\(s\) in 1 column\(s\) \('c\d+'\); every value",
    ),
]


@pytest.mark.parametrize(
    "filename, writer, argv, match",
    [r[1:] for r in CLI_ROWS],
    ids=[r[0] for r in CLI_ROWS],
)
def test_cli_one_line_errors(tmp_path, capsys, filename, writer, argv, match):
    path = tmp_path / filename
    if writer is not None:
        writer(path)
    out = tmp_path / "out.csv"
    command = [argv[0], str(path), *argv[1:]]
    if command[0] == "clean":
        command += ["--out", str(out)]
    code = main(command)
    _, err = capsys.readouterr()
    assert code == 1
    assert err.startswith(f"rmtclean {command[0]}: error: ")
    assert err.count("\n") == 1, err
    assert re.search(match, err), err
    assert not out.exists()


@pytest.mark.parametrize(
    "argv, match",
    [
        (["--method", "Magic"], "argument --method: unknown method 'Magic'"),
        (["--half-life", "-3"], "argument --half-life: expected a positive number"),
    ],
)
def test_cli_usage_errors(tmp_path, capsys, argv, match):
    path = tmp_path / "returns.csv"
    _returns().to_csv(path, index=False)
    with pytest.raises(SystemExit) as info:
        main(["clean", str(path), *argv])
    assert info.value.code == 2
    _, err = capsys.readouterr()
    assert match in err.splitlines()[-1]
