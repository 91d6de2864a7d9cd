"""Files -> measured results, one file at a time or on a process pool."""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pathlen import BLAS_THREAD_VARIABLES, head_start
from pathlen.defaults import DEFAULT_JOIN_TOL_MM, DEFAULT_MAX_SEGMENTS, DEFAULT_RTOL
from pathlen.errors import PathlenError, UsageError
from pathlen.importers import SUFFIXES, ImportOptions, load_readers


@dataclass(frozen=True)
class MeasureSettings:
    """Everything that decides a file's measurement."""

    rtol: float = DEFAULT_RTOL
    join_tol_mm: float = DEFAULT_JOIN_TOL_MM
    import_options: ImportOptions = field(default_factory=ImportOptions)
    #: most segments a drawing's copies may be written out to (for contours)
    max_segments: int = DEFAULT_MAX_SEGMENTS


@dataclass
class LayerTotal:
    length_mm: float
    bound_mm: float
    count: int


@dataclass
class FileOutcome:
    """What every command reports per file: the path, whether it worked, else a one-line error."""

    path: str
    ok: bool
    error: str | None = None
    #: the failure came from the surroundings (a limit, a dead worker, a file gone, a lost cluster), not
    #: from the file's content: worth trying again, never to be remembered as the content's answer
    environment: bool = False


@dataclass
class FileResult(FileOutcome):
    """One file's measurement (millimetres) or its one-line error."""

    length_mm: float = 0.0
    bound_mm: float = 0.0
    layers: dict[str, LayerTotal] = field(default_factory=dict)
    #: per stroke colour (``#rrggbb``); empty for formats without colours
    colors: dict[str, LayerTotal] = field(default_factory=dict)
    closed: int = 0
    open: int = 0
    #: False when the copies were too many to write out (see ``max_segments``)
    contours_counted: bool = True
    #: read only through structural recovery of a damaged file (``--recover``)
    recovered: bool = False
    warnings: list[str] = field(default_factory=list)


def find_drawings(paths: Iterable[str]) -> list[str]:
    """Expand folders (recursively) into their drawing files; keep files as given.

    Paths that do not exist are kept, so that they are reported as failed files.
    """
    out: list[str] = []
    for p in paths:
        path = Path(p)
        if path.is_dir():
            # everything with a drawing's suffix but folders: a dangling link or a pipe then fails by name
            found = sorted(str(f) for f in path.rglob("*") if f.suffix.lower() in SUFFIXES and not f.is_dir())
            out.extend(found)
        else:
            out.append(p)
    if not out:
        raise UsageError(f"no {' or '.join(SUFFIXES)} files found in the given paths")
    return out


def one_line_failure(path: str, work: Callable[[], Any], failed: Callable[..., Any]) -> Any:
    """``work()``, or ``failed(path, ok=False, error=...)`` with a one-line reason if it raises.

    Bad input (:class:`PathlenError`) gives its own message; anything else is named, never shown
    as a traceback: one bad file must not stop the batch.
    """
    try:
        return work()
    except PathlenError as exc:
        return failed(path, ok=False, error=str(exc))
    except MemoryError:
        doing = f" while {_stage[-1]}" if _stage else ""
        return failed(path, ok=False, error=f"needed more than {limit_phrase()}{doing}", environment=True)
    except RecursionError:
        return failed(path, ok=False, error="structure nested too deeply")
    except Exception as exc:  # noqa: BLE001 - one bad file must not stop the batch
        text = str(exc).strip().splitlines()
        return failed(path, ok=False, error=f"unexpected {type(exc).__name__}: {text[0] if text else ''}")
    finally:
        _stage.clear()


#: What the file's work is doing now (innermost last), for the out-of-memory message.
_stage: list[str] = []


@contextmanager
def stage(doing: str) -> Iterator[None]:
    """Name the step under way ("reading the drawing", "chaining 80,000 contours"): a file that runs
    out of memory says which step it was."""
    _stage.append(doing)
    try:
        yield
    except MemoryError:
        raise  # the name stays for the message (cleared once the file's outcome is made)
    except BaseException:
        _stage.pop()
        raise
    _stage.pop()


def limit_phrase() -> str:
    """What ran short when memory did: the per-file limit (with its option) or the memory available."""
    if _memory_limit_mb:
        return f"the memory limit of {_memory_limit_mb:,} MB per file (--max-memory)"
    return "the memory available"


def measure_file(path: str, settings: MeasureSettings = MeasureSettings()) -> FileResult:
    """Measure one file; never raises for bad input (the error goes in the result)."""
    from pathlen.file_measure import measure_one  # numpy and the measuring modules: loaded in the worker

    return one_line_failure(path, lambda: measure_one(path, settings), FileResult)


def single_blas_thread() -> None:
    """Keep BLAS to one thread in this process.  pathlen's products are tall and thin (nodes times
    weights, points times 3x3 maps): BLAS threads gain nothing there and, spinning beside
    pathlen's own threads and workers, cost up to a third of the wall time on two cores.

    Nothing to do when the BLAS libraries' thread variables are all 1: the command line sets them before
    numpy is loaded (the library reads its own then); a host that loaded numpy first goes through
    threadpoolctl."""
    if all(os.environ.get(name) == "1" for name in BLAS_THREAD_VARIABLES):
        return
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1, user_api="blas")


#: Blocks from this size up (bytes) are given by the C library straight from the kernel and handed back
#: when freed (see :func:`hand_back_big_blocks`).
BIG_BLOCK_BYTES = 1 << 20


def hand_back_big_blocks() -> None:
    """Have glibc's malloc serve every block of :data:`BIG_BLOCK_BYTES` or more by ``mmap`` and unmap it
    when freed (``mallopt(M_MMAP_THRESHOLD)``).  By default the threshold rises to the largest block
    freed so far, and big numpy temporaries are then carved from the heap, which keeps the pages: a
    million-segment drawing's process stayed hundreds of megabytes above what it held.  Elsewhere (no
    glibc) nothing changes."""
    _call_glibc("mallopt", -3, BIG_BLOCK_BYTES)  # M_MMAP_THRESHOLD = -3 (malloc.h)


def _call_glibc(function: str, *args: int) -> None:
    """Call the C library's ``function``; nothing where there is no glibc."""
    import ctypes

    try:
        getattr(ctypes.CDLL("libc.so.6"), function)(*args)
    except (OSError, AttributeError):
        pass


#: Drawings from this many segments up have the reader's freed memory handed back (see :func:`give_back_heap`).
BIG_DRAWING_SEGMENTS = 100_000


def give_back_heap(segments: int) -> None:
    """After a step of work on a big drawing (``segments`` at least :data:`BIG_DRAWING_SEGMENTS`), hand the
    C heap's free pages back to the system (glibc ``malloc_trim``, every thread's heap): the reader's text
    and Python objects, the integrator threads' temporaries, leave freed blocks under a megabyte between
    live ones, which stay resident otherwise (a million SVG segments: about 70 MB after reading, 80 after
    measuring).  Elsewhere (no glibc) nothing happens."""
    if segments >= BIG_DRAWING_SEGMENTS:
        _call_glibc("malloc_trim", 0)


#: Default limits per file (``--timeout``, ``--max-memory``).
DEFAULT_TIMEOUT_S = 300.0
DEFAULT_MAX_MEMORY_MB = 4096


@dataclass(frozen=True)
class Limits:
    """What one file may cost: wall time (s) and memory (MB) beyond what a worker starts with."""

    timeout_s: float = DEFAULT_TIMEOUT_S
    max_memory_mb: int = DEFAULT_MAX_MEMORY_MB


#: The memory limit in force in this process (set in workers), for the out-of-memory message.
_memory_limit_mb: int | None = None


def _limit_memory(mb: int) -> None:
    """Cap this process's address space at its present size plus ``mb`` megabytes (RLIMIT_AS: the
    kernel refuses larger allocations, which Python raises as MemoryError)."""
    global _memory_limit_mb
    import resource

    with open("/proc/self/status", encoding="ascii") as fh:
        size_kb = next(int(line.split()[1]) for line in fh if line.startswith("VmSize:"))
    cap = size_kb * 1024 + mb * 1024 * 1024
    _soft, hard = resource.getrlimit(resource.RLIMIT_AS)
    if hard != resource.RLIM_INFINITY:
        cap = min(cap, hard)
    resource.setrlimit(resource.RLIMIT_AS, (cap, hard))
    _memory_limit_mb = mb


#: Seconds a worker lets pass beyond the per-file limit before its own alarm ends it (the parent
#: normally ends it first; the alarm holds when the parent is gone or stuck).
WORKER_GRACE_S = 5.0


def tie_to_parent(parent: int) -> None:
    """Ask the kernel to kill this process when its parent (process ``parent``) dies (Linux
    ``PR_SET_PDEATHSIG``), and exit at once if the parent is already gone: a worker never outlives the
    command that started it.

    The signal follows the thread that forked the child: forks happen from the thread that runs the
    batch, which lives as long as the batch.  Elsewhere (no prctl) :func:`parent_gone` is checked before
    each file instead.
    """
    import ctypes
    import signal

    global _PARENT
    _PARENT = parent
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(1, int(signal.SIGKILL), 0, 0, 0)  # PR_SET_PDEATHSIG = 1
    except (OSError, AttributeError):
        pass
    if parent_gone():
        os._exit(0)


_PARENT = os.getpid()


def parent_gone() -> bool:
    """Whether the process that forked this worker has ended (the worker was handed to init)."""
    return os.getppid() != _PARENT


def _worker(conn: Any, work: Callable[[str, Any], Any], settings: Any, limits: Limits, own_threads: bool,
            parent: int, kinds: tuple[str, ...] = SUFFIXES) -> None:
    """A worker process: measure the files it is sent, one at a time, under the memory limit and under
    an alarm of its own (the time limit plus a grace), tied to its parent's life.  The readers of the
    file ``kinds`` (suffixes) are imported before the first file comes, while the parent goes on."""
    import signal

    tie_to_parent(parent)
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C is the parent's to handle
    # SIGTERM to the process group (a service manager stopping the service) is the parent's to handle:
    # it requeues the file in hand and ends this worker; the worker ends anyway when the parent exits
    signal.signal(signal.SIGTERM, signal.SIG_IGN)
    signal.signal(signal.SIGALRM, signal.SIG_DFL)  # the alarm below ends the process, GIL or not
    if not own_threads:
        from pathlen.measure import planar_cubic

        planar_cubic.THREADS = 1
    single_blas_thread()
    hand_back_big_blocks()
    try:
        _limit_memory(limits.max_memory_mb)
    except (OSError, ValueError, StopIteration):
        pass  # no /proc or no rlimits here: the timeout still holds
    load_readers(kinds)
    while True:
        try:
            job = conn.recv()
        except (EOFError, OSError):
            return
        if job is None or parent_gone():
            return
        index, path = job
        signal.setitimer(signal.ITIMER_REAL, limits.timeout_s * 1.1 + WORKER_GRACE_S)
        result = work(path, settings)
        signal.setitimer(signal.ITIMER_REAL, 0)
        conn.send((index, result))


def serve_adopted(conn: Any, parent: int, kinds: tuple[str, ...]) -> None:
    """A worker forked before its batch was known (:mod:`pathlen.head_start`): tied to its parent, it loads
    the readers of ``kinds`` and the measuring modules, then waits for ``(work, settings, limits,
    own_threads)`` and serves as :func:`_worker` does; it ends if the parent sends nothing (or ``None``)."""
    tie_to_parent(parent)
    load_readers(kinds)
    import pathlen.file_measure  # noqa: F401 - numpy and the measuring modules, which every batch's work uses
    try:
        setup = conn.recv()
    except (EOFError, OSError):
        return
    if setup is not None:
        _worker(conn, *setup, parent, kinds)


class _Slot:
    """One worker process and the file it is working on: forked now, or ``adopted`` (a worker forked
    earlier by :mod:`pathlen.head_start`, ``(process, connection)``) and sent its work."""

    def __init__(self, ctx: Any, work: Callable[[str, Any], Any], settings: Any, limits: Limits,
                 own_threads: bool, kinds: tuple[str, ...] = SUFFIXES, adopted: tuple[Any, Any] | None = None
                 ) -> None:
        if adopted is not None:
            self.process, self.conn = adopted
            try:
                self.conn.send((work, settings, limits, own_threads))
            except Exception:  # noqa: BLE001 - work that cannot be sent (a closure): a worker forked here instead
                self.stop(kill=True)
                adopted = None
        if adopted is None:
            self.conn, child = ctx.Pipe()
            self.process = ctx.Process(target=_worker, args=(child, work, settings, limits, own_threads,
                                                             os.getpid(), kinds), daemon=True)
            self.process.start()
            child.close()
        self.index: int | None = None
        self.started = 0.0

    def give(self, index: int, path: str) -> None:
        import time

        self.index, self.started = index, time.monotonic()
        self.conn.send((index, path))

    def stop(self, kill: bool = False) -> None:
        if kill:
            self.process.kill()
        else:
            try:
                self.conn.send(None)
            except OSError:
                self.process.kill()
        self.process.join(5)
        if self.process.is_alive():
            self.process.kill()
            self.process.join()
        self.conn.close()


def _death(process: Any) -> str:
    import signal

    code = process.exitcode
    if code is not None and code < 0:
        name = signal.Signals(-code).name if -code in signal.Signals._value2member_map_ else str(-code)
        hint = " (killed: out of memory?)" if -code == signal.SIGKILL else ""
        return f"the worker measuring this file died with signal {name}{hint}"
    return f"the worker measuring this file exited unexpectedly (status {code})"


def run_batch(paths: list[str], settings: Any, jobs: int = 1,
              work: Callable[[str, Any], Any] = measure_file,
              failed: Callable[..., Any] = FileResult, limits: Limits = Limits(),
              started: Callable[[int], None] | None = None, stop: Any = None) -> Iterator[tuple[int, Any]]:
    """Yield ``(index, work(path, settings))`` for every path as results finish.

    Every file is measured in a worker process (``jobs`` of them; 0: one per core) under
    ``limits``: a file that runs past the timeout has its worker killed, one that needs more memory
    fails with MemoryError inside its worker, and a worker that dies (out-of-memory killer, a crash
    in a C library) fails its own file only; a new worker takes its place.  Failed files get
    ``failed(path, ok=False, error=...)`` naming the limit.  The workers are started, and given their
    first files, before this returns (before any progress display starts its thread, and while the
    caller loads its report's libraries).
    """
    import multiprocessing

    workers = max(1, min((os.cpu_count() or 1) if jobs == 0 else jobs, len(paths)))
    ctx = multiprocessing.get_context("fork")
    kinds = tuple(sorted({Path(p).suffix.lower() for p in paths}))
    spawn = lambda: _Slot(ctx, work, settings, limits, own_threads=workers == 1, kinds=kinds)  # noqa: E731
    early = head_start.take()  # forked as the program started, if it was
    slots = [_Slot(ctx, work, settings, limits, workers == 1, kinds, early)] + [spawn() for _ in range(workers - 1)]
    queue = _queue(len(paths))
    _hand_out(slots, queue, paths, started, stop)  # now: what the caller does before it asks for results overlaps
    return _drive(paths, slots, spawn, failed, limits, started=started, stop=stop, queue=queue)


def _queue(n: int) -> list[int]:
    """Files 0..n-1 waiting, the next to go last (``pop()``)."""
    return list(range(n - 1, -1, -1))


def _hand_out(slots: list[_Slot], queue: list[int], paths: list[str], started: Callable[[int], None] | None,
              stop: Any) -> None:
    """Give each idle worker the next waiting file (none once ``stop`` is set); ``started(i)`` is told."""
    for slot in slots:
        if slot.index is None and queue and not (stop is not None and stop.is_set()):
            i = queue.pop()
            if started is not None:
                started(i)
            slot.give(i, paths[i])


class KeptWorker:
    """One worker process under ``limits`` kept for file after file, for a long-lived host (a Dask
    worker): the process is forked once, not per file, and replaced when a file kills it or times out."""

    def __init__(self, work: Callable[[str, Any], Any], settings: Any, failed: Callable[..., Any],
                 limits: Limits) -> None:
        import multiprocessing

        ctx = multiprocessing.get_context("fork")
        self.spawn = lambda: _Slot(ctx, work, settings, limits, own_threads=True)
        self.slots = [self.spawn()]
        self.failed, self.limits = failed, limits

    def run(self, path: str) -> Any:
        """``work(path, settings)`` in the kept process (or ``failed(...)`` naming the limit it broke)."""
        return next(_drive([path], self.slots, self.spawn, self.failed, self.limits, keep=True))[1]


def _drive(paths: list[str], slots: list[_Slot], spawn: Callable[[], _Slot], failed: Callable[..., Any],
           limits: Limits, keep: bool = False, started: Callable[[int], None] | None = None,
           stop: Any = None, queue: list[int] | None = None) -> Iterator[tuple[int, Any]]:
    """Hand ``paths`` to the worker ``slots`` and yield results as they come; ``keep``: leave idle workers
    running at the end (a worker still busy, say when the caller stops early, is killed and replaced).
    ``started(i)`` is told when file i goes to a worker; once ``stop`` (an Event) is set, no file is
    handed out, the busy workers are ended and the generator returns (their files are not answered).
    ``queue``: the files still waiting (see :func:`_queue`), when some were handed out already."""
    import time
    from multiprocessing.connection import wait

    queue = _queue(len(paths)) if queue is None else queue
    try:
        while True:
            _hand_out(slots, queue, paths, started, stop)
            busy = [s for s in slots if s.index is not None]
            if not busy or (stop is not None and stop.is_set()):
                return
            now = time.monotonic()
            soonest = min(s.started + limits.timeout_s for s in busy)
            pause = max(0.0, soonest - now) if stop is None else min(max(0.0, soonest - now), 0.25)
            ready = wait([s.conn for s in busy] + [s.process.sentinel for s in busy], pause)
            for k, slot in enumerate(slots):
                if slot.index is None:
                    continue
                i = slot.index
                if slot.conn in ready:
                    try:
                        got, result = slot.conn.recv()
                    except (EOFError, OSError):
                        got, result = i, None
                    if result is not None:
                        slot.index = None
                        yield got, result
                        continue
                if slot.process.sentinel in ready or slot.conn in ready:
                    slot.process.join(5)  # the pipe can close a moment before the exit status is known
                    yield i, failed(paths[i], ok=False, error=_death(slot.process), environment=True)
                    slot.stop(kill=True)
                    slots[k] = spawn()
                elif time.monotonic() - slot.started >= limits.timeout_s:
                    slot.stop(kill=True)
                    yield i, failed(paths[i], ok=False, environment=True,
                                    error=f"stopped after {limits.timeout_s:g} s: the time limit per file (--timeout)")
                    slots[k] = spawn()
    finally:
        for k, slot in enumerate(slots):
            if not keep or slot.index is not None:
                slot.stop(kill=slot.index is not None)
                if keep:
                    slots[k] = spawn()
