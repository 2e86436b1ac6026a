"""CLI: the demo data."""

from __future__ import annotations

import click

from ..demo import DEMO_FILE, DEMO_SEED, write_demo

__all__ = ["COMMANDS"]


@click.command("make-demo")
@click.argument("path", required=False, default=DEMO_FILE, type=click.Path(dir_okay=False))
@click.option("--seed", default=DEMO_SEED, show_default=True, type=int, help="Generator seed.")
def make_demo(path, seed):
    """Write the demo table (invented pump-station sensor snapshots) to PATH as CSV.

    3,000 snapshots x 12 sensor channels, an id column `snapshot` and a label
    column `state` (running / standby / bearing_wear / clogging). The same seed
    always gives the same file. PATH defaults to ./pump_stations.csv.
    """
    out = write_demo(path, seed)
    click.echo(f"wrote {out} (3000 rows, 12 channels, seed {seed})")


COMMANDS = [make_demo]
