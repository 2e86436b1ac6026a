"""CLI: the partitioned path of ``compute`` and ``graph`` (``--scheduler``), on Dask.

``lenswork compute DATA --scheduler ADDRESS|local`` and ``lenswork graph DATA
--scheduler ...`` run on a Dask cluster: DATA is then a directory of Parquet or
CSV partitions (or a glob), read by partition. :func:`cluster_input_options`
replaces the commands' ``input_options`` and hands them a :class:`ClusterRun`
(``cluster=``) instead of a loaded table; ``cluster-lenses`` and ``cluster-graph``
are aliases of ``compute --scheduler`` and ``graph --scheduler``
(:func:`scheduler_alias`: the same command, --scheduler defaulting to local).
"""

from __future__ import annotations

import contextlib
import functools
import re
import sys
from pathlib import Path

import click

from .. import _progress
from .._errors import LensworkError
from .._io import check_output_dir, check_output_file
from ._common import input_options

__all__ = [
    "ClusterRun",
    "cluster_input_options",
    "lens_out_dir",
    "partitioned_settings",
    "print_lens_run",
    "refuse_with_scheduler",
    "scheduler_alias",
]

#: Endings of a single-file table: with --scheduler the lens columns go to a directory.
_FILE_ENDINGS = (".csv", ".tsv", ".txt", ".npy", ".json")


def _scheduler_options(func, default=None):
    func = click.option(
        "--scheduler", default=default, show_default=default is not None,
        metavar="ADDRESS|local",
        help="Run on a Dask cluster: a scheduler address (tcp://host:8786) or 'local' for a "
        "LocalCluster on this machine. TABLE is then a directory of Parquet or CSV partitions "
        "(or a glob), read by partition.",
    )(func)
    func = click.option("--workers", default=2, show_default=True, type=int,
                        help="With --scheduler local: number of workers (one thread each).")(func)
    func = click.option("--memory-limit", default="auto", show_default=True, metavar="SIZE",
                        help="With --scheduler local: memory limit per worker (e.g. 600MB); "
                        "workers spill to disk above 60% of it.")(func)
    func = click.option("--landmarks", default=2000, show_default=True, type=int,
                        help="With --scheduler: size of the seeded sample the estimated "
                        "lenses (dtm, eccentricity p != 2, laplacian) use; the density takes "
                        "the single machine's reference rows (density:reference_size=...).")(func)
    return func


def _root_params():
    ctx = click.get_current_context(silent=True)
    return ctx.find_root().params if ctx is not None else {}


def _computer(client, show):
    """compute(list of delayed) on the client, with Dask's progress bar (on stderr) if ``show``."""

    from ..partitioned import gather_each

    def compute(items):
        futures = client.compute(items)
        if show:
            from distributed import progress

            with contextlib.redirect_stdout(sys.stderr):  # the bar writes to stdout
                progress(futures, scheduler=client.scheduler.address)
            click.echo("", err=True)
        try:
            return gather_each(futures)  # one result at a time: spilled results fit in memory
        except Exception as err:
            if type(err).__name__ != "KilledWorker":
                raise
            raise LensworkError(
                f"A Dask worker died repeatedly running the same task ({err}); the run was "
                f"stopped. Give the workers more memory (--memory-limit), more partitions, or "
                f"fewer rows per partition."
            ) from None

    return compute


def _quiet_dask():
    """Silence what distributed and asyncio log while a cluster run is stopped on purpose
    (cancelled tasks, futures whose exception nobody reads any more)."""
    import logging

    for name in ("distributed", "asyncio", "tornado"):
        logging.getLogger(name).setLevel(logging.CRITICAL + 1)


class ClusterRun:
    """One command's run on a Dask scheduler: the client, the source and its options.

    A context manager: entering connects to ``scheduler`` (or starts a
    LocalCluster), leaving closes the client (and a local cluster with it).
    """

    def __init__(self, source, *, features=None, id_column=None, scale=None, invalid="error",
                 seed=0, landmarks=2000, scheduler="local", workers=2, memory_limit="auto",
                 show_progress=False):
        self.source, self.features, self.id_column = source, features, id_column
        self.scale, self.invalid, self.seed, self.landmarks = scale, invalid, seed, landmarks
        self.scheduler, self.workers, self.memory_limit = scheduler, workers, memory_limit
        self.show_progress = show_progress
        self.client = None
        self._current = None
        self.cloud = None

    def __enter__(self):
        from ..partitioned import start_client

        with _progress.step(f"cluster: connect to {self.scheduler}"):
            self.client = start_client(self.scheduler, workers=self.workers,
                                       memory_limit=self.memory_limit)
        # every dask.compute of the run goes to this client, whatever other clients exist
        self._current = self.client.as_current()
        self._current.__enter__()
        return self

    def __exit__(self, kind, err, tb):
        if kind is not None and issubclass(kind, KeyboardInterrupt):
            _quiet_dask()  # the interrupt's message is lenswork's; the cancelled tasks are not news
        if self.client is not None:
            self._current.__exit__(None, None, None)
            self.client.close()
            self.client = None

    @property
    def compute(self):
        """``compute(list of delayed) -> results`` on this run's client, with progress."""
        return _computer(self.client, self.show_progress)

    def open(self):
        """The PartitionedCloud of the source (read and validated once)."""
        from ..partitioned import open_partitioned

        if self.cloud is None:
            with _progress.step(f"cluster: read and check the partitions of {self.source}"):
                self.cloud = open_partitioned(self.source, features=self.features,
                                              id_column=self.id_column, scale=self.scale,
                                              invalid=self.invalid)
        return self.cloud

    def lenses(self, specs):
        """PartitionedLenses of ``specs`` on the source."""
        from ..partitioned import partitioned_lenses

        return partitioned_lenses(self.open(), list(specs), landmarks=self.landmarks,
                                  random_state=self.seed)

    def write_lenses(self, specs, out):
        """Lens columns as a Parquet dataset folder ``out`` plus ``out.json`` beside it."""
        lens = self.lenses(specs)
        return lens, lens.write(out, compute=self.compute)

    def graph(self, specs, settings):
        """The LensGraph of ``specs`` (partitioned_graph with these GraphSettings)."""
        from ..partitioned import partitioned_graph

        return partitioned_graph(self.lenses(specs), settings, compute=self.compute)


def refuse_with_scheduler(**given):
    """UsageError naming the first option given (``--name=value`` pairs that are set)."""
    for flag, value in given.items():
        if value:
            raise click.UsageError(
                f"--{flag.replace('_', '-')} is not offered with --scheduler (the partitioned "
                f"path); drop it, or run on one machine without --scheduler."
            )


def partitioned_settings(settings):
    """The graph command's GraphSettings for the partitioned path.

    The cover scale and the clusterer left at their defaults become ``raw``
    and ``element-knn`` (the only ones the partitioned graph lays); values
    given on the command line are kept, so a rank cover or another clusterer
    is refused by :func:`lenswork.partitioned.partitioned_graph` with its
    message.
    """
    changes = {}
    if not _explicit("graph_scale"):
        changes["scale"] = "raw"
    if not _explicit("graph_clusterer"):
        changes["clusterer"] = "element-knn"
    return settings.replace(**changes)


def _explicit(name):
    from click.core import ParameterSource

    ctx = click.get_current_context()
    return ctx.get_parameter_source(name) not in (ParameterSource.DEFAULT, None)


def cluster_input_options(func):
    """``input_options`` plus ``--scheduler``, ``--workers``, ``--memory-limit``, ``--landmarks``.

    Without ``--scheduler`` the command runs as before (``cloud`` is the
    loaded table, ``cluster=None``). With it, the command receives
    ``cloud=None`` and ``cluster`` (an open :class:`ClusterRun`) and must take
    its data from there.
    """
    inner = input_options(func)

    @functools.wraps(inner)
    def wrapper(*args, scheduler, workers, memory_limit, landmarks, **kwargs):
        if scheduler is None:
            for name in ("workers", "memory_limit", "landmarks"):
                if _explicit(name):
                    raise click.UsageError(
                        f"--{name.replace('_', '-')} sets up the Dask run; give --scheduler "
                        f"ADDRESS|local too."
                    )
            table = kwargs.get("table")
            if table is not None and Path(table).is_dir():
                raise click.UsageError(
                    f"TABLE {table!r} is a directory. A directory of partitions is read on a Dask "
                    f"cluster: add --scheduler local (or a scheduler address)."
                )
            return inner(*args, cluster=None, **kwargs)
        table, demo = kwargs.pop("table"), kwargs.pop("demo")
        features, id_column = kwargs.pop("features"), kwargs.pop("id_column")
        if kwargs.pop("exclude"):
            raise click.UsageError(
                "--exclude is not offered with --scheduler; give the feature columns by name "
                "with --features."
            )
        scale, skip_invalid = kwargs.pop("scale"), kwargs.pop("skip_invalid")
        delimiter, seed = kwargs.pop("delimiter"), kwargs.pop("seed")
        if demo or table is None:
            raise click.UsageError(
                "With --scheduler give TABLE as a directory of Parquet or CSV partitions or a "
                "glob (the demo data runs on one machine: drop --scheduler)."
            )
        if scale == "robust":
            raise click.UsageError(
                "--scale robust needs global medians, which partitions do not give exactly; use "
                "--scale zscore or none with --scheduler."
            )
        if delimiter is not None:
            raise click.UsageError(
                "--delimiter is not read with --scheduler; CSV partitions are comma-separated "
                "(.csv) or tab-separated (.tsv) by their ending."
            )
        feats = None
        if features:
            feats = [f.strip() for f in features.split(",") if f.strip()]
            if any(f.isdigit() or f.startswith("~") or re.fullmatch(r"\d+\s*-\s*\d+", f)
                   for f in feats):
                raise click.UsageError(
                    "With --scheduler give --features as column names (partitions may order "
                    "their columns differently: no positions, ranges or ~ exclusions)."
                )
        root = _root_params()
        show = _progress.progress_wanted(quiet=bool(root.get("quiet")), force=root.get("progress"))
        run = ClusterRun(
            table, features=feats, id_column=id_column,
            scale=None if scale == "none" else (scale or "auto"),
            invalid="exclude" if skip_invalid else "error", seed=seed,
            landmarks=landmarks, scheduler=scheduler, workers=workers, memory_limit=memory_limit,
            show_progress=show,
        )
        with run:
            return func(*args, cloud=None, seed=seed, cluster=run, **kwargs)

    for param in wrapper.__click_params__:
        if param.name == "table":  # a directory of partitions (or a glob) is a TABLE here
            param.type = click.Path()
    return _scheduler_options(wrapper)


def lens_out_dir(out, default_used):
    """The directory the partitioned lens columns go to, from ``compute``'s ``-o``."""
    path = Path(out)
    if default_used:
        return check_output_dir(path.with_suffix(""))
    if path.suffix.lower() in _FILE_ENDINGS:
        raise click.UsageError(
            f"With --scheduler the lens columns are written as one Parquet file per partition "
            f"into a directory; give -o DIR (or DIR.parquet), not {out!r}."
        )
    if path.exists() and not path.is_dir():
        raise click.UsageError(f"Output {out!r} is a file; give a directory path.")
    check_output_file(path.with_name(path.name + ".json"))  # the provenance beside it
    return check_output_dir(path)  # a folder that takes no writes fails before the work


def print_lens_run(cloud, lens, files, out):
    """The closing lines of a partitioned lens run."""
    for name, prov in zip(lens.names, lens.provenance):
        how = "exact" if prov.get("exact") else "estimated"
        extra = f", error bound {prov['error_bound']:.4g}" if "error_bound" in prov else ""
        click.echo(f"{name}: {how}{extra}")
    click.echo(f"{cloud.n:,} rows in {cloud.n_partitions} partitions; wrote {len(files)} files "
               f"to {out}")


def scheduler_alias(command, name):
    """``name`` as an alias of ``command --scheduler`` (default ``local``): the same options and
    code, a --help that says so, and a one-line notice on stderr when run."""
    import copy
    import inspect

    params = []
    for param in command.params:
        param = copy.copy(param)
        if param.name == "scheduler":
            param.default, param.show_default = "local", True
        params.append(param)
    target = f"lenswork {command.name} TABLE --scheduler ADDRESS|local"

    def callback(**kwargs):
        click.echo(f"Note: `lenswork {name}` is another name for `{target}` (the same job and "
                   f"options); use that.", err=True)
        return command.callback(**kwargs)

    return click.Command(
        name, params=params, callback=callback, short_help=f"Alias of `{target}`.",
        help=f"Alias of `{target}`: the same job, options and outputs, with --scheduler "
        f"defaulting to local. Prints a one-line notice; use `lenswork {command.name}`.\n\n"
        + inspect.cleandoc(command.help or ""),
    )
