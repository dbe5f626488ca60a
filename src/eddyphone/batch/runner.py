"""Running the analyses: a local process pool or a Dask distributed cluster.

The main process hashes the inputs, skips what the store already holds, hands
the rest to workers and stores each result as it arrives; workers only read
recordings and return plain dictionaries, so a cluster needs the recordings on
a shared path and eddyphone installed, but never sees the output folder.

Public API
----------
analyse_task(task) -> dict          the work of one recording (runs in a worker)
run_local(tasks, workers, on_result)
run_cluster(tasks, scheduler, on_result)
Progress(total, stream)
"""

from __future__ import annotations

import functools
import os
import sys
import time
from collections.abc import Callable, Mapping, Sequence
from typing import Any, TextIO

#: Thread-count variables set to 1 in every worker: the pool already uses
#: every core, and nested threads would only compete for them.
_THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
                     "NUMEXPR_NUM_THREADS", "VECLIB_MAXIMUM_THREADS")
#: Pool passes (each ended early by a worker that died) before the remaining
#: tasks run one at a time, each in a process of its own.
_MAX_POOL_BREAKS = 2


def analyse_task(task: Mapping[str, Any]) -> dict[str, Any]:
    """Analyse one recording and return its record (never raises).

    Parameters
    ----------
    task : mapping
        ``key``, ``path``, ``load`` (patient/site/posture), ``context``,
        ``extra`` (metadata), ``config`` (a :class:`~eddyphone.config.Config`),
        ``want_json`` and ``code_digest`` (the batch's; None: this process's own).

    Returns
    -------
    dict
        ``status`` 'ok' with ``features``, ``beats`` (``findings`` when the recording
        has a patient; ``analysis`` when ``want_json``), or 'error' with a one-line
        ``error`` and ``cacheable`` (True for problems of the input itself, which a
        re-run would meet again).
    """
    start, cpu_start = time.perf_counter(), time.process_time()
    record: dict[str, Any] = {"key": task["key"], "path": task["path"]}
    try:
        data = _analyse(task)
    except Exception as exc:  # noqa: BLE001 - isolate every failure to its file
        from eddyphone.errors import EddyphoneError

        record.update(status="error", error=_reason(exc),
                      cacheable=isinstance(exc, EddyphoneError))
    else:
        from eddyphone.batch.features import beat_rows, recording_row
        code = task.get("code_digest") or _worker_code_digest()
        features = {}
        for name, value in recording_row(data).items():
            features[name] = value
            if name == "eddyphone_version":
                features["code_digest"] = code
        record.update(status="ok", features=features, beats=beat_rows(data))
        if data["recording"].get("patient"):
            # what the patient table needs: every finding, not only the main murmur
            record["findings"] = {"list": data["findings"],
                                  "presence": data["summary"]["murmur"],
                                  "reason": data["summary"].get("murmur_reason") or ""}
        if task.get("want_json"):
            record["analysis"] = data
    record["elapsed_s"] = round(time.perf_counter() - start, 4)
    record["cpu_s"] = round(time.process_time() - cpu_start, 4)
    record["worker"] = f"{_hostname()}:{os.getpid()}"
    record["peak_rss_mb"] = _peak_rss_mb()
    return record


@functools.lru_cache(maxsize=1)
def _worker_code_digest() -> str:
    """The code digest of a cluster worker's own installation, read once per process."""
    from eddyphone.batch.store import code_digest

    return code_digest()


def _analyse(task: Mapping[str, Any]) -> dict[str, Any]:
    from eddyphone.context import KNOWN_SITES, PatientContext
    from eddyphone.errors import InputError, ParameterError
    from eddyphone.io import load
    from eddyphone.pipeline import analyze

    load_options = dict(task.get("load") or {})
    extra = dict(task.get("extra") or {})
    segments = extra.pop("segments", None)  # a given segmentation (manifest column)
    rec = load(task["path"], site=load_options.get("site"),
               posture=load_options.get("posture"), patient=load_options.get("patient"),
               metadata=extra or None)
    site = rec.site if rec.site in KNOWN_SITES else (None if rec.site is None else "other")
    try:
        context = PatientContext.from_mapping({**dict(task.get("context") or {}), "site": site})
    except ParameterError as exc:
        raise InputError(task["path"], f"patient context: {exc}",
                         "correct the manifest column and run again") from None
    segmentation = None
    if segments is not None:
        from eddyphone.evaluate import read_annotation
        from eddyphone.segment.given import segmentation_from_intervals

        segmentation = segmentation_from_intervals(
            read_annotation(segments, task.get("segment_labels")), rec.duration_s,
            source=segments)
    return analyze(rec, context=context, config=task["config"],
                   segmentation=segmentation).to_dict()


def _reason(exc: BaseException) -> str:
    """One line: the problem and the remedy (the path is in its own column)."""
    problem = getattr(exc, "problem", None)
    if problem is not None:
        text = f"{problem}; {getattr(exc, 'remedy', '')}".rstrip("; ")
    elif type(exc).__module__.startswith("eddyphone"):
        text = str(exc)
    else:
        text = f"internal error ({type(exc).__name__}: {exc}); report it with the file"
    return " ".join(text.split())


def _hostname() -> str:
    import socket

    return socket.gethostname()


def _peak_rss_mb() -> float | None:
    try:
        import resource
    except ImportError:  # not POSIX
        return None
    kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return round(kib / (1024.0 * 1024.0) if sys.platform == "darwin" else kib / 1024.0, 1)


def _init_worker() -> None:
    for name in _THREAD_VARIABLES:
        os.environ[name] = "1"
    _exit_with_parent()
    try:  # libraries already loaded (fork) take the limit only through their own calls
        from threadpoolctl import threadpool_limits
    except ImportError:
        return
    threadpool_limits(1)


def _exit_with_parent(poll_s: float = 0.5) -> None:
    """End this worker soon after the batch process dies (``kill -9`` leaves it orphaned,
    waiting for work that will never come)."""
    import threading

    parent = os.getppid()

    def watch() -> None:
        while True:
            time.sleep(poll_s)
            if os.getppid() != parent:
                os._exit(1)

    threading.Thread(target=watch, name="eddyphone-parent-watch", daemon=True).start()


#: Modules imported before forking, so that every worker starts with them loaded.
_PRELOAD = ("eddyphone.io", "eddyphone.pipeline", "eddyphone.segment", "eddyphone.findings",
            "eddyphone.explain")


def _start_method():
    """On Linux, ``fork`` from a single-threaded process with the stages preloaded;
    ``spawn`` otherwise.

    Forking is only safe while no other thread runs (a lock held by another thread
    would stay locked in the child); a notebook kernel or a process hosting a Dask
    client has such threads, and gets fresh interpreters instead.
    """
    import contextlib
    import importlib
    import multiprocessing
    import threading

    if not sys.platform.startswith("linux") or threading.active_count() > 1:
        # macOS system libraries are not fork-safe; Windows has no fork
        return multiprocessing.get_context("spawn")
    for name in _PRELOAD:
        with contextlib.suppress(ImportError):  # a stage not built: the pipeline copes
            importlib.import_module(name)
    return multiprocessing.get_context("fork")


OnResult = Callable[[dict[str, Any]], None]


def run_local(tasks: Sequence[Mapping[str, Any]], workers: int, on_result: OnResult) -> None:
    """Run ``tasks`` on ``workers`` local processes, calling ``on_result`` as each ends.

    A worker that dies (out of memory, a crash inside a library) breaks the pool;
    the unfinished tasks are resubmitted to a fresh pool. After two breaks the
    remaining tasks run one at a time, each in its own process, so the file that
    kills its worker is found and reported as failed while the rest complete.
    """
    pending = list(tasks)
    for _ in range(_MAX_POOL_BREAKS):
        pending = _pool_pass(pending, workers, on_result)
        if not pending:
            return
    for task in pending:
        if _pool_pass([task], 1, on_result):
            on_result({"key": task["key"], "path": task["path"], "status": "error",
                       "error": "the worker process died while analysing this file "
                                "(out of memory, or a crash in a decoder); analyse it alone "
                                "with 'eddyphone analyze' to see why", "cacheable": False})


def _pool_pass(tasks: Sequence[Mapping[str, Any]], workers: int,
               on_result: OnResult) -> list[Mapping[str, Any]]:
    """Run tasks on one pool; return those left unfinished because the pool broke."""
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    context = _start_method()
    unfinished: list[Mapping[str, Any]] = []
    pool = ProcessPoolExecutor(max_workers=max(1, min(workers, len(tasks))),
                               mp_context=context, initializer=_init_worker)
    try:
        futures = {pool.submit(analyse_task, t): t for t in tasks}
        for future in as_completed(futures):
            try:
                record = future.result()
            except BrokenProcessPool:
                unfinished.append(futures[future])
                continue
            on_result(record)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    order = {id(t): i for i, t in enumerate(tasks)}
    return sorted(unfinished, key=lambda t: order[id(t)])


def run_cluster(tasks: Sequence[Mapping[str, Any]], scheduler: str,
                on_result: OnResult) -> None:
    """Run ``tasks`` on the Dask distributed cluster at ``scheduler`` (e.g. ``tcp://host:8786``).

    Raises
    ------
    InputError
        Dask distributed is not installed, or the scheduler cannot be reached.
    """
    from eddyphone.errors import InputError

    try:
        from distributed import Client, as_completed
    except ImportError:
        raise InputError(None, "--scheduler needs the Dask distributed package",
                         "install eddyphone with its 'cluster' extra") from None
    _check_reachable(scheduler)
    try:
        client = Client(scheduler, timeout="20s", set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise InputError(scheduler, f"cannot reach the Dask scheduler ({exc})",
                         "check the address (tcp://host:port) and that the scheduler runs"
                         ) from None
    try:
        # each worker reports the code digest of its own installation
        tasks = [{**t, "code_digest": None} for t in tasks]
        futures = client.map(analyse_task, tasks, pure=False,
                             key=[f"eddyphone-{t['key']}" for t in tasks])
        by_key = {f.key: t for f, t in zip(futures, tasks)}
        for future in as_completed(futures, loop=client.loop):
            task = by_key[future.key]
            try:
                record = future.result()
            except Exception as exc:  # noqa: BLE001 - a worker died or could not import
                record = {"key": task["key"], "path": task["path"], "status": "error",
                          "error": f"the cluster could not run this task "
                                   f"({type(exc).__name__}: {' '.join(str(exc).split())}); "
                                   "check that the workers have eddyphone installed and "
                                   "can read the file", "cacheable": False}
            on_result(record)
            future.release()
    finally:
        client.close()


def _check_reachable(scheduler: str) -> None:
    """Fail at once on a refused ``tcp://host:port`` instead of retrying until a timeout."""
    import socket
    from urllib.parse import urlsplit

    from eddyphone.errors import InputError

    parts = urlsplit(scheduler if "://" in scheduler else f"tcp://{scheduler}")
    if parts.scheme != "tcp" or not parts.hostname or not parts.port:
        return  # other transports: let the client judge
    try:
        socket.create_connection((parts.hostname, parts.port), timeout=5.0).close()
    except OSError as exc:
        raise InputError(scheduler, f"cannot reach the Dask scheduler ({exc.strerror or exc})",
                         "check the address (tcp://host:port) and that the scheduler runs"
                         ) from None


class Progress:
    """Progress line on ``stream``: count, failures, rate and time left.

    On a terminal the line is redrawn in place (at most ten times a second);
    otherwise a line is printed at every tenth of the work or every 30 s.
    """

    def __init__(self, total: int, stream: TextIO | None = None, *,
                 enabled: bool = True) -> None:
        self.total = total
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = enabled and total > 0
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.done = self.failed = 0
        self.start = time.monotonic()
        self._last_draw = 0.0
        self._last_tenth = 0

    def update(self, failed: bool = False) -> None:
        """Count one more recording finished."""
        self.done += 1
        self.failed += int(failed)
        if not self.enabled:
            return
        now = time.monotonic()
        tenth = self.done * 10 // self.total
        if self.tty and (now - self._last_draw >= 0.1 or self.done == self.total):
            self.stream.write("\r" + self.line() + "\x1b[K")
            self.stream.flush()
            self._last_draw = now
        elif not self.tty and (tenth > self._last_tenth or now - self._last_draw >= 30.0):
            self.stream.write(self.line() + "\n")
            self.stream.flush()
            self._last_draw, self._last_tenth = now, tenth

    def close(self) -> None:
        """End the progress line."""
        if self.enabled and self.tty:
            self.stream.write("\n")
            self.stream.flush()

    def line(self) -> str:
        """The current progress text."""
        elapsed = time.monotonic() - self.start
        rate = self.done / elapsed if elapsed > 0 else 0.0
        left = (self.total - self.done) / rate if rate > 0 else None
        width = 24
        filled = int(width * self.done / self.total) if self.total else width
        bar = "#" * filled + "." * (width - filled)
        failed = f", {self.failed} failed" if self.failed else ""
        return (f"[{bar}] {self.done}/{self.total}{failed}  {rate:.2f} rec/s  "
                f"{_clock(left)} left")


def _clock(seconds: float | None) -> str:
    if seconds is None:
        return "--:--"
    seconds = int(round(seconds))
    h, rest = divmod(seconds, 3600)
    m, s = divmod(rest, 60)
    return f"{h}:{m:02d}:{s:02d}" if h else f"{m:02d}:{s:02d}"
