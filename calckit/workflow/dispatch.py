"""Sending a batch's cases to an executor and taking them back as they finish, whatever befalls a worker.

:func:`run_jobs` submits each :class:`~calckit.workflow.case_job.CaseJob` as
``executor.submit(build_case, job)`` and hands each
:class:`~calckit.workflow.case_job.BuiltCase` to a callback in the calling
thread, in the order they finish. The executor may be any object whose
``submit`` returns futures with ``add_done_callback`` and ``result``: a
:class:`concurrent.futures.Executor`, or a ``dask.distributed.Client`` (whose
futures have both). A future that fails (the worker died, the job could not be
sent) becomes a failed case with the reason; the others go on.

Without an executor the cases run in a process pool of our own (processes
started by *spawn*, each dying with the batch, see
:func:`calckit.workflow.kernels.die_with_parent`). A worker that dies (killed,
out of memory) breaks such a pool, and every case not finished fails with it;
so the pool is started again for the cases that had not started, and the ones
that may have been running when it broke (the earliest unfinished, in the order
they were sent: the pool takes them in that order) are run again one at a time,
each in a pool of one worker. A case that kills that worker too is the one that
killed it: it is marked failed, saying that its worker died, and the batch goes on.
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import multiprocessing
import os
import queue
import signal
from collections.abc import Callable, Sequence
from typing import Any

from calckit.workflow.case_job import BuiltCase, CaseJob, build_case
from calckit.workflow.kernels import die_with_parent

__all__ = ["run_jobs", "WORKER_DIED"]

#: The message of a case whose worker process died while it was being built.
WORKER_DIED = (
    "the worker process building this case died ({how}); it was run again alone and died again, so this "
    "case is what ends it (a crash or a memory blow-up in the template?); the other cases went on"
)


def run_jobs(
    jobs: Sequence[CaseJob],
    on_done: Callable[[BuiltCase], None],
    *,
    executor: Any = None,
    workers: int = 1,
) -> None:
    """Build every job on *executor* (None: a process pool of *workers*); *on_done* for each as it finishes."""
    if executor is None:
        _own_pool(list(jobs), workers, on_done)
    else:
        _given_executor(list(jobs), executor, on_done)


def _failed(job: CaseJob, exc: BaseException) -> BuiltCase:
    text = " ".join(str(exc).split()) or "no message"
    return BuiltCase(job.name, False, f"the worker failed: {type(exc).__name__}: {text}")


def _given_executor(jobs: list[CaseJob], executor: Any, on_done: Callable[[BuiltCase], None]) -> None:
    finished: queue.Queue = queue.Queue()
    pending: dict[
        int, Any
    ] = {}  # a future is let go once its case is taken back (dask then frees its result)
    try:
        for job in jobs:
            future = executor.submit(build_case, job)
            pending[id(future)] = future
            future.add_done_callback(lambda f, job=job: finished.put((job, f)))
        future = None
        for _ in jobs:
            job, future = finished.get()
            pending.pop(id(future), None)
            try:
                built = future.result()
            except BaseException as exc:  # the worker died, or the job could not be sent or taken back
                if isinstance(exc, KeyboardInterrupt):
                    raise
                built = _failed(job, exc)
            future = None
            on_done(built)
    except BaseException:  # Ctrl-C, or the batch broke: what has not run is not run
        for future in list(pending.values()):
            with contextlib.suppress(Exception):
                future.cancel()
        raise


def _own_pool(jobs: list[CaseJob], workers: int, on_done: Callable[[BuiltCase], None]) -> None:
    waiting = list(jobs)
    suspects: list[CaseJob] = []
    while waiting or suspects:
        alone = bool(suspects)
        run = [suspects.pop(0)] if alone else waiting
        if not alone:
            waiting = []
        size = 1 if alone else max(1, min(workers, len(run)))
        unfinished, how = _pool_round(run, size, on_done)
        if not unfinished:
            continue
        if alone:
            on_done(BuiltCase(run[0].name, False, WORKER_DIED.format(how=how)))
            continue
        # the pool takes jobs in the order they were sent: the earliest unfinished may have been running
        suspects += unfinished[: size + 1]
        waiting = unfinished[size + 1 :] + waiting


def _pool_round(
    jobs: list[CaseJob], size: int, on_done: Callable[[BuiltCase], None]
) -> tuple[list[CaseJob], str]:
    """Run *jobs* in a new pool; the jobs left unfinished when a worker died, and how it died."""
    pool = cf.ProcessPoolExecutor(
        max_workers=size,
        mp_context=multiprocessing.get_context("spawn"),
        initializer=die_with_parent,  # a batch killed takes its workers, and their kernels, with it
        initargs=(os.getpid(),),
    )
    unfinished: list[CaseJob] = []
    how = "no exit status known"
    try:
        futures = {pool.submit(build_case, job): index for index, job in enumerate(jobs)}
        processes = dict(getattr(pool, "_processes", None) or {})  # kept: a broken pool forgets them
        broken: dict[int, BaseException] = {}
        for future in cf.as_completed(futures):
            index = futures[future]
            try:
                built = future.result()
            except cf.process.BrokenProcessPool as exc:
                broken[index] = exc
                how = _how_it_died(processes) or how
                continue
            except Exception as exc:  # the job could not be sent or taken back (not picklable ...)
                built = _failed(jobs[index], exc)
            on_done(built)
        unfinished = [jobs[index] for index in sorted(broken)]
    except BaseException:  # Ctrl-C, or the batch itself broke: end the workers now, not after their cases
        _end_workers(pool)
        raise
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    return unfinished, how


def _how_it_died(processes: dict) -> str:
    """How a dead worker ended: ``killed by SIGKILL``, ``exit code 1`` (not the others, ended by the pool)."""
    for process in processes.values():
        with contextlib.suppress(Exception):
            process.join(timeout=5)  # the pool ends the others once one died
    codes = [p.exitcode for p in processes.values()]
    codes = [c for c in codes if c not in (None, 0, -signal.SIGTERM)]
    if not codes:
        return ""
    code = codes[0]
    if code < 0:
        with contextlib.suppress(ValueError):
            return f"killed by {signal.Signals(-code).name}"
        return f"killed by signal {-code}"
    return f"exit code {code}"


def _end_workers(pool: cf.ProcessPoolExecutor) -> None:
    """Kill the pool's worker processes (their kernels die with them, see :func:`die_with_parent`)."""
    for process in list((getattr(pool, "_processes", None) or {}).values()):
        with contextlib.suppress(Exception):
            process.kill()
    pool.shutdown(wait=False, cancel_futures=True)
