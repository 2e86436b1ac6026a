"""CLI: build a Mapper graph from lens columns, print its summary, write files and a drawing."""

from __future__ import annotations

import click

from .. import _progress
from .._io import OutputSet
from ..graph import LAYOUTS, build_graph, write_graph_json, write_graphml, write_memberships
from ..lenses import compute_lenses
from ..table import LensTable
from ..workspace import Workspace
from ._common import graph_options, lens_file_check_option
from ._partitioned import cluster_input_options, partitioned_settings, refuse_with_scheduler

__all__ = ["COMMANDS"]

#: Files the command writes into the output directory.
OUTPUTS = {
    "graphml": "graph.graphml", "json": "graph.json", "members": "memberships.csv",
    "png": "graph.png", "svg": "graph.svg",
}


def _names(text):
    if text is None:
        return None
    if text.strip().lower() == "all":
        return "all"
    return [x.strip() for x in text.split(",") if x.strip()]


@click.command("graph")
@cluster_input_options
@click.option("-l", "--lens", "lens_specs", multiple=True, metavar="SPEC",
              help="A lens as name or name:key=value,... (repeatable; `lenswork lenses` lists "
              "them). Two or more lens columns give a product cover.")
@click.option("--lens-file", type=click.Path(dir_okay=False), default=None,
              help="Lens columns written by `lenswork compute` or `lenswork screen` (CSV, TSV or "
              "Parquet with its .json sidecar), matched to TABLE by row id.")
@lens_file_check_option
@click.option("--use", "use", default=None, metavar="COLS",
              help="Columns to take from --lens-file, comma-separated (default: all of them).")
@click.option("--stats", "stat_columns", default=None, metavar="COLS|all",
              help="Data columns whose node mean, min and max go into the files.")
@click.option("--color", default=None, metavar="COL",
              help="Lens or --stats column that colours the nodes, or 'size' (default: the "
              "first lens).")
@click.option("--layout", type=click.Choice(LAYOUTS), default="auto", show_default=True,
              help="auto: levels for one lens, lens coordinates for two, spring above.")
@click.option("-o", "--out", "out_dir", default="lenswork-graph", show_default=True,
              type=click.Path(file_okay=False),
              help="Output directory (created if missing). The files of the previous run there are "
              "replaced as a set (lenswork-manifest.json lists them).")
@click.option("--no-figure", is_flag=True, help="Skip the drawing (PNG and SVG).")
@graph_options()
def graph_command(cloud, seed, lens_specs, lens_file, lens_file_check, use, stat_columns, color,
                  layout, out_dir, no_figure, settings, neighbor_method, cluster=None):
    """Build a Mapper graph of TABLE (or --demo) over lens columns and summarise it.

    The lenses come from --lens (computed here on the shared neighbour graph) or
    --lens-file (for example the selection of `lenswork screen`), or both. The
    cover lays --intervals intervals with --overlap over each lens (or, with
    --cover ball, balls around a greedy net of the lens values); each cover
    element is clustered on the shared k-NN graph (up to 50,000 rows; above,
    on a k-NN graph inside the element: --clusterer auto); nodes that share
    rows are joined. By default the interval count, --min-size and --clusterer
    follow the rows and lens columns (auto; the resolved values are printed and
    recorded). Prints
    the summary (components, loops b1 = E - V + C, branch points, flares, rows
    in no node; the significant loops, branches, flares and branch points --
    lens span above the cover's resolution -- apart from the small ones) and
    writes to OUT: graph.graphml, graph.json,
    memberships.csv (row id -> node) and graph.png / graph.svg. Everything is
    computed before the first file is written.

    With --scheduler, TABLE is a directory of Parquet or CSV partitions (or a
    glob): the --lens columns and the graph are computed on a Dask cluster, on
    raw-value intervals with the element-knn clusterer (the same graph as
    --cover-scale raw --clusterer element-knn on one machine).
    """
    if not lens_specs and not lens_file:
        raise click.UsageError("Give at least one --lens or a --lens-file.")
    if use and not lens_file:
        raise click.UsageError("--use picks columns of a --lens-file; give the --lens-file too.")
    output = OutputSet(out_dir, command="graph")  # checked before the work
    if cluster is not None:  # --scheduler: lenses and graph on partitions (element-knn rule)
        refuse_with_scheduler(lens_file=lens_file, stats=stat_columns,
                              neighbors=neighbor_method != "auto")
        graph = cluster.graph(lens_specs, partitioned_settings(settings))
    else:
        ws = Workspace(cloud, random_state=seed, neighbor_method=neighbor_method)
        columns = []
        if lens_file:
            with _progress.step("graph: read the lens file"):
                columns += list(LensTable.read(lens_file, cloud, columns=_names(use),
                                               check=lens_file_check))
        if lens_specs:
            columns += list(compute_lenses(ws, list(lens_specs)))
        table = LensTable(columns, cloud, random_state=seed)
        graph = build_graph(table, ws, settings, columns=_names(stat_columns))
    if color is not None:
        graph.node_values(color)  # a wrong name fails here, before any file is written
    figures = {}
    if not no_figure:  # drawn before any file is written, so a failure leaves no partial output
        from ..plot._graph import draw_graph

        with _progress.step("graph: drawing"):
            figures = {key: draw_graph(graph, color=color, layout=layout, random_state=seed)
                       for key in ("png", "svg")}
    with _progress.step("graph: summary"):
        text = graph.summary().text()
    click.echo(text)
    with _progress.step("graph: writing the files"), output as stage:
        write_graphml(graph, stage / OUTPUTS["graphml"])
        write_graph_json(graph, stage / OUTPUTS["json"])
        write_memberships(graph, stage / OUTPUTS["members"])
        if figures:
            from ..plot._style import save

            for key, fig in figures.items():
                save(fig, stage / OUTPUTS[key])
    click.echo(f"wrote {', '.join(str(p) for p in output.written)}")


COMMANDS = [graph_command]
