"""The README's two set-up commands and CI stay in step."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _setup_commands():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    block = re.search(r"```bash\n(.*?)```", text, re.S).group(1)
    return [line for line in block.splitlines() if line.strip()]


def test_readme_has_exactly_two_setup_commands():
    commands = _setup_commands()
    assert len(commands) == 2
    assert commands[0].startswith("pip install ") and "lenswork " in commands[0]
    assert commands[1].startswith("pip install ") and commands[1].endswith("pytest")


def test_ci_runs_the_readme_test_command_verbatim():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8").splitlines()
    assert _setup_commands()[1] in ci


def test_readme_first_paragraph_states_the_job():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    first = text.split("\n\n")[1]
    assert "lens" in first and "Mapper" in first


def test_readme_says_graphs_are_exploratory():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    assert "exploratory evidence" in text
