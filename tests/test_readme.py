"""The README's two set-up commands and CI stay in step."""

import re
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"


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


def _text_block(after):
    """The lines of the README's ```text block that starts with the command ``after``."""
    text = README.read_text(encoding="utf-8")
    start = text.index(after) + len(after)
    return text[start:text.index("```", start)].strip().splitlines()


def test_readme_headline_figures_are_the_commands_own(tmp_path):
    # the README's demo figures are held to what the commands print today: the compare
    # example (co-membership agreement, significant counts), the screen's choice and the
    # gallery's claims of the pair's graph and the stability map (common practice: a
    # document's numbers are regenerated, not retyped)
    from click.testing import CliRunner

    import lenswork as lw
    from lenswork.cli import cli
    from lenswork.demo import load_demo

    res = CliRunner().invoke(cli, ["--quiet", "compare", "--demo", "--lens",
                                   "laplacian:components=1", "--lens", "density", "--no-figure",
                                   "-o", str(tmp_path / "cmp")])
    assert res.exit_code == 0, res.output
    shown = _text_block("$ lenswork compare --demo --lens laplacian:components=1 --lens density")
    assert res.stdout.splitlines()[:len(shown)] == shown
    text = README.read_text(encoding="utf-8")
    ws = lw.Workspace(load_demo(), random_state=0)
    result = lw.screen(ws)
    a, b = result.selected
    assert f"On the demo the screen keeps the wide-bandwidth density `{a}`" in text
    assert f"`{b}`" in text
    pair = lw.build_graph(result.to_lens_table(), ws).summary().significant_counts()
    assert pair["holes"] == 1 and pair["flares"] == 2  # the gallery's pair: the loop, both flares
    smap = lw.stability_map(lw.compute_lenses(ws, ["laplacian:components=1"]), ws)
    region = smap.region("loops")
    assert int(region.sum()) == region.size == 40  # "raw b1 = 1 over all 40"
    sig = smap.region("significant_loops")  # "One significant loop holds over 37 of the 40"
    assert smap.counts["significant_loops"][smap.default_cell] == 1 and int(sig.sum()) == 37
    assert set(zip(*np.nonzero(~sig))) == {(0, 3), (0, 4), (1, 4)}  # 4 x 0.4, 0.5; 6 x 0.5
