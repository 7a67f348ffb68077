"""Engines that run tension sections: in this process, in worker processes, or on a dask cluster.

Every engine has ``map(tasks)``, which yields ``(outputs, context)`` per
:class:`~routesag.pipeline.SectionTask` in task order, so a run gives the same
rows in the same order whatever the engine. Open rasters never travel: before a
task leaves the process each :class:`~routesag.io.terrain.TerrainSampler` in
its inputs is replaced by a :class:`~routesag.io.terrain.RasterRef`, which the
worker opens itself (once per process, with the sampler's own GDAL settings).
"""
from __future__ import annotations

import logging
import multiprocessing
import os
import sys
import threading
from collections import deque
from concurrent.futures import ProcessPoolExecutor
from dataclasses import replace
from functools import partial

from routesag.errors import EngineError
from routesag.io.terrain import RasterRef, TerrainSampler
from routesag.pipeline import SectionTask, run_section

log = logging.getLogger("routesag")

#: Sections sent to a worker pool ahead of the one being collected, per worker (bounds memory).
AHEAD_PER_WORKER = 2
#: Transports a dask scheduler address may name.
SCHEDULER_SCHEMES = ("tcp", "tls", "ucx", "ws", "wss")
#: How long to try reaching a dask scheduler before giving up [s].
CONNECT_TIMEOUT_S = 20


def default_workers() -> int:
    """Worker processes when none is asked for: one per core this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def portable(task: SectionTask) -> SectionTask:
    """The task with every open raster replaced by a reference the worker opens itself."""
    inputs = {k: v.reference() if isinstance(v, TerrainSampler) else v for k, v in task.inputs.items()}
    return replace(task, inputs=inputs)


def open_references(data: dict) -> dict:
    """Inputs with every :class:`RasterRef` opened in this process."""
    return {k: v.open() if isinstance(v, RasterRef) else v for k, v in data.items()}


def run_portable(task: SectionTask):
    """Worker side of a section task."""
    return run_section(task, open_rasters=open_references)


def in_order(submit, tasks, ahead: int):
    """Section results in task order, each task sent as ``submit(run_portable, portable(task))``, with at most
    ``ahead`` tasks in flight so finished results do not pile up (memory stays bounded)."""
    pending = deque()
    for task in tasks:
        pending.append(submit(run_portable, portable(task)))
        if len(pending) >= ahead:
            yield pending.popleft().result()
    while pending:
        yield pending.popleft().result()


class InProcess:
    """Sections one after the other in this process, with the rasters already open."""

    name = "in process"

    def map(self, tasks):
        for task in tasks:
            yield run_section(task)

    def close(self):
        pass


#: Modules the forkserver imports once, so each worker it forks starts with them loaded.
PRELOAD = ("routesag.engine", "routesag.stages.conductors", "routesag.stages.terrain", "routesag.stages.surface",
           "routesag.stages.crossings", "routesag.stages.clearance", "routesag.stages.unknowns",
           "routesag.stages.point_clearance", "routesag.stages.output")


def start_forkserver():
    """The forkserver context, its server started now (it imports :data:`PRELOAD` in its own process while
    this one goes on), so a pool made later forks workers that are ready at once. A plugin's modules are
    left to the workers: one that fails to import must not take the server down."""
    context = multiprocessing.get_context("forkserver")
    context.set_forkserver_preload(list(PRELOAD))
    from multiprocessing import forkserver

    forkserver.ensure_running()
    return context


def can_fork_now() -> bool:
    """True when this process may be forked as it is: on Linux, with no other Python thread running (a thread
    could hold a lock the child would inherit locked), and before CPython 3.12. Native threads, such as an
    idle BLAS pool, are not counted: they hold no lock the workers use; but CPython 3.12 and later warn on
    every fork of a process that has any, so there the forkserver (started as early) is used instead."""
    return sys.platform.startswith("linux") and sys.version_info < (3, 12) and threading.active_count() == 1


#: prctl option: the signal a process gets when its parent dies (Linux, <sys/prctl.h>).
_PR_SET_PDEATHSIG = 1


def end_with_parent(parent_pid: int | None = None) -> None:
    """Worker start-up: the worker ends when the run's process dies, so a run killed with SIGKILL leaves no
    worker waiting for sections forever (and holding the terminal's pipes).

    Two ways, as the parent differs: a forked worker's parent is the run's process, which the kernel is asked
    to follow (Linux ``PR_SET_PDEATHSIG``; ``parent_pid`` catches a parent that died before the call); a
    forkserver's worker watches the run's process through multiprocessing's parent sentinel in a thread.
    """
    if sys.platform.startswith("linux"):
        import ctypes
        import signal

        ctypes.CDLL(None, use_errno=True).prctl(_PR_SET_PDEATHSIG, signal.SIGKILL)
        if parent_pid is not None and os.getppid() != parent_pid:
            os._exit(1)
    run = multiprocessing.parent_process()
    if parent_pid is None and run is not None:
        threading.Thread(target=_exit_when_gone, args=(run.sentinel,), name="routesag-parent-watch",
                         daemon=True).start()


def _exit_when_gone(sentinel) -> None:
    from multiprocessing.connection import wait

    wait([sentinel])
    os._exit(1)


class WorkerPool:
    """Sections in ``workers`` local processes, results collected in task order.

    ``WorkerPool.started(n)``, called at a run's start, makes the processes at once: forked from this
    process when :func:`can_fork_now` (they start with every module already imported, and nothing of the
    run is open yet), else from the forkserver. ``WorkerPool(n)`` makes them at the first section, from the
    forkserver (``fork=True`` only where nothing is open and no other thread runs).
    """

    def __init__(self, workers: int, fork: bool = False):
        self.workers = workers
        self.name = f"{workers} worker processes"
        context = multiprocessing.get_context("fork") if fork else start_forkserver()
        self._pool = ProcessPoolExecutor(max_workers=workers, mp_context=context, initializer=end_with_parent,
                                         initargs=(os.getpid() if fork else None,))

    @classmethod
    def started(cls, workers: int) -> "WorkerPool":
        """A pool whose processes exist now (see the class notes)."""
        pool = cls(workers, fork=can_fork_now())
        pool._pool.submit(os.getpid)  # a fork pool makes all its processes on the first submit
        return pool

    def map(self, tasks):
        return in_order(self._pool.submit, tasks, self.workers * AHEAD_PER_WORKER)

    def close(self):
        self._pool.shutdown(cancel_futures=True)


class DaskEngine:
    """Sections on a dask.distributed cluster: ``tcp://host:port``, or ``local:N`` for a LocalCluster of N."""

    def __init__(self, address: str):
        check_scheduler(address)
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError:
            raise EngineError(f"scheduler {address!r} needs dask.distributed: pip install 'routesag[dask]'") from None
        self._cluster = None
        if address.startswith("local:"):
            self._cluster = LocalCluster(n_workers=int(address.split(":", 1)[1]), threads_per_worker=1,
                                         processes=True, dashboard_address=None)
            self._client = Client(self._cluster)
        else:
            try:
                self._client = Client(address, timeout=CONNECT_TIMEOUT_S)
            except (OSError, TimeoutError) as exc:
                raise EngineError(f"cannot reach the dask scheduler at {address!r}: {exc}") from None
        self.name = f"dask scheduler {address}"

    def map(self, tasks):
        slots = sum(self._client.nthreads().values()) or 1
        return in_order(partial(self._client.submit, pure=False), tasks, slots * AHEAD_PER_WORKER)

    def close(self):
        self._client.close()
        if self._cluster is not None:
            self._cluster.close()


def check_scheduler(address: str, where: str = "scheduler") -> None:
    """Refuse a scheduler address that is neither ``local:N`` (N >= 1) nor ``SCHEME://HOST:PORT``."""
    if address.startswith("local:"):
        count = address.split(":", 1)[1]
        if not count.isdigit() or int(count) < 1:
            raise EngineError(f"{where} {address!r}: give local:N with N >= 1 workers")
        return
    scheme, sep, rest = address.partition("://")
    host, _, port = rest.rpartition(":")
    if not sep or scheme not in SCHEDULER_SCHEMES or not host or not port.isdigit():
        raise EngineError(f"{where} {address!r} is not a scheduler address: give local:N, or SCHEME://HOST:PORT "
                          f"with SCHEME one of {', '.join(SCHEDULER_SCHEMES)} (e.g. tcp://10.0.0.5:8786)")


def check_workers(workers: int, where: str = "workers") -> None:
    """Refuse a worker count that is not a whole number >= 0 (0: one per core)."""
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 0:
        raise EngineError(f"{where} = {workers!r}: give a whole number of worker processes >= 1 (0: one per core)")


class EngineChoice:
    """The engine a run asked for, handed out once the number of sections is known (``choice(sections)``).

    :meth:`prepare`, at the start of the run, starts a worker pool at once so its start-up overlaps the
    line-level phase; it then has ``workers`` processes whatever the number of sections (with fewer
    sections some stay idle; with one section it is closed and the section runs in process).
    :meth:`discard_prepared` closes a prepared pool that was never handed out (a run that failed before its
    sections).
    """

    def __init__(self, workers: int | None = None, scheduler: str | None = None):
        self.workers, self.scheduler = workers, scheduler
        self._prepared: WorkerPool | None = None

    def prepare(self) -> None:
        workers = self.workers or default_workers()
        if not self.scheduler and workers > 1 and self._prepared is None:
            self._prepared = WorkerPool.started(workers)

    def __call__(self, sections: int | None = None):
        pool, self._prepared = self._prepared, None
        if pool is not None and (sections is None or sections > 1):
            return pool
        if pool is not None:
            pool.close()
        return make_engine(self.workers, self.scheduler, sections)

    def discard_prepared(self) -> None:
        if self._prepared is not None:
            self._prepared.close()
            self._prepared = None


def make_engine(workers: int | None = None, scheduler: str | None = None, sections: int | None = None):
    """The engine for a run: dask when a scheduler is named, else a worker pool, else in process.

    ``workers`` None or 0 means one per core; a pool is never larger than the
    number of ``sections``, and one worker runs in process.
    """
    if scheduler:
        return DaskEngine(scheduler)
    check_workers(workers or 0)
    workers = workers or default_workers()
    if sections is not None:
        workers = min(workers, max(sections, 1))
    return InProcess() if workers <= 1 else WorkerPool(workers)
