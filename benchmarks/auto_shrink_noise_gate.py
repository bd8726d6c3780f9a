"""AutoShrink's sphericity gate on pure noise and on weak spread.

The gate (``AutoShrink(sphericity_level=0.05)``, the default): when John's
sphericity test on the spatial signs
(:func:`rmtclean.spectrum.sign_sphericity`) does not reject
``Sigma = sigma^2 I`` at 5%, the estimate is ``tr(S) / N`` times ``I``
instead of the held-out choice. On pure noise that is the right estimate;
this script measures both sides: population eigenvalues evenly spaced on
``[1 - w, 1 + w]`` (``w = 0`` is pure noise; a small ``w`` is spread the
test can miss), Gaussian rows, N = 100. For each width and T it prints how
often the gate fires, and the mean Frobenius loss
(:func:`rmtclean.metrics.frobenius_loss`) of the scaled identity,
KernelShrink, AutoShrink without the gate (``sphericity_level=None``) and
AutoShrink with it, over all draws and, for the last two, over the draws
where the gate fires.

Run (one BLAS thread, about 4 minutes)::

    PYTHONPATH=$PWD OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 \\
        python benchmarks/auto_shrink_noise_gate.py --draws 10 --seed 3

The result of that command and its reading are in
``benchmarks/auto_shrink.md`` (section Reading).
"""

from __future__ import annotations

import argparse
import warnings

import numpy as np

from rmtclean import AutoShrink, KernelShrink
from rmtclean.metrics import frobenius_loss

N_FEATURES = 100


def cell(width: float, n_rows: int, draws: int, rng, level=None) -> str:
    population = np.linspace(1.0 - width, 1.0 + width, N_FEATURES)
    truth = np.diag(population)
    names = ("scaled identity", "KernelShrink", "held-out choice", "AutoShrink")
    fired, losses = [], {k: [] for k in names}
    for rep in range(draws):
        X = rng.standard_normal((n_rows, N_FEATURES)) * np.sqrt(population)
        mean_variance = np.trace(np.cov(X, rowvar=False)) / N_FEATURES
        gated = AutoShrink(random_state=rep)
        if level is not None:
            gated.set_params(sphericity_level=level)
        gated.fit(X)
        fired.append(gated.spherical_)
        fits = {
            "scaled identity": mean_variance * np.eye(N_FEATURES),
            "KernelShrink": KernelShrink().fit(X).covariance_,
            "held-out choice": AutoShrink(random_state=rep, sphericity_level=None)
            .fit(X)
            .covariance_,
            "AutoShrink": gated.covariance_,
        }
        for name, cov in fits.items():
            losses[name].append(frobenius_loss(cov, truth))
    fired = np.array(fired)
    cells = [f"[{1 - width:g}, {1 + width:g}]", str(n_rows), f"{fired.sum()}/{draws}"]
    cells += [f"{np.mean(v):.3g}" for v in losses.values()]
    for name in ("held-out choice", "AutoShrink"):
        v = np.array(losses[name])
        cells.append(f"{v[fired].mean():.3g}" if fired.any() else "-")
    return "| " + " | ".join(cells) + " |"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--draws", type=int, default=10)
    parser.add_argument("--seed", type=int, default=3)
    parser.add_argument(
        "--widths", type=float, nargs="+", default=[0.0, 0.1, 0.2, 0.3, 0.4]
    )
    parser.add_argument("--rows", type=int, nargs="+", default=[50, 100, 200, 400])
    parser.add_argument(
        "--level", type=float, default=None, help="sphericity_level (its default)"
    )
    args = parser.parse_args(argv)
    warnings.simplefilter("ignore")
    rng = np.random.default_rng(args.seed)
    print(
        "| population | T | gate fires | scaled identity | KernelShrink "
        "| held-out choice | AutoShrink | held-out choice (fired) "
        "| AutoShrink (fired) |"
    )
    print("|" + "---|" * 9)
    for width in args.widths:
        for n_rows in args.rows:
            print(cell(width, n_rows, args.draws, rng, args.level), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
