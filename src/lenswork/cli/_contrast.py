"""CLI: which data columns set each graph feature's rows apart (``lenswork contrast``)."""

from __future__ import annotations

import csv
import functools
import re
from pathlib import Path

import click

from .._errors import InputError
from .._io import unformula
from ..contrast import AGAINST
from ..graph import LAYOUTS
from ._common import (
    build_view,
    graph_options,
    input_options,
    lens_options,
    parse_color,
)

__all__ = ["COMMANDS"]

#: Files the command writes into the output directory.
OUTPUTS = {"csv": "contrast.csv", "json": "contrast.json"}
#: Most feature sheets drawn in one run (the rest are in the CSV / JSON).
MAX_SHEETS = 12


def _names(text):
    if text is None:
        return None
    return [x.strip() for x in text.split(",") if x.strip()]


def graph_build_options(func):
    """The options that say how to build the graph: `lenswork graph`'s own (GraphSettings)."""
    return lens_options()(graph_options()(func))


def build_from_options(cloud, seed, opts):
    """(workspace, lens table, graph) from the options of :func:`graph_build_options`."""
    return build_view(cloud, seed, opts["lens_specs"], opts["lens_file"], opts["use"],
                      opts["settings"], opts["neighbors"])


def _graph_opts(func):
    """Collect the graph-building options into one ``graph_opts`` dict."""
    keys = ("lens_specs", "lens_file", "use", "settings", "neighbors")

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        opts = {key: kwargs.pop(key) for key in keys}
        return func(*args, graph_opts=opts, **kwargs)

    return wrapper


def _row_positions(cloud, ids, source):
    """Row ids (text) -> 0-based positions; an unknown id is an error naming it."""
    index = {str(v): i for i, v in enumerate(cloud.ids.tolist())}
    out, unknown = [], []
    for x in ids:
        if x in index:
            out.append(index[x])
        else:
            unknown.append(x)
    if unknown:
        raise InputError(
            f"{source}: no row with id {unknown[0]!r} in the data ({len(unknown)} unknown ids; ids "
            f"come from the {cloud.id_name!r} column, e.g. {next(iter(index), '?')!r})."
        )
    return out


def _read_ids(path, cloud):
    try:
        lines = Path(path).read_text(encoding="utf-8").splitlines()
    except OSError as err:
        raise InputError(f"Cannot read --rows-file {str(path)!r}: {err.strerror}.") from None
    known = {str(v) for v in cloud.ids.tolist()}
    # a line is an id (which may hold commas), or a CSV record whose first field is one
    # (memberships.csv: quoted as csv writes it, the formula guard undone)
    ids = [ln if ln in known else ln.strip() if ln.strip() in known else
           unformula(next(csv.reader([ln]), [""])[0].strip()) for ln in lines if ln.strip()]
    if ids and ids[0] == cloud.id_name:  # a header line
        ids = ids[1:]
    if not ids:
        raise InputError(f"--rows-file {str(path)!r} holds no row ids (one id per line).")
    return ids


def _safe(label):
    return re.sub(r"[^A-Za-z0-9_.-]+", "-", label).strip("-")


@click.command("contrast")
@input_options
@graph_build_options
@click.option("--feature", "feature_labels", multiple=True, metavar="LABEL",
              help="A feature of the graph summary: kind:i (flare:2, loop:1, component:1, "
              "branch:3, path:1, limb:1; 1-based within its kind), a kind (every flare), or "
              "nodes:3,5,7 (repeatable). Default: the components and the "
              "significant features.")
@click.option("--rows", "row_ids", default=None, metavar="IDS",
              help="A set of rows to contrast, by id, comma-separated.")
@click.option("--rows-file", type=click.Path(dir_okay=False), default=None,
              help="A set of rows to contrast: a file with one row id per line.")
@click.option("--against", type=click.Choice(AGAINST), default="rest", show_default=True,
              help="Set the feature against every other row, or against the rows of the nodes "
              "within --hops hops that are not in it.")
@click.option("--hops", default=2, show_default=True, type=int,
              help="Graph hops that count as neighbouring (with --against neighbours).")
@click.option("--columns", default=None, metavar="COLS",
              help="Data columns to test, comma-separated (default: every feature and "
              "passthrough column).")
@click.option("--categorical", default=None, metavar="COLS",
              help="Columns to treat as categorical even when they hold numbers.")
@click.option("--max-levels", default=50, show_default=True, type=int,
              help="A categorical column with more levels pools the rarest.")
@click.option("--alpha", default=0.05, show_default=True, type=float,
              help="False discovery rate (Benjamini-Hochberg) for 'significant'.")
@click.option("--top", default=5, show_default=True, type=int,
              help="Columns printed and drawn per feature.")
@click.option("--all-features", is_flag=True,
              help="Test every feature (small ones and paths too), not only the components and "
              "the significant features, and print every feature tested.")
@click.option("--color", default=None, metavar="COL[:STAT]",
              help="Also draw the whole graph coloured by a data column: COL, COL:median, "
              "COL:share=LEVEL (a categorical column's level).")
@click.option("--layout", type=click.Choice(LAYOUTS), default="auto", show_default=True,
              help="Graph layout of the drawings.")
@click.option("-o", "--out", "out_dir", default="lenswork-contrast", show_default=True,
              type=click.Path(file_okay=False), help="Output directory (created if missing).")
@click.option("--no-figure", is_flag=True, help="Skip the drawings.")
@_graph_opts
def contrast_command(cloud, seed, graph_opts, feature_labels, row_ids, rows_file, against, hops,
                     columns, categorical, max_levels, alpha, top, all_features, color, layout,
                     out_dir, no_figure):
    """Which data columns set each feature of the graph of TABLE (or --demo) apart.

    Builds the graph as `lenswork graph` does (same lens and cover options), then
    for every component and significant loop, flare, limb and branch point (every
    feature with --all-features; or the --feature / --rows given) compares each
    data column between the feature's rows and the rest
    (or the neighbouring nodes' rows): Cliff's delta and the standardised mean
    difference with a Kolmogorov-Smirnov test for numeric columns, Cramér's V
    with a chi-square test for categorical ones, Benjamini-Hochberg q-values
    over every test, and how each column changes along a flare or loop. A column
    is starred when its q-value passes --alpha and its effect is at least small
    (|Cliff's delta| >= 0.147, Romano et al. 2006; Cramér's V >= 0.1, Cohen 1988).
    Prints the top columns of every feature with a starred one and writes to OUT:
    contrast.csv, contrast.json, and per such feature columns_<feature>.png
    (the graph coloured by each top column). Everything is computed before the
    first file is written.
    """
    from .._io import OutputSet, write_text
    from .._json import dumps
    from ..columns import node_column_values
    from ..contrast import contrast_columns

    output = OutputSet(out_dir, command="contrast")  # checked before the work
    rows = None
    if row_ids is not None and rows_file is not None:
        raise click.UsageError("Give --rows or --rows-file, not both.")
    if row_ids is not None:
        ids = _names(row_ids)
        if not ids:
            raise InputError("--rows is empty: give row ids, comma-separated.")
        rows = _row_positions(cloud, ids, "--rows")
    elif rows_file is not None:
        rows = _row_positions(cloud, _read_ids(rows_file, cloud), f"--rows-file {rows_file!r}")
    colour = parse_color(color) if color else None
    ws, table, graph = build_from_options(cloud, seed, graph_opts)
    if colour is not None:  # a wrong column or level fails here, before any file is written
        node_column_values(graph, ws, colour[0], colour[1],
                           level=colour[2])
    result = contrast_columns(
        graph, ws, list(feature_labels) or None, rows=rows, against=against, hops=hops,
        columns=_names(columns), categorical=_names(categorical), lenses=table,
        max_levels=max_levels, alpha=alpha, all_features=all_features,
    )
    figures = {}
    if not no_figure:
        from ..plot._columns import contrast_sheet
        from ..plot._graph import draw_graph

        labels = [f["label"] for f in result.features if result.for_feature(f["label"])] \
            if all_features else result.significant_features()  # a sheet needs a tested column
        for label in labels[:MAX_SHEETS]:
            figures[f"columns_{_safe(label)}.png"] = contrast_sheet(
                result, graph, ws, label, top=top, layout=layout, random_state=seed)
        if colour is not None:
            figures[f"graph_{_safe(colour[0])}.png"] = draw_graph(
                graph, color=colour[0], stat=colour[1], level=colour[2],
                data=ws,
                layout=layout, random_state=seed)
    click.echo(graph.summary().text(max_features=0).split("\n  ...")[0])
    click.echo(result.text(top, all_features=all_features))
    if len(figures) and len(result.significant_features()) > MAX_SHEETS and not all_features:
        click.echo(f"  note: drew the first {MAX_SHEETS} significant features; every feature is "
                   f"in {OUTPUTS['csv']}")
    doc = {"contrast": result.to_dict(), "graph": {"params": graph.params,
                                                   "summary": graph.summary().to_dict()},
           "input": cloud.provenance, "lenses": [c.provenance() for c in table], "seed": seed}
    text = dumps(doc) + "\n"
    with output as stage:
        result.write_csv(stage / OUTPUTS["csv"])
        write_text(stage / OUTPUTS["json"], text)
        if figures:
            from ..plot._style import save

            for name, fig in figures.items():
                save(fig, stage / name)
    click.echo(f"wrote {', '.join(str(p) for p in output.written)}")


COMMANDS = [contrast_command]
