"""CLI: which data columns set each graph feature's rows apart (``lenswork contrast``)."""

from __future__ import annotations

import functools
import re
from pathlib import Path

import click

from .._errors import InputError, ParameterError
from .._io import unformula
from ..contrast import AGAINST
from ..graph import CLUSTERERS, COVER_SCALES, FRAGMENT_RULES, LAYOUTS
from ._common import (
    cutoff_value,
    input_options,
    lens_file_check_option,
    neighbors_option,
    number_list,
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
    """The options that say how to build the graph, as `lenswork graph` takes them."""
    options = [
        click.option("-l", "--lens", "lens_specs", multiple=True, metavar="SPEC",
                     help="A lens as name or name:key=value,... (repeatable; `lenswork lenses` "
                     "lists them)."),
        click.option("--lens-file", type=click.Path(dir_okay=False), default=None,
                     help="Lens columns written by `lenswork compute` or `lenswork screen`, "
                     "matched to TABLE by row id."),
        lens_file_check_option,
        click.option("--use", "use", default=None, metavar="COLS",
                     help="Columns to take from --lens-file, comma-separated (default: all)."),
        click.option("--intervals", default="10", show_default=True, metavar="N[,N...]",
                     help="Intervals per lens: one value, or one per lens column."),
        click.option("--overlap", default="0.3", show_default=True, metavar="P[,P...]",
                     help="Overlap fraction in [0, 1): one value, or one per lens column."),
        click.option("--cover-scale", type=click.Choice(COVER_SCALES), default="rank",
                     show_default=True, help="Intervals on ranks (equal counts) or raw values."),
        click.option("--clusterer", type=click.Choice(CLUSTERERS), default="graph",
                     show_default=True, help="How each cover element is clustered."),
        click.option("--cutoff", default="auto", show_default=True,
                     metavar="auto|fence|none|FLOAT", help="Longest k-NN edge kept."),
        click.option("--min-size", default=10, show_default=True, type=int,
                     help="Groups with fewer rows are fragments."),
        click.option("--fragments", type=click.Choice(FRAGMENT_RULES), default="attach",
                     show_default=True, help="Attach fragments to a near cluster, or report them."),
        click.option("-k", "k", default=15, show_default=True, type=int,
                     help="Neighbours of the shared k-NN graph."),
        neighbors_option,
    ]
    for option in reversed(options):
        func = option(func)
    return func


def build_from_options(cloud, seed, opts):
    """(workspace, lens table, graph) from the options of :func:`graph_build_options`."""
    from ..graph import build_graph
    from ..lenses import compute_lenses
    from ..table import LensTable
    from ..workspace import Workspace

    if not opts["lens_specs"] and not opts["lens_file"]:
        raise click.UsageError("Give at least one --lens or a --lens-file.")
    if opts["use"] and not opts["lens_file"]:
        raise click.UsageError("--use picks columns of a --lens-file; give the --lens-file too.")
    ws = Workspace(cloud, random_state=seed, neighbor_method=opts["neighbor_method"])
    columns = []
    if opts["lens_file"]:
        columns += list(LensTable.read(opts["lens_file"], cloud, columns=_names(opts["use"]),
                                       check=opts["lens_file_check"]))
    if opts["lens_specs"]:
        columns += list(compute_lenses(ws, list(opts["lens_specs"])))
    table = LensTable(columns, cloud, random_state=seed)
    graph = build_graph(
        table, ws, intervals=number_list(opts["intervals"], int, "--intervals"),
        overlap=number_list(opts["overlap"], float, "--overlap"), scale=opts["cover_scale"],
        clusterer=opts["clusterer"], cutoff=cutoff_value(opts["cutoff"]),
        min_size=opts["min_size"], k=opts["k"], fragments=opts["fragments"],
    )
    return ws, table, graph


def _graph_opts(func):
    """Collect the graph-building options into one ``graph_opts`` dict."""
    keys = ("lens_specs", "lens_file", "lens_file_check", "use", "intervals", "overlap",
            "cover_scale", "clusterer", "cutoff", "min_size", "fragments", "k", "neighbor_method")

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
    # the formula guard of lenswork's own CSV files (memberships.csv) undone
    ids = [unformula(ln.split(",")[0].strip()) for ln in lines if ln.strip()]
    if ids and ids[0] == cloud.id_name:  # a header line
        ids = ids[1:]
    if not ids:
        raise InputError(f"--rows-file {str(path)!r} holds no row ids (one id per line).")
    return ids


def parse_color(text):
    """``COL``, ``COL:STAT`` or ``COL:share=LEVEL`` -> (column, stat, level)."""
    m = re.fullmatch(r"(.+?)(?::(mean|median|min|max|std|share)(?:=(.+))?)?", text.strip())
    column, stat, level = m.group(1), m.group(2) or "mean", m.group(3)
    if level is not None and stat != "share":
        raise ParameterError(f"--color {text!r}: only share takes a level (COL:share=LEVEL).")
    return column, stat, level


def _safe(label):
    return re.sub(r"[^A-Za-z0-9_.-]+", "-", label).strip("-")


@click.command("contrast")
@input_options
@graph_build_options
@click.option("--feature", "feature_labels", multiple=True, metavar="LABEL",
              help="A feature of the graph summary: kind:i (flare:2, loop:1, component:1, "
              "branch:3, path:1; 1-based within its kind), a kind (every flare), or "
              "nodes:3,5,7 (repeatable). Default: every feature.")
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
              help="Print every feature tested, not only those with a significant column.")
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
    for every loop, flare, branch, path and component (or the --feature / --rows
    given) compares each data column between the feature's rows and the rest
    (or the neighbouring nodes' rows): Cliff's delta and the standardised mean
    difference with a Kolmogorov-Smirnov test for numeric columns, Cramér's V
    with a chi-square test for categorical ones, Benjamini-Hochberg q-values
    over every test, and how each column changes along a flare or loop. Prints
    the top columns of every feature with a significant one and writes to OUT:
    contrast.csv, contrast.json, and per such feature columns_<feature>.png
    (the graph coloured by each top column). Everything is computed before the
    first file is written.
    """
    from .._io import OutputSet, write_text
    from .._json import dumps
    from ..contrast import contrast_columns, node_column_values

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
        node_column_values(graph, ws, colour[0], colour[1], level=colour[2])
    result = contrast_columns(
        graph, ws, list(feature_labels) or None, rows=rows, against=against, hops=hops,
        columns=_names(columns), categorical=_names(categorical), lenses=table,
        max_levels=max_levels, alpha=alpha,
    )
    figures = {}
    if not no_figure:
        from ..plot._columns import contrast_sheet
        from ..plot._graph import draw_graph

        labels = [f["label"] for f in result.features] if all_features else \
            result.significant_features()
        for label in labels[:MAX_SHEETS]:
            figures[f"columns_{_safe(label)}.png"] = contrast_sheet(
                result, graph, ws, label, top=top, layout=layout, random_state=seed)
        if colour is not None:
            figures[f"graph_{_safe(colour[0])}.png"] = draw_graph(
                graph, color=colour[0], stat=colour[1], level=colour[2], data=ws,
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
