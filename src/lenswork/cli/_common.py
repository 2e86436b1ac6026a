"""Shared pieces of the CLI: input options, error conversion, output helpers."""

from __future__ import annotations

import functools
import re
import signal
import threading
import warnings
from dataclasses import fields

import click

from .. import _progress
from .._errors import LensworkError, LensworkWarning, ParameterError
from .._io import check_output_file, os_error_text
from ..graph import CUTOFF_WORDS, GraphSettings
from ..lenses import LENS_FILE_CHECKS
from ..workspace import METHODS

__all__ = [
    "LensworkGroup",
    "Neighbors",
    "build_view",
    "check_out_file",
    "cli_text",
    "cutoff_value",
    "graph_option_fields",
    "graph_options",
    "input_options",
    "lens_options",
    "lens_table",
    "lens_views",
    "lens_file_check_option",
    "load_input",
    "neighbors_option",
    "number_list",
    "feature_text",
    "parse_color",
    "split_names",
    "screen_option_fields",
    "screen_options",
]


#: Python names in library messages -> what a command-line user gives or sees instead.
#: Library messages write "python (CLI: option)" or "(python; CLI: option)"; the rules
#: below keep the option. Whole phrases that name Python objects follow.
_CLI_RULES = (
    (re.compile(r"\(([^();]*?); CLI: ([^)]*)\)"), r"(\2)"),
    (re.compile(r"[\w.]+=(?:'[^']*'|\[\.\.\.\]|\.\.\.|[\w.]+) \(CLI: ([^)]*)\)"), r"\1"),
    (re.compile(r"They are listed in PointCloud\.excluded and written to outputs with missing "
                r"lens values\."),
     "They are written to the outputs with empty lens values."),
    (re.compile(r"they are listed in LensGraph\.unassigned\. Use (.*?)a smaller min_size"),
     r"they are listed under 'unassigned' in graph.json. Use \1a smaller --min-size"),
    (re.compile(r"smaller than min_size=(\d+)"), r"smaller than --min-size \1"),
    (re.compile(r"\bmin_size=(\d+)"), r"--min-size \1"),
    (re.compile(r" \(or pass format=\)"), ""),
    (re.compile(r"a larger k \(thin slices"), "a larger -k (thin slices"),
    (re.compile(r"a larger Workspace\(min_neighbors=\.\.\.\)"), "a larger --min-neighbors"),
    (re.compile(r"load them with lenswork\.load_table\(\.\.\., invalid='exclude'\)"),
     "pass --skip-invalid"),
)


#: Python parameter names of the graph settings (and the stability grid) -> their options.
_OPTION_OF = {
    **{f.name: f.metadata["cli"]["flag"] for f in fields(GraphSettings) if "cli" in f.metadata},
    "interval_counts": "--interval-counts", "overlaps": "--overlaps",
}
_PARAMETER_OF = re.compile(
    r"The '(\w+)' parameter of (?:Cover|BallCover|GraphSettings|build_graph|stability_map|"
    r"(?P<screen>screen|ScreenSettings))\b")


def _option_of(match):
    if match.group("screen"):
        flags = {f.name: f.metadata["cli"]["flags"] for f in screen_option_fields()}
        flag = flags.get(match.group(1), (None,))[-1]
    else:
        flag = _OPTION_OF.get(match.group(1))
    return f"The {flag} option" if flag else match.group(0)


def cli_text(message):
    """A library message as a command-line user reads it: options, not Python objects.

    Examples
    --------
    >>> cli_text("or pass invalid='exclude' (CLI: --skip-invalid) to keep them out")
    'or pass --skip-invalid to keep them out'
    >>> cli_text("Choose them (features=[...]; CLI: --features).")
    'Choose them (--features).'
    >>> cli_text("The 'min_size' parameter of build_graph must be an int in [1, inf).")
    'The --min-size option must be an int in [1, inf).'
    """
    text = str(message)
    for pattern, replacement in _CLI_RULES:
        text = pattern.sub(replacement, text)
    return _PARAMETER_OF.sub(_option_of, text)


class LensworkGroup(click.Group):
    """A click group that turns lenswork's own errors into one-line messages."""

    def invoke(self, ctx):
        previous = _on_sigterm(_terminated)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("always", LensworkWarning)
                warnings.showwarning = _show_warning
                return super().invoke(ctx)
        except KeyboardInterrupt as err:  # Ctrl-C or SIGTERM: output sets were rolled back
            _progress.interrupt()
            name, code = ("SIGTERM", 143) if isinstance(err, Terminated) else ("SIGINT", 130)
            click.echo(f"Error: interrupted ({name}). Output is moved in as a whole set or not "
                       f"at all: each output folder holds this run's complete set or the earlier "
                       f"one (its lenswork-manifest.json says which).", err=True)
            raise click.exceptions.Exit(code) from None
        except LensworkError as err:
            raise click.ClickException(cli_text(err)) from None
        except MemoryError:
            raise click.ClickException(
                "Ran out of memory. Use fewer rows, a smaller k, or the scalable modes."
            ) from None
        except OSError as err:  # a file-system error not met by a check: one line, no traceback
            raise click.ClickException(os_error_text(err)) from None
        finally:
            _on_sigterm(previous)


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised like Ctrl-C so that staged output is removed on the way out."""


def _terminated(signum, frame):
    raise Terminated()


def _on_sigterm(handler):
    """Install ``handler`` for SIGTERM (main thread only); return the previous one."""
    if handler is None or threading.current_thread() is not threading.main_thread():
        return None
    return signal.signal(signal.SIGTERM, handler)


def _show_warning(message, category, filename, lineno, file=None, line=None):
    prefix = "Warning" if issubclass(category, LensworkWarning) else category.__name__
    _progress.interrupt()  # a line of its own, never the end of a step's "label ..." line
    click.echo(f"{prefix}: {cli_text(message)}", err=True)


def input_options(func):
    """Options that choose the input table: a path or --demo, features, id, scaling."""

    @click.argument("table", required=False, type=click.Path(dir_okay=False))
    @click.option(
        "--demo", is_flag=True, help="Use the bundled demo data (pump-station snapshots)."
    )
    @click.option(
        "-f", "--features", default=None, metavar="COLS",
        help="Feature columns, comma-separated: names, 1-based positions (3), position ranges "
        "(2-53), name ranges in table order (w00:w51), and ~ before any of these to leave "
        "columns out (-f '~id,~notes'). Default: every numeric column but the id.",
    )
    @click.option("--exclude", multiple=True, metavar="COL",
                  help="Leave a column (or range) out of the features; repeatable. The same as "
                  "-f '~COL'.")
    @click.option("--id-column", default=None, metavar="COL", help="Column holding row ids.")
    @click.option(
        "--scale", type=click.Choice(["auto", "none", "zscore", "robust"]), default=None,
        help="Standardise each feature column first (recorded). Default: auto for files "
        "(zscore when the columns' ranges differ by more than 100x, i.e. different units; "
        "none otherwise), zscore for the demo.",
    )
    @click.option(
        "--skip-invalid", is_flag=True,
        help="Report rows with missing/NaN/inf features and keep them out (default: error).",
    )
    @click.option("--delimiter", default=None, metavar="CHAR",
                  help="Field delimiter of a text table (default: detected).")
    @click.option("--seed", default=0, show_default=True, type=int, help="Random seed.")
    @functools.wraps(func)
    def wrapper(*args, table, demo, features, exclude, id_column, scale, skip_invalid, delimiter,
                seed, **kwargs):
        features = feature_text(features, exclude)
        cloud = load_input(table, demo, features, id_column, scale, skip_invalid, delimiter)
        return func(*args, cloud=cloud, seed=seed, **kwargs)

    return wrapper


def load_input(table, demo, features, id_column, scale, skip_invalid, delimiter=None):
    """Load the PointCloud a command works on (the demo when asked or no table given)."""
    if demo and table:
        raise click.UsageError("Give a TABLE or --demo, not both.")
    if table is None:
        if not demo:
            raise click.UsageError("Give a TABLE to read, or --demo for the bundled demo data.")
        from ..demo import load_demo

        cloud = load_demo(scale=scale or "zscore")
    else:
        cloud = _load_table(table, features, id_column, scale, skip_invalid, delimiter)
    names = cloud.feature_names
    _progress.note(f"features ({len(names)}): {', '.join(names)}"
                   + (f"; row ids from {cloud.id_name!r}" if cloud.provenance.get("id_column")
                      else "; row ids 1..n (no --id-column)"))
    return cloud


def _load_table(table, features, id_column, scale, skip_invalid, delimiter):
    from ..data import load_table

    return load_table(
        table, features=features or None, id_column=id_column,
        scale=None if scale == "none" else (scale or "auto"),
        invalid="exclude" if skip_invalid else "error", delimiter=delimiter,
    )


def check_out_file(out):
    """check_output_file for a command's -o, refusing every file the command reads.

    The inputs are the command's TABLE, --lens-file and --rows-file (read from
    the click context), so no command can overwrite its own input.
    """
    ctx = click.get_current_context(silent=True)
    params = ctx.params if ctx is not None else {}
    inputs = [params.get(key) for key in ("table", "lens_file", "rows_file")]
    return check_output_file(out, inputs=[str(i) for i in inputs if i])


def feature_text(features, exclude=()):
    """``-f`` text with every ``--exclude`` column appended as ``~COL`` (None when neither)."""
    items = [features] if features else []
    items += [f"~{x.strip().lstrip('~')}" for x in exclude or () if x.strip()]
    return ",".join(items) or None


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


#: --lens-file-check, defined once for every command that takes --lens-file.
lens_file_check_option = click.option(
    "--lens-file-check", "lens_file_check", type=click.Choice(LENS_FILE_CHECKS), default="warn",
    show_default=True,
    help="How a --lens-file that does not match its sidecar (rows, columns, file checksum) or "
    "the table it was computed from (the input checksum) is treated: warn, error, or off.",
)


class Neighbors:
    """The shared neighbour graph's options of one command: back end and least k."""

    def __init__(self, method="auto", min_neighbors=None):
        self.method, self.min_neighbors = method, min_neighbors

    @property
    def given(self):
        """Whether either option was set away from its default."""
        return self.method != "auto" or self.min_neighbors is not None

    def workspace(self, cloud, seed):
        """The Workspace of ``cloud`` with these options."""
        from ..workspace import Workspace

        extra = {} if self.min_neighbors is None else {"min_neighbors": self.min_neighbors}
        return Workspace(cloud, random_state=seed, neighbor_method=self.method, **extra)


def neighbors_option(func):
    """``--neighbors`` (back end) and ``--min-neighbors`` for every command that builds a
    neighbour graph; the command receives ``neighbors`` (a :class:`Neighbors`)."""

    @functools.wraps(func)
    def wrapper(*args, neighbor_method, min_neighbors, **kwargs):
        return func(*args, neighbors=Neighbors(neighbor_method, min_neighbors), **kwargs)

    wrapper = click.option(
        "--min-neighbors", type=click.IntRange(min=1), default=None, metavar="K",
        help="Neighbours per row the shared graph holds at least (default 30). dtm reads "
        "ceil(mass n) - 1 of them: raise this when a dtm mass is capped (at most 99).",
    )(wrapper)
    return click.option(
        "--neighbors", "neighbor_method", type=click.Choice(METHODS), default="auto",
        show_default=True, help="Neighbour-graph back end: exact (scikit-learn), approximate "
        "(pynndescent) or auto (exact for small or low-dimensional data).",
    )(wrapper)


def parse_color(text):
    """``COL``, ``COL:STAT`` or ``COL:share=LEVEL`` -> (column, stat, level)."""
    m = re.fullmatch(r"(.+?)(?::(mean|median|min|max|std|share)(?:=(.+))?)?", text.strip())
    column, stat, level = m.group(1), m.group(2) or "mean", m.group(3)
    if level is not None and stat != "share":
        raise ParameterError(f"--color {text!r}: only share takes a level (COL:share=LEVEL).")
    return column, stat, level


def split_names(text):
    """'a, b,c' -> ['a', 'b', 'c']; None -> None."""
    if text is None:
        return None
    return [x.strip() for x in str(text).split(",") if x.strip()]


_LENS_HELP = ("A lens as name or name:key=value,... (repeatable; `lenswork lenses` lists them), "
              "or a lens column name as the screen ranks it (pca_2, laplacian_1, "
              "eccentricity[p=1]).")


class LensFile(str):
    """A --lens-file path and the --lens-file-check rule it is read under."""

    def __new__(cls, path, check="warn"):
        self = super().__new__(cls, path)
        self.check = check
        return self


def lens_options(views=False):
    """``-l/--lens``, ``--lens-file`` and ``--use``: the lens columns a graph is built on.

    The same options on every command that builds a graph (with
    ``--lens-file-check``). The command receives ``lens_specs`` (tuple),
    ``lens_file`` (a :class:`LensFile` carrying its check rule, or None) and
    ``use`` (text, or a tuple of texts with ``views=True``, where each ``--use``
    is one view).
    """
    if views:
        lens_help = "One view per --lens. " + _LENS_HELP
        use_help = ("Columns of --lens-file that make one view, comma-separated (repeatable: one "
                    "view each; default: one view per column of the file).")
    else:
        lens_help = _LENS_HELP + " Two or more lens columns give a product cover."
        use_help = "Columns to take from --lens-file, comma-separated (default: all of them)."

    def decorator(command):
        @functools.wraps(command)
        def wrapper(*args, lens_file, lens_file_check, **kwargs):
            path = None if lens_file is None else LensFile(lens_file, lens_file_check)
            return command(*args, lens_file=path, **kwargs)

        func = click.option("--use", "use", default=None, multiple=views, metavar="COLS",
                            help=use_help)(wrapper)
        func = lens_file_check_option(func)
        func = click.option(
            "--lens-file", type=click.Path(dir_okay=False), default=None,
            help="Lens columns written by `lenswork compute` or `lenswork screen` (CSV, TSV or "
            "Parquet with its .json sidecar), matched to TABLE by row id. A --lens naming one "
            "of its columns is read from it.",
        )(func)
        return click.option("-l", "--lens", "lens_specs", multiple=True, metavar="SPEC",
                            help=lens_help)(func)

    return decorator


def _check_lens_choice(lens_specs, lens_file, use):
    if not lens_specs and not lens_file:
        raise click.UsageError("Give at least one --lens or a --lens-file.")
    if use and not lens_file:
        raise click.UsageError("--use picks columns of a --lens-file; give the --lens-file too.")


def _columns_for(ws, specs, file_table):
    """Lens columns of ``specs``: a column of the lens file by its name, else computed."""
    from ..lenses import compute_lenses

    columns = []
    for spec in specs:
        if file_table is not None and spec.strip() in file_table.names:
            columns.append(file_table[spec.strip()])
        else:
            columns += list(compute_lenses(ws, [spec]))
    return columns


def _file_columns(file_table, names, lens_file):
    """The ``--use`` columns of the lens file (an unknown name: an error with a close match)."""
    import difflib

    for name in names:
        if name not in file_table.names:
            close = difflib.get_close_matches(name, file_table.names, n=1)
            hint = f" Did you mean {close[0]!r}?" if close else ""
            raise ParameterError(
                f"--use {name!r}: the lens file {str(lens_file)!r} has no such column.{hint} Its "
                f"columns: {', '.join(file_table.names)}."
            )
    return [file_table[name] for name in names]


def _read_lens_file(ws, lens_file):
    from ..table import LensTable

    with _progress.step("read the lens file"):
        return LensTable.read(lens_file, ws.cloud, check=getattr(lens_file, "check", "warn"))


def lens_table(ws, lens_specs, lens_file=None, use=None):
    """The LensTable of one view: the lens file's columns (or its ``--use`` ones), then the
    ``--lens`` ones (a ``--lens`` naming a column of the file is read from it, not computed)."""
    from ..table import LensTable

    _check_lens_choice(lens_specs, lens_file, use)
    file_table = _read_lens_file(ws, lens_file) if lens_file else None
    columns = []
    if file_table is not None:
        columns += _file_columns(file_table, split_names(use) or file_table.names, lens_file)
    taken = {c.name for c in columns}
    columns += [c for c in _columns_for(ws, lens_specs, file_table) if c.name not in taken]
    return LensTable(columns, ws.cloud, random_state=ws.random_state)


def lens_views(ws, lens_specs, lens_file=None, uses=()):
    """``{label: LensTable}``: one view per ``--lens`` and per ``--use`` (or per file column)."""
    from ..table import LensTable

    _check_lens_choice(lens_specs, lens_file, uses)
    file_table = _read_lens_file(ws, lens_file) if lens_file else None
    views = {}
    if file_table is not None:
        groups = [split_names(u) for u in uses] if uses else (
            [] if lens_specs else [[name] for name in file_table.names])
        for names in groups:
            views[",".join(names)] = LensTable(_file_columns(file_table, names, lens_file),
                                               ws.cloud, random_state=ws.random_state)
    for spec in lens_specs:
        views[spec] = LensTable(_columns_for(ws, [spec], file_table), ws.cloud,
                                random_state=ws.random_state)
    return views


def build_view(cloud, seed, lens_specs, lens_file, use, settings, neighbors, stats=None):
    """``(workspace, lens table, graph)``: the graph of ``lenswork graph`` and ``contrast``."""
    from ..graph import build_graph

    _check_lens_choice(lens_specs, lens_file, use)
    ws = neighbors.workspace(cloud, seed)
    table = lens_table(ws, lens_specs, lens_file, use)
    names = "all" if stats is not None and stats.strip().lower() == "all" else split_names(stats)
    return ws, table, build_graph(table, ws, settings, columns=names)


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
    GraphSettings) and ``neighbors`` (:class:`Neighbors`) instead of the separate options.
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


# ---------------------------------------------------------------- screen options
def screen_option_fields():
    """The ScreenSettings fields that have a command-line option."""
    from ..screen import ScreenSettings

    return [f for f in fields(ScreenSettings) if "cli" in f.metadata]


def _screen_value(meta, value):
    """The value a ScreenSettings field gets from its option (None: not given)."""
    kind = meta["kind"]
    if kind == "flag":
        return meta["value"] if value else None
    if kind == "multiple":
        if meta["split"]:
            return tuple(x.strip() for v in value for x in v.split(",") if x.strip())
        return tuple(value)
    return value


def screen_options(func):
    """Command-line options generated from :class:`~lenswork.ScreenSettings`.

    One option per field with ``cli`` metadata (flags, help, kind, choices),
    its default taken from the dataclass. The wrapped command receives
    ``settings`` (a validated ScreenSettings) instead of the separate options;
    the command adds what is not a screen setting (``random_state`` comes from
    ``--seed`` through the Workspace).
    """
    from ..screen import ScreenSettings

    chosen = screen_option_fields()

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        changes = {}
        for f in chosen:
            value = _screen_value(f.metadata["cli"], kwargs.pop(f"screen_{f.name}"))
            if value is not None and value != f.default:
                changes[f.name] = value
        kwargs["settings"] = ScreenSettings(**changes)
        return func(*args, **kwargs)

    for f in reversed(chosen):
        meta = f.metadata["cli"]
        kind, dest = meta["kind"], f"screen_{f.name}"
        if kind == "flag":
            option = click.option(*meta["flags"], dest, is_flag=True, help=meta["help"])
        elif kind == "multiple":
            option = click.option(*meta["flags"], dest, multiple=True, metavar=meta["metavar"],
                                  help=meta["help"])
        else:
            ctype = {"int": int, "float": float, "text": str}.get(kind) or click.Choice(
                meta["choices"])
            option = click.option(*meta["flags"], dest, type=ctype, default=f.default,
                                  show_default=True, metavar=meta["metavar"], help=meta["help"])
        wrapper = option(wrapper)
    return wrapper
