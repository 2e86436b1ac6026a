"""CLI: screen candidate lenses, keep a small non-redundant set, write table, lenses, figures."""

from __future__ import annotations

import click

from .._io import check_output_dir
from ..screen import screen
from ..table import FORMATS
from ._common import input_options, neighbors_option, screen_options

__all__ = ["COMMANDS"]


@click.command("screen")
@input_options
@click.option("-o", "--out", "out_dir", default="lenswork-screen", show_default=True,
              type=click.Path(file_okay=False),
              help="Output directory (created if missing; files in it are replaced).")
@screen_options
@click.option("--lens-format", type=click.Choice(FORMATS), default="csv", show_default=True,
              help="File format of the chosen lens columns.")
@neighbors_option
@click.option("--no-figures", is_flag=True, help="Skip the figure sheet (PNG and SVG).")
def screen_command(cloud, seed, out_dir, settings, lens_format, neighbors, no_figures):
    """Rank candidate lenses for TABLE (or --demo) and keep a small non-redundant set.

    Computes the default candidate set (PCA and Laplacian coordinates, density at
    two bandwidths, eccentricity p = 1, 2, inf, distance to a measure at two
    masses, k-NN distance, geodesic eccentricity) plus any --lens and scores
    each by three criteria: robust spread (many rows carry it: no big ties, no
    few far rows owning its variation), smoothness (its Laplacian score on the
    neighbour graph) and structure (loops and branches of its graphs over a
    small cover grid that span more of its range than the cover can make:
    extended persistence; column sig L/B, all features in L/F/B). The merit is
    their geometric mean. It keeps the pair of lenses whose two-dimensional
    cover space best keeps each row's data neighbours (R_NX) times their
    merits, never two with |Spearman rho| above --ceiling.

    Above 50,000 rows (--sample auto) the candidates are ranked on a seeded
    sample of 20,000 rows; only the chosen lenses are then computed on every
    row, and the summary states the sample, the bootstrap error of the spread
    scores and each chosen lens's Spearman rho between the sample run and the
    full run (ranking.json, "sample").

    Writes to OUT: ranking.csv and ranking.json (scores, correlations, the
    reason for every decision), lenses.<format> with the chosen columns and a
    .json sidecar, and sheet.png / sheet.svg. Everything is computed before the
    first file is written; a failure leaves no partial output.
    """
    if settings.lenses == () and not settings.extra:
        raise click.UsageError("--no-defaults needs at least one --lens.")
    check_output_dir(out_dir)  # a folder that takes no writes fails here, before the work
    ws = neighbors.workspace(cloud, seed)
    result = screen(ws, settings)
    click.echo(result.text())
    files = result.write(out_dir, figures=not no_figures, lens_format=lens_format)
    click.echo(f"wrote {', '.join(str(p) for p in files.values())}")


COMMANDS = [screen_command]
