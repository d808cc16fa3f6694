"""Where the batch's tasks run: a local dask cluster or an existing dask.distributed one.

:func:`connect` gives a ``distributed.Client``: to the scheduler given (address or
scheduler file), else to a :func:`start_local_cluster` of worker processes on this
machine. :func:`check_version_skew` refuses a cluster whose workers run other
versions of the packages that shape the results. :func:`run_on_dask` streams the
tasks through it with a bounded number in flight. What a task computes and how the
client records it live in :mod:`solair.batch`.
"""

from __future__ import annotations

import contextlib
import functools
import json
import os
import uuid
from collections.abc import Callable, Iterator
from typing import Any

from solair.errors import ConfigurationError, one_line
from solair.provenance import SKEW_PACKAGES, versions

__all__ = [
    "LOCAL_CLUSTER_CONFIG",
    "SKEW_PACKAGES",
    "WORKER_ENV",
    "check_version_skew",
    "connect",
    "cores",
    "run_on_dask",
    "start_local_cluster",
    "tune_allocator",
    "versions",
]

#: how long to wait for an existing scheduler to answer
CONNECT_TIMEOUT = "20s"


def _worker_versions() -> dict[str, str]:
    return versions()


def check_version_skew(client, client_versions: dict[str, str]) -> None:
    """Refuse to run when a worker's solair/pvlib/xarray/... differ from the client's."""
    try:
        client.get_versions(check=True)
    except ValueError as exc:
        raise ConfigurationError(
            f"dask client and workers run different package versions: {one_line(exc)}") from None
    remote = client.run(_worker_versions)
    for worker, vers in sorted(remote.items()):
        diff = {pkg: (client_versions.get(pkg), vers.get(pkg)) for pkg in SKEW_PACKAGES
                if vers.get(pkg) != client_versions.get(pkg)}
        if diff:
            text = ", ".join(f"{pkg} {c} here but {w} on the worker"
                             for pkg, (c, w) in diff.items())
            raise ConfigurationError(
                f"worker {worker} runs other versions than this client: {text}; install the same "
                f"versions on every worker (see docs/scaling.md)")


#: glibc allocator settings for the processes that run tasks.  dask's nanny sets
#: MALLOC_TRIM_THRESHOLD_=65536 (``distributed.nanny.pre-spawn-environ``), and setting any malloc
#: tunable turns off glibc's dynamic thresholds: every array above 128 KiB is then mmap-ed fresh
#: and unmapped on free (measured: 50-58 thousand minor faults per task, 220 against 135 ms), and
#: whatever the heap frees above 64 KiB at its top goes back to the kernel after every task, to be
#: faulted in again by the next (measured: ~7.8 thousand faults per task, ~140 against ~115 ms,
#: the same peak RSS).  A fixed 32 MiB mmap threshold (glibc's own dynamic ceiling on 64-bit)
#: keeps the hourly arrays (8760 x 68 float64 = 4.8 MB) in the heap, and a 256 MiB trim threshold
#: keeps the heap's pages between tasks; the peak RSS does not change.  The local cluster spawns
#: its workers with them; :func:`tune_allocator` sets the same in any process that runs a task.
WORKER_ENV = {"MALLOC_MMAP_THRESHOLD_": str(32 * 1024 * 1024),
              "MALLOC_TRIM_THRESHOLD_": str(256 * 1024 * 1024)}
#: dask settings of the local cluster, which has no dashboard: its workers' statistical
#: profiler (a thread that samples the task's stack every 10 ms, for the dashboard's profile
#: page) took ~4-5 ms of CPU per ~110 ms task beside the task itself (measured: the worker
#: process's other threads 9-10 -> 5-6 ms per task); the system monitor only feeds the
#: dashboard's plots, and the tick only times the event loop for warnings the local cluster
#: silences.  Results do not depend on them.
LOCAL_CLUSTER_CONFIG = {
    "distributed.worker.profile.enabled": False,
    "distributed.admin.tick.interval": "1s",
    "distributed.admin.system-monitor.interval": "5s",
}
#: mallopt parameter numbers (glibc's malloc.h)
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3


@functools.cache
def tune_allocator() -> bool:
    """Set :data:`WORKER_ENV`'s thresholds in this process with glibc's ``mallopt``, once.

    What a task process needs to keep its hourly arrays and their pages between tasks,
    whoever started it (the local cluster, ``dask worker`` by hand, a job queue, a pod, or
    ``solair batch --workers 0`` itself). Results do not depend on it, only speed.

    Returns
    -------
    bool
        True where glibc took both settings; False elsewhere (macOS, musl), where nothing
        is changed.
    """
    import ctypes

    try:
        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):  # no C library symbols, or no mallopt (not glibc)
        return False
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    mallopt.restype = ctypes.c_int
    return (mallopt(_M_MMAP_THRESHOLD, int(WORKER_ENV["MALLOC_MMAP_THRESHOLD_"])) == 1
            and mallopt(_M_TRIM_THRESHOLD, int(WORKER_ENV["MALLOC_TRIM_THRESHOLD_"])) == 1)


def start_local_cluster(n_workers: int, **kwargs: Any):
    """Start the ``distributed.LocalCluster`` the batch uses when given no scheduler.

    Worker processes with one thread each (the numerical work holds the GIL in Python
    between numpy calls, so threads would contend), no dashboard (and so none of the
    periodic work that only feeds it: :data:`LOCAL_CLUSTER_CONFIG`), and :data:`WORKER_ENV`
    in the environment the workers are spawned with.  ``kwargs`` go to ``LocalCluster``
    (``memory_limit``, ``silence_logs``...).  The benchmark starts its clusters here too.
    """
    import dask
    from distributed import LocalCluster

    options = {"threads_per_worker": 1, "processes": True, "dashboard_address": None,
               **kwargs}
    env = {f"distributed.nanny.pre-spawn-environ.{k}": v for k, v in WORKER_ENV.items()}
    with dask.config.set({**LOCAL_CLUSTER_CONFIG, **env}):
        return LocalCluster(n_workers=n_workers, **options)


@contextlib.contextmanager
def connect(*, workers: int | None, scheduler: str | None, scheduler_file: str | None,
            memory_limit: str | float | None) -> Iterator[Any]:
    """A ``distributed.Client``, closed (with its local cluster, if one was started) on exit.

    To ``scheduler`` (an address) or ``scheduler_file`` when given, waiting at most
    :data:`CONNECT_TIMEOUT`; else to a :func:`start_local_cluster` of ``workers`` processes
    (:func:`cores` when None or 0) with ``memory_limit`` each.

    Raises
    ------
    ConfigurationError
        The scheduler cannot be reached (one line naming it and the reason).
    """
    import logging

    from distributed import Client

    if scheduler or scheduler_file:
        try:
            client = (Client(scheduler_file=scheduler_file, timeout=CONNECT_TIMEOUT)
                      if scheduler_file else Client(scheduler, timeout=CONNECT_TIMEOUT))
        except (OSError, TimeoutError, ValueError) as exc:
            where = (f"--scheduler-file {scheduler_file!r}" if scheduler_file
                     else f"scheduler {scheduler!r}")
            raise ConfigurationError(f"cannot connect to the dask {where}: "
                                     f"{one_line(exc)}") from None
        try:
            yield client
        finally:
            client.close()
        return
    cluster = start_local_cluster(workers if workers else cores(),
                                  memory_limit=memory_limit, silence_logs=logging.ERROR)
    client = Client(cluster)
    try:
        yield client
    finally:
        client.close()
        cluster.close()


def cores() -> int:
    """The cores this process may run on (its CPU affinity), at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not on Linux
        return max(1, os.cpu_count() or 1)


class _Sealed:
    """``fn(arg)`` as one callable that dask ships without looking inside.

    dask walks a task's plain dict and list arguments, item by item, for futures and keys
    to resolve (~160 look-ups per task for a portfolio's settings, on the client and again on
    the worker); a task here never holds any, and an object of this class is passed on whole.
    With ``record_path``, the worker also leaves the result there as JSON, for
    :func:`_take_record`.
    """

    __slots__ = ("arg", "fn", "record_path")

    def __init__(self, fn: Callable[[Any], Any], arg: Any, record_path: str | None = None) -> None:
        self.fn, self.arg, self.record_path = fn, arg, record_path

    def __call__(self) -> Any:
        out = self.fn(self.arg)
        if self.record_path is not None:
            with contextlib.suppress(OSError, TypeError, ValueError):  # the client then gathers
                text = json.dumps(out)
                with open(self.record_path, "w", encoding="utf-8") as fh:
                    fh.write(text)
        return out


def _take_record(path: str) -> Any | None:
    """The result a task left at ``path`` (removed once read); None when there is none."""
    try:
        with open(path, encoding="utf-8") as fh:
            return json.loads(fh.read())
    except (OSError, ValueError):  # not there, or cut short (the worker's disk filled up)
        return None
    finally:
        with contextlib.suppress(OSError):
            os.unlink(path)


def run_on_dask(fn: Callable[[dict[str, Any]], dict[str, Any]], tasks: list[dict[str, Any]],
                finish: Callable[[dict[str, Any]], None],
                lost: Callable[[dict[str, Any], BaseException], dict[str, Any]], *,
                workers: int | None, scheduler: str | None, scheduler_file: str | None,
                memory_limit: str | float | None, client_versions: dict[str, str],
                record_dir: str | os.PathLike | None = None) -> None:
    """Run ``fn(task)`` for every task on dask; call ``finish(record)`` as each ends.

    ``fn`` must be importable by the workers (a module-level function); it receives the
    task dict and returns its record.

    ``record_dir``, a folder the client and the workers share (the output folder's), takes
    the records the tasks return: each worker leaves its record there as a small JSON file,
    which the client reads (and removes) once the scheduler reports the task finished,
    instead of fetching the result from the worker. That round trip per task cost ~2.5 ms of
    client CPU and ~1.3 ms of worker CPU (measured with no-op tasks on 2 local workers).
    A record that is not there (a folder the workers do not see, a record JSON cannot
    hold) is fetched from the worker as without ``record_dir``.

    Connects to ``scheduler`` / ``scheduler_file`` or starts :func:`start_local_cluster`
    with ``workers`` processes (all cores when None), checks the workers' versions
    (:func:`check_version_skew`), keeps at most twice as many tasks in flight as there are
    worker threads (the client's memory stays flat in the number of tasks) and hands
    every finished record to ``finish`` in the client, in completion order. A task that
    returns nothing (its worker died, say) is handed on as ``lost(task, exception)``.
    """
    from distributed import as_completed

    with connect(workers=workers, scheduler=scheduler, scheduler_file=scheduler_file,
                 memory_limit=memory_limit) as client:
        check_version_skew(client, client_versions)
        n_threads = max(1, sum(client.nthreads().values()))
        window = max(4, 2 * n_threads)  # bounded in-flight futures: flat client memory
        queue = iter(tasks)
        by_future: dict[Any, dict[str, Any]] = {}

        def submit(task: dict[str, Any]):
            key = f"solair-climate-{task['label']}-{uuid.uuid4().hex[:8]}"
            path = None if record_dir is None else os.path.join(record_dir, f"{key}.json")
            fut = client.submit(_Sealed(fn, task, path), pure=False, key=key)
            by_future[fut] = (task, path)
            return fut

        pending = as_completed([submit(t) for _, t in zip(range(window), queue)])
        for fut in pending:
            task, path = by_future.pop(fut)
            rec = None
            if path is not None and fut.status == "finished":
                rec = _take_record(path)
            if rec is None:
                try:
                    rec = fut.result()
                except Exception as exc:  # e.g. a worker killed under this task (KilledWorker)
                    rec = lost(task, exc)
            fut.release()
            finish(rec)
            nxt = next(queue, None)
            if nxt is not None:
                pending.add(submit(nxt))
