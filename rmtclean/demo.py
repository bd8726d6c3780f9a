"""The main job in one command: an invented market, every cleaner, the scores.

The scenario is our own: a made-up equity market of 300 assets in 10
sectors with a market factor, traded for two years (500 days). The truth is
known, so each cleaner is scored by its distance to it and by the true
volatility of the minimum-variance portfolio it builds.
"""

from __future__ import annotations

import time
import warnings
from dataclasses import dataclass

import numpy as np
from sklearn.base import clone

from rmtclean.bench.registry import ORACLE, SAMPLE, available_cleaners
from rmtclean.metrics import TERMS, frobenius_loss, oracle_covariance
from rmtclean.spectrum._report import CAUTION
from rmtclean.synthetic import make_design

__all__ = ["DemoResult", "run_demo", "CAUTION"]


TRADING_DAYS = 252


@dataclass(frozen=True)
class DemoResult:
    """Scores of every cleaner on the invented market.

    Attributes
    ----------
    n_assets, n_days : int
    report : str
        The spectrum report of the sample (``analyze_spectrum``).
    rows : list of tuple
        ``(name, frobenius_loss, true annualised minimum-variance
        volatility in percent, fit seconds)``, the oracle first; the names
        are those of ``rmtclean bench`` (``oracle``, ``sample``,
        ``sk.LedoitWolf``, ..., the registry's class names). The fit
        seconds are one fit's wall time after an untimed fit of the same
        estimator on the same data, which pays for compiling or loading the
        kernels (numba's cache) once per process.
    notes : tuple of str
        One line per cleaner that chose among others (AutoShrink): what it
        chose and by which held-out scores.
    """

    n_assets: int
    n_days: int
    report: str
    rows: list
    notes: tuple = ()

    def __str__(self) -> str:
        head = (
            f"{'cleaner':<22}{'Frobenius loss':>16}{'loss ratio':>12}"
            f"{'min-var vol %':>15}{'fit s':>8}"
        )
        lines = [head, "-" * len(head)]
        sample = next(r[1] for r in self.rows if r[0] == SAMPLE)
        for name, loss, vol, secs in self.rows:
            lines.append(
                f"{name:<22}{loss:>16.4g}{loss / sample:>12.3f}{vol:>15.3f}{secs:>8.3f}"
            )
        if self.notes:
            lines += ["", *self.notes]
        lines += [""] + [TERMS[w] for w in ("loss ratio", "oracle", "sample", "sk.")]
        return "\n".join(lines)


def _cleaners(random_state: int) -> list:
    """``rmtclean bench``'s cleaners that run at every size, the oracle aside.

    (sk.GraphicalLasso, limited to small N by the benchmark, is left out.)
    """
    return [
        (spec.name, spec.factory(random_state))
        for spec in available_cleaners().values()
        if spec.factory is not None and spec.max_features is None
    ]


#: The market and the 10 sectors.
N_PLANTED = 11


def _count_line(report, truth: np.ndarray) -> str:
    """The report's count against the planted factors, in one line.

    A planted factor is visible to the report only if its eigenvalue of the
    true correlation matrix exceeds the BBP threshold ``critical_spike``
    (Baik, Ben Arous & Peche 2005); weaker ones stay in the noise bulk.
    """
    scale = np.sqrt(np.diag(truth))
    population = np.linalg.eigvalsh(truth / np.outer(scale, scale))
    visible = min(int(np.count_nonzero(population > report.critical_spike)), N_PLANTED)
    line = (
        f"Planted factors: {N_PLANTED}; above the BBP threshold "
        f"{report.critical_spike:.3g} in the true correlation: {visible}; "
        f"found by the report: {report.n_signal}"
    )
    if report.n_signal == visible:
        return line + "."
    if report.n_signal < visible:
        return line + (
            f" ({visible - report.n_signal} too close to the bulk edge for the "
            f"Tracy-Widom tests at level {report.alpha:g} in {report.n_observations} "
            "days)."
        )
    return line + (
        f" ({report.n_signal - visible} more: Tracy-Widom false alarms or the "
        "spread of the heteroscedastic noise)."
    )


def _min_variance_vol(covariance: np.ndarray, truth: np.ndarray) -> float:
    ones = np.ones(truth.shape[0])
    w = np.linalg.solve(covariance, ones)
    w /= w.sum()
    return float(np.sqrt(w @ truth @ w * TRADING_DAYS) * 100.0)


def run_demo(
    *, n_assets: int = 300, n_days: int = 500, random_state: int = 7
) -> DemoResult:
    """Clean the invented market's covariance with every cleaner.

    Parameters
    ----------
    n_assets, n_days : int
        Size of the invented market (defaults: 300 assets, two years).
    random_state : int
        Seed of the scenario.

    Returns
    -------
    DemoResult

    Examples
    --------
    >>> from rmtclean.demo import run_demo
    >>> result = run_demo(n_assets=40, n_days=80, random_state=0)
    >>> result.rows[0][0]
    'oracle'
    """
    from rmtclean.spectrum import analyze_spectrum

    rng = np.random.default_rng(random_state)
    design = make_design(
        "block-factor",
        n_assets,
        n_blocks=10,
        market_variance=1.0,
        block_variance=0.6,
        random_state=rng,
    )
    daily = 1e-4  # variances of daily returns near 1% volatility squared
    truth = np.asarray(design.covariance) * daily
    X = design.sample(n_days, distribution="gaussian", random_state=rng)
    X *= np.sqrt(daily)
    found = analyze_spectrum(X, standardize=True)
    report = f"{found}\n{_count_line(found, truth)}"
    rows, notes = [], []
    oracle = oracle_covariance(X, truth)
    rows.append(
        (ORACLE, frobenius_loss(oracle, truth), _min_variance_vol(oracle, truth), 0.0)
    )
    for name, est in _cleaners(random_state):
        with warnings.catch_warnings():  # a warm-up: compile and load, untimed
            warnings.simplefilter("ignore")
            clone(est).fit(X)
        start = time.perf_counter()
        est.fit(X)
        secs = time.perf_counter() - start
        cov = np.asarray(est.covariance_, dtype=float)
        rows.append(
            (name, frobenius_loss(cov, truth), _min_variance_vol(cov, truth), secs)
        )
        if hasattr(est, "describe_choice"):
            notes.append(
                f"{name}: {est.describe_choice()}; the held-out log-likelihood "
                "weighs the small eigenvalues, the Frobenius loss the large ones"
            )
    return DemoResult(
        n_assets=n_assets, n_days=n_days, report=report, rows=rows, notes=tuple(notes)
    )
