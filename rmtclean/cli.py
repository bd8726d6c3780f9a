"""The ``rmtclean`` command."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

__all__ = ["main", "build_parser"]

#: Fewest observations (after any price conversion) the data commands accept.
MIN_ROWS = 3


def _cmd_demo(args) -> int:
    from rmtclean.demo import CAUTION, run_demo

    result = run_demo(n_assets=args.assets, n_days=args.days, random_state=args.seed)
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


# -- clean and analyze --------------------------------------------------------
def _method_choices() -> str:
    """The registry's short names with their descriptions, on one line."""
    from rmtclean.estimators import CLEANERS

    return "; ".join(f"{e.short}: {e.description}" for e in CLEANERS)


def _method_name(text: str) -> str:
    """The class name of the cleaner ``text`` names (short, class or alias)."""
    from rmtclean.estimators import find_cleaner

    try:
        return find_cleaner(text).name
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"unknown method {text!r}; choose among {_method_choices()}"
        ) from None


def _load_returns(args):
    """The returns table of ``args.data``: read, checked, prices handled."""
    from rmtclean.io import (
        looks_like_prices,
        numeric_matrix,
        prices_to_returns,
        read_table,
        successive_difference_ratio,
    )

    source = f"DATA {args.data!r}"
    frame = read_table(args.data)
    extra = 1 if args.from_prices else 0
    frame = numeric_matrix(frame, min_rows=MIN_ROWS + extra, source=source)
    if args.from_prices:
        return prices_to_returns(frame)
    if not args.assume_returns and looks_like_prices(frame.to_numpy()):
        import numpy as np

        ratio = float(np.nanmedian(successive_difference_ratio(frame.to_numpy())))
        raise ValueError(
            f"{source} looks like prices, not returns: every value is positive "
            f"and the columns move in small steps (median successive-difference "
            f"ratio {ratio:.3g}, returns give about 1). Pass --from-prices to "
            "convert to log returns, or --assume-returns to use them as they are."
        )
    return frame


def _check_complete(frame, args, source: str) -> None:
    n_missing = int(frame.isna().to_numpy().sum())
    if n_missing and getattr(args, "missing", None) is None:
        hint = (
            "pass --missing pairwise or --missing em to estimate from incomplete data"
            if hasattr(args, "missing")
            else "fill or drop them first (rmtclean clean accepts --missing)"
        )
        raise ValueError(f"{source} has {n_missing} missing value(s); {hint}.")


def _build_estimator(args):
    from rmtclean.estimators import find_cleaner

    est = find_cleaner(args.method).cls()
    params = est.get_params()
    wanted = {"standardize": args.standardize}
    if args.half_life is not None:
        wanted["half_life"] = args.half_life
    if getattr(args, "vol_half_life", None) is not None:
        wanted["vol_half_life"] = args.vol_half_life
    if args.missing is not None:
        wanted["missing"] = args.missing
    if "random_state" in params:
        wanted["random_state"] = args.seed
    for name, value in wanted.items():
        if name not in params and value not in (False, None):
            flag = "--" + name.replace("_", "-")
            raise ValueError(f"{flag}: {args.method} has no {name!r} parameter.")
    return est.set_params(**{k: v for k, v in wanted.items() if k in params})


def _report_figure(est, frame, args):
    from rmtclean.plotting import panel_grid, plot_shrinkage, plot_spectrum

    k = est.spectrum_.n_components
    n_features = frame.shape[1]
    fig, (left, right) = panel_grid(2)
    what = "correlation" if args.standardize else "covariance"
    plot_spectrum(
        est.sample_eigenvalues_[:k],
        est.degrees_of_freedom_,
        n_features,
        n_signal=est.n_signal_,
        ax=left,
        title=f"sample {what} spectrum (N={n_features}, T={frame.shape[0]})",
    )
    plot_shrinkage(
        est.sample_eigenvalues_,
        {args.method: est.eigenvalues_},
        ax=right,
        title=f"{args.method}: cleaned vs sample eigenvalues",
    )
    return fig


def _save_figure(fig, target) -> None:
    from rmtclean.io import atomic_path

    path = Path(target)
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format=path.suffix.lstrip(".").lower() or "png")


def _cmd_clean(args) -> int:
    from rmtclean.demo import CAUTION
    from rmtclean.io import write_table

    frame = _load_returns(args)
    _check_complete(frame, args, f"DATA {args.data!r}")
    est = _build_estimator(args).fit(frame)
    kind = args.kind or ("correlation" if args.standardize else "covariance")
    matrix = (
        est.correlation_frame() if kind == "correlation" else est.covariance_frame()
    )
    # Build everything before writing anything: a failure leaves no file.
    fig = _report_figure(est, frame, args) if args.report else None
    if args.out:
        write_table(matrix, args.out)
    if fig is not None:
        _save_figure(fig, args.report)
    T, N = frame.shape
    signal = "not computed" if est.n_signal_ is None else str(est.n_signal_)
    print(f"{args.method} on {args.data}: {T} observations of {N} variables")
    print(
        f"  degrees of freedom: {est.degrees_of_freedom_:.6g}  (N / dof = "
        f"{N / est.degrees_of_freedom_:.4g})"
    )
    print(f"  signal eigenvalues: {signal}")
    print(
        f"  cleaned {kind}: "
        + (f"written to {args.out}" if args.out else "not written (no --out)")
    )
    if args.report:
        print(f"  figure: {args.report}")
    print()
    print(CAUTION)
    return 0


def _cmd_analyze(args) -> int:
    from rmtclean.demo import CAUTION

    frame = _load_returns(args)
    _check_complete(frame, args, f"DATA {args.data!r}")
    from rmtclean.spectrum import analyze_spectrum

    report = analyze_spectrum(frame.to_numpy(), standardize=args.standardize)
    if args.json:
        payload = {
            "data": str(args.data),
            "n_samples": int(frame.shape[0]),
            "n_features": int(frame.shape[1]),
            "standardize": bool(args.standardize),
            "report": report.to_dict(),
            "caution": CAUTION,
        }
        print(json.dumps(payload, indent=2, default=_json_default))
    else:
        print(
            f"Spectrum of {args.data}: {frame.shape[0]} observations of "
            f"{frame.shape[1]} variables\n"
        )
        print(report)
        print()
        print(CAUTION)
    return 0


def _json_default(value):
    import numpy as np

    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, np.generic):
        return value.item()
    raise TypeError(f"cannot write {type(value).__name__} as JSON")


def _add_data_arguments(parser) -> None:
    parser.add_argument(
        "data",
        metavar="DATA",
        help="CSV, TSV or Parquet file (or .npy): rows are observations, columns "
        "variables; a first column of labels (dates, names) is the index",
    )
    parser.add_argument(
        "--standardize",
        action="store_true",
        help="work on the correlation matrix (clean it, then restore variances)",
    )
    parser.add_argument(
        "--from-prices",
        action="store_true",
        help="DATA holds prices: convert them to log returns first",
    )
    parser.add_argument(
        "--assume-returns",
        action="store_true",
        help="skip the price check (positive data moving in small steps)",
    )


def _add_data_parsers(sub) -> None:
    fmt = argparse.RawDescriptionHelpFormatter
    clean = sub.add_parser(
        "clean",
        help="clean the covariance of a data file and write it with its labels",
        formatter_class=fmt,
        description="Clean the sample covariance (or correlation) of DATA with a "
        "random-matrix cleaner and write it, labelled by DATA's column names, to "
        "--out (CSV, Parquet or .npy by extension). --report draws the sample "
        "spectrum with the fitted Marchenko-Pastur density and the cleaner's "
        "shrinkage curve.",
        epilog="examples:\n"
        "  rmtclean clean returns.csv --method KernelShrink --out cov.parquet\n"
        "  rmtclean clean prices.csv --from-prices --method EigenClip "
        "--standardize --out corr.csv --report spectrum.png",
    )
    _add_data_arguments(clean)
    clean.add_argument(
        "--missing",
        choices=("pairwise", "em"),
        help="estimate from incomplete data (NaN or empty cells): pairwise "
        "deletion or Gaussian EM; default: refuse missing values",
    )
    clean.add_argument(
        "--method",
        required=True,
        type=_method_name,
        metavar="NAME",
        help=f"the cleaner, one of {_method_choices()}. Class names and "
        "aliases are accepted too, in any case",
    )
    clean.add_argument("--out", metavar="FILE", help="where to write the matrix")
    clean.add_argument(
        "--kind",
        choices=("covariance", "correlation"),
        help="which matrix --out holds (default: correlation with --standardize, "
        "else covariance)",
    )
    clean.add_argument("--report", metavar="FILE.png", help="where to save the figure")
    clean.add_argument(
        "--half-life",
        type=float,
        metavar="ROWS",
        help="weight rows exponentially (last row newest); the effective sample "
        "size replaces the number of rows",
    )
    clean.add_argument(
        "--vol-half-life",
        type=float,
        metavar="ROWS",
        help="devolatilise each column by its causal EWMA volatility with this "
        "half-life (rows in time order), clean the correlation and scale it by "
        "the volatility forecast for the next row (daily returns: 11.2 is "
        "RiskMetrics' lambda 0.94)",
    )
    clean.add_argument(
        "--seed", type=int, default=0, help="seed of randomised cleaners (default 0)"
    )
    clean.set_defaults(func=_cmd_clean)

    analyze = sub.add_parser(
        "analyze",
        help="print the bulk report of a data file's spectrum",
        formatter_class=fmt,
        description="Fit the Marchenko-Pastur law to the bulk of DATA's sample "
        "spectrum and report the noise variance, the effective ratio, the edge, "
        "the signal eigenvalues with Tracy-Widom p-values, spike strengths and "
        "eigenvector overlaps.",
        epilog="examples:\n"
        "  rmtclean analyze returns.csv --standardize\n"
        "  rmtclean analyze expression.parquet --json > report.json",
    )
    _add_data_arguments(analyze)
    analyze.add_argument(
        "--json", action="store_true", help="print the report as JSON for machines"
    )
    analyze.set_defaults(func=_cmd_analyze)


# -- bench ---------------------------------------------------------------------
def _csv_list(kind):
    def parse(text: str):
        try:
            return [kind(item) for item in text.split(",") if item.strip()]
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"expected a comma-separated list of {kind.__name__}, got {text!r}"
            ) from None

    return parse


def _add_bench_parser(sub) -> None:
    from rmtclean.bench import available_cleaners
    from rmtclean.synthetic import DESIGNS, DISTRIBUTIONS

    bench = sub.add_parser(
        "bench",
        help="compare cleaners on planted-signal designs",
        description="Compare every cleaner on planted-signal designs with known "
        "truth: losses, PRIAL, held-out likelihood, condition number, fit time "
        "and memory. Results are appended to OUT/results.jsonl, so rerunning an "
        "interrupted command resumes it.",
        epilog="example: rmtclean bench --quick --out bench-out",
    )
    bench.add_argument(
        "--designs",
        type=_csv_list(str),
        help=f"comma-separated designs among {', '.join(DESIGNS)}",
    )
    bench.add_argument("--sizes", type=_csv_list(int), help="comma-separated N")
    bench.add_argument("--ratios", type=_csv_list(float), help="comma-separated T/N")
    bench.add_argument("--repeats", type=int, help="repetitions per grid point")
    bench.add_argument(
        "--cleaners",
        type=_csv_list(str),
        help="comma-separated cleaners (default all; oracle and sample always run): "
        + ", ".join(available_cleaners()),
    )
    bench.add_argument(
        "--quick",
        action="store_true",
        help="small grid (4 designs, N=100, 4 ratios, 3 repetitions), < 60 s",
    )
    bench.add_argument(
        "--out", default="bench-out", help="output directory (default bench-out)"
    )
    bench.add_argument(
        "--n-jobs", type=int, default=1, help="parallel draws (joblib), -1 = all"
    )
    bench.add_argument("--seed", type=int, help="seed of the run (default 0)")
    bench.add_argument(
        "--distribution", choices=DISTRIBUTIONS, help="sampler law (default gaussian)"
    )
    bench.add_argument("--df", type=float, help="degrees of freedom of the t laws")
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


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``rmtclean`` command."""
    parser = argparse.ArgumentParser(
        prog="rmtclean",
        description="Clean large sample covariance matrices with random-matrix theory.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    demo = sub.add_parser(
        "demo",
        help="clean an invented market's covariance with every cleaner",
        description="Clean the covariance of an invented market (planted sector "
        "factors, fixed seed) with every cleaner and score each against the "
        "known truth.",
        epilog="example: rmtclean demo --assets 200 --days 400 --seed 3",
    )
    demo.add_argument("--assets", type=int, default=300, help="number of assets")
    demo.add_argument("--days", type=int, default=500, help="number of days")
    demo.add_argument("--seed", type=int, default=7, help="scenario seed")
    demo.set_defaults(func=_cmd_demo)
    _add_data_parsers(sub)
    _add_bench_parser(sub)
    return parser


def main(argv=None) -> int:
    """Run the ``rmtclean`` command; returns the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "func", None) is None:
        parser.print_help()
        return 2
    try:
        return int(args.func(args))
    except (ValueError, TypeError, OSError, ImportError) as exc:
        message = " ".join(str(exc).split())  # one line, whatever raised it
        print(f"rmtclean {args.command}: error: {message}", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
