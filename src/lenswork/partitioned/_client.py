"""Connecting to a Dask scheduler, or starting a local cluster."""

from __future__ import annotations

from .._errors import ParameterError
from .._validation import check_int

__all__ = ["active_client", "gather_each", "start_client"]


def active_client():
    """The default ``distributed.Client`` of this process, or None (no cluster: Dask's threads).

    Examples
    --------
    >>> active_client() is None  # no client started in this session
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
    >>> import distributed  # doctest: +SKIP
    >>> with distributed.Client(processes=False, n_workers=1) as client:  # doctest: +SKIP
    ...     gather_each(client.compute([dask.delayed(sum)([1, 2])]))
    [3]
    """
    out = []
    futures.reverse()
    while futures:
        out.append(futures.pop().result())
    return out


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
        to disk above 60% of it and pause at 80%.
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
        workers = check_int("workers", workers, lo=1, context="start_client")
        threads = check_int("threads", threads, lo=1, context="start_client")
        # a Client given cluster options starts a LocalCluster and closes it with itself
        return distributed.Client(
            n_workers=workers, threads_per_worker=threads, memory_limit=memory_limit,
            processes=processes, dashboard_address=None,
        )
    try:
        return distributed.Client(str(scheduler), timeout="20s")
    except OSError as err:
        raise ParameterError(
            f"Could not reach the Dask scheduler at {scheduler!r} ({err}). Check the address "
            f"(e.g. tcp://host:8786), or use 'local'."
        ) from None
