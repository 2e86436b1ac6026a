"""CLI: lens columns and graphs of partitioned data on a Dask cluster (the ``dask`` extra)."""

from __future__ import annotations

import contextlib
from pathlib import Path

import click

__all__ = ["COMMANDS"]


def _cluster_options(func):
    func = click.option(
        "--scheduler", default="local", show_default=True, metavar="ADDRESS|local",
        help="A Dask scheduler address (tcp://host:8786) or 'local' for a LocalCluster.",
    )(func)
    func = click.option("--workers", default=2, show_default=True, type=int,
                        help="Workers of the local cluster.")(func)
    func = click.option("--memory-limit", default="auto", show_default=True,
                        help="Memory limit per local worker (e.g. 2GB); workers spill above "
                        "60% of it.")(func)
    func = click.option("-l", "--lens", "lenses", multiple=True, required=True,
                        help="Lens spec, repeatable: pca:components=2, eccentricity, "
                        "eccentricity:p=1, column:name=COL, density, dtm:mass=0.05, "
                        "laplacian:components=2,k=15.")(func)
    func = click.option("--landmarks", default=2000, show_default=True, type=int,
                        help="Broadcast sample size of the estimated lenses.")(func)
    func = click.option("--seed", default=0, show_default=True, type=int,
                        help="Seed of the landmark sample.")(func)
    func = click.option("-f", "--features", default=None, metavar="COLS",
                        help="Feature columns, comma-separated names.")(func)
    func = click.option("--id-column", default=None, metavar="COL",
                        help="Column of row ids (unique across partitions).")(func)
    func = click.option("--scale", type=click.Choice(["none", "zscore"]), default="none",
                        show_default=True,
                        help="z-score each feature with the mean and sd of all rows.")(func)
    func = click.argument("source")(func)
    return func


@contextlib.contextmanager
def _session(scheduler, workers, memory_limit):
    from ..partitioned import start_client

    client = start_client(scheduler, workers=workers, memory_limit=memory_limit)
    try:
        yield client
    finally:
        client.close()


def _computer(client, quiet):
    """compute(list of delayed) on the client, counting finished tasks on lenswork's progress."""

    def compute(items):
        futures = client.compute(items)
        if not quiet:  # one line on stderr, silent off a terminal unless asked (_progress)
            from distributed import as_completed

            from .. import _progress

            for _ in _progress.track(as_completed(futures), "dask: partitions computed",
                                     length=len(futures)):
                pass
        return client.gather(futures)

    return compute


def _open(source, features, id_column, scale, lenses, landmarks, seed):
    from ..partitioned import open_partitioned, partitioned_lenses

    feats = [f.strip() for f in features.split(",")] if features else None
    cloud = open_partitioned(source, features=feats, id_column=id_column,
                             scale=None if scale == "none" else scale)
    return cloud, partitioned_lenses(cloud, list(lenses), landmarks=landmarks,
                                     random_state=seed)


@click.command("cluster-lenses")
@_cluster_options
@click.option("-o", "--out", required=True, type=click.Path(file_okay=False),
              help="Directory for one Parquet file of lens columns per partition and "
              "lenses.json.")
@click.pass_context
def cluster_lenses(ctx, source, features, id_column, scale, lenses, landmarks, seed, scheduler,
                   workers, memory_limit, out):
    """Compute lens columns on every partition of SOURCE on a Dask cluster.

    SOURCE is a directory of Parquet or CSV files (one partition each) or a glob.
    Exact lenses (pca, eccentricity with p = 2, column) equal the single-machine
    ones; the others state their error in lenses.json.
    """
    quiet = (ctx.obj or {}).get("quiet", False)
    with _session(scheduler, workers, memory_limit) as client:
        cloud, lens = _open(source, features, id_column, scale, lenses, landmarks, seed)
        files = lens.write(out, compute=_computer(client, quiet))
    click.echo(f"{cloud.n:,} rows in {cloud.n_partitions} partitions; columns "
               f"{', '.join(lens.names)}; wrote {len(files)} files to {out}")


@click.command("cluster-graph")
@_cluster_options
@click.option("--intervals", default=10, show_default=True, type=int,
              help="Intervals per lens (on the raw lens values).")
@click.option("--overlap", default=0.3, show_default=True, type=float,
              help="Overlap fraction of neighbouring intervals, in [0, 1).")
@click.option("-k", "--neighbors", "k", default=15, show_default=True, type=int,
              help="Neighbours inside each cover element.")
@click.option("--min-size", default=10, show_default=True, type=int,
              help="Groups with fewer points are fragments (attached to the nearest kept one).")
@click.option("-o", "--out", required=True, type=click.Path(dir_okay=False),
              help="Graph JSON file.")
@click.pass_context
def cluster_graph(ctx, source, features, id_column, scale, lenses, landmarks, seed, scheduler,
                  workers, memory_limit, intervals, overlap, k, min_size, out):
    """Build the Mapper graph (Mapper, 2007) of SOURCE's lens columns on a Dask cluster.

    Rows are routed to cover elements (raw-value intervals), each element is
    clustered on a worker by a neighbour graph inside it, and the nerve comes
    from the membership lists; the graph is written as JSON.
    """
    from ..graph import write_graph_json
    from ..partitioned import partitioned_graph

    quiet = (ctx.obj or {}).get("quiet", False)
    with _session(scheduler, workers, memory_limit) as client:
        _, lens = _open(source, features, id_column, scale, lenses, landmarks, seed)
        graph = partitioned_graph(lens, intervals=intervals, overlap=overlap, k=k,
                                  min_size=min_size, compute=_computer(client, quiet))
    write_graph_json(graph, Path(out))
    s = graph.summary()
    click.echo(f"{graph.n_nodes} nodes, {graph.n_edges} edges, {s.n_components} components, "
               f"{s.loops} loops; wrote {out}")


COMMANDS = (cluster_lenses, cluster_graph)
