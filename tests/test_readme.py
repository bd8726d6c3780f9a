"""The README's commands and code examples stay true."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text()


def _blocks(lang):
    return re.findall(rf"```{lang}\n(.*?)```", README, flags=re.S)


def test_exactly_two_setup_commands_and_ci_runs_the_test_one():
    commands = [b.strip() for b in _blocks("bash")]
    assert commands[:2] == [
        "pip install . && rmtclean demo",
        'pip install ".[test]" && python -m pytest',
    ]
    ci = (ROOT / ".ci" / "run").read_text().splitlines()
    assert commands[1] in [line.strip() for line in ci]


def test_python_examples_run(capsys):
    namespace = {}
    for block in _blocks("python"):
        exec(compile(block, "README.md", "exec"), namespace)
    assert capsys.readouterr().out.strip()


def test_readme_states_the_cautions():
    text = README.lower()
    assert "estimation risk" in text
    assert "not investment" in text and "medical advice" in text
