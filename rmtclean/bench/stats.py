"""Means, standard errors and PRIAL over the repetitions of a run."""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping

import numpy as np

from rmtclean.bench.plan import METRICS, n_samples_for
from rmtclean.bench.registry import ORACLE, SAMPLE
from rmtclean.metrics import prial

__all__ = ["summarize"]


def _mean_se(values) -> tuple[float, float]:
    arr = np.asarray(values, dtype=np.float64)
    if arr.size == 0:
        return math.nan, math.nan
    if not np.all(np.isfinite(arr)):
        return float(np.mean(arr)), math.nan
    se = float(np.std(arr, ddof=1) / math.sqrt(arr.size)) if arr.size > 1 else math.nan
    return float(np.mean(arr)), se


def _prial_se(est, sample, oracle, value) -> float:
    """Delta-method standard error of a ratio of means (paired draws)."""
    n = est.size
    if n < 2 or not math.isfinite(value):
        return math.nan
    a = sample - est
    b = sample - oracle
    ratio = value / 100.0
    return float(100.0 * np.std(a - ratio * b, ddof=1) / math.sqrt(n) / np.mean(b))


def _prial_of(rows: list[dict], by_rep: dict, metric: str) -> tuple[float, float]:
    est, sample, oracle = [], [], []
    for row in rows:
        ref = by_rep.get(row["rep"], {})
        if SAMPLE in ref and ORACLE in ref:
            est.append(row[metric])
            sample.append(ref[SAMPLE][metric])
            oracle.append(ref[ORACLE][metric])
    if not est:
        return math.nan, math.nan
    est, sample, oracle = (
        np.asarray(v, dtype=np.float64) for v in (est, sample, oracle)
    )
    try:
        value = prial(est, sample, oracle)
    except ValueError:  # infinite losses (singular sample) or no gap
        return math.nan, math.nan
    return value, _prial_se(est, sample, oracle, value)


def summarize(rows: Iterable[Mapping]) -> list[dict]:
    """Mean and standard error over repetitions, per (design, N, ratio, cleaner).

    Parameters
    ----------
    rows : iterable of dict
        Results rows (:attr:`BenchRun.rows` or :func:`load_results`), of
        one seed, distribution and rotation.

    Returns
    -------
    list of dict
        Keys ``design, n_features, ratio, n_samples, cleaner, n_reps,
        n_errors``, ``<metric>`` and ``<metric>_se`` for each of
        :data:`METRICS`, and ``prial``, ``prial_se`` (Frobenius loss) and
        ``prial_mv``, ``prial_mv_se`` (minimum-variance loss), in percent.

    Notes
    -----
    PRIAL is :func:`rmtclean.metrics.prial` over the repetitions where the
    cleaner, the sample covariance and the oracle all succeeded; its
    standard error is the delta-method one of a ratio of means on paired
    draws, :math:`100\\,\\mathrm{sd}(a_r - R b_r)/(\\sqrt{n}\\,\\bar b)` with
    :math:`a_r = L_S - L_{\\hat\\Sigma}`, :math:`b_r = L_S - L_{S^*}`. It is
    NaN where a mean loss is infinite (e.g. the minimum-variance loss of a
    singular sample covariance). ``peak_mib`` is averaged over the
    repetitions where it was measured (see ``BenchConfig.memory_repeats``);
    from one repetition its standard error is NaN.
    """
    groups: dict[tuple, list[dict]] = {}
    for row in rows:
        key = (row["design"], row["n_features"], row["ratio"])
        groups.setdefault(key, []).append(dict(row))
    out = []
    for (design, n, ratio), group in groups.items():
        by_rep: dict[int, dict] = {}
        by_cleaner: dict[str, list[dict]] = {}
        for row in group:
            by_cleaner.setdefault(row["cleaner"], []).append(row)
            if row["status"] == "ok":
                by_rep.setdefault(row["rep"], {})[row["cleaner"]] = row
        for cleaner, crow in by_cleaner.items():
            ok = [r for r in crow if r["status"] == "ok"]
            entry = {
                "design": design,
                "n_features": n,
                "ratio": ratio,
                "n_samples": crow[0].get("n_samples", n_samples_for(n, ratio)),
                "cleaner": cleaner,
                "n_reps": len(ok),
                "n_errors": len(crow) - len(ok),
            }
            for metric in METRICS:
                values = [r[metric] for r in ok]
                if metric == "peak_mib":  # NaN: not measured on that draw
                    values = [v for v in values if not math.isnan(v)]
                entry[metric], entry[metric + "_se"] = _mean_se(values)
            entry["prial"], entry["prial_se"] = _prial_of(ok, by_rep, "frobenius")
            entry["prial_mv"], entry["prial_mv_se"] = _prial_of(
                ok, by_rep, "min_variance"
            )
            out.append(entry)
    return out
