"""Worker processes for site runs: each entry on its own, a time limit per entry, gone with the parent.

:func:`run_all` runs ``fn(job)`` for every job and returns the results in order. The rules:

* **Imports before forking.** The parent imports what the entries need (numpy, pandas, matplotlib and
  the project's modules) and draws one throw-away figure before it forks, so no worker pays for the
  imports or the first figure again; workers are forked from it (``fork`` start method).
* **As many workers as pay off:** ``min(--workers, entries, usable cores)``; one entry or one usable
  core gives one worker, which runs the entries one after another (a serial run).
* **A time limit per entry** (``time_limit_s``): an entry still running at its limit has its worker
  killed; the entry is recorded as failed and a fresh worker takes the next entries. A worker that
  dies (out of memory, killed) fails its entry only.
* **Workers end with the parent.** On Linux each worker asks the kernel for SIGKILL when its parent
  dies (``PR_SET_PDEATHSIG``), so even ``kill -9`` of the parent takes the workers with it; a SIGINT
  or SIGTERM to the parent (an :class:`~deembed.base.signals.Interrupted`) kills them before it
  propagates. Workers ignore SIGINT: a Ctrl-C at the terminal reaches the whole process group, and
  the parent decides.

Where ``fork`` does not exist (Windows) the entries run one after another in the calling process,
without a hard time limit.
"""
from __future__ import annotations

import os
import re
import signal
import time
from collections import deque

from ..base.errors import OptionError
from ..base.units import no_unit

PRELOAD = ("numpy", "pandas", "matplotlib", "matplotlib.figure", "matplotlib.backends.backend_agg", "scipy.optimize")


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system tells it, else the CPU count)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


def plan_workers(requested: int, entries: int) -> int:
    """How many worker processes to run: never more than entries or usable cores, at least one."""
    return max(1, min(int(requested), int(entries), usable_cores()))


def can_fork() -> bool:
    import multiprocessing as mp

    return "fork" in mp.get_all_start_methods()


def preload(modules=PRELOAD, extra=()) -> None:
    """Import ``modules`` (skipping any that is missing) and draw one figure, in this process."""
    import importlib

    for name in (*modules, *extra):
        try:
            importlib.import_module(name)
        except ImportError:  # pragma: no cover - an optional speed-up only
            pass
    try:
        import io

        from matplotlib.figure import Figure

        fig = Figure(figsize=(1, 1))
        ax = fig.add_subplot()
        ax.plot([0, 1], [0, 1], label="x")
        ax.legend()
        fig.savefig(io.BytesIO(), format="png", dpi=20)
    except Exception:  # pragma: no cover - the warm-up is a speed-up only
        pass


def _die_with_parent(parent_pid: int) -> None:
    """Ask Linux to SIGKILL this process when its parent ends; end now if the parent is already gone."""
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        PR_SET_PDEATHSIG = 1
        libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    except Exception:  # pragma: no cover - not Linux: the parent's own clean-up still kills workers
        pass
    if os.getppid() != parent_pid:
        os._exit(1)


def _worker(conn, jobs, fn, parent_pid: int) -> None:
    _die_with_parent(parent_pid)
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for s in ("SIGTERM", "SIGHUP"):
        if hasattr(signal, s):
            signal.signal(getattr(signal, s), signal.SIG_DFL)
    while True:
        try:
            i = conn.recv()
        except (EOFError, OSError):
            break
        if i is None:
            break
        result = fn(jobs[i])
        try:
            conn.send((i, result))
        except (BrokenPipeError, OSError):
            break
    conn.close()


class _Worker:
    def __init__(self, ctx, jobs, fn):
        parent, child = ctx.Pipe(duplex=True)
        self.conn = parent
        self.proc = ctx.Process(target=_worker, args=(child, jobs, fn, os.getpid()), daemon=True)
        self.proc.start()
        child.close()
        self.job = None
        self.deadline = None

    def give(self, i: int, limit_s: float | None) -> None:
        self.job = i
        self.deadline = None if limit_s is None else time.monotonic() + limit_s
        self.conn.send(i)

    def kill(self) -> None:
        if self.proc.is_alive():
            self.proc.kill()
        self.proc.join(5)
        self.conn.close()

    def stop(self) -> None:
        try:
            self.conn.send(None)
        except (BrokenPipeError, OSError):
            pass
        self.proc.join(5)
        if self.proc.is_alive():  # pragma: no cover
            self.proc.kill()
            self.proc.join(5)
        self.conn.close()


def run_all(jobs, fn, *, workers: int, time_limit_s: float | None, on_failure, progress=None) -> list:
    """``[fn(job) for job in jobs]``, computed on worker processes (see the module).

    Parameters
    ----------
    jobs : sequence
        The entries; ``fn(job)`` must not raise (it records its own errors in its result).
    fn : callable
        Runs one entry and returns a picklable result.
    workers : int
        Processes wanted (``--workers``); see :func:`plan_workers` for how many run.
    time_limit_s : float or None
        Limit per entry in seconds; ``None`` for none.
    on_failure : callable
        ``on_failure(job, message)`` gives the result recorded for an entry that ran out of time or
        whose worker died.
    progress : callable, optional
        ``progress(done, total, result)`` after each entry, in the parent.
    """
    jobs = list(jobs)
    total = len(jobs)
    results = [None] * total
    if total == 0:
        return results
    done = 0

    def finish(i, res):
        nonlocal done
        results[i] = res
        done += 1
        if progress:
            progress(done, total, res)

    if not can_fork():  # pragma: no cover - Windows: one after another, here
        for i, job in enumerate(jobs):
            finish(i, fn(job))
        return results

    import multiprocessing as mp
    from multiprocessing.connection import wait

    ctx = mp.get_context("fork")
    n = plan_workers(workers, total)
    pending = deque(range(total))
    pool: list[_Worker] = []
    limit_text = _fmt_seconds(time_limit_s) if time_limit_s else ""
    try:
        def start_one():
            w = _Worker(ctx, jobs, fn)
            pool.append(w)
            if pending:
                w.give(pending.popleft(), time_limit_s)
            return w

        for _ in range(n):
            start_one()
        while any(w.job is not None for w in pool):
            busy = [w for w in pool if w.job is not None]
            deadlines = [w.deadline for w in busy if w.deadline is not None]
            timeout = max(0.0, min(deadlines) - time.monotonic()) if deadlines else None
            ready = set(wait([w.conn for w in busy] + [w.proc.sentinel for w in busy], timeout))
            for w in busy:
                if w.conn in ready:
                    try:
                        i, res = w.conn.recv()
                    except (EOFError, OSError):
                        continue  # died: handled below through its sentinel
                    w.job = None
                    finish(i, res)
                    if pending:
                        w.give(pending.popleft(), time_limit_s)
            now = time.monotonic()
            for w in list(pool):
                if w.job is None:
                    continue
                died = w.proc.sentinel in ready and not w.proc.is_alive()
                late = w.deadline is not None and now >= w.deadline
                if not (died or late):
                    continue
                i = w.job
                w.kill()
                pool.remove(w)
                if late and not died:
                    msg = (f"still running after the time limit of {limit_text}; stopped (raise the limit with "
                           "--time-limit if this entry's sweeps are very large)")
                else:
                    code = w.proc.exitcode
                    how = f"killed by signal {-code}" if code is not None and code < 0 else f"exit status {code}"
                    msg = f"the worker process ended unexpectedly ({how}: out of memory?)"
                finish(i, on_failure(jobs[i], msg))
                if pending:
                    start_one()
        for w in pool:
            w.stop()
        pool.clear()
    finally:
        for w in pool:  # an interruption, or an error in the parent: no worker outlives the run
            w.kill()
    return results


def _fmt_seconds(s: float) -> str:
    return f"{s / 60:g} min" if s >= 120 and s % 60 == 0 else f"{s:g} s"


DURATION_UNITS = {"s": 1.0, "sec": 1.0, "min": 60.0, "m": 60.0, "h": 3600.0}
"""Units of a time limit: seconds, minutes, hours (``m`` is read as minutes too, as it always was here)."""
DURATION_EXAMPLE = "90s or 10min"
NO_LIMIT = "none"
"""The word for no time limit (``--time-limit none``)."""
MAX_DURATION_S = 7 * 86400


def parse_duration(text: str, where: str = "time_limit") -> float | None:
    """Seconds from ``"90s"``, ``"10min"``, ``"1.5h"``; ``"none"`` for no limit (None).

    A unit is required: a bare number gets the hint every quantity gives for one
    (:func:`deembed.base.units.no_unit`), and zero is refused (no limit is ``none``, said in words). ``where``
    names the field in the message (``time_limit``)."""
    t = str(text).strip().lower()
    if t in (NO_LIMIT, "off"):
        return None
    m = re.fullmatch(r"([0-9]+(?:\.[0-9]*)?|\.[0-9]+)\s*([a-z]*)", t)
    if not m:
        raise OptionError(where, f"{text!r} is not a duration; write it like {DURATION_EXAMPLE}, or {NO_LIMIT} for "
                                 "no limit")
    if not m.group(2):
        raise no_unit(text, where, f"{DURATION_EXAMPLE} ({NO_LIMIT} for no limit)")
    if m.group(2) not in DURATION_UNITS:
        raise OptionError(where, f"unknown unit {m.group(2)!r} in {text!r}; use s, min or h (e.g. {DURATION_EXAMPLE})")
    v = float(m.group(1)) * DURATION_UNITS[m.group(2)]
    if not (1 <= v <= MAX_DURATION_S):
        raise OptionError(where, f"{text!r}: give a time limit from 1s up to a week, or {NO_LIMIT} for no limit")
    return v

