"""CLI: one self-contained HTML page of a screen and a graph (``lenswork report``)."""

from __future__ import annotations

from pathlib import Path

import click

from .. import _progress
from .._errors import InputError
from ..graph import LAYOUTS, build_graph
from ..report import CONTRAST_ROWS, write_report
from ..screen import screen
from ..table import LensTable
from ._common import check_out_file, graph_options, input_options, number_list

__all__ = ["COMMANDS"]

#: Lens-file endings a screen folder may hold, in the order they are looked for.
_LENS_FILES = ("lenses.csv", "lenses.tsv", "lenses.parquet")


def _screen_lenses(folder, cloud):
    folder = Path(folder)
    for name in _LENS_FILES:
        if (folder / name).exists():
            return LensTable.read(folder / name, cloud)
    raise InputError(
        f"No lens file in the screen folder {str(folder)!r} (looked for {', '.join(_LENS_FILES)}); "
        f"give the folder `lenswork screen` wrote, or --graph with a graph folder."
    )


@click.command("report")
@input_options
@click.option("--screen", "screen_dir", type=click.Path(exists=True, file_okay=False),
              default=None, help="A folder written by `lenswork screen` (ranking.json, "
              "sheet.png, lenses.csv): its ranking goes into the page and, without --graph, its "
              "chosen lenses make the graph.")
@click.option("--graph", "graph_path", type=click.Path(exists=True), default=None,
              help="A folder written by `lenswork graph` (or its graph.json): the graph to show. "
              "TABLE must be the table it was built from.")
@click.option("-o", "--out", "out_file", default="lenswork-report.html", show_default=True,
              type=click.Path(dir_okay=False), help="The HTML file to write (replaced).")
@click.option("--title", default=None, help="Title of the page (default: the lens names).")
@click.option("--top", default=6, show_default=True, type=int,
              help="Contrast columns shown per node.")
@click.option("--layout", type=click.Choice(LAYOUTS), default="auto", show_default=True,
              help="Node layout: auto = levels for one lens, lens coordinates for two, spring "
              "above.")
@click.option("--contrast-rows", default=str(CONTRAST_ROWS), show_default=True,
              metavar="N|all", help="Above N rows the node and feature contrasts use a seeded "
              "sample of N rows (every row of a node the sample holds little of is added); "
              "all: every row (slow above 1e5 rows: O(rows) per node and column).")
@graph_options()
def report_command(cloud, seed, screen_dir, graph_path, out_file, title, top, layout,
                   contrast_rows, settings, neighbors):
    """Write one self-contained HTML page to explore TABLE's screen and graph in a browser.

    The page holds the screen's ranking (a sortable table with every reason,
    the chosen lenses, the figure sheet), the graph with pan and zoom, a panel
    per node (size, lens ranges, the columns that set its rows apart, its
    members, downloadable as CSV), colouring by any lens or data column in
    the table's units, the significant features with their contrast tables,
    and the provenance. Scripts, styles and data are inline: the file opens
    from disk with no network access.

    What goes in: --graph GRAPH_DIR shows that graph (TABLE must be the table
    it was built from); --screen SCREEN_DIR adds that screen, and without
    --graph builds the graph over its chosen lenses here (the graph options
    below apply). With neither, the screen and the graph are computed here:
    `lenswork report --demo` makes the demo's page in one step.
    """
    contrast_rows = None if contrast_rows.strip().lower() == "all" else \
        number_list(contrast_rows, int, "--contrast-rows")
    out_file = check_out_file(out_file)  # before the work: not the table, a writable folder
    ws = neighbors.workspace(cloud, seed)
    screen_source = screen_dir
    if graph_path is not None:
        graph = graph_path
    else:
        if screen_dir is not None:
            with _progress.step("report: read the screen's lens file"):
                lenses = _screen_lenses(screen_dir, cloud)
        else:
            result = screen(ws)
            click.echo(result.summary())
            screen_source, lenses = result, result.to_lens_table()
        graph = build_graph(lenses, ws, settings)
        click.echo(graph.summary().text(max_features=6))
    path = write_report(out_file, graph, ws, screen=screen_source, title=title, top=top,
                        layout=layout, random_state=seed, contrast_rows=contrast_rows)
    size = path.stat().st_size
    click.echo(f"wrote {path} ({size / 1e6:.2f} MB): open it in a browser")


COMMANDS = [report_command]
