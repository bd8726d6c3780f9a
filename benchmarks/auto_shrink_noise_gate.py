"""What a pure-noise gate in front of AutoShrink would cost on weak signal.

The gate: when the sequential Tracy-Widom test
(:func:`rmtclean.spectrum.detect_signal`, level 5%, fitted bulk) finds no
eigenvalue above the noise edge, take EigenClip (the bulk replaced by its
mean, here the whole spectrum) instead of the cross-validated choice. On
pure noise (the bench's identity design) that helps, by Frobenius losses of
order 1e-4. This script measures the other side: population eigenvalues
evenly spaced on ``[1 - w, 1 + w]`` (no spike, a little spread the test can
miss), Gaussian rows, N = 100. For each width and T it prints how often the
test finds nothing, and the mean Frobenius loss
(:func:`rmtclean.metrics.frobenius_loss`) of EigenClip, KernelShrink and
AutoShrink over the draws, on all draws and on the draws where the gate
would fire.

Run (one BLAS thread, about 2 minutes)::

    PYTHONPATH=$PWD OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 \\
        python benchmarks/auto_shrink_noise_gate.py --draws 10 --seed 3

The result of that command and its reading are in
``benchmarks/auto_shrink.md`` (section Reading).
"""

from __future__ import annotations

import argparse
import warnings

import numpy as np

from rmtclean import AutoShrink, EigenClip, KernelShrink, sample_spectrum
from rmtclean.metrics import frobenius_loss
from rmtclean.spectrum import detect_signal

N_FEATURES = 100


def gate_fires(X) -> bool:
    """True when the Tracy-Widom test finds no eigenvalue above the edge."""
    spectrum = sample_spectrum(X)
    values = np.asarray(spectrum.eigenvalues)
    test = detect_signal(values[values > 0], X.shape[0] - 1, X.shape[1])
    return test.n_signal == 0


def cell(width: float, n_rows: int, draws: int, rng) -> str:
    population = np.linspace(1.0 - width, 1.0 + width, N_FEATURES)
    truth = np.diag(population)
    fired, losses = [], {"EigenClip": [], "KernelShrink": [], "AutoShrink": []}
    for rep in range(draws):
        X = rng.standard_normal((n_rows, N_FEATURES)) * np.sqrt(population)
        fired.append(gate_fires(X))
        fits = {
            "EigenClip": EigenClip(),
            "KernelShrink": KernelShrink(),
            "AutoShrink": AutoShrink(random_state=rep),
        }
        for name, est in fits.items():
            losses[name].append(frobenius_loss(est.fit(X).covariance_, truth))
    fired = np.array(fired)
    cells = [f"[{1 - width:g}, {1 + width:g}]", str(n_rows), f"{fired.sum()}/{draws}"]
    cells += [f"{np.mean(v):.3f}" for v in losses.values()]
    if fired.any():
        cells += [f"{np.mean(np.array(v)[fired]):.3f}" for v in losses.values()]
    else:
        cells += ["-"] * len(losses)
    return "| " + " | ".join(cells) + " |"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--draws", type=int, default=10)
    parser.add_argument("--seed", type=int, default=3)
    parser.add_argument("--widths", type=float, nargs="+", default=[0.2, 0.3, 0.4])
    parser.add_argument("--rows", type=int, nargs="+", default=[200, 400])
    args = parser.parse_args(argv)
    warnings.simplefilter("ignore")
    rng = np.random.default_rng(args.seed)
    print(
        "| population | T | gate fires | EigenClip | KernelShrink | AutoShrink "
        "| EigenClip (fired) | KernelShrink (fired) | AutoShrink (fired) |"
    )
    print("|" + "---|" * 9)
    for width in args.widths:
        for n_rows in args.rows:
            print(cell(width, n_rows, args.draws, rng), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
