"""AutoShrink's sphericity gate on short windows of real returns.

Real panels reject sphericity by far once they have a few weeks of rows,
but on a handful of rows the test has little power and the gate can fire.
This script measures what that does, on random windows of ``T`` consecutive
days of two open data sets shipped by PyPI packages (``tests/_opendata.py``):
Ecdat's CRSPday (GE, IBM, Mobil and the CRSP index, 1989-1998, N = 4) and
French's 49 industry portfolios (1970-2021, N = 49). For each window it
fits AutoShrink with the gate (the default) and without
(``sphericity_level=None``) and prints how often the gate fired, the mean
Frobenius loss (:func:`rmtclean.metrics.frobenius_loss`) against the
covariance of the whole series (a stand-in for the truth: the series are
not stationary) and the mean Gaussian log-likelihood of the next 20 days
(``score``).

    PYTHONPATH=$PWD OMP_NUM_THREADS=1 python benchmarks/auto_shrink_gate_real.py

The table of the last run is in ``benchmarks/auto_shrink.md``.
"""

from __future__ import annotations

import argparse
import warnings

import numpy as np

from rmtclean import AutoShrink
from rmtclean.metrics import frobenius_loss
from tests._opendata import crsp_daily, industry_returns

AHEAD = 20


def cell(name, data, n_rows, windows, rng) -> str:
    truth = np.cov(data, rowvar=False)
    fired, loss, ahead = [], {"gate": [], "none": []}, {"gate": [], "none": []}
    for start in rng.integers(0, len(data) - n_rows - AHEAD, windows):
        X = data[start : start + n_rows]
        Y = data[start + n_rows : start + n_rows + AHEAD]
        fits = {
            "gate": AutoShrink(random_state=0).fit(X),
            "none": AutoShrink(random_state=0, sphericity_level=None).fit(X),
        }
        fired.append(fits["gate"].spherical_)
        for key, est in fits.items():
            loss[key].append(frobenius_loss(est.covariance_, truth))
            ahead[key].append(est.score(Y))
    cells = [name, str(data.shape[1]), str(n_rows), f"{np.mean(fired):.2f}"]
    cells += [f"{np.mean(loss[k]):.3g}" for k in ("gate", "none")]
    cells += [f"{np.mean(ahead[k]):.2f}" for k in ("gate", "none")]
    return "| " + " | ".join(cells) + " |"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--windows", type=int, default=60)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    warnings.simplefilter("ignore")
    rng = np.random.default_rng(args.seed)
    print(
        "| data | N | T | gate fires | Frobenius, gate | Frobenius, no gate "
        f"| log-lik next {AHEAD} days, gate | same, no gate |"
    )
    print("|" + "---|" * 8)
    panels = {
        "CRSPday": (crsp_daily().to_numpy(), (5, 8, 12, 20)),
        "49 industries": (industry_returns().to_numpy(), (4, 5, 6, 8)),
    }
    for name, (data, sizes) in panels.items():
        for n_rows in sizes:
            print(cell(name, data, n_rows, args.windows, rng), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
