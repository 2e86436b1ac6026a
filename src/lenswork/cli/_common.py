"""Shared pieces of the CLI: input options, error conversion, output helpers."""

from __future__ import annotations

import functools
import warnings
from dataclasses import fields

import click

from .. import _progress
from .._errors import LensworkError, LensworkWarning, ParameterError
from .._io import check_output_dir, os_error_text
from ..graph import CUTOFF_WORDS, GraphSettings
from ..lenses import LENS_FILE_CHECKS
from ..workspace import METHODS

__all__ = [
    "LensworkGroup",
    "cutoff_value",
    "graph_option_fields",
    "graph_options",
    "input_options",
    "lens_file_check_option",
    "load_input",
    "neighbors_option",
    "number_list",
    "output_dir",
]


class LensworkGroup(click.Group):
    """A click group that turns lenswork's own errors into one-line messages."""

    def invoke(self, ctx):
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("always", LensworkWarning)
                warnings.showwarning = _show_warning
                return super().invoke(ctx)
        except LensworkError as err:
            raise click.ClickException(str(err)) from None
        except MemoryError:
            raise click.ClickException(
                "Ran out of memory. Use fewer rows, a smaller k, or the scalable modes."
            ) from None
        except OSError as err:  # a file-system error not met by a check: one line, no traceback
            raise click.ClickException(os_error_text(err)) from None


def _show_warning(message, category, filename, lineno, file=None, line=None):
    prefix = "Warning" if issubclass(category, LensworkWarning) else category.__name__
    _progress.interrupt()  # a line of its own, never the end of a step's "label ..." line
    click.echo(f"{prefix}: {message}", err=True)


def input_options(func):
    """Options that choose the input table: a path or --demo, features, id, scaling."""

    @click.argument("table", required=False, type=click.Path(dir_okay=False))
    @click.option(
        "--demo", is_flag=True, help="Use the bundled demo data (pump-station snapshots)."
    )
    @click.option(
        "-f", "--features", default=None, metavar="COLS",
        help="Feature columns, comma-separated names or 1-based positions (default: every "
        "numeric column but the id).",
    )
    @click.option("--id-column", default=None, metavar="COL", help="Column holding row ids.")
    @click.option(
        "--scale", type=click.Choice(["none", "zscore", "robust"]), default=None,
        help="Standardise each feature column first (recorded). Default: none for files, "
        "zscore for the demo.",
    )
    @click.option(
        "--skip-invalid", is_flag=True,
        help="Report rows with missing/NaN/inf features and keep them out (default: error).",
    )
    @click.option("--delimiter", default=None, metavar="CHAR",
                  help="Field delimiter of a text table (default: detected).")
    @click.option("--seed", default=0, show_default=True, type=int, help="Random seed.")
    @functools.wraps(func)
    def wrapper(*args, table, demo, features, id_column, scale, skip_invalid, delimiter, seed,
                **kwargs):
        cloud = load_input(table, demo, features, id_column, scale, skip_invalid, delimiter)
        return func(*args, cloud=cloud, seed=seed, **kwargs)

    return wrapper


def load_input(table, demo, features, id_column, scale, skip_invalid, delimiter=None):
    """Load the PointCloud a command works on (the demo when asked or no table given)."""
    from ..data import load_table

    if demo and table:
        raise click.UsageError("Give a TABLE or --demo, not both.")
    if table is None:
        if not demo:
            raise click.UsageError("Give a TABLE to read, or --demo for the bundled demo data.")
        from ..demo import load_demo

        return load_demo(scale=scale or "zscore")
    feats = None
    if features:
        feats = [f.strip() for f in features.split(",") if f.strip()]
        feats = [int(f) - 1 if f.isdigit() else f for f in feats]  # 1-based on the CLI
    return load_table(
        table, features=feats, id_column=id_column,
        scale=None if scale in (None, "none") else scale,
        invalid="exclude" if skip_invalid else "error", delimiter=delimiter,
    )


def number_list(text, cast, option):
    """'10' -> 10, '10,12' -> [10, 12] (one value per lens column), None -> None."""
    if text is None:
        return None
    parts = [p.strip() for p in str(text).split(",") if p.strip()]
    try:
        values = [cast(p) for p in parts]
    except ValueError:
        raise ParameterError(
            f"The {option} option must be a number or comma-separated numbers, one per lens; "
            f"got {text!r}."
        ) from None
    if not values:
        raise ParameterError(f"The {option} option is empty; give a number such as {option} 10.")
    return values[0] if len(values) == 1 else values


def cutoff_value(text, words=CUTOFF_WORDS):
    """The --cutoff option: one of ``words`` or a number."""
    word = str(text).strip().lower()
    if word in words:
        return word
    try:
        return float(word)
    except ValueError:
        raise ParameterError(
            f"The --cutoff option must be {', '.join(repr(w) for w in words)} or a non-negative "
            f"number; got {text!r}."
        ) from None


def output_dir(path):
    """``path`` as a Path, checked before the work: it must be a folder that takes writes
    (or can be created). OutputError (a message) otherwise."""
    return check_output_dir(path)


#: --lens-file-check, defined once for every command that takes --lens-file.
lens_file_check_option = click.option(
    "--lens-file-check", "lens_file_check", type=click.Choice(LENS_FILE_CHECKS), default="warn",
    show_default=True,
    help="How a --lens-file that does not match its sidecar (rows, columns, file checksum) or "
    "the table it was computed from (the input checksum) is treated: warn, error, or off.",
)


#: The --neighbors option, defined once for every command that builds a neighbour graph.
neighbors_option = click.option(
    "--neighbors", "neighbor_method", type=click.Choice(METHODS), default="auto",
    show_default=True, help="Neighbour-graph back end: exact (scikit-learn), approximate "
    "(pynndescent) or auto (exact for small or low-dimensional data).",
)


def _parser(f):
    """Text of the option -> the value GraphSettings checks (lists and cut-off words parsed)."""
    meta = f.metadata["cli"]
    flag = meta["flag"]
    if meta["kind"] == "list":
        cast = int if f.name == "intervals" else float
        return lambda text: "auto" if text.strip().lower() == "auto" \
            else number_list(text, cast, flag)
    if f.name == "cutoff":
        return cutoff_value
    return lambda text: text


def graph_option_fields(exclude=()):
    """The GraphSettings fields that have a command-line option, minus ``exclude``."""
    return [f for f in fields(GraphSettings) if "cli" in f.metadata and f.name not in exclude]


def graph_options(exclude=()):
    """Command-line options generated from :class:`GraphSettings`, plus ``--neighbors``.

    One option per field with ``cli`` metadata (flag, help, kind, choices),
    its default taken from the dataclass, so the graph commands cannot drift
    apart. The wrapped command receives ``settings`` (a validated
    GraphSettings) and ``neighbor_method`` instead of the separate options.
    ``exclude`` leaves fields to the command (the stability map's grid sets
    ``intervals`` and ``overlap`` itself).
    """
    chosen = graph_option_fields(exclude)

    def decorator(func):
        @functools.wraps(func)
        def wrapper(*args, **kwargs):
            changes = {}
            for f in chosen:
                text = kwargs.pop(f"graph_{f.name}")
                if text is not None:
                    changes[f.name] = _parser(f)(text)
            kwargs["settings"] = GraphSettings(**changes)
            return func(*args, **kwargs)

        for f in reversed(chosen):
            meta = f.metadata["cli"]
            default = f.default
            if isinstance(default, tuple):
                default = ",".join(map(str, default))
            kind = meta["kind"]
            if kind == "choice":
                ctype = click.Choice(meta["choices"])
            elif kind == "int":
                ctype = int
            elif kind == "float":
                ctype = float
            else:
                ctype = str
            if kind == "list" and default is not None:
                default = str(default)
            wrapper = click.option(
                meta["flag"], f"graph_{f.name}", type=ctype, default=default,
                show_default=default is not None, metavar=meta["metavar"], help=meta["help"],
            )(wrapper)
        return neighbors_option(wrapper)

    return decorator
