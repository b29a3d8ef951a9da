"""Running a map's chunks on dask.distributed: a ``LocalCluster`` of single-threaded worker
processes, a running scheduler's address, or a client; each chunk's result is handed on as it
finishes.
"""

from __future__ import annotations

from .chunk import run_chunk


def _run_dask(tasks, finish, scheduler, n_workers):
    from distributed import Client, LocalCluster, as_completed

    cluster = None
    if scheduler is None:
        cluster = LocalCluster(n_workers=int(n_workers), threads_per_worker=1, processes=True,
                               dashboard_address=None)
        client = Client(cluster)
        mode = f"dask LocalCluster ({int(n_workers)} workers)"
    elif isinstance(scheduler, str):
        client = Client(scheduler)
        mode = f"dask scheduler {scheduler}"
    else:
        client, mode = scheduler, "dask client"
    try:
        futures = [client.submit(run_chunk, t, pure=False) for t in tasks]
        for fut in as_completed(futures):
            finish(*fut.result())
            fut.release()
    finally:
        if cluster is not None:
            client.close()
            cluster.close()
        elif isinstance(scheduler, str):
            client.close()
    return mode
