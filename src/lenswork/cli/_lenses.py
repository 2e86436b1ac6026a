"""CLI: list the lens registry; compute lens columns for a table."""

from __future__ import annotations

import textwrap

import click

from ..lenses import ENDINGS, compute_lenses, get_lens, lens_names
from ..normalize import NORMALIZATIONS
from ._common import check_out_file, neighbors_option
from ._partitioned import (
    cluster_input_options,
    lens_out_dir,
    print_lens_run,
    refuse_with_scheduler,
    scheduler_alias,
)

__all__ = ["COMMANDS"]


@click.command("lenses")
@click.option("--name", "only", default=None, help="Show one lens only, with its parameter docs.")
def list_lenses(only):
    """List the lens registry: name, parameters with defaults, cost, summary.

    Use the names and parameters with --lens in the syntax name:key=value,key=value,
    e.g. --lens density:bandwidth=silverman,log=false.
    """
    names = [get_lens(only).name] if only else lens_names()
    for name in names:
        spec = get_lens(name)
        params = ", ".join(f"{p.name}={p.default!r}" for p in spec.params) or "-"
        click.echo(f"{name}")
        click.echo(f"    {spec.summary}")
        click.echo(f"    parameters: {params}")
        click.echo(f"    cost: {spec.cost}")
        if only:
            for p in spec.params:
                kind = f" ({p.type})" if p.type else ""
                click.echo(textwrap.fill(f"{p.name}{kind}: {p.doc}", 96, initial_indent="    - ",
                                         subsequent_indent="      "))


@click.command("compute")
@cluster_input_options
@click.option(
    "-l", "--lens", "lenses", multiple=True, required=True, metavar="SPEC",
    help="A lens as name or name:key=value,... (repeatable). `lenswork lenses` lists them.",
)
@click.option("-o", "--out", default="lenses.csv", show_default=True,
              type=click.Path(),  # a folder with --scheduler (rerun into it); checked below
              help="Output file; the ending picks the format "
              f"({', '.join('.' + e for e in ENDINGS)}). Provenance goes to OUT.json.")
@click.option("--normalize", "normalization", type=click.Choice(NORMALIZATIONS), default=None,
              help="Write normalised values (recorded in the sidecar) instead of raw ones.")
@neighbors_option
def compute(cloud, seed, lenses, out, normalization, neighbors, cluster=None):
    """Compute lens columns for TABLE (or --demo) and write them beside the row ids.

    The output holds the id column, the passthrough columns and one column per lens
    output, in input order; rows kept out with --skip-invalid are written with
    empty lens values. OUT.json records each lens's parameters, mode and error
    estimate, the library version, the input checksum and the seed.

    With --scheduler, TABLE is a directory of Parquet or CSV partitions (or a
    glob) and the columns are computed on a Dask cluster and written as the
    Parquet dataset folder OUT (one file per partition; default lenses/), its
    provenance to OUT.json beside it.
    """
    if cluster is not None:  # the partitioned path (lenswork.partitioned)
        refuse_with_scheduler(normalize=normalization, neighbors=neighbors.given)
        ctx = click.get_current_context()
        out = lens_out_dir(out, ctx.get_parameter_source("out").name == "DEFAULT")
        lens, files = cluster.write_lenses(lenses, out)
        return print_lens_run(cluster.cloud, lens, files, out)
    out = check_out_file(out)  # before the work: a file in the path, a read-only folder
    if out.suffix.lower().lstrip(".") not in ENDINGS:
        raise click.BadParameter(
            f"{str(out)!r} has no lens-file ending; use one of "
            f"{', '.join('.' + e for e in ENDINGS)}.", param_hint="'-o' / '--out'")
    ws = neighbors.workspace(cloud, seed)
    table = compute_lenses(ws, list(lenses))
    if normalization:
        table = table.normalize(normalization)
    path, sidecar = table.write(out, normalized=normalization is not None)
    for col in table:
        extra = ", ".join(
            f"{k}={v:.4g}" if isinstance(v, float) else f"{k}={v}"
            for k, v in col.info.items() if not isinstance(v, (list, dict))
        )
        click.echo(f"{col.name}: {extra}" if extra else col.name)
    click.echo(f"wrote {path} ({cloud.n} rows x {len(table)} lens columns) and {sidecar}")


COMMANDS = [list_lenses, compute, scheduler_alias(compute, "cluster-lenses")]
