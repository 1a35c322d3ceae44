"""The compute engine of network-scale runs: Dask distributed.

By default a :class:`dask.distributed.LocalCluster` sized to the machine (one
single-threaded worker process per core, at most :data:`MAX_LOCAL_WORKERS`);
with ``scheduler="tcp://HOST:PORT"`` the same task graph runs on an existing
Dask cluster, whose workers must have trackplan (and the same input files, at
the same paths) installed. dask is imported only when a run starts.
"""

from __future__ import annotations

import contextlib
import os
from dataclasses import dataclass

from trackplan.errors import InputError

#: Upper bound of the local cluster's workers.
MAX_LOCAL_WORKERS = 8


@dataclass
class Engine:
    """A connected Dask client and what to report of it."""

    client: object  # dask.distributed.Client
    scheduler: str  # "local" or the address
    workers: int

    def json(self) -> dict:
        return {"kind": "dask", "scheduler": self.scheduler, "workers": self.workers}


def local_workers() -> int:
    """Workers of the default local cluster: one per core, at most :data:`MAX_LOCAL_WORKERS`."""
    return max(1, min(os.cpu_count() or 1, MAX_LOCAL_WORKERS))


@contextlib.contextmanager
def dask_engine(scheduler: str | None = None, workers: int | None = None, processes: bool = True):
    """Yield an :class:`Engine`: a local cluster, or a client of the cluster at ``scheduler``.

    Parameters
    ----------
    scheduler : str, optional
        ``tcp://HOST:PORT`` of a running Dask scheduler; ``None`` starts a local cluster.
    workers : int, optional
        Workers of the local cluster (default :func:`local_workers`).
    processes : bool
        Local workers as processes (default) or threads in this process.
    """
    import logging

    from dask.distributed import Client, LocalCluster

    if scheduler:
        if "://" not in scheduler:
            raise InputError(f"{scheduler!r} is not a scheduler address; write tcp://HOST:PORT",
                             field="scheduler")
        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError) as exc:
            raise InputError(f"no Dask scheduler answers at {scheduler} ({exc.__class__.__name__})",
                             field="scheduler") from None
        try:
            n = len(client.scheduler_info().get("workers", {}))
            yield Engine(client, scheduler, n)
        finally:
            client.close()
        return
    n = workers or local_workers()
    cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=processes, dashboard_address="127.0.0.1:0",
                           silence_logs=logging.ERROR, host="127.0.0.1")
    client = Client(cluster)
    try:
        yield Engine(client, "local", n)
    finally:
        client.close()
        cluster.close()


@contextlib.contextmanager
def engine_for(sections, scheduler: str | None = None):
    """The engine of a ``check``/``target``/``screen`` run: the cluster at ``scheduler`` if given;
    else a local cluster when the run is large enough to gain from one
    (:func:`trackplan.assess.use_engine`); else ``None`` (the run stays in this process)."""
    from trackplan.assess import use_engine

    if scheduler or (local_workers() > 1 and use_engine(True, sections)):
        with dask_engine(scheduler) as eng:
            yield eng
    else:
        yield None
