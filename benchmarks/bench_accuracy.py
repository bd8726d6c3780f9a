"""Accuracy goals of issue 3: KernelShrink's PRIAL against scikit-learn's LedoitWolf.

Goals, at N = 200 features and T = 600 samples, 50 repetitions:

- Ledoit & Wolf's Monte Carlo design (population eigenvalues 20% at 1, 40%
  at 3, 40% at 10; ``make_design("mixture")``): KernelShrink PRIAL >= 95%;
- a spiked design with three spikes (``make_design("spiked")``, spikes 10,
  5 and 3 over unit noise, all above the BBP threshold 1 + sqrt(N/T)):
  KernelShrink PRIAL >= 90%;
- in both, KernelShrink's PRIAL above that of
  ``sklearn.covariance.LedoitWolf``.

PRIAL is Ledoit & Wolf's (2012, Ann. Statist. 40(2); 2020, Ann. Statist.
48(5)) percentage relative improvement in average Frobenius loss,
``rmtclean.metrics.prial``::

    PRIAL = 100 (mean L(S) - mean L(estimate)) / (mean L(S) - mean L(S*))

with means over the repetitions taken separately (a ratio of averages, not
an average of ratios), L the squared Frobenius loss over N
(``rmtclean.metrics.frobenius_loss``), S the sample covariance of the
demeaned data with divisor T - 1 (``rmtclean.bench.SampleCovariance``, the
degrees of freedom rmtclean's rules and oracle use) and S* the finite-sample
oracle ``U diag(u_i' Sigma u_i) U'`` (``rmtclean.metrics.oracle_covariance``).
The other cleaners of rmtclean are reported as context.

The standard error of a PRIAL is a paired bootstrap over repetitions: the
repetition indices are resampled with replacement (the same indices for
every cleaner, so the losses stay paired with those of S and S*),
``prial`` is recomputed on each resample, and the SE is the standard
deviation of the resampled PRIALs. The same resamples give the SE of the
difference KernelShrink - LedoitWolf. A goal is PASS when the point
estimate meets it; the margin is also printed in SE units.

Every cleaner is fitted to the same draws (common random numbers). Draw r
of a design uses ``SeedSequence([seed, design index, r])`` (design index 0
for the 1/3/10 design, 1 for the spiked one), so a run is reproducible and
a draw does not depend on ``--reps``. The data are Gaussian and the truth
diagonal: every cleaner here is rotation-equivariant, so a random rotation
of the truth would not change the distribution of its losses. BLAS, OpenMP
and numba run on one thread; the first fit of each cleaner (numba
compilation or cache load) is not timed.

Run::

    python benchmarks/bench_accuracy.py             # N = 200, T = 600, 50 reps
    python benchmarks/bench_accuracy.py --reps 2 --n-features 40 --n-samples 120
"""

from __future__ import annotations

import argparse
import math
import platform
import time
import warnings

import numpy as np
import scipy
import sklearn
from sklearn.base import clone
from sklearn.covariance import LedoitWolf
from threadpoolctl import threadpool_info

import rmtclean
from rmtclean.bench import SampleCovariance, limit_threads
from rmtclean.estimators import CLEANERS, KernelShrink, find_cleaner
from rmtclean.metrics import frobenius_loss, oracle_covariance, prial
from rmtclean.synthetic import Design, make_design

SAMPLE = "sample"
ORACLE = "oracle"
KERNEL = KernelShrink.__name__
LEDOIT_WOLF = "sk.LedoitWolf"
#: The library's other cleaners, shown for context.
CONTEXT = tuple(e.name for e in CLEANERS if e.cls is not KernelShrink)
#: The three spikes of the spiked design, in units of the noise variance 1.
SPIKES = (10.0, 5.0, 3.0)
#: Goals of issue 3: design name -> lowest acceptable KernelShrink PRIAL (%).
GOALS = {"1/3/10": 95.0, "spiked": 90.0}
N_BOOTSTRAP = 2000


def cleaners(seed: int) -> dict[str, object]:
    """Unfitted estimators, by the name used in the tables."""
    out = {
        SAMPLE: SampleCovariance(),
        LEDOIT_WOLF: LedoitWolf(),
        KERNEL: KernelShrink(),
    }
    for name in CONTEXT:
        est = find_cleaner(name).cls()
        if "random_state" in est.get_params(deep=False):
            est.set_params(random_state=seed)
        out[name] = est
    return out


def designs(n_features: int) -> dict[str, Design]:
    """The two designs of the goals, by their name in the tables."""
    return {
        "1/3/10": make_design(
            "mixture", n_features, levels=(1.0, 3.0, 10.0), weights=(0.2, 0.4, 0.4)
        ),
        "spiked": make_design("spiked", n_features, spikes=SPIKES, noise_variance=1.0),
    }


def describe(name: str, design: Design, n_samples: int) -> str:
    """One line on a design: its eigenvalues and, if spiked, the BBP check."""
    values, counts = np.unique(design.eigenvalues, return_counts=True)
    levels = ", ".join(
        f"{c} at {v:g}" for v, c in zip(values[::-1], counts[::-1], strict=True)
    )
    text = f"{name}: population eigenvalues {levels}"
    if design.name == "spiked":
        q = design.n_features / (n_samples - 1)
        edge = 1.0 + math.sqrt(q)
        above = all(s > edge for s in SPIKES)
        text += (
            f"; BBP threshold 1 + sqrt(N/(T-1)) = {edge:.3f}, every spike "
            f"{'above' if above else 'NOT above'} it"
        )
    return text


def _dense(est) -> np.ndarray:
    cov = getattr(est, "covariance_", None)
    if cov is None:  # rmtclean fitted without a dense covariance_
        cov = est.spectrum_.to_dense()
    return np.asarray(cov, dtype=np.float64)


def run_design(
    design: Design,
    design_index: int,
    prototypes: dict[str, object],
    *,
    n_samples: int,
    reps: int,
    seed: int,
) -> tuple[dict[str, np.ndarray], dict[str, list[float]], dict[str, list[str]]]:
    """Frobenius losses per cleaner and repetition, fit times and warnings."""
    truth = np.asarray(design.covariance)
    names = list(prototypes)
    losses = {name: np.full(reps, np.nan) for name in [ORACLE, *names]}
    seconds: dict[str, list[float]] = {name: [] for name in names}
    notes: dict[str, list[str]] = {name: [] for name in names}
    for rep in range(reps):
        rng = np.random.default_rng(np.random.SeedSequence([seed, design_index, rep]))
        X = design.sample(n_samples, random_state=rng)
        losses[ORACLE][rep] = frobenius_loss(oracle_covariance(X, truth), truth)
        shift = rep % len(names)  # rotated order: load hits every cleaner alike
        for name in names[shift:] + names[:shift]:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                try:
                    est = clone(prototypes[name])
                    start = time.perf_counter()
                    est.fit(X)
                    seconds[name].append(time.perf_counter() - start)
                    losses[name][rep] = frobenius_loss(_dense(est), truth)
                except Exception as exc:  # one broken cleaner must not hide the rest
                    notes[name].append(f"rep {rep}: {type(exc).__name__}: {exc}")
            notes[name].extend(
                f"rep {rep}: {w.category.__name__}: {w.message}" for w in caught
            )
    return losses, seconds, notes


def bootstrap_prials(
    losses: dict[str, np.ndarray], names: list[str], rng: np.random.Generator
) -> dict[str, np.ndarray]:
    """PRIAL of each cleaner on paired bootstrap resamples of the repetitions."""
    reps = losses[SAMPLE].size
    out = {name: np.full(N_BOOTSTRAP, np.nan) for name in names}
    for b in range(N_BOOTSTRAP):
        idx = rng.integers(0, reps, size=reps)
        sample, oracle = losses[SAMPLE][idx], losses[ORACLE][idx]
        for name in names:
            est = losses[name][idx]
            if np.all(np.isfinite(est)):
                out[name][b] = prial(est, sample, oracle)
    return out


def _se(values: np.ndarray) -> float:
    if values.size < 2 or not np.all(np.isfinite(values)):
        return math.nan
    return float(np.std(values, ddof=1))


def _safe_prial(est: np.ndarray, sample: np.ndarray, oracle: np.ndarray) -> float:
    if not np.all(np.isfinite(est)):
        return math.nan
    return prial(est, sample, oracle)


def table(
    losses: dict[str, np.ndarray],
    seconds: dict[str, list[float]],
    notes: dict[str, list[str]],
    boot: dict[str, np.ndarray],
) -> tuple[list[str], dict[str, tuple[float, float]]]:
    """Lines of one design's table and (PRIAL, SE) per cleaner."""
    sample, oracle = losses[SAMPLE], losses[ORACLE]
    header = (
        f"  {'cleaner':<16} {'PRIAL %':>9} {'SE':>7} {'Frobenius':>10} "
        f"{'SE':>8} {'fit ms':>8}  notes"
    )
    lines = [header, "  " + "-" * (len(header) - 2)]
    result = {}
    for name in [ORACLE, *seconds]:
        loss = losses[name]
        if name == ORACLE:
            value, se, ms = 100.0, 0.0, math.nan
        else:
            value = _safe_prial(loss, sample, oracle)
            se = 0.0 if name == SAMPLE else _se(boot[name])
            ms = 1e3 * float(np.median(seconds[name])) if seconds[name] else math.nan
        result[name] = (value, se)
        ok = loss[np.isfinite(loss)]
        mean = float(np.mean(ok)) if ok.size else math.nan
        loss_se = float(np.std(ok, ddof=1) / math.sqrt(ok.size)) if ok.size > 1 else 0
        note = ""
        if name in notes and notes[name]:
            note = f"{len(notes[name])} warning/error(s), first: {notes[name][0]}"
            note = note[:110]
        lines.append(
            f"  {name:<16} {value:9.2f} {se:7.2f} {mean:10.4g} {loss_se:8.2g} "
            f"{ms:8.2f}  {note}".rstrip()
        )
    return lines, result


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n-features", type=int, default=200, help="N (200)")
    parser.add_argument("--n-samples", type=int, default=600, help="T (600)")
    parser.add_argument("--reps", type=int, default=50, help="repetitions (50)")
    parser.add_argument("--seed", type=int, default=0, help="base seed (0)")
    args = parser.parse_args(argv)
    n, t, reps, seed = args.n_features, args.n_samples, args.reps, args.seed
    if reps < 2:
        parser.error("--reps must be at least 2 (a standard error needs two).")
    if n < 2 or t < 13:
        parser.error("--n-features must be >= 2 and --n-samples >= 13.")

    start = time.perf_counter()
    print(
        f"python {platform.python_version()}  numpy {np.__version__}  scipy "
        f"{scipy.__version__}  scikit-learn {sklearn.__version__}  rmtclean "
        f"{rmtclean.__version__}"
    )
    print(f"machine {platform.machine()}, {platform.system()}")
    with limit_threads(1):
        for pool in threadpool_info():
            print(
                f"  threadpool {pool['user_api']}/{pool['internal_api']}: "
                f"{pool['num_threads']} threads  {pool.get('filepath', '')}"
            )
        print(
            f"\nAccuracy, N={n}, T={t} (N/T = {n / t:.3g}), {reps} repetitions, "
            f"seed {seed}, Gaussian data, Frobenius loss."
        )
        print(
            "PRIAL % (rmtclean.metrics.prial): 0 = sample covariance (divisor "
            "T - 1), 100 = finite-sample oracle U diag(u'Σu) U'."
        )
        print(
            f"SE: paired bootstrap over repetitions ({N_BOOTSTRAP} resamples, "
            f"seed {seed}); Frobenius = mean loss tr((Σ^ - Σ)^2)/N and its SE "
            "over repetitions; fit ms = median single-thread fit time (under "
            "the machine's current load)."
        )
        all_designs = designs(n)
        prototypes = cleaners(seed)
        # Warm-up: numba compilation / cache load, not timed.
        # Its draw has a design index no design uses, so it overlaps none.
        warm_rng = np.random.default_rng(np.random.SeedSequence([seed, len(GOALS)]))
        warm = all_designs["1/3/10"].sample(t, random_state=warm_rng)
        for est in prototypes.values():
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                clone(est).fit(warm)
        boot_rng = np.random.default_rng(seed)
        results, diffs = {}, {}
        for index, (name, design) in enumerate(all_designs.items()):
            began = time.perf_counter()
            losses, seconds, notes = run_design(
                design, index, prototypes, n_samples=t, reps=reps, seed=seed
            )
            boot = bootstrap_prials(losses, list(prototypes), boot_rng)
            lines, results[name] = table(losses, seconds, notes, boot)
            gap = boot[KERNEL] - boot[LEDOIT_WOLF]
            diffs[name] = (
                results[name][KERNEL][0] - results[name][LEDOIT_WOLF][0],
                _se(gap),
            )
            print(
                f"\n{describe(name, design, t)} ({time.perf_counter() - began:.1f} s)"
            )
            print("\n".join(lines))

    print("\nGoals (issue 3): PASS when the point estimate meets the goal.")
    print(f"  {'goal':<52} {'value':>8} {'SE':>6} {'margin/SE':>9}  result")
    failed = 0
    for name, goal in GOALS.items():
        value, se = results[name][KERNEL]
        checks = (
            (f"{KERNEL} PRIAL >= {goal:g}% ({name} design)", value, se, goal),
            (f"{KERNEL} PRIAL - {LEDOIT_WOLF} PRIAL > 0 ({name})", *diffs[name], 0.0),
        )
        for label, val, err, bound in checks:
            ok = bool(val >= bound) if bound > 0 else bool(val > bound)
            failed += not ok
            margin = (val - bound) / err if err > 0 else math.nan
            print(
                f"  {label:<52} {val:8.2f} {err:6.2f} {margin:9.1f}  "
                f"{'PASS' if ok else 'FAIL'}"
            )
    print(f"\n{len(GOALS) * 2 - failed} of {len(GOALS) * 2} goals met.")
    print(f"Wall time {time.perf_counter() - start:.1f} s.")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
