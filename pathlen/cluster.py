"""Batches on a Dask cluster: the same per-file work as :func:`pathlen.batch.run_batch`, on remote workers.

Each file is one task: a worker runs :func:`run_one`, which measures the file in a child process under
the same limits as a local batch (``--timeout``, ``--max-memory``), so a file that hangs or runs out of
memory fails alone and the Dask worker carries on; the child is kept for the worker's next file.
Workers read the files themselves from the path they are given (made absolute here): the folder must
be shared (NFS, SMB) at the same path on every worker.  Only the path travels through the scheduler, never the file.

A worker that dies mid-task has its tasks rescheduled by the scheduler, up to its
``distributed.scheduler.allowed-failures`` (3 by default); a file whose workers keep dying fails with
a one-line reason.  Results are yielded as they complete.  Needs ``pip install 'pathlen[cluster]'``.
"""

from __future__ import annotations

import dataclasses
import os
import re
import uuid
from collections.abc import Callable, Iterator
from typing import Any

from pathlen.batch import KeptWorker, Limits
from pathlen.errors import PathlenError

#: Seconds to wait for the scheduler to answer before giving up.
CONNECT_TIMEOUT_S = 10.0


class ClusterError(PathlenError):
    """The scheduler cannot be reached, or dask.distributed is not installed."""


#: On a Dask worker: the kept child process per (thread, work, settings, limits), forked on first use.
_KEPT: dict[tuple[int, bytes], KeptWorker] = {}


def run_one(path: str, work: Callable[[str, Any], Any], settings: Any, failed: Callable[..., Any],
            limits: Limits) -> Any:
    """On a Dask worker: ``work(path, settings)`` in a child process under ``limits``.  The child is kept
    for the next file of the same batch (forking per file cost a quarter of a second: the child had to
    import the readers again each time)."""
    import multiprocessing
    import pickle
    import threading

    key = (threading.get_ident(), pickle.dumps((work, settings, failed, limits)))
    kept = _KEPT.get(key)
    me = multiprocessing.current_process()
    daemon = me._config.get("daemon")  # Dask worker processes are daemonic; our child is ended by the worker
    me._config["daemon"] = False
    try:
        if kept is None:
            kept = _KEPT[key] = KeptWorker(work, settings, failed, limits)
        return kept.run(path)
    finally:
        me._config["daemon"] = daemon


def connect(address: str) -> Any:
    """A client of the scheduler at ``address`` (tcp://host:8786); :class:`ClusterError` if it cannot."""
    try:
        from distributed import Client
    except ImportError:
        raise ClusterError("--scheduler needs dask.distributed: pip install 'pathlen[cluster]'") from None
    m = re.fullmatch(r"(tcp|tls)://(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9_.-]+):(\d{1,5})", address.strip())
    if m is None or not 0 < int(m.group(3)) < 65536:
        raise ClusterError(f"{address!r} is not a scheduler address: give tcp://HOST:PORT, such as "
                           "tcp://queue-host:8786")
    try:
        return Client(address.strip(), timeout=CONNECT_TIMEOUT_S, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise ClusterError(f"cannot reach the Dask scheduler at {address}: {str(exc).splitlines()[0][:200]}") from None


def run_on_cluster(client: Any, paths: list[str], settings: Any, work: Callable[[str, Any], Any],
                   failed: Callable[..., Any], limits: Limits) -> Iterator[tuple[int, Any]]:
    """Yield ``(index, result)`` for every path as its task completes on the cluster.

    A task that fails (its workers died too often, or the task raised) gives ``failed(path, ok=False,
    error=...)``.  Results carry the path as given, whatever absolute path the workers were sent.
    """
    from distributed import as_completed

    batch = uuid.uuid4().hex[:12]
    futures = {}
    for i, path in enumerate(paths):
        future = client.submit(run_one, os.path.abspath(path), work, settings, failed, limits,
                               key=f"pathlen-{batch}-{i}", pure=False)
        futures[future] = i
    try:
        for future in as_completed(futures, loop=client.loop):
            i = futures[future]
            try:
                result = future.result()
            except Exception as exc:  # noqa: BLE001 - any remote failure is this file's one-line error
                result = failed(paths[i], ok=False, error=_reason(exc), environment=True)
            if dataclasses.is_dataclass(result) and getattr(result, "path", paths[i]) != paths[i]:
                result = dataclasses.replace(result, path=paths[i])
            yield i, result
    finally:
        client.cancel(list(futures))


def busy_workers(client: Any) -> tuple[int, int]:
    """(workers with tasks in hand, workers) as the scheduler last reported them."""
    try:
        processing = client.processing()
    except Exception:  # noqa: BLE001 - progress only
        return 0, 0
    return sum(1 for tasks in processing.values() if tasks), len(processing)


def _reason(exc: BaseException) -> str:
    name = type(exc).__name__
    if name == "KilledWorker":
        return "the cluster's workers measuring this file died repeatedly (out of memory?); not retried further"
    text = str(exc).strip().splitlines()
    return f"failed on the cluster: {name}: {text[0][:200] if text else ''}".rstrip(": ")
