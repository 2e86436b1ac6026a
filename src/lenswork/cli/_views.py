"""CLI: the stability map, the bootstrap of graph features, and the comparison of views."""

from __future__ import annotations

import click

from .._io import OutputSet, check_output_dir
from ..bootstrap import bootstrap_graph
from ..compare import compare_views
from ..stability import stability_map
from ._common import graph_options, input_options, lens_options, lens_table, lens_views

__all__ = ["COMMANDS"]


# --------------------------------------------------------------------------- stability
@click.command("stability")
@input_options
@lens_options()
@click.option("--interval-counts", "grid_intervals", default="4,6,8,10,12,14,16,20",
              show_default=True, metavar="N,N,...",
              help="Interval counts of the grid (rows of the map); --intervals is one cover's.")
@click.option("--overlaps", "grid_overlaps", default="0.1,0.2,0.3,0.4,0.5", show_default=True,
              metavar="P,P,...", help="Overlaps of the grid (columns of the map).")
@click.option("-o", "--out", default="lenswork-stability", show_default=True,
              type=click.Path(file_okay=False),
              help="Output directory: stability.csv (+ .json provenance), stability.png.")
@click.option("--no-figure", is_flag=True, help="Write the CSV table only.")
@graph_options(exclude=("intervals", "overlap"))
def stability(cloud, seed, lens_specs, lens_file, use, grid_intervals, grid_overlaps, out,
              no_figure, settings, neighbors):
    """Map the graph's feature counts over a grid of cover settings for one lens.

    For every (intervals, overlap) cell the Mapper graph of the lens is built on
    the shared neighbour graph and its significant structure is counted as the
    graph summary's first line gives it (components, significant loops -- holes
    for several lenses, checked over coarser covers --, flares, limbs, branch
    points), then its raw counts (loops b1, branch points, flares: small
    features included). The table (one row per cell) goes to stability.csv, the
    heat maps to stability.png; the region of cells around the default setting
    (the default graph's: intervals and min_size from the rows, overlap 0.3)
    with the same count is outlined. Pick cover
    settings inside such a region. With --cover ball a row N of the grid is a
    net spacing of 1/N.
    """
    output = OutputSet(out, command="stability")  # checked before the work
    ws = neighbors.workspace(cloud, seed)
    table = lens_table(ws, lens_specs, lens_file, use)
    # "auto" settings fixed on these rows: the map's default cell is the default graph's
    settings = settings.resolve(ws.n, len(table.names))
    smap = stability_map(table, ws, settings=settings, interval_counts=grid_intervals,
                         overlaps=grid_overlaps)
    click.echo(f"Stability map of {smap.lens} on {ws.n} rows "
               f"({len(smap.interval_counts)} x {len(smap.overlaps)} cover settings).")
    lead = next((f for f in ("significant_loops", "significant_holes") if f in smap.counts),
                "loops")
    click.echo(_grid_text(smap, lead))
    cell = smap.default_cell
    if cell is not None:
        for feature in smap.features:
            region = smap.region(feature)
            value = int(smap.counts[feature][cell])
            name = feature.replace("_", " ") if feature.startswith("significant_") \
                or feature == "components" else f"raw {feature.replace('_', ' ')}"
            click.echo(f"{name}: {value} at the default setting; the same over "
                       f"{int(region.sum())} of {region.size} cells around it")
    with output as stage:
        smap.write(stage / "stability.csv")
        if not no_figure:
            smap.plot(stage / "stability.png")
    click.echo("wrote " + ", ".join(str(p) for p in output.written))


def _grid_text(smap, feature):
    counts = smap.counts[feature]
    head = "intervals \\ overlap " + " ".join(f"{o:>5g}" for o in smap.overlaps)
    lines = [f"{feature.replace('_', ' ')}:", head]
    for i, iv in enumerate(smap.interval_counts):
        lines.append(f"{iv:>19d} " + " ".join(f"{int(v):>5d}" for v in counts[i]))
    return "\n".join(lines)


# --------------------------------------------------------------------------- bootstrap
@click.command("bootstrap")
@input_options
@lens_options()
@click.option("--resamples", default=100, show_default=True, type=int,
              help="Number of resampled graphs.")
@click.option("--scheme", type=click.Choice(["subsample", "bootstrap"]), default="subsample",
              show_default=True,
              help="subsample: a share of the rows without replacement; bootstrap: n draws "
              "with replacement, distinct rows kept.")
@click.option("--fraction", default=0.8, show_default=True, type=float,
              help="Share of rows in each subsample.")
@click.option("--suggest", is_flag=True,
              help="Take intervals, overlap and cut-off from the data (after Carriere, Michel "
              "and Oudot 2018) instead of the options.")
@click.option("-o", "--out", default="lenswork-bootstrap", show_default=True,
              type=click.Path(file_okay=False),
              help="Output directory: bootstrap.csv, bootstrap.json, bootstrap.png.")
@click.option("--no-figure", is_flag=True, help="Write the tables only.")
@graph_options()
def bootstrap(cloud, seed, lens_specs, lens_file, use, resamples, scheme, fraction, suggest, out,
              no_figure, settings, neighbors):
    """Rebuild the graph of a lens on resampled rows; report how often each feature recurs.

    Each resample gets a neighbour graph of its own. For components, loops (b1),
    branch points and flares the command prints the full-data count, the most
    frequent count over the resamples and its share, and the share of resamples
    that reproduce the full-data count; then every significant loop, branch,
    flare and branch point of the full-data graph with the share of resamples
    where a significant feature of the same kind over the same lens range
    recurs. bootstrap.csv holds one row per resample; bootstrap.json the
    summary, the settings and any suggestion.
    """
    out = check_output_dir(out)
    ws = neighbors.workspace(cloud, seed)
    result = bootstrap_graph(
        lens_table(ws, lens_specs, lens_file, use), ws, settings=settings, resamples=resamples,
        scheme=scheme, fraction=fraction, suggest=suggest, random_state=seed,
    )
    if result.suggestion is not None:
        s = result.suggestion
        click.echo(f"Suggested cover: intervals {s.intervals}, overlap {s.overlap:g}, cut-off "
                   f"{s.cutoff:.4g} (Hausdorff scale over {s.batches} subsamples of "
                   f"{s.subsample_size} rows).")
    click.echo(f"Bootstrap of {result.lens_label}: {result.resamples} resamples "
               f"({result.scheme_text}), {ws.n} rows.")
    click.echo(result.format_table())
    click.echo("Significant features of the full-data graph (lens span above the cover's "
               "resolution) and how often each recurs:")
    click.echo(result.format_features())
    written = result.write(out, figures=not no_figure)
    click.echo("wrote " + ", ".join(str(p) for p in written.values()))


# --------------------------------------------------------------------------- compare
@click.command("compare")
@input_options
@lens_options(views=True)
@click.option("--partition", type=click.Choice(["component", "node"]), default="component",
              show_default=True,
              help="Row partition each view induces: the row's connected component, or its "
              "first node.")
@click.option("--match", default=0.5, show_default=True, type=float,
              help="Jaccard index of the rows at which a feature counts as present in both "
              "views.")
@click.option("-o", "--out", default="lenswork-compare", show_default=True,
              type=click.Path(file_okay=False),
              help="Output directory: comparison.json, correspondence CSVs, comparison.png.")
@click.option("--no-figure", is_flag=True, help="Write the tables only.")
@graph_options()
def compare(cloud, seed, lens_specs, lens_file, use, partition, match, out, no_figure, settings,
            neighbors):
    """Compare the Mapper graphs of two or more lenses over the same rows.

    Each --lens is one view; so is each --use of a --lens-file (or, with no
    --use, each column of the file).

    Each view is described by its significant structure first, its raw counts
    after. For every pair of views it prints first the co-membership agreement
    of row pairs (the pairs of rows sharing a node in one view and in the other:
    a weighted adjusted Rand index and a pair Jaccard), then the adjusted Rand
    index and the variation of information of the row partitions the views
    induce (flagged trivial when both are one block, as for any two connected
    graphs), the significant features (loops, flares, limbs, branch points,
    components) found in one view and not the other, and the count of small
    features found in one view only. comparison.json holds all of it;
    correspondence_A_B.csv the node correspondence M_a^T M_b (rows shared by
    each pair of nodes); comparison.png draws the views side by side, each
    coloured by the other view's lens.
    """
    out = check_output_dir(out)
    ws = neighbors.workspace(cloud, seed)
    views = lens_views(ws, lens_specs, lens_file, use)
    if len(views) < 2:
        raise click.UsageError(
            "Give two views or more: --lens options (one view each), --use options of a "
            "--lens-file (one view each), or a --lens-file of two columns or more."
        )
    result = compare_views(views, ws, settings=settings, partition=partition, match=match)
    click.echo(result.format_text())
    written = result.write(out, figures=not no_figure)
    click.echo("wrote " + ", ".join(str(p) for p in written.values()))


COMMANDS = [stability, bootstrap, compare]
