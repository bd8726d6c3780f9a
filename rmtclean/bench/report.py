"""The report of a run: markdown and CSV tables, and the figures."""

from __future__ import annotations

import csv
import math
import os
import platform
from pathlib import Path

import numpy as np
import sklearn

from rmtclean.bench.plan import BenchConfig, draw
from rmtclean.bench.registry import SAMPLE
from rmtclean.bench.run import BenchRun, _dense_covariance, limit_threads
from rmtclean.bench.stats import summarize
from rmtclean.metrics import TERMS

__all__ = ["format_markdown", "shrinkage_curves", "write_report"]


def _fmt(value: float, se: float = math.nan, *, scale: float = 1.0) -> str:
    if value is None or math.isnan(value):
        return "—"
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    value *= scale
    text = f"{value:.3g}" if abs(value) < 1e4 else f"{value:.2e}"
    if not math.isnan(se):
        se *= scale
        text += f" ± {se:.2g}"
    return text


_TABLE = [
    ("PRIAL %", "prial", 1.0),
    ("PRIAL-MV %", "prial_mv", 1.0),
    ("Frobenius", "frobenius", 1.0),
    ("Stein", "stein", 1.0),
    ("MV loss", "min_variance", 1.0),
    ("log-lik/N", "loglik", 1.0),
    ("cond", "condition", 1.0),
    ("fit ms", "fit_seconds", 1000.0),
    ("peak MiB", "peak_mib", 1.0),
]


def _memory_note(config: BenchConfig) -> str:
    """Which repetitions the peak memory column comes from, when not all."""
    k = config.memory_repeats
    if not config.measure_memory or k is None or k >= config.repeats:
        return ""
    return " (first repetition only)" if k == 1 else f" (first {k} repetitions)"


def format_markdown(
    summary: list[dict], config: BenchConfig, *, command: str | None = None
) -> str:
    """The markdown report: settings, caution, one table per design.

    Parameters
    ----------
    summary : list of dict
        Output of :func:`summarize`.
    config : BenchConfig
        The grid (printed in the header).
    command : str, optional
        The command line that produced the run.

    Returns
    -------
    str
    """
    from rmtclean.demo import CAUTION

    lines = ["# rmtclean bench", ""]
    if command:
        lines += ["```", command, "```", ""]
    lines += [
        f"Designs {', '.join(config.designs)}; N in {list(config.sizes)}; "
        f"T/N in {list(config.ratios)}; {config.repeats} repetitions; seed "
        f"{config.seed}; {config.distribution} samples"
        + (f" (df {config.df:g})" if config.df is not None else "")
        + ("; rotated designs" if config.rotate else "")
        + ".",
        "",
        f"Machine: {platform.machine()}, {os.cpu_count()} cores; Python "
        f"{platform.python_version()}, numpy {np.__version__}, scikit-learn "
        f"{sklearn.__version__}.",
        "",
        "Entries are mean ± standard error over repetitions. "
        f"{TERMS['PRIAL']} (Frobenius loss; PRIAL-MV with the "
        "minimum-variance loss, undefined where the sample covariance is "
        f"singular). {TERMS['oracle']}. {TERMS['sk.']}. "
        "Losses are normalised by N (Ledoit-Wolf); log-lik/N is the "
        "held-out Gaussian log-likelihood per sample divided by N; fit ms is one "
        "fit's wall time; peak MiB is traced numpy memory of a fit"
        + _memory_note(config)
        + ".",
        "",
        f"> {CAUTION}",
        "",
    ]
    header = "| N | T/N | cleaner | " + " | ".join(h for h, _, _ in _TABLE) + " |"
    rule = "|" + "---|" * (3 + len(_TABLE))
    for design in config.designs:
        entries = [e for e in summary if e["design"] == design]
        if not entries:
            continue
        lines += [f"## {design}", "", header, rule]
        for e in entries:
            cells = [str(e["n_features"]), f"{e['ratio']:g}", e["cleaner"]]
            for _, key, scale in _TABLE:
                cells.append(_fmt(e[key], e[key + "_se"], scale=scale))
            if e["n_errors"]:
                cells[2] += f" ({e['n_errors']} failed)"
            lines.append("| " + " | ".join(cells) + " |")
        lines.append("")
    return "\n".join(lines)


def _write_csv(path: Path, rows: list[dict]) -> None:
    if not rows:
        path.write_text("", encoding="utf-8")
        return
    fields = list(rows[0])
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=fields, extrasaction="ignore")
        writer.writeheader()
        for row in rows:
            writer.writerow(row)


def shrinkage_curves(
    config: BenchConfig, design: str, n_features: int, ratio: float, specs
) -> tuple[np.ndarray, dict, np.ndarray, int]:
    """Sample vs cleaned eigenvalues of draw 0 for every cleaner.

    The cleaned value of sample eigenvector ``u_i`` is ``u_i' C u_i``, which
    for a cleaner that keeps the sample eigenvectors is its cleaned
    eigenvalue; the oracle's is ``u_i' Sigma u_i``. The fits run under the
    run's thread limit (``config.blas_threads``), as the grid's do: on a
    shared 2-core machine at load 4, threaded BLAS on these small matrices
    spun and the quick grid's four calls took 17-37 s, against 1.8 s on one
    thread.

    Returns
    -------
    sample : ndarray of shape (N,)
        Sample eigenvalues, descending (null space's zeros last).
    cleaned : dict of str to ndarray of shape (N,)
    oracle : ndarray of shape (N,)
    n_samples : int
        Training rows T.
    """
    truth, X, _ = draw(config, design, n_features, ratio, 0)
    centred = X - X.mean(axis=0)
    values, vectors = np.linalg.eigh(centred.T @ centred / (X.shape[0] - 1))
    values, vectors = np.maximum(values[::-1], 0.0), vectors[:, ::-1]

    def along(cov):
        return np.einsum("ij,ij->j", vectors, cov @ vectors)

    oracle = along(np.asarray(truth.covariance))
    cleaned = {}
    random_state = int(np.random.SeedSequence(config.seed).generate_state(1)[0])
    with limit_threads(config.blas_threads):
        for name, spec in specs.items():
            if spec.factory is None or name == SAMPLE:
                continue
            if not spec.feasible(n_features):
                continue
            try:
                est = spec.factory(random_state).fit(X)
            except Exception:  # the tables record the failure; skip the curve
                continue
            cleaned[name] = along(_dense_covariance(est))
    return values, cleaned, oracle, X.shape[0]


def write_report(run: BenchRun, out_dir, *, command: str | None = None) -> dict:
    """Write summary.md, summary.csv, results.csv and the PNG figures.

    Parameters
    ----------
    run : BenchRun
    out_dir : str or Path
    command : str, optional
        Command line shown in the report.

    Returns
    -------
    dict
        Name -> Path of each file written (figures only when matplotlib is
        installed).
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    summary = summarize(run.rows)
    written = {}
    md = out_dir / "summary.md"
    md.write_text(format_markdown(summary, run.config, command=command) + "\n")
    written["summary.md"] = md
    _write_csv(out_dir / "summary.csv", summary)
    written["summary.csv"] = out_dir / "summary.csv"
    _write_csv(out_dir / "results.csv", run.rows)
    written["results.csv"] = out_dir / "results.csv"
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        return written
    written.update(_write_figures(run, summary, out_dir))
    return written


def _write_figures(run: BenchRun, summary, out_dir: Path) -> dict:
    from rmtclean import plotting

    config = run.config
    n = max(config.sizes)
    ratio = sorted(config.ratios)[len(config.ratios) // 2]
    written = {}
    fig = plotting.plot_prial(summary, n_features=n)
    written["prial.png"] = plotting.save_figure(fig, out_dir / "prial.png")
    curves = {
        d: shrinkage_curves(config, d, n, ratio, run.cleaners) for d in config.designs
    }
    fig, axes = plotting.panel_grid(len(config.designs))
    for ax, (design, (sample, cleaned, oracle, t)) in zip(
        axes, curves.items(), strict=True
    ):
        plotting.plot_shrinkage(
            sample, cleaned, oracle, ax=ax, title=f"{design}: N={n}, T={t}"
        )
    written["shrinkage.png"] = plotting.save_figure(fig, out_dir / "shrinkage.png")
    fig, axes = plotting.panel_grid(len(config.designs))
    for ax, (design, (sample, _, _, t)) in zip(axes, curves.items(), strict=True):
        plotting.plot_spectrum(
            sample[: min(n, t - 1)], t - 1, n, ax=ax, title=f"{design}: N={n}, T={t}"
        )
    written["spectrum.png"] = plotting.save_figure(fig, out_dir / "spectrum.png")
    return written
