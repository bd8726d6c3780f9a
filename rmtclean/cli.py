"""The ``rmtclean`` command.

Conventions: results go to standard output (``clean`` without ``--out``
writes the matrix there as CSV), messages to standard error when standard
output carries data; every error is one line ``rmtclean COMMAND: error:
...`` with exit code 1 (2 for usage errors), every library warning one line
``rmtclean COMMAND: warning: ...``; both speak of flags and column names.

Start-up is kept short: the parser imports no numerical library, and each
command's options are built only when that command runs.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from rmtclean import __version__
from rmtclean._cli_figure import report_figure, save_figure
from rmtclean._cli_input import (
    MIN_ROWS,
    check_missing_option,
    load_returns,
    missing_values_error,
    positive_rows,
    spectrum_report_of,
)
from rmtclean._cli_messages import (
    FLAGS,
    WarningLines,
    cli_language,
    degrees_of_freedom,
    level_note,
    plural,
    split_note,
    variance_note,
    warn,
)
from rmtclean._cli_parse import (
    CommandParser,
    count_at_least,
    csv_list,
    method_choices,
    method_name,
    wrap_description,
)

__all__ = ["DEFAULT_METHOD", "MIN_ROWS", "build_parser", "main"]

#: The cleaner ``rmtclean clean`` uses without ``--method``.
DEFAULT_METHOD = "kernel"


def _cmd_demo(args) -> int:
    from rmtclean.bench.run import limit_threads
    from rmtclean.demo import CAUTION, run_demo

    # Hundreds of small eigendecompositions: threaded BLAS saves nothing on
    # them and, with another process holding a core, its handoffs cost a
    # lot (benchmarks/bench_demo_threads.py, 2 cores: with one busy, 7.0 s
    # on one thread against 22.0 s; idle, 6.1 s against 5.9 s). One
    # thread up to 1000 assets.
    with limit_threads(1 if args.assets <= 1000 else None):
        result = run_demo(
            n_assets=args.assets, n_days=args.days, random_state=args.seed
        )
    print(
        f"Invented market: {result.n_assets} assets in 10 sectors with a market "
        f"factor, {result.n_days} daily returns (seed {args.seed}); 11 factors "
        "are planted (the market and 10 sectors) over heteroscedastic noise.\n"
    )
    print(result.report)
    print()
    print(
        "Distance to the true covariance (Frobenius loss, LW normalisation) and the "
        "true annualised volatility of each cleaner's minimum-variance portfolio:"
    )
    print(result)
    print()
    print(CAUTION)
    return 0


def _add_demo_arguments(demo) -> None:
    demo.add_argument(
        "--assets",
        type=count_at_least(10, "one per sector at least"),
        default=300,
        help="number of assets, at least 10 (default 300)",
    )
    demo.add_argument(
        "--days",
        type=count_at_least(5, "the spectrum report needs them"),
        default=500,
        help="number of days, at least 5 (default 500)",
    )
    demo.add_argument("--seed", type=int, default=7, help="scenario seed (default 7)")
    demo.set_defaults(func=_cmd_demo)


def _build_estimator(args):
    from rmtclean.estimators import find_cleaner

    est = find_cleaner(args.method).cls()
    params = est.get_params()
    wanted = {"standardize": args.standardize}
    if args.half_life is not None:
        wanted["half_life"] = args.half_life
    if getattr(args, "vol_half_life", None) is not None:
        wanted["vol_half_life"] = args.vol_half_life
    if args.missing in ("pairwise", "em"):
        wanted["missing"] = args.missing
    if "random_state" in params:
        wanted["random_state"] = args.seed
    if getattr(args, "sample_level", False):
        wanted["scale_estimate"] = "sample"
    if getattr(args, "splits", None) is not None:
        wanted["n_splits"] = args.splits
    if "cv" in params and getattr(args, "named_rows", False):
        # Rows named, not dated (samples, often sorted by group): contiguous
        # folds would each hold out a group. Shuffled, seeded folds instead.
        from sklearn.model_selection import KFold

        wanted["cv"] = KFold(params["cv"], shuffle=True, random_state=args.seed)
    for name, value in wanted.items():
        if name not in params and value not in (False, None):
            raise ValueError(
                f"{FLAGS[name]}: --method {find_cleaner(args.method).short} "
                "does not take it."
            )
    return est.set_params(**{k: v for k, v in wanted.items() if k in params})


def _estimator_report(est, frame, args):
    """The spectrum report of the fitted estimator's sample spectrum.

    The same detection as ``rmtclean analyze`` and the estimator's
    ``n_signal_`` (rmtclean.spectrum.spectrum_report), on the spectrum the
    cleaner saw (weighted, standardised or volatility-scaled as asked).
    """
    from rmtclean.spectrum import spectrum_report

    # All N sample eigenvalues: the report keeps the numerical rank. (The
    # cleaned spectrum_ may hold fewer: EigenClip and SpikeShrink keep
    # eigenvectors only where the cleaned value differs from the bulk's.)
    standardized = bool(args.standardize or est.scale_ is not None)
    dof, divisor = degrees_of_freedom(est)
    return spectrum_report(
        est.sample_eigenvalues_ * (divisor / dof),
        dof,
        frame.shape[1],
        standardized=standardized,
        n_observations=frame.shape[0],
    )


def _cmd_clean(args) -> int:
    from rmtclean.demo import CAUTION
    from rmtclean.io import write_table

    check_missing_option(args)
    frame = load_returns(args)
    args.columns = frame.columns
    try:
        est = _build_estimator(args).fit(frame)
    except (ValueError, TypeError) as exc:
        raise missing_values_error(frame, args) or exc from exc
    kind = args.kind or ("correlation" if args.standardize else "covariance")
    matrix = (
        est.correlation_frame() if kind == "correlation" else est.covariance_frame()
    )
    target = args.out or "-"
    # Messages go to standard error when standard output carries the matrix.
    say = sys.stderr if target == "-" else sys.stdout
    # The matrix first: a figure that cannot be drawn must not lose it.
    write_table(matrix, target)
    report = None
    try:
        report = _estimator_report(est, frame, args)
    except ValueError as exc:  # too small a spectrum for a bulk fit
        warn(args, f"no spectrum report: {cli_language(exc)}")
    if report is not None:
        for message in report.warnings:
            warn(args, message)
    if kind == "covariance" and (note := variance_note(est, matrix, frame, args)):
        warn(args, note)
    if args.report:
        try:
            if report is None:
                raise ValueError("there is no spectrum report to draw")
            save_figure(report_figure(est, report, frame, args), args.report)
        except Exception as exc:  # the matrix is written; say what is missing
            warn(args, f"the figure {args.report} was not written: {cli_language(exc)}")
            args.report = None
    T, N = frame.shape
    signal = (
        "not counted (fewer than 3 degrees of freedom or eigenvalues: no bulk to fit)"
        if est.n_signal_ is None
        else str(est.n_signal_)
    )
    where = "standard output" if target == "-" else target
    dof, divisor = degrees_of_freedom(est)
    lines = [
        f"{args.method} on {args.data}: {T} observations of {plural(N, 'variable')}",
        f"  degrees of freedom: {dof:.6g}  (N / dof = {N / dof:.4g})"
        + ("" if divisor == dof else f"; divisor of S: {divisor:.6g} (bias=True)"),
        f"  signal eigenvalues: {signal}",
        f"  cleaned {kind}: written to {where}",
    ]
    if kind == "covariance" and (note := level_note(est)):
        lines.insert(-1, f"  {note}")
    if note := split_note(est):
        lines.insert(-1, f"  {note}")
    if hasattr(est, "describe_choice"):  # AutoShrink says what it chose
        lines.insert(3, f"  {est.describe_choice()}")
        if getattr(est.cv, "shuffle", False):
            lines.insert(
                4, "  folds: shuffled (rows named, not dated; --seed sets them)"
            )
    if args.report:
        lines.append(f"  figure: {args.report}")
    print("\n".join(lines) + "\n\n" + CAUTION, file=say)
    return 0


def _cmd_analyze(args) -> int:
    import json

    from rmtclean.demo import CAUTION

    check_missing_option(args)
    args.said = []  # every warning line, for --json
    frame = load_returns(args)
    args.columns = frame.columns
    try:
        report = spectrum_report_of(frame, args)
    except (ValueError, TypeError) as exc:
        raise missing_values_error(frame, args) or exc from exc
    # The text report carries its warnings: on a terminal, say them once.
    if args.json or not sys.stdout.isatty():
        for message in report.warnings:
            warn(args, message)
    if args.json:
        # One flat object: the report's own keys and types (README, "JSON
        # output of analyze"), the file name and the caution.
        # Its warnings are every line said on stderr: the input's first.
        payload = {"data": str(args.data), **report.to_dict(), "caution": CAUTION}
        payload["warnings"] = list(args.said)
        print(json.dumps(payload, indent=2, default=_json_default))
    else:
        print(
            f"Spectrum of {args.data}: {frame.shape[0]} observations of "
            f"{plural(frame.shape[1], 'variable')}\n"
        )
        print(report)  # the report closes with the caution
    return 0


def _json_default(value):
    import numpy as np

    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, np.generic):
        return value.item()
    raise TypeError(f"cannot write {type(value).__name__} as JSON")


def _add_data_arguments(parser, standardize_help: str) -> None:
    parser.add_argument(
        "data",
        metavar="DATA",
        help="CSV (comma, semicolon or tab separated), TSV or Parquet file, or "
        ".npy: rows are observations, columns variables; a first column of "
        "labels (dates, names) is the index",
    )
    parser.add_argument("--standardize", action="store_true", help=standardize_help)
    parser.add_argument(
        "--transpose",
        action="store_true",
        help="DATA holds one variable per row (dates as column names): read it "
        "transposed",
    )
    parser.add_argument(
        "--from-prices",
        action="store_true",
        help="DATA holds prices: convert them to log returns first",
    )
    parser.add_argument(
        "--assume-returns",
        action="store_true",
        help="use the values as returns even when they look like prices "
        "(all positive, moving in small steps), which is otherwise refused",
    )
    from rmtclean.estimators import CLEANERS

    takers = ", ".join(e.short for e in CLEANERS if e.takes_missing)
    parser.add_argument(
        "--missing",
        choices=("drop", "pairwise", "em"),
        help="how to use data with missing values (NaN or empty cells): drop = "
        "drop the incomplete rows (any method); pairwise = pairwise-deletion "
        "covariance, em = Gaussian EM estimate (analyze, and the methods that "
        f"work from a covariance estimate: {takers}; no row weights). Default: "
        "refuse missing values",
    )


def _add_clean_arguments(clean) -> None:
    _add_data_arguments(
        clean,
        "work on the correlation matrix (clean it; --kind covariance scales it "
        "back by the sample standard deviations)",
    )
    clean.add_argument(
        "--method",
        default=DEFAULT_METHOD,
        type=method_name,
        metavar="NAME",
        help=f"the cleaner, one of {method_choices()}. Class names and "
        f"aliases are accepted too, in any case (default: {DEFAULT_METHOD})",
    )
    clean.add_argument(
        "--out",
        metavar="FILE",
        help="where to write the matrix: .csv, .tsv, .parquet or .npy (default: "
        "CSV on standard output, messages then on standard error)",
    )
    clean.add_argument(
        "--kind",
        choices=("covariance", "correlation"),
        help="which matrix is written (default: correlation with --standardize, "
        "else covariance)",
    )
    clean.add_argument(
        "--report",
        metavar="FILE.png",
        help="where to save the figure (.png, .pdf, .svg or .jpg: the suffix "
        "picks the format)",
    )
    _add_half_life_argument(clean)
    _add_vol_half_life_argument(
        clean,
        "clean the correlation and scale it by the volatility forecast for the "
        "next row",
    )
    clean.add_argument(
        "--seed", type=int, default=0, help="seed of randomised cleaners (default 0)"
    )
    clean.add_argument(
        "--splits",
        type=count_at_least(2, "the spread between splits needs two"),
        metavar="N",
        help="--method split: random splits averaged (default 10); the "
        "summary says how far another --seed moves the result, which falls "
        "as 1 / sqrt(N)",
    )
    clean.add_argument(
        "--sample-level",
        action="store_true",
        help="--method tyler: scale the robust shape to the sample's mean "
        "variance (default: a robust level from the median row norm, below "
        "the variance with heavy tails)",
    )
    clean.set_defaults(func=_cmd_clean)


def _add_half_life_argument(parser) -> None:
    parser.add_argument(
        "--half-life",
        type=positive_rows,
        metavar="ROWS",
        help="weight rows exponentially (last row newest); the effective sample "
        "size replaces the number of rows",
    )


def _add_vol_half_life_argument(parser, then: str) -> None:
    parser.add_argument(
        "--vol-half-life",
        type=positive_rows,
        metavar="ROWS",
        help="devolatilise each column by its causal EWMA volatility with this "
        f"half-life (rows in time order), {then} (daily returns: 11.2 is "
        "RiskMetrics' lambda 0.94)",
    )


def _add_analyze_arguments(analyze) -> None:
    _add_data_arguments(
        analyze,
        "analyse the correlation matrix (every column scaled to unit "
        "variance) instead of the covariance",
    )
    _add_half_life_argument(analyze)
    _add_vol_half_life_argument(
        analyze,
        "analyse the correlation of the devolatilised series (the spectrum "
        "clean --vol-half-life cleans)",
    )
    analyze.add_argument(
        "--json", action="store_true", help="print the report as JSON for machines"
    )
    analyze.set_defaults(func=_cmd_analyze)


# -- bench ---------------------------------------------------------------------
def _add_bench_arguments(bench) -> None:
    from rmtclean.bench import BenchConfig, available_cleaners
    from rmtclean.synthetic import DESIGNS, DISTRIBUTIONS

    default = BenchConfig()
    quick = BenchConfig.quick()

    def listed(values) -> str:
        return ",".join(f"{v:g}" if isinstance(v, float) else str(v) for v in values)

    bench.add_argument(
        "--designs",
        type=csv_list(str),
        help=f"comma-separated designs among {', '.join(DESIGNS)} (default: "
        f"{listed(default.designs)})",
    )
    bench.add_argument(
        "--sizes",
        type=csv_list(int),
        help=f"comma-separated N (default: {listed(default.sizes)})",
    )
    bench.add_argument(
        "--ratios",
        type=csv_list(float),
        help=f"comma-separated T/N (default: {listed(default.ratios)})",
    )
    bench.add_argument(
        "--repeats",
        type=int,
        help=f"repetitions per grid point (default: {default.repeats})",
    )
    bench.add_argument(
        "--cleaners",
        type=csv_list(str),
        help="comma-separated cleaners (default all; oracle and sample always run): "
        + ", ".join(available_cleaners()),
    )
    bench.add_argument(
        "--quick",
        action="store_true",
        help=f"small grid ({len(quick.designs)} designs, N={listed(quick.sizes)}, "
        f"{len(quick.ratios)} ratios, {quick.repeats} repetitions), "
        "about 40 s on 2 idle cores",
    )
    bench.add_argument(
        "--out", default="bench-out", help="output directory (default bench-out)"
    )
    bench.add_argument(
        "--n-jobs",
        type=int,
        default=1,
        help="parallel draws (joblib), -1 = all (default 1)",
    )
    bench.add_argument(
        "--seed", type=int, help=f"seed of the run (default: {default.seed})"
    )
    bench.add_argument(
        "--distribution",
        choices=DISTRIBUTIONS,
        help=f"sampler law (default: {default.distribution})",
    )
    bench.add_argument(
        "--df",
        type=float,
        help="degrees of freedom of the t laws (needed with --distribution "
        "student-t or multivariate-t)",
    )
    bench.add_argument("--rotate", action="store_true", help="Haar-rotate the designs")
    bench.add_argument(
        "--blas-threads",
        type=int,
        default=1,
        help="BLAS/numba threads per draw (default 1; 0 = leave as is)",
    )
    bench.add_argument("--no-progress", action="store_true", help="no progress bar")
    bench.set_defaults(func=_cmd_bench)


def _bench_config(args):
    """The :class:`rmtclean.bench.BenchConfig` that ``bench`` arguments describe."""
    from dataclasses import replace

    from rmtclean.bench import BenchConfig

    base = BenchConfig.quick() if args.quick else BenchConfig()
    changes = {}
    for name in ("designs", "sizes", "ratios", "repeats", "cleaners", "seed"):
        if getattr(args, name) is not None:
            changes[name] = getattr(args, name)
    if args.distribution is not None:
        changes["distribution"] = args.distribution
    if args.df is not None:
        changes["df"] = args.df
    if args.rotate:
        changes["rotate"] = True
    changes["blas_threads"] = args.blas_threads or None
    return replace(base, **changes)


def _bench_command_line(args) -> str:
    parts = ["rmtclean", "bench"]
    if args.quick:
        parts.append("--quick")
    for name in ("designs", "sizes", "ratios", "cleaners"):
        value = getattr(args, name)
        if value is not None:
            parts += [
                f"--{name}",
                ",".join(f"{v:g}" if isinstance(v, float) else str(v) for v in value),
            ]
    for name in ("repeats", "seed", "distribution", "df"):
        value = getattr(args, name)
        if value is not None:
            parts += [
                f"--{name}",
                f"{value:g}" if isinstance(value, float) else str(value),
            ]
    if args.rotate:
        parts.append("--rotate")
    if args.n_jobs != 1:
        parts += ["--n-jobs", str(args.n_jobs)]
    if args.blas_threads != 1:
        parts += ["--blas-threads", str(args.blas_threads)]
    parts += ["--out", str(args.out)]
    return " ".join(parts)


def _cmd_bench(args) -> int:
    import time

    from rmtclean.bench import run_benchmark, write_report
    from rmtclean.demo import CAUTION

    config = _bench_config(args)
    out = Path(args.out)
    start = time.perf_counter()
    run = run_benchmark(
        config,
        out / "results.jsonl",
        n_jobs=args.n_jobs,
        progress=not args.no_progress,
    )
    written = write_report(run, out, command=_bench_command_line(args))
    seconds = time.perf_counter() - start
    print(
        f"{len(run.rows)} cells ({run.n_computed} computed, {run.n_reused} read "
        f"back from {out / 'results.jsonl'}) in {seconds:.1f} s."
    )
    for path in written.values():
        print(f"  wrote {path}")
    print()
    print(CAUTION)
    return 0


_FMT = argparse.RawDescriptionHelpFormatter  # examples keep their lines


# Each command: its add_parser keywords and the function adding its options.
# The options are added only for the command that runs (they may import the
# library to list choices and defaults); the one-line helps cost nothing.
_COMMANDS = {
    "demo": (
        {
            "help": "clean an invented market's covariance with every cleaner",
            "description": "Clean the covariance of an invented market (planted "
            "sector factors, fixed seed) with every cleaner and score each "
            "against the known truth.",
            "epilog": "example: rmtclean demo --assets 200 --days 400 --seed 3",
        },
        _add_demo_arguments,
    ),
    "analyze": (
        {
            "help": "print the bulk report of a data file's spectrum",
            "formatter_class": _FMT,
            "description": wrap_description(
                "Fit the Marchenko-Pastur law to the bulk of DATA's "
                "sample spectrum and report the noise variance, the effective ratio, "
                "the edge, the signal eigenvalues with Tracy-Widom p-values, spike "
                "strengths and eigenvector overlaps."
            ),
            "epilog": "examples:\n"
            "  rmtclean analyze returns.csv --standardize\n"
            "  rmtclean analyze expression.parquet --json > report.json",
        },
        _add_analyze_arguments,
    ),
    "clean": (
        {
            "help": "clean the covariance of a data file and write it with its labels",
            "formatter_class": _FMT,
            "description": wrap_description(
                "Clean the sample covariance (or correlation) of DATA "
                "with a random-matrix cleaner and write it, labelled by DATA's column "
                "names, to --out (CSV, Parquet or .npy by extension) or as CSV to "
                "standard output. --report draws the sample spectrum with the fitted "
                "Marchenko-Pastur density and the cleaner's shrinkage curve."
            ),
            "epilog": "examples:\n"
            "  rmtclean clean returns.csv > cov.csv\n"
            "  rmtclean clean returns.csv --method clip --out cov.parquet\n"
            "  rmtclean clean prices.csv --from-prices --method linear "
            "--standardize --out corr.csv --report spectrum.png",
        },
        _add_clean_arguments,
    ),
    "bench": (
        {
            "help": "compare cleaners on planted-signal designs",
            "description": "Compare every cleaner on planted-signal designs with "
            "known truth: losses, PRIAL, held-out likelihood, condition number, "
            "fit time and memory. Results are appended to OUT/results.jsonl, so "
            "rerunning an interrupted command resumes it.",
            "epilog": "example: rmtclean bench --quick --out bench-out",
        },
        _add_bench_arguments,
    ),
}


def build_parser(command: str | None = "all") -> argparse.ArgumentParser:
    """The argument parser of the ``rmtclean`` command.

    Parameters
    ----------
    command : str or None, default="all"
        The subcommand whose options are added (``"all"``: every one;
        ``None``: none, enough for ``rmtclean --help`` and ``--version``).
    """
    parser = argparse.ArgumentParser(
        prog="rmtclean",
        description="Clean large sample covariance matrices with random-matrix "
        "theory. Run 'rmtclean COMMAND --help' for a command's options.",
        epilog="example: rmtclean clean returns.csv --method kernel --out cov.csv",
    )
    parser.add_argument(
        "--version", action="version", version=f"%(prog)s {__version__}"
    )
    sub = parser.add_subparsers(
        dest="command", metavar="COMMAND", parser_class=CommandParser
    )
    for name, (keywords, add_arguments) in _COMMANDS.items():
        child = sub.add_parser(name, **keywords)
        if command in ("all", name):
            add_arguments(child)
        child.set_defaults(flags=child.flags)
    return parser


def _command_of(argv) -> str | None:
    """The subcommand ``argv`` names (its first word not an option), if any."""
    return next((a for a in argv if not a.startswith("-")), None)


def main(argv=None) -> int:
    """Run the ``rmtclean`` command; returns the exit code."""
    argv = list(sys.argv[1:] if argv is None else argv)
    command = _command_of(argv)
    parser = build_parser(command if command in _COMMANDS else None)
    args = parser.parse_args(argv)
    if getattr(args, "func", None) is None:
        parser.print_help()
        return 2
    with WarningLines(args):
        try:
            return int(args.func(args))
        except BrokenPipeError:  # a reader such as `head` closed the pipe
            import os

            # Python flushes standard output at exit: point it at devnull.
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
            return 1
        except (ValueError, TypeError, OSError, ImportError) as exc:
            message = cli_language(exc, getattr(args, "columns", None), args.flags)
            print(f"rmtclean {args.command}: error: {message}", file=sys.stderr)
            return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
