"""The Dask cluster a run uses: an existing scheduler (``--scheduler tcp://HOST:PORT``), or a
local cluster of two worker processes that listens on 127.0.0.1 only and serves no dashboard.
"""

from __future__ import annotations

import logging
from collections.abc import Iterator
from contextlib import contextmanager

from distributed import Client, LocalCluster

from bodycensus.errors import BadInput

LOCAL_WORKERS = 2
# Dask's shuffle logs each shuffle's start and end as a warning; the run says it shuffles itself.
logging.getLogger("distributed.shuffle").setLevel(logging.ERROR)
CONNECT_SECONDS = 10


# The scheduler always serves HTTP (health and metrics): without an address it takes port 8787,
# which a second local cluster cannot; here it takes a free port on loopback, with no dashboard.
LOOPBACK_SCHEDULER = {"dashboard": False, "dashboard_address": "127.0.0.1:0"}


@contextmanager
def connect(scheduler: str | None = None, workers: int = LOCAL_WORKERS) -> Iterator[Client]:
    """A client of ``scheduler``, or of a local cluster started here and closed at the end."""
    if scheduler is not None:
        try:
            client = Client(scheduler, timeout=CONNECT_SECONDS)
        except OSError as err:
            raise BadInput(f"--scheduler {scheduler}: no Dask scheduler answers there "
                           f"({err.__class__.__name__}); start one with dask scheduler, or "
                           "leave --scheduler out for a local cluster") from err
        with client:
            yield client
        return
    with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                      host="127.0.0.1", dashboard_address=None,
                      scheduler_kwargs=LOOPBACK_SCHEDULER) as cluster, \
            Client(cluster) as client:
        yield client
