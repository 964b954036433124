"""Running independent tasks on Dask, streaming results back as each one finishes.

Both ways of running use the same code: a :class:`distributed.Client` on either a
:class:`distributed.LocalCluster` of ``workers`` single-threaded processes that this module starts
(the default), or an existing cluster named by its scheduler address. Results come back through
:func:`distributed.as_completed`, so the caller can store each frame as soon as it is done and the
parent never holds more than one result at a time. ``workers=0`` runs the tasks one after another
in the calling process, with the same error and warning handling; it is for debugging and quick
tests.

Why ``LocalCluster`` rather than dask's multiprocessing scheduler: the multiprocessing scheduler
returns only when the whole graph is computed (no streaming to the store), restarts nothing when a
process dies, and is a different code path from a remote cluster. ``LocalCluster`` gives streaming,
a nanny that replaces a crashed worker, and the very path a cluster user takes.
"""

import importlib
import logging
import os
import pickle
import sys
import threading
import time
import traceback
import warnings
from dataclasses import dataclass, field

from photpipe._memory import peak_resident_mb

__all__ = ["TaskRunner", "TaskError", "run_tasks"]

log = logging.getLogger("photpipe.campaign")

#: Thread counts of the numerical libraries in a local worker process: one each.
_ONE_THREAD = {name: 1 for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS",
                                    "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS",
                                    "NUMEXPR_NUM_THREADS")}


class TaskError(Exception):
    """A task that failed in a worker, carried back to the caller as a value.

    Attributes
    ----------
    kind : str
        Class name of the original exception (``"KilledWorker"`` when the process died).
    message : str
        The original message.
    details : str
        The worker-side traceback, for the log.
    original : BaseException or None
        The original exception when it could be carried over.
    """

    def __init__(self, kind, message, *, details="", original=None):
        super().__init__(f"{kind}: {message}" if message else kind)
        self.kind = kind
        self.message = message
        self.details = details
        self.original = original


@dataclass
class _Outcome:
    ok: bool
    value: object = None
    kind: str = ""
    message: str = ""
    details: str = ""
    original: object = None
    warnings: list = field(default_factory=list)
    seconds: float = 0.0
    cpu_seconds: float = 0.0
    pid: int = 0
    peak_rss_mb: float = 0.0


def _guarded(func, item, shared):
    """Run ``func`` on ``item`` and return an `_Outcome`; never raises (a top-level function)."""
    start = time.perf_counter()
    cpu_start = time.process_time()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            value = func(item) if shared is None else func(item, shared)
            outcome = _Outcome(True, value)
        except Exception as exc:  # noqa: BLE001 - every failure of one item is returned, not raised
            try:
                pickle.dumps(exc)
                original = exc
            except Exception:  # noqa: BLE001 - an exception that cannot travel is described
                original = None
            outcome = _Outcome(False, kind=type(exc).__name__, message=str(exc),
                               details=traceback.format_exc(), original=original)
    outcome.warnings = [f"{w.category.__name__}: {w.message}" for w in caught]
    outcome.seconds = time.perf_counter() - start
    outcome.cpu_seconds = time.process_time() - cpu_start
    outcome.pid = os.getpid()
    outcome.peak_rss_mb = peak_resident_mb()
    return outcome


def _remote(func, item_bytes, shared_bytes):
    """`_guarded` for a worker: inputs and outcome travel as pickles.

    Dask's own serialisers treat ndarray subclasses as plain arrays, so an astropy Quantity
    inside a task's inputs would arrive without its unit; pickling everything ourselves keeps
    every object exactly as it was.
    """
    item = pickle.loads(item_bytes)
    shared = None if shared_bytes is None else pickle.loads(shared_bytes)
    outcome = _guarded(func, item, shared)
    try:
        return pickle.dumps(outcome, protocol=pickle.HIGHEST_PROTOCOL)
    except Exception as exc:  # noqa: BLE001 - a result that cannot travel is a failed task
        return pickle.dumps(_Outcome(False, kind=type(exc).__name__,
                                     message=f"the task's result cannot be sent back: {exc}",
                                     warnings=outcome.warnings, pid=outcome.pid))


class TaskRunner:
    """A connection to the processes that run tasks, kept open over several batches.

    Parameters
    ----------
    workers : int, optional
        Number of local worker processes (one thread each). ``0`` runs tasks in this process.
        Ignored when ``scheduler`` is given.
    scheduler : str, optional
        Address of an existing Dask scheduler (``"tcp://host:8786"``) to run the tasks on.
    progress : bool, optional
        Show a progress bar (counts, rate, time remaining) on standard error.
    connect_timeout : float, optional
        Seconds to wait for the scheduler at ``scheduler``.

    Attributes
    ----------
    peak_memory_mb : dict
        Peak resident memory reported by each worker process (pid -> MB) over the tasks run.
    memory_track : dict
        For each worker process (pid), its peak resident memory in MB after each of its tasks,
        in the order they finished: flat once the first tasks are done when memory is bounded
        by the task, rising when the worker keeps something from every task.
    task_seconds : list of float
        Wall time of each finished task, in the worker.
    task_cpu_seconds : list of float
        CPU time of each finished task, in the worker (all its threads).
    start_seconds : float
        Wall time spent starting the local cluster or connecting to the scheduler.
    bytes_sent, bytes_received : int
        Pickled task inputs sent and results received over all tasks run on Dask (the shared
        object counted once per batch); 0 for ``workers=0``.

    Examples
    --------
    >>> with TaskRunner(workers=0, progress=False) as runner:
    ...     [r for _, r in runner.map(abs, [-1, -2])]
    [1, 2]
    """

    def __init__(self, *, workers=1, scheduler=None, progress=True, connect_timeout=20.0):
        if scheduler is None and (not isinstance(workers, int) or workers < 0):
            msg = f"'workers' must be a whole number >= 0, got {workers!r}"
            raise ValueError(msg)
        self.workers = workers
        self.scheduler = scheduler
        self.progress = progress
        self.connect_timeout = float(connect_timeout)
        self.memory_track = {}
        self.task_seconds = []
        self.task_cpu_seconds = []
        self.start_seconds = 0.0
        self.bytes_sent = 0
        self.bytes_received = 0
        self._client = None
        self._cluster = None
        self._starting = None      # (thread, [exception]) while start_soon's start runs

    @property
    def peak_memory_mb(self):
        """Peak resident memory of each worker process (pid -> MB) over the tasks run."""
        return {pid: max(track) for pid, track in self.memory_track.items()}

    @property
    def description(self):
        """One line saying where tasks run."""
        if self.scheduler is not None:
            return f"Dask cluster at {self.scheduler}"
        if self.workers == 0:
            return "this process (workers = 0)"
        return f"{self.workers} local worker process{'es' if self.workers != 1 else ''} (Dask)"

    def __enter__(self):
        # Processes start on the first batch that has tasks, so a run with nothing to do
        # starts none.
        return self

    def __exit__(self, *exc):
        self.close()

    def open(self):
        """Start the local cluster or connect to the scheduler (no-op for ``workers=0``).

        Called by the first :meth:`map` that has tasks; call it yourself to fail early. After
        :meth:`start_soon`, waits for that start to finish (and raises what it raised).
        """
        if self._starting is not None:
            thread, errors = self._starting
            waited = time.perf_counter()
            thread.join()
            self._starting = None
            self.start_seconds += time.perf_counter() - waited
            if errors:
                raise errors[0]
        if self._client is not None or (self.scheduler is None and self.workers == 0):
            return
        started = time.perf_counter()
        try:
            self._connect()
        finally:
            self.start_seconds += time.perf_counter() - started

    def start_soon(self):
        """Begin starting the local worker processes in the background, and return at once.

        The caller goes on with its own serial work (the night's master calibrations) while the
        processes start; the next :meth:`open` or :meth:`map` waits for them. ``start_seconds``
        then counts only the time spent waiting. No-op for ``workers=0``, for an existing
        scheduler (connecting is quick) and when already started.
        """
        if (self._client is not None or self._starting is not None or self.scheduler is not None
                or self.workers == 0):
            return
        errors = []

        def start():
            try:
                self._connect()
            except Exception as exc:  # noqa: BLE001 - raised again by open(), in the caller
                errors.append(exc)
        thread = threading.Thread(target=start, name="photpipe-workers-start", daemon=True)
        self._starting = (thread, errors)
        thread.start()

    def _connect(self):
        import dask
        from distributed import Client, LocalCluster

        if self.scheduler is not None:
            try:
                self._client = Client(self.scheduler, timeout=self.connect_timeout)
            except (OSError, TimeoutError) as exc:
                msg = f"cannot connect to the Dask scheduler at {self.scheduler!r}: {exc}"
                raise ConnectionError(msg) from exc
            return
        # A worker holds only the task it runs (saturation 1.0), so when a task kills its
        # process no queued neighbour is blamed; the task is retried on fresh processes twice,
        # then reported as failed instead of taking more workers down. Each worker process is
        # one core's worth of work: its numerical libraries get one thread each (set before the
        # process starts, when they read it), or two workers would fight over the cores. Dask's
        # sampling profiler is off: it samples the running task's stack every 10 ms and keeps an
        # hour of those trees, which made each worker grow 0.3-0.5 MB per frame over a night.
        # Dask's default MALLOC_TRIM_THRESHOLD_ is dropped: setting it turns off glibc's moving
        # mmap threshold, so every temporary array over 128 kB is mapped fresh and its pages
        # zeroed again; the frame task then took 2.1 times the CPU it takes in one process.
        environ = dict(dask.config.get("distributed.nanny.pre-spawn-environ", {}))
        environ.pop("MALLOC_TRIM_THRESHOLD_", None)
        environ.update(_ONE_THREAD)
        with dask.config.set({"distributed.scheduler.allowed-failures": 2,
                              "distributed.scheduler.worker-saturation": 1.0,
                              "distributed.nanny.pre-spawn-environ": environ,
                              "distributed.worker.profile.enabled": False}):
            self._cluster = LocalCluster(n_workers=self.workers, threads_per_worker=1,
                                         processes=True, dashboard_address=":0",
                                         silence_logs=logging.ERROR)
            self._client = Client(self._cluster)
        # the frame stages imported in every worker now (~2 s of CPU each), while the caller
        # builds the masters, rather than inside each worker's first frame task
        self._client.run(importlib.import_module, _WARM_MODULE)

    def close(self):
        """Close the client and the local cluster it started."""
        if self._starting is not None:
            self._starting[0].join()
            self._starting = None
        if self._client is not None:
            self._client.close()
            self._client = None
        if self._cluster is not None:
            self._cluster.close()
            self._cluster = None

    def map(self, func, items, *, shared=None, desc="tasks", label=str):
        """Run ``func`` on every item; yield ``(item, result)`` in the order tasks finish.

        Parameters
        ----------
        func : callable
            A picklable top-level function ``func(item)``, or ``func(item, shared)`` when
            ``shared`` is given.
        items : iterable
            Plain, picklable task inputs (paths, dicts, small dataclasses).
        shared : object, optional
            One larger object every task needs (master calibrations, a star catalogue); sent to
            each worker once, not once per task.
        desc : str, optional
            Label of the progress bar.
        label : callable, optional
            ``label(item) -> str`` naming an item in the log.

        Yields
        ------
        item, result : object, object or `TaskError`
            A failed task yields a `TaskError` in place of its result; the others go on.
        """
        items = list(items)
        from tqdm.auto import tqdm

        bar = tqdm(total=len(items), desc=desc, unit="task", disable=not self.progress,
                   file=sys.stderr, dynamic_ncols=True, mininterval=0.5)
        failed = 0
        try:
            for item, outcome in self._outcomes(func, items, shared):
                result = self._unpack(item, outcome, label)
                failed += isinstance(result, TaskError)
                bar.update(1)
                if failed:
                    bar.set_postfix_str(f"{failed} failed", refresh=False)
                yield item, result
        finally:
            bar.close()

    def _outcomes(self, func, items, shared):
        if not items:
            return
        if self._client is None and self._starting is None and self.scheduler is None \
                and self.workers == 0:
            for item in items:
                yield item, _guarded(func, item, shared)
            return
        self.open()
        from distributed import as_completed

        client = self._client
        shared_arg = None
        if shared is not None:
            shared_bytes = pickle.dumps(shared, protocol=pickle.HIGHEST_PROTOCOL)
            self.bytes_sent += len(shared_bytes)
            shared_arg = client.scatter(shared_bytes, broadcast=True, hash=False)
        futures = {}
        for index, item in enumerate(items):
            payload = pickle.dumps(item, protocol=pickle.HIGHEST_PROTOCOL)
            self.bytes_sent += len(payload)
            future = client.submit(_remote, func, payload, shared_arg, pure=False,
                                   key=f"photpipe-task-{os.getpid()}-{id(items)}-{index}")
            futures[future.key] = (future, item)
        pending = as_completed([f for f, _ in futures.values()])
        try:
            for future in pending:
                _, item = futures.pop(future.key)
                if future.status == "error":
                    exc = future.exception()
                    outcome = _Outcome(False, kind=type(exc).__name__, message=_dask_message(exc))
                else:
                    result = future.result()
                    self.bytes_received += len(result)
                    outcome = pickle.loads(result)
                future.release()
                yield item, outcome
        finally:
            for future, _ in futures.values():
                future.cancel()

    def _unpack(self, item, outcome, label):
        name = label(item)
        for text in outcome.warnings:
            log.warning("%s: %s", name, text)
        if outcome.pid:
            self.memory_track.setdefault(outcome.pid, []).append(outcome.peak_rss_mb)
            self.task_seconds.append(outcome.seconds)
            self.task_cpu_seconds.append(outcome.cpu_seconds)
        if outcome.ok:
            return outcome.value
        error = TaskError(outcome.kind, outcome.message, details=outcome.details,
                          original=outcome.original)
        log.error("%s: %s", name, error)
        if outcome.details:
            log.debug("%s: worker traceback\n%s", name, outcome.details)
        return error


#: The module every local worker imports as soon as it has started: the frame tasks' stages.
_WARM_MODULE = "photpipe.campaign.tasks"


def _dask_message(exc):
    if type(exc).__name__ == "KilledWorker":
        return ("the worker process died while running this task (it was tried again on "
                "fresh processes and died each time)")
    return str(exc)


def run_tasks(func, items, *, workers=1, scheduler=None, progress=True, desc="tasks",
              shared=None, label=str):
    """Run ``func`` over ``items`` on Dask and yield ``(item, result or TaskError)`` as they end.

    A one-batch shortcut for :class:`TaskRunner`; the processes are started for this batch and
    stopped when the iterator is exhausted or closed.

    Parameters
    ----------
    func : callable
        Picklable top-level function of one item (or of ``item, shared``).
    items : iterable
        Task inputs.
    workers : int, optional
        Local worker processes; ``0`` runs in this process.
    scheduler : str, optional
        Address of an existing Dask scheduler; overrides ``workers``.
    progress : bool, optional
        Show a progress bar.
    desc : str, optional
        Progress-bar label.
    shared : object, optional
        Data every task needs, sent once per worker.
    label : callable, optional
        Names an item in log messages.

    Yields
    ------
    item, result : object, object or `TaskError`

    Examples
    --------
    >>> import math
    >>> out = dict(run_tasks(math.sqrt, [4.0, -1.0], workers=0, progress=False))
    >>> out[4.0], type(out[-1.0]).__name__
    (2.0, 'TaskError')
    """
    with TaskRunner(workers=workers, scheduler=scheduler, progress=progress) as runner:
        yield from runner.map(func, items, shared=shared, desc=desc, label=label)
