"""The results file: one JSON line per cell, appended as draws finish."""

from __future__ import annotations

import json
import math
import os
from pathlib import Path

import numpy as np

from rmtclean.bench.plan import METRICS

__all__ = ["load_results"]


def _jsonable(row: dict) -> dict:
    out = {}
    for key, value in row.items():
        if isinstance(value, (float, np.floating)):
            value = float(value)
            if not math.isfinite(value):
                value = "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
        elif isinstance(value, np.integer):
            value = int(value)
        out[key] = value
    return out


def _from_json(row: dict) -> dict:
    for name in METRICS:
        if isinstance(row.get(name), str):
            row[name] = float(row[name])
    return row


def load_results(path) -> list[dict]:
    """Read a results file; a line cut short by an interrupt is skipped.

    Parameters
    ----------
    path : str or Path
        JSON-lines file written by :func:`run_benchmark`; missing means empty.

    Returns
    -------
    list of dict
        One dict per row, metrics as floats (``inf``/``nan`` restored).
    """
    path = Path(path)
    if not path.exists():
        return []
    rows = []
    with path.open(encoding="utf-8") as fh:
        for line in fh:
            line = line.strip()
            if not line:
                continue
            try:
                rows.append(_from_json(json.loads(line)))
            except json.JSONDecodeError:
                continue
    return rows


def _open_for_append(path: Path):
    path.parent.mkdir(parents=True, exist_ok=True)
    needs_newline = False
    if path.exists() and path.stat().st_size > 0:
        with path.open("rb") as fh:
            fh.seek(-1, os.SEEK_END)
            needs_newline = fh.read(1) != b"\n"
    fh = path.open("a", encoding="utf-8")
    if needs_newline:  # an interrupted write left half a line
        fh.write("\n")
    return fh
