"""Connecting to a Dask scheduler, or starting a local cluster."""

from __future__ import annotations

import contextlib
import logging
import signal
import threading

from .._errors import ParameterError
from .._validation import check_int

__all__ = [
    "MIN_WORKER_MEMORY", "active_client", "check_memory_limit", "gather_each", "p2p_buffers",
    "start_client",
]

#: The smallest per-worker memory limit a local cluster is started with. An idle worker
#: process holds 66 MiB (measured, distributed's LocalCluster on Linux) and one running
#: lenswork's tasks more (numpy, scikit-learn, pyarrow loaded); below its needs the nanny
#: kills and restarts it without end (measured: --memory-limit 1MB, 604 restarts).
MIN_WORKER_MEMORY = 256 * 2**20


def active_client():
    """The default ``distributed.Client`` of this process, or None (no cluster: Dask's threads).

    Examples
    --------
    >>> import distributed
    >>> with distributed.Client(processes=False, n_workers=1, dashboard_address=None) as c:
    ...     active_client() is c
    True
    """
    try:
        from distributed import default_client

        return default_client()
    except (ImportError, ValueError):
        return None


def gather_each(futures):
    """Results of a list of futures, brought back one at a time, each released once fetched.

    ``client.gather(futures)`` (and ``dask.compute`` on a distributed client)
    asks each worker for all its results in one message: a worker whose
    results were spilled reads them all back from disk at once, which a
    worker with a memory limit below their sum does not survive (measured on
    the partitioned graph at 1e7 rows, 2 workers x 600 MB: restarted at 95%
    of the limit). One future at a time, a worker holds one result in memory
    above its working set.

    Parameters
    ----------
    futures : list of distributed.Future
        Emptied as the results come back (the list given is modified), so the
        workers may release each result after it is fetched.

    Returns
    -------
    list
        The results, in the order of ``futures``.

    Examples
    --------
    >>> import dask, distributed
    >>> with distributed.Client(processes=False, n_workers=1, dashboard_address=None) as c:
    ...     gather_each(c.compute([dask.delayed(sum)([1, 2]), dask.delayed(max)(4, 5)]))
    [3, 5]
    """
    out = []
    futures.reverse()
    while futures:
        out.append(futures.pop().result())
    return out


def p2p_buffers(memory_limit):
    """Dask configuration for the P2P shuffle's buffers of a worker with this memory limit.

    The shuffle holds outgoing shards in a comm buffer (default 1 GiB) and
    incoming ones in a disk buffer (default 100 MiB) per worker, outside the
    spill machinery. A worker whose limit is below the comm buffer is
    restarted by its nanny when sends lag (measured: the partitioned graph at
    1e7 rows, 2 workers x 600 MB on a loaded machine). Each buffer gets a
    sixteenth of the limit (at most its default); ``"auto"`` or no limit leaves
    the defaults.

    Examples
    --------
    >>> p2p_buffers("600MB")
    {'distributed.p2p.comm.buffer': 37500000, 'distributed.p2p.storage.buffer': 37500000}
    >>> p2p_buffers("auto")
    {}
    """
    from dask.utils import parse_bytes

    if memory_limit in (None, 0, "auto") or str(memory_limit).strip() in ("", "0"):
        return {}
    try:
        limit = parse_bytes(memory_limit) if isinstance(memory_limit, str) else int(memory_limit)
    except (TypeError, ValueError):
        return {}  # distributed itself reports a bad limit
    share = max(limit // 16, 16 * 2**20)
    return {"distributed.p2p.comm.buffer": min(share, 2**30),
            "distributed.p2p.storage.buffer": min(share, 100 * 2**20)}


def check_memory_limit(memory_limit):
    """``memory_limit`` as given ("auto", None, 0) or in bytes; ParameterError when it is not a
    size or is below :data:`MIN_WORKER_MEMORY`.

    Examples
    --------
    >>> check_memory_limit("600MB"), check_memory_limit("auto")
    (600000000, 'auto')
    """
    if memory_limit is None or str(memory_limit).strip().lower() in ("auto", "0", ""):
        return memory_limit
    from dask.utils import parse_bytes

    try:
        limit = parse_bytes(memory_limit) if isinstance(memory_limit, str) else int(memory_limit)
    except (TypeError, ValueError):
        raise ParameterError(
            f"--memory-limit {memory_limit!r} is not a size; give one such as 600MB or 2GB, "
            f"or auto."
        ) from None
    if limit < MIN_WORKER_MEMORY:
        raise ParameterError(
            f"--memory-limit {memory_limit!r} is below {MIN_WORKER_MEMORY // 2**20} MiB per "
            f"worker: an idle worker process alone holds about 66 MiB and one running lenswork's "
            f"tasks more, so it would be restarted without end. Give at least 256MB (or auto)."
        )
    return limit


@contextlib.contextmanager
def _workers_ignore_ctrl_c():
    """Start worker processes with SIGINT ignored (POSIX, main thread): Ctrl-C at a terminal
    reaches every process of the group, and the workers are this process's to stop (closing
    the client), not each its own (a traceback per worker). A Ctrl-C while the workers start
    is ignored too; the next one stops the run."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    before = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, before)


def start_client(scheduler="local", *, workers=2, threads=1, memory_limit="auto",
                 processes=True):
    """A ``distributed.Client``: connected to ``scheduler``, or on a new LocalCluster.

    Parameters
    ----------
    scheduler : str, default="local"
        A scheduler address (``"tcp://10.0.0.5:8786"``) or ``"local"`` for a
        :class:`distributed.LocalCluster` on this machine.
    workers, threads : int
        Workers and threads per worker of the local cluster.
    memory_limit : str or int, default="auto"
        Per-worker memory limit of the local cluster (``"1GB"``); workers spill
        to disk above 60% of it and pause at 80%. The P2P shuffle's buffers
        are sized to it (:func:`p2p_buffers`).
    processes : bool, default=True
        Workers in their own processes (else threads of this one).

    Returns
    -------
    distributed.Client
        Close it (and its cluster) with ``client.close()``; a local cluster
        is closed with it.

    Examples
    --------
    >>> client = start_client("local", workers=1, processes=False)  # doctest: +SKIP
    >>> client.close()  # doctest: +SKIP
    """
    try:
        import distributed
    except ImportError:
        raise ParameterError(
            "Running on a cluster needs distributed, an optional extra: install it with "
            "`pip install lenswork[dask]`."
        ) from None
    if str(scheduler).strip().lower() == "local":
        import dask

        try:  # bounded: each worker is a process with its own memory limit on this machine
            workers = check_int("workers", workers, lo=1, hi=256, context="start_client")
            threads = check_int("threads", threads, lo=1, hi=256, context="start_client")
        except ParameterError as err:
            raise ParameterError(
                f"{err} A local cluster starts one process per worker on this machine (about "
                f"66 MiB each before any data); for more, start a cluster of several machines "
                f"and pass its scheduler address."
            ) from None
        memory_limit = check_memory_limit(memory_limit)
        # a Client given cluster options starts a LocalCluster and closes it with itself; the
        # workers take the configuration of this moment (also when the nanny restarts one)
        try:
            with dask.config.set(p2p_buffers(memory_limit)), _workers_ignore_ctrl_c():
                # no dashboard (nothing shows it; a second run warned that its port was taken)
                # and no worker log lines: a failure reaches the user as lenswork's message,
                # and a stopped run (Ctrl-C) does not print the workers' shutdown tracebacks
                return distributed.Client(
                    n_workers=workers, threads_per_worker=threads, memory_limit=memory_limit,
                    processes=processes, dashboard_address=None, timeout="60s",
                    scheduler_kwargs={"dashboard": False}, silence_logs=logging.CRITICAL,
                )
        except Exception as err:  # a worker lost while starting: any of several types
            raise ParameterError(
                f"The local Dask cluster did not start ({type(err).__name__}: {err}). Check the "
                f"free memory and --workers / --memory-limit, or run without --scheduler."
            ) from None
    try:
        return distributed.Client(str(scheduler), timeout="20s")
    except (OSError, TimeoutError, ValueError) as err:
        raise ParameterError(
            f"Could not reach the Dask scheduler at {scheduler!r} ({err}). Check the address "
            f"(e.g. tcp://host:8786), or use 'local'."
        ) from None
