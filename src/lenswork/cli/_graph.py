"""CLI: build a Mapper graph from lens columns, print its summary, write files and a drawing."""

from __future__ import annotations

import difflib

import click

from .. import _progress
from .._errors import ParameterError
from .._io import OutputSet
from ..graph import LAYOUTS, write_graph_json, write_graphml, write_memberships
from ._common import (
    build_view,
    graph_options,
    lens_options,
    parse_color,
)
from ._partitioned import (
    cluster_input_options,
    partitioned_settings,
    refuse_with_scheduler,
    scheduler_alias,
)

__all__ = ["COMMANDS"]

#: Files the command writes into the output directory.
OUTPUTS = {
    "graphml": "graph.graphml", "json": "graph.json", "members": "memberships.csv",
    "png": "graph.png", "svg": "graph.svg",
}


@click.command("graph")
@cluster_input_options
@lens_options()
@click.option("--stats", "stat_columns", default=None, metavar="COLS|all",
              help="Data columns whose node mean, min and max go into the files.")
@click.option("--color", default=None, metavar="COL[:STAT]",
              help="What colours the nodes: a lens column, 'size', or any data column: COL "
              "(node mean, in the table's own units), COL:median|min|max|std, or "
              "COL:share=LEVEL (a categorical column's level; COL alone: its most frequent). "
              "Default: the first lens.")
@click.option("--layout", type=click.Choice(LAYOUTS), default="auto", show_default=True,
              help="auto: levels for one lens, lens coordinates for two, spring above.")
@click.option("-o", "--out", "out_dir", default="lenswork-graph", show_default=True,
              type=click.Path(file_okay=False),
              help="Output directory (created if missing). The files of the previous run there are "
              "replaced as a set (lenswork-manifest.json lists them).")
@click.option("--no-figure", is_flag=True, help="Skip the drawing (PNG and SVG).")
@graph_options()
def graph_command(cloud, seed, lens_specs, lens_file, use, stat_columns, color, layout, out_dir,
                  no_figure, settings, neighbors, cluster=None):
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
    output = OutputSet(out_dir, command="graph")  # checked before the work
    colour = parse_color(color) if color else None
    ws = None
    if cluster is not None:  # --scheduler: lenses and graph on partitions (element-knn rule)
        refuse_with_scheduler(lens_file=lens_file, stats=stat_columns, neighbors=neighbors.given)
        if not lens_specs:
            raise click.UsageError("Give at least one --lens.")
        graph = cluster.graph(lens_specs, partitioned_settings(settings))
    else:
        ws, _, graph = build_view(cloud, seed, lens_specs, lens_file, use, settings, neighbors,
                                  stats=stat_columns)
    draw = {}
    if colour is not None:  # a wrong name or level fails here, before any file is written
        draw = _colour_options(graph, ws, *colour)
    figures = {}
    if not no_figure:  # drawn before any file is written, so a failure leaves no partial output
        from ..plot._graph import draw_graph

        with _progress.step("graph: drawing"):
            figures = {key: draw_graph(graph, layout=layout, random_state=seed, **draw)
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


def _colour_options(graph, ws, column, stat, level):
    """draw_graph's colour keywords for --color, checked before anything is drawn."""
    if level is None and stat in ("mean", "min", "max") and (
            column == "size" or column in graph.node_stats):
        graph.node_values(column, stat)
        return {"color": column, "stat": stat}
    if ws is None:  # the partitioned graph: its lens columns only
        raise ParameterError(
            f"With --scheduler, --color takes a lens column ({', '.join(graph.lens_columns)}) "
            f"or 'size', as COL, COL:min or COL:max; got {column!r}."
        )
    cloud = ws.cloud
    data_names = [*cloud.feature_names, *(str(k) for k in cloud.passthrough)]
    if column not in data_names and column not in graph.node_stats:
        close = difflib.get_close_matches(column, [*graph.node_stats, *data_names, "size"], n=1)
        hint = f" Did you mean {close[0]!r}?" if close else ""
        raise ParameterError(
            f"--color {column!r}: the graph has no node values for {column!r} and the table no "
            f"such column.{hint} Lens columns: {', '.join(graph.lens_columns)}; data columns: "
            f"{', '.join(data_names)}; or 'size'."
        )
    from ..columns import node_column_values

    data = ws  # features read in the table's units (PointCloud.unscaled)
    node_column_values(graph, data, column, stat, level=level)
    return {"color": column, "stat": stat, "level": level, "data": data}


COMMANDS = [graph_command, scheduler_alias(graph_command, "cluster-graph")]
