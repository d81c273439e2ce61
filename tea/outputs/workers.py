"""Independent pieces of work shared out to worker processes, their results taken in order.

A comparison's pages are laid out and written each on its own (see
:func:`tea.outputs.report.render_comparison`), so they can be made side by
side on a machine's cores (:func:`each`); one page's charts are drawn while
the PDF engine starts (:func:`meanwhile`, :func:`elsewhere`). A worker can also be started
before its work is known (:func:`stand_by`): for one page the command line starts one that
loads the chart library while this process loads the model and computes the case. The
workers are forked from the running process:
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


class _Standby:
    """One worker process forked now, which imports modules and then waits for one piece of work."""

    def __init__(self, modules: tuple[str, ...]):
        import multiprocessing

        context = multiprocessing.get_context("fork")
        self.conn, theirs = context.Pipe()
        # daemonic: ended with this process if it is never given work (a case that does not load)
        self.process = context.Process(target=_serve, args=(theirs, modules), name="tea-standby", daemon=True)
        self.process.start()
        theirs.close()

    def call(self, work: Callable[..., T], *args) -> Callable[[], T]:
        """Hand ``work(*args)`` over (``work`` a module-level function, ``args`` what pickles); the function
        returned waits for the result: made here if the worker ended without an answer."""
        try:
            self.conn.send((work, args))
        except Exception:  # the worker is gone already, or the work does not pickle: made here
            self.process.terminate()
            self.close()
            return lambda: work(*args)

        def result() -> T:
            try:
                done, value = self.conn.recv()
            except (EOFError, OSError):
                return work(*args)
            finally:
                self.conn.close()  # the worker ends on its own once it has answered
            if done:
                return value
            raise value

        return result

    def close(self) -> None:
        self.conn.close()
        self.process.join(timeout=1.0)
        if self.process.is_alive():
            self.process.terminate()
            self.process.join()


def _serve(conn, modules: tuple[str, ...]) -> None:
    """In a standing-by worker: import ``modules``, then make the one piece of work handed over and send
    back (True, result) or (False, the exception it raised)."""
    import importlib

    for module in modules:
        importlib.import_module(module)
    try:
        work, args = conn.recv()
    except (EOFError, OSError):  # never given work
        return
    try:
        answer = (True, work(*args))
    except BaseException as exc:  # noqa: BLE001 - sent back, raised there
        answer = (False, exc)
    try:
        conn.send(answer)
    except Exception as exc:  # an answer that does not pickle: its error instead
        conn.send((False, RuntimeError(f"{getattr(work, '__name__', work)}: {exc}")))
    conn.close()


_standby: _Standby | None = None


def stand_by(*modules: str) -> bool:
    """Fork one worker now, which imports ``modules`` while this process goes on and then waits for one
    piece of work (:func:`elsewhere`); False, and nothing started, if fewer than two workers are available
    or processes cannot be forked."""
    global _standby
    if _standby is not None or available() <= 1 or not sys.platform.startswith("linux"):
        return False
    _standby = _Standby(modules)
    return True


def stand_down() -> None:
    """End the worker standing by, if it was never given its work."""
    global _standby
    if _standby is not None:
        standby, _standby = _standby, None
        standby.process.terminate()
        standby.close()


def elsewhere(work: Callable[..., T], *args) -> Callable[[], T]:
    """``work(*args)`` made in another process while this one goes on; the function returned waits for the
    result (and raises what ``work`` raised).

    By the worker standing by (:func:`stand_by`) if there is one: it has the
    modules it was started for loaded already, and takes ``work``, a
    module-level function, and ``args`` pickled. Else as :func:`meanwhile`: in a
    worker forked now, or in this process when the result is asked for.
    """
    global _standby
    if _standby is not None:
        standby, _standby = _standby, None
        return standby.call(work, *args)
    stack = contextlib.ExitStack()
    result = stack.enter_context(meanwhile(lambda: work(*args)))

    def wait() -> T:
        with stack:
            return result()

    return wait


def _settle() -> None:
    """In a new worker: what it inherited (modules, cases, ledgers) is moved out of the garbage collector's
    sight, so that no collection scans it again or writes to its pages (which it would then stop sharing
    with the parent)."""
    import gc

    gc.freeze()


def _call(i: int):
    assert _work is not None
    return _work(i)
