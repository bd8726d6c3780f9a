"""Execute the worked examples in notebooks/ (nbclient, a fresh kernel each)."""

from pathlib import Path

import nbformat
import pytest
from nbclient import NotebookClient

NOTEBOOKS = sorted((Path(__file__).parents[1] / "notebooks").glob("*.ipynb"))
#: Per-cell limit of the kernel: a guard against a hang, not a speed test (the
#: notebooks are sized to run in well under two minutes each).
CELL_TIMEOUT = 120


def test_the_two_notebooks_are_there():
    names = {p.name for p in NOTEBOOKS}
    assert {
        "portfolio_invented_market.ipynb",
        "omics_tissue_expression.ipynb",
    } <= names


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_notebook_runs(path, tmp_path, monkeypatch):
    # One BLAS thread in the kernel (it inherits the environment): the fits
    # are small, and on a busy machine threaded BLAS only fights for cores.
    for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        monkeypatch.setenv(name, "1")
    book = nbformat.read(path, as_version=4)
    client = NotebookClient(
        book,
        timeout=CELL_TIMEOUT,
        kernel_name="python3",
        resources={"metadata": {"path": str(tmp_path)}},
        extra_arguments=["--HistoryManager.enabled=False"],
    )
    client.execute()
    outputs = [
        o for cell in book.cells if cell.cell_type == "code" for o in cell.outputs
    ]
    assert not [o for o in outputs if o.output_type == "error"]
    text = "".join(o.get("text", "") for o in outputs if o.output_type == "stream")
    assert "Caution:" in text
    images = [o for o in outputs if "image/png" in o.get("data", {})]
    assert images, "the notebook should draw its figures"
