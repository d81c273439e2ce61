"""Independent pieces of work shared out to worker processes, their results taken in order.

A comparison's pages are laid out and written each on its own (see
:func:`tea.outputs.report.render_comparison`), so they can be made side by
side on a machine's cores (:func:`each`); one page's charts are drawn while
the PDF engine starts (:func:`meanwhile`). The workers are forked from the running process:
they start with its imports and its data (cases, ledgers, results) and are
handed only the number of the piece to do; what they return comes back
pickled, in the order of the pieces whatever order they finish in.

How many: the processor cores this process may run on, at most
:data:`MOST_BY_DEFAULT` (each worker holds its own laid-out pages) and at
most one per piece, or ``TEA_JOBS`` from the environment (``TEA_JOBS=1``:
everything in this process). Where processes cannot be forked (not Linux), everything runs
in this process. The result never depends on the number of workers.
"""

from __future__ import annotations

import contextlib
import os
import sys
from typing import Callable, Iterator, TypeVar

from tea.core.errors import OutputError

T = TypeVar("T")

#: the environment variable that sets the number of worker processes
JOBS_VARIABLE = "TEA_JOBS"

#: workers at most unless TEA_JOBS asks for more: each takes some 150-250 MB
MOST_BY_DEFAULT = 8

_work: Callable[[int], object] | None = None


def available() -> int:
    """Worker processes to use: ``TEA_JOBS`` if set, else the cores this process may run on (at most
    :data:`MOST_BY_DEFAULT`)."""
    given = os.environ.get(JOBS_VARIABLE, "").strip()
    if given:
        if not given.isdigit() or int(given) < 1:
            raise OutputError(f"{JOBS_VARIABLE}: expected a whole number of worker processes (1 or more), "
                              f"got {given[:20]!r}")
        return int(given)
    try:
        cores = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        cores = os.cpu_count() or 1
    return max(1, min(cores, MOST_BY_DEFAULT))


def each(count: int, work: Callable[[int], T]) -> Iterator[T]:
    """``work(0)``, ..., ``work(count - 1)``, in that order, made in worker processes when more than one is
    available; a piece that raises ends the whole with its exception (the workers are stopped)."""
    jobs = min(available(), count)
    if jobs <= 1 or not sys.platform.startswith("linux"):
        for i in range(count):
            yield work(i)
        return
    import multiprocessing

    global _work
    _work = work  # the forked workers see it; only the piece's number travels
    try:
        with multiprocessing.get_context("fork").Pool(jobs, initializer=_settle) as pool:
            yield from pool.imap(_call, range(count))
    finally:
        _work = None


@contextlib.contextmanager
def meanwhile(work: Callable[[], T]) -> Iterator[Callable[[], T]]:
    """``work()`` made in a worker process while this one goes on; the context gives a function that waits
    for the result (and raises the exception ``work`` raised).

    In this process, when the result is asked for, if fewer than two workers
    are available, processes cannot be forked, or the worker ended without
    an answer (killed, out of memory).
    """
    if available() <= 1 or not sys.platform.startswith("linux"):
        yield work
        return
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    global _work
    _work = lambda _i: work()  # noqa: E731 - the worker forked at submit sees it
    try:
        with ProcessPoolExecutor(1, mp_context=multiprocessing.get_context("fork"), initializer=_settle) as pool:
            pending = pool.submit(_call, 0)
            _work = None  # forked already: this process needs it no more

            def result() -> T:
                try:
                    return pending.result()
                except BrokenProcessPool:
                    return work()

            yield result
    finally:
        _work = None


def _settle() -> None:
    """In a new worker: what it inherited (modules, cases, ledgers) is moved out of the garbage collector's
    sight, so that no collection scans it again or writes to its pages (which it would then stop sharing
    with the parent)."""
    import gc

    gc.freeze()


def _call(i: int):
    assert _work is not None
    return _work(i)
