"""CLI: screen candidate lenses, keep a small non-redundant set, write table, lenses, figures."""

from __future__ import annotations

import click

from ..screen import screen
from ..table import FORMATS
from ..workspace import Workspace
from ._common import input_options, neighbors_option, output_dir

__all__ = ["COMMANDS"]


def _names(values):
    """Repeatable options that also take comma-separated lists."""
    out = []
    for v in values:
        out.extend(x.strip() for x in v.split(",") if x.strip())
    return out


@click.command("screen")
@input_options
@click.option("-o", "--out", "out_dir", default="lenswork-screen", show_default=True,
              type=click.Path(file_okay=False),
              help="Output directory (created if missing; files in it are replaced).")
@click.option("-n", "--count", default=2, show_default=True, type=int,
              help="Lenses to select at most.")
@click.option("--ceiling", default=0.8, show_default=True, type=float,
              help="Never select two lenses with |Spearman rho| above this.")
@click.option("-r", "--ref", "refs", multiple=True, metavar="COL",
              help="Reference column (feature or passthrough) to correlate every lens with; "
              "repeatable or comma-separated.")
@click.option("-l", "--lens", "extra", multiple=True, metavar="SPEC",
              help="Add a candidate lens, name or name:key=value,... (repeatable); "
              "`lenswork lenses` lists them.")
@click.option("--no-defaults", is_flag=True,
              help="Screen only the --lens candidates, not the default set.")
@click.option("--bins", default=20, show_default=True, type=int,
              help="Histogram bins of the histogram-entropy spread column (a diagnosis).")
@click.option("--pairing", type=click.Choice(["preservation", "greedy"]), default="preservation",
              show_default=True,
              help="preservation: the pair (set) that best keeps each row's data neighbours "
              "(R_NX) weighted by merit; greedy: merit x (1 - |rho|) one lens at a time.")
@click.option("--lens-format", type=click.Choice(FORMATS), default="csv", show_default=True,
              help="File format of the chosen lens columns.")
@neighbors_option
@click.option("--sample", default="auto", show_default=True, metavar="N|auto|all",
              help="Rows the candidates are ranked on: auto = every row up to 50,000, else a "
              "seeded sample of 20,000; N rows; all. The chosen lenses are then computed on "
              "every row and checked against the sample run (Spearman rho).")
@click.option("--no-figures", is_flag=True, help="Skip the figure sheet (PNG and SVG).")
@click.option("--no-probe", is_flag=True,
              help="Merit from robust spread and smoothness alone: skip the structure probe "
              "(graphs over a cover grid).")
def screen_command(cloud, seed, out_dir, count, ceiling, refs, extra, no_defaults, bins,
                   pairing, lens_format, neighbor_method, sample, no_figures, no_probe):
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
    if no_defaults and not extra:
        raise click.UsageError("--no-defaults needs at least one --lens.")
    output_dir(out_dir)  # a folder that takes no writes fails here, before the work
    ws = Workspace(cloud, random_state=seed, neighbor_method=neighbor_method)
    result = screen(
        ws, lenses=[] if no_defaults else None, extra=list(extra), count=count,
        ceiling=ceiling, references=_names(refs), bins=bins, probe=not no_probe,
        pairing=pairing,
        sample=sample,
    )
    click.echo(result.format_table())
    click.echo("")
    click.echo(result.summary())
    files = result.write(out_dir, figures=not no_figures, lens_format=lens_format)
    click.echo(f"wrote {', '.join(str(p) for p in files.values())}")


COMMANDS = [screen_command]
