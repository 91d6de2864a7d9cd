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

import contextlib
import dataclasses
import os
import re
import time
import uuid
from collections.abc import Callable, Iterator
from typing import Any

from pathlen.batch import KeptWorker, Limits
from pathlen.errors import PathlenError

#: Seconds to wait for the scheduler to answer before giving up.
CONNECT_TIMEOUT_S = 10.0
#: Seconds past the time limit per file (``--timeout``) a cluster batch waits for its next result.
STALL_GRACE_S = 30.0
#: Seconds between looks at the cluster while waiting for results.
POLL_S = 0.05


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
                   failed: Callable[..., Any], limits: Limits, lost: list[str] | None = None
                   ) -> Iterator[tuple[int, Any]]:
    """Yield ``(index, result)`` for every path as its task completes on the cluster.

    A task that fails (its workers died too often, or the task raised) gives ``failed(path, ok=False,
    error=...)``.  Results carry the path as given, whatever absolute path the workers were sent.
    When the scheduler goes away, or no file finishes for ``limits.timeout_s`` plus
    :data:`STALL_GRACE_S` (a frozen scheduler, no workers left), every file not answered yet is
    given as not measured, with the cause, and the cause is appended once to ``lost``.
    """
    from distributed import as_completed

    quiet_cluster_logs()
    batch = uuid.uuid4().hex[:12]
    futures = {}
    for i, path in enumerate(paths):
        future = client.submit(run_one, os.path.abspath(path), work, settings, failed, limits,
                               key=f"pathlen-{batch}-{i}", pure=False)
        futures[future] = i
    pending = set(futures)
    arriving = as_completed(futures, loop=client.loop)
    stall_s = limits.timeout_s + STALL_GRACE_S
    last = time.monotonic()
    cause = None
    try:
        while pending and cause is None:
            done = set(arriving.next_batch(block=False)) if arriving.has_ready() else set()
            if not done:
                time.sleep(POLL_S)
            pending -= done
            if client.status != "running" or any(f.cancelled() for f in done):
                cause = f"the Dask scheduler at {client.scheduler.address} went away mid-batch"
                pending |= {f for f in done if f.cancelled()}
                done = {f for f in done if not f.cancelled()}
            for future in sorted(done, key=futures.__getitem__):
                yield futures[future], _result(future, paths[futures[future]], failed)
            if done:
                last = time.monotonic()
            elif cause is None and time.monotonic() - last > stall_s:
                cause = (f"no file finished on the cluster for {stall_s:g} s (--timeout plus {STALL_GRACE_S:g} s): "
                         "its scheduler or workers stopped answering")
    finally:
        if cause is None and pending:
            with contextlib.suppress(Exception):
                client.cancel(list(pending))  # stopped early by the caller: leave no work behind
    if cause is not None:
        if lost is not None:
            lost.append(cause)
        for i in sorted(futures[f] for f in pending):
            yield i, failed(paths[i], ok=False, error=f"not measured: {cause}", environment=True)


def _result(future: Any, path: str, failed: Callable[..., Any]) -> Any:
    """A finished task's result under the path as given, or its one-line failure."""
    try:
        result = future.result()
    except Exception as exc:  # noqa: BLE001 - any remote failure is this file's one-line error
        return failed(path, ok=False, error=_reason(exc), environment=True)
    if dataclasses.is_dataclass(result) and getattr(result, "path", path) != path:
        result = dataclasses.replace(result, path=path)
    return result


def quiet_cluster_logs() -> None:
    """Silence the cluster library's own log lines (its reconnect attempts print whole tracebacks):
    pathlen says in one line what went wrong."""
    import logging

    quiet = ("distributed", "asyncio", "tornado")
    for name in [*quiet, *(n for n in logging.root.manager.loggerDict if n.startswith(quiet))]:
        logging.getLogger(name).setLevel(logging.CRITICAL + 1)


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
