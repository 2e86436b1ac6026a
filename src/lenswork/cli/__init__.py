"""The ``lenswork`` command line: a thin layer over the Python API.

Every command is a few lines that parse options, call the public API and
print. Commands live in the modules of this package, one per topic; shared
options (the input table, ``--quiet``) and the error handling live here.
Errors lenswork raises on purpose are printed as one line, ``Error: ...``,
with exit code 1; nothing from deep inside numpy reaches the user.
"""

from __future__ import annotations

import sys

import click

from .._errors import LensworkError
from .._version import __version__
from ._common import LensworkGroup

__all__ = ["cli", "main"]


@click.group(cls=LensworkGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, "--version", prog_name="lenswork")
@click.option("-q", "--quiet", is_flag=True, help="Print results only: no progress lines or bars.")
@click.option(
    "--progress/--no-progress", default=None,
    help="Show (or hide) progress on stderr even when it is not a terminal (default: shown on a "
    "terminal only; also the environment variable LENSWORK_PROGRESS=1 or 0). --quiet wins.",
)
@click.pass_context
def cli(ctx, quiet, progress):
    """lenswork: choose lenses for Mapper-style graph summaries of a point cloud.

    Start with `lenswork screen --demo`: it computes a set of candidate lenses on
    the bundled demo data, ranks them by spread and redundancy and keeps a small
    non-redundant set. Every command reads CSV, TSV, NPY or Parquet tables, or the
    demo (--demo), and writes its files atomically with a JSON provenance sidecar.
    """
    from .. import _progress

    ctx.ensure_object(dict)
    ctx.obj["quiet"] = quiet
    previous = _progress.configure(quiet=quiet, force=progress)
    ctx.call_on_close(lambda: _progress.restore(previous))  # the library is silent again after


def _register_commands():
    from importlib import import_module

    for module in ("_data", "_lenses", "_screen", "_graph", "_views", "_contrast", "_partitioned",
                   "_report"):
        try:
            mod = import_module(f"{__name__}.{module}")
        except ModuleNotFoundError as err:  # a topic not yet present in this checkout
            if err.name == f"{__name__}.{module}":
                continue
            raise
        for command in getattr(mod, "COMMANDS", ()):
            cli.add_command(command)


_register_commands()


def main(argv=None):
    """Entry point of the console script; returns the exit code."""
    try:
        return cli.main(args=argv, prog_name="lenswork", standalone_mode=True)
    except LensworkError as err:  # pragma: no cover - the group already converts these
        click.echo(f"Error: {err}", err=True)
        sys.exit(2)
