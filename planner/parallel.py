"""Worker processes for the plan's independent pieces, and what each stage cost.

The per-site stages (site models, designs, pack spread) are pure functions of a list of
site rows, and the re-solves around a plan are pure functions of a fleet problem, so
they map over a process pool unchanged (a distributed map could take the same
functions). Workers start with the *spawn* method: a fork after a numba
``parallel=True`` kernel has run in the parent aborts under GNU OpenMP ("fork() called
from a process already using GNU OpenMP"). Each worker runs one numba (and BLAS/OpenMP)
thread, so N workers use N cores. Results come back in submission order, so they do
not depend on the number of workers.

:class:`StageLog` records wall time, CPU time (parent plus workers) and peak resident
memory (parent plus every worker's peak) per stage, for the benchmarks.
"""

from __future__ import annotations

import copyreg
import multiprocessing
import os
import resource
import signal
import sys
import time
import types
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass, field


def _read_only(mapping: dict) -> types.MappingProxyType:
    return types.MappingProxyType(mapping)


# Studies hold read-only mappings; they travel to workers as plain dicts, re-wrapped there.
copyreg.pickle(types.MappingProxyType, lambda m: (_read_only, (dict(m),)))

# One thread per worker for every threaded library a worker loads (read at load time).
_ONE_THREAD = {"NUMBA_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
               "MKL_NUM_THREADS": "1"}


def default_workers() -> int:
    """All cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def _peak_rss_bytes() -> int:
    # ru_maxrss is in kilobytes on Linux, bytes on macOS
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return int(peak if sys.platform == "darwin" else peak * 1024)


def _init_worker():
    # Ctrl-C reaches the whole process group: the planner's own process answers it and
    # ends the workers, which would otherwise each print a traceback.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        import numba

        numba.set_num_threads(1)
    except ImportError:  # numba is optional for the numpy engines
        pass


def _run_task(fn, arg):
    """Run one task in a worker; returns (result, pid, cpu seconds, peak RSS bytes)."""
    cpu0 = time.process_time()
    result = fn(arg)
    return result, os.getpid(), time.process_time() - cpu0, _peak_rss_bytes()


@dataclass
class StageRecord:
    """What one stage cost: wall and CPU seconds, peak memory so far (bytes)."""

    wall_s: float = 0.0
    cpu_s: float = 0.0
    peak_rss_bytes: int = 0


@dataclass
class StageLog:
    """Per-stage wall, CPU and peak memory of a run, workers included."""

    stages: dict = field(default_factory=dict)
    worker_peak: dict = field(default_factory=dict)
    _worker_cpu: float = 0.0

    def add_worker(self, pid: int, cpu_s: float, peak_rss_bytes: int) -> None:
        self._worker_cpu += cpu_s
        self.worker_peak[pid] = max(self.worker_peak.get(pid, 0), peak_rss_bytes)

    def peak_rss_bytes(self) -> int:
        """Peak resident memory of the parent plus each worker's own peak."""
        return _peak_rss_bytes() + sum(self.worker_peak.values())

    @contextmanager
    def stage(self, name: str):
        wall0, cpu0, wcpu0 = time.perf_counter(), time.process_time(), self._worker_cpu
        try:
            yield
        finally:
            rec = self.stages.setdefault(name, StageRecord())
            rec.wall_s += time.perf_counter() - wall0
            rec.cpu_s += time.process_time() - cpu0 + self._worker_cpu - wcpu0
            rec.peak_rss_bytes = self.peak_rss_bytes()


class Workers:
    """``map(fn, items)`` in this process (1 worker) or over a spawn process pool.

    ``submit``/``gather`` run pieces in the background while the parent works on
    something else (e.g. the next stage's sites while the fleet is solved).
    """

    def __init__(self, workers: int = 1, log: StageLog | None = None):
        self.workers = max(1, int(workers))
        self.log = log if log is not None else StageLog()
        self._pool = None
        self._saved_env = {}

    def __enter__(self):
        return self

    def __exit__(self, exc_type, *exc):
        self.close(abandon=exc_type is not None)
        return False

    def close(self, abandon: bool = False):
        """Stop the workers; ``abandon`` (an error or an interrupt) ends their running
        pieces at once instead of waiting for them."""
        if self._pool is not None:
            if abandon:
                # the pool's own processes, started by this object (no public API for it)
                for process in list(getattr(self._pool, "_processes", {}).values()):
                    process.terminate()
            self._pool.shutdown(wait=not abandon, cancel_futures=True)
            self._pool = None
            for k, v in self._saved_env.items():
                if v is None:
                    os.environ.pop(k, None)
                else:
                    os.environ[k] = v

    def _executor(self):
        if self._pool is None:
            # Inherited by the workers as they start (on demand); restored on close.
            self._saved_env = {k: os.environ.get(k) for k in _ONE_THREAD}
            os.environ.update(_ONE_THREAD)
            self._pool = ProcessPoolExecutor(
                max_workers=self.workers, mp_context=multiprocessing.get_context("spawn"),
                initializer=_init_worker)
        return self._pool

    def submit(self, fn, items):
        """Start ``fn`` on every item; returns a handle for :meth:`gather`."""
        items = list(items)
        if self.workers == 1:
            return ("lazy", fn, items)
        pool = self._executor()
        return ("futures", [pool.submit(_run_task, fn, x) for x in items])

    def gather(self, handle, progress=None):
        """Results of a :meth:`submit`, in item order; ``progress(item_result)`` after each."""
        out = []
        if handle[0] == "lazy":
            _, fn, items = handle
            for x in items:
                out.append(fn(x))
                if progress:
                    progress(out[-1])
            return out
        for fut in handle[1]:
            result, pid, cpu_s, peak = fut.result()
            self.log.add_worker(pid, cpu_s, peak)
            out.append(result)
            if progress:
                progress(result)
        return out

    def map(self, fn, items, progress=None):
        return self.gather(self.submit(fn, items), progress)
