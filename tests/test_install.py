"""The README's install command gives a working command line on a fresh machine.

One test, slow by nature (a virtual environment and a full install, a few
minutes): it copies the project, creates a new virtual environment with
``python -m venv`` (no system site-packages, nothing from this process's
path), runs the README's install command (``pip install .``) verbatim in
the copy, then runs the README's ``analyze`` and ``clean`` examples
verbatim on a CSV of Kenneth French's 49 industry daily returns
(``industry_returns``, tests/_opendata.py).
pip fetches the dependencies from the package index, as a user's pip would.
"""

import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd

from tests._opendata import industry_returns

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text()
IGNORE = shutil.ignore_patterns(
    ".git", ".ci-venv", ".venv", "build", "dist", "*.egg-info", "__pycache__",
    "bench-out", ".pytest_cache", ".ruff_cache", ".hypothesis",
)  # fmt: skip


def readme_setup_command() -> str:
    """The first ``bash`` block of the README: the install-and-run command."""
    return re.findall(r"```bash\n(.*?)```", README, flags=re.S)[0].strip()


def readme_cli_examples() -> list[str]:
    """The README's command-line examples, one per line, comments removed."""
    block = re.findall(r"```console\n(.*?)```", README, flags=re.S)[0]
    return [line.split("#")[0].strip() for line in block.splitlines() if line.strip()]


def _run(command: str, cwd: Path, env: dict) -> subprocess.CompletedProcess:
    result = subprocess.run(
        ["bash", "-c", command],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=1500,
    )
    assert result.returncode == 0, (
        f"{command!r} failed ({result.returncode}):\n"
        f"{result.stdout[-3000:]}\n{result.stderr[-3000:]}"
    )
    return result


def test_readme_install_gives_a_working_cli(tmp_path):
    project = tmp_path / "rmtclean"
    shutil.copytree(ROOT, project, ignore=IGNORE)
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True)
    bindir = venv / ("Scripts" if os.name == "nt" else "bin")
    env = {
        key: value
        for key, value in os.environ.items()
        if key not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV")
    }
    env.update(
        PATH=f"{bindir}{os.pathsep}{env.get('PATH', '')}",
        VIRTUAL_ENV=str(venv),
        MPLBACKEND="Agg",
    )
    # The install half of the setup command, verbatim (the demo half is the
    # demo's own test: tests/test_demo.py).
    install, demo = readme_setup_command().split(" && ")
    assert (install, demo) == ("pip install .", "rmtclean demo")
    _run(install, project, env)

    work = tmp_path / "work"
    work.mkdir()
    frame = industry_returns(last=250)
    frame.to_csv(work / "returns.csv")
    version = _run("rmtclean --version", work, env).stdout.strip()
    assert version.startswith("rmtclean ")
    examples = [
        line
        for line in readme_cli_examples()
        if line.split()[1] in ("analyze", "clean")
    ]
    assert any(line.split()[1] == "analyze" for line in examples)
    assert any(line.split()[1] == "clean" for line in examples)
    for line in examples:
        result = _run(line, work, env)
        assert "error" not in result.stderr
        if line.split()[1] == "analyze":
            assert "signal" in result.stdout.lower()
    cov = pd.read_csv(work / "cov.csv", index_col=0)
    assert list(cov.columns) == list(cov.index) == list(frame.columns)
    assert (work / "corr.parquet").stat().st_size > 0
    assert (work / "spectrum.png").read_bytes()[:4] == b"\x89PNG"
