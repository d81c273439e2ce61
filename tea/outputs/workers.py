"""Independent pieces of work shared out to worker processes, their results taken in order.

A comparison's pages are laid out and written each on its own (see
:func:`tea.outputs.report.render_comparison`), so they can be made side by
side on a machine's cores (:func:`each`); one page's charts are drawn while
the PDF engine starts (:func:`meanwhile`, :func:`elsewhere`). Workers can also be started
before their work is known, each for a role (:func:`stand_by`): for one page the command
line starts one that loads the chart library (role ``"charts"``) and one that starts the
PDF engine (role ``"page"``) while this process loads the model and computes the case;
then the one draws the charts while the other lays the page out
(:func:`tea.outputs.pdf_page.lay_out`), sent more as it goes (:meth:`Later.send`,
:func:`received`) and asking this process for what only it can make (:func:`ask`).
Work handed over is made in this process instead, from the start, if no worker
stands by for its role or its worker ends without an answer. The
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
from typing import Any, Callable, Iterator, TypeVar

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
    available; a piece that raises ends the whole with its exception (the workers are stopped).

    A worker that ends without an answer (killed, out of memory) breaks the
    pool: the pieces not yet taken are then made in this process, one after
    another (never a run left waiting for a piece no process makes).
    """
    jobs = min(available(), count)
    if jobs <= 1 or not sys.platform.startswith("linux"):
        for i in range(count):
            yield work(i)
        return
    import collections
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    global _work
    _work = work  # the forked workers see it; only the piece's number travels
    taken = 0
    try:
        pool = ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context("fork"), initializer=_settle)
        try:
            ahead: collections.deque = collections.deque()  # pieces handed out, at most two per worker
            while taken < count:
                try:
                    while taken + len(ahead) < count and len(ahead) < 2 * jobs:
                        ahead.append(pool.submit(_call, taken + len(ahead)))
                    value = ahead[0].result()
                except BrokenProcessPool:
                    break
                ahead.popleft()
                taken += 1
                yield value
        finally:
            pool.shutdown(wait=True, cancel_futures=True)
    finally:
        _work = None
    for i in range(taken, count):
        yield work(i)


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


class Later:
    """Work handed over to another process: call it for the result (it waits, and raises what the work
    raised); :meth:`send` hands the work more, in order, which it takes with :func:`received`; the work
    can ask this process for a value (:func:`ask`), which ``answer`` gives while the result is waited for.

    The result is made in this process, from the start and with everything
    sent so far, if the work was never handed over or its worker ended
    without an answer (killed, out of memory).
    """

    def __init__(self, work: Callable[..., T], args: tuple, conn=None, process=None,
                 answer: Callable[[Any], Any] | None = None):
        self.work, self.args, self.conn, self.process, self.answer = work, args, conn, process, answer
        self.sent: list[Any] = []

    @property
    def in_worker(self) -> bool:
        """Whether the work is being made in another process (else it is made here when asked for)."""
        return self.conn is not None

    def send(self, value: Any) -> None:
        """Hand the work one more value (it pickles); the work takes it with :func:`received`."""
        self.sent.append(value)
        if self.conn is not None:
            try:
                self.conn.send(("more", value))
            except (OSError, ValueError):  # the worker is gone: the result is made here
                self._drop()

    def __call__(self):
        while self.conn is not None:
            try:
                kind, value = self.conn.recv()
                if kind == "ask":
                    self.conn.send(("answer", _answered(self.answer, value)))
                    continue
            except (EOFError, OSError):
                self._drop()
                break
            self._drop(end=False)
            if kind == "done":
                return value
            raise value
        return _here(self.work, self.args, self.sent, self.answer)

    def _drop(self, end: bool = True) -> None:
        if self.conn is not None:
            self.conn.close()
            self.conn = None
        if self.process is not None:
            if end and self.process.is_alive():
                self.process.terminate()
            self.process.join(timeout=1.0)
            self.process = None


#: in a worker, where :func:`received` takes what the work is sent; in this process while work is made here,
#: the values sent to it
_inbox: Any = None
#: values sent to the work while it waited for an answer to :func:`ask`, to be received in turn
_early: list[Any] = []
#: while work handed over is made in this process, what answers its questions
_answer: Callable[[Any], Any] | None = None


def received() -> Any:
    """In work handed over with :func:`handed_over`: the next value sent to it (:meth:`Later.send`), waiting
    for it if need be."""
    if _inbox is None:
        raise RuntimeError("received(): only work handed over with handed_over() is sent values")
    if isinstance(_inbox, list):
        if not _inbox:
            raise RuntimeError("received(): nothing more was sent")
        return _inbox.pop(0)
    if _early:
        return _early.pop(0)
    kind, value = _inbox.recv()
    return value


def ask(question: Any) -> Any:
    """In work handed over with :func:`handed_over`: the answer of the process that handed it over (its
    ``answer`` function) to ``question``; both pickle."""
    if _inbox is None:
        raise RuntimeError("ask(): only work handed over with handed_over() can ask")
    if isinstance(_inbox, list):
        return _answered(_answer, question)
    _inbox.send(("ask", question))
    while True:
        kind, value = _inbox.recv()
        if kind == "answer":
            return value
        _early.append(value)


def _answered(answer: Callable[[Any], Any] | None, question: Any) -> Any:
    if answer is None:
        raise RuntimeError(f"ask({question!r}): the work was handed over with nothing to answer it")
    return answer(question)


def _here(work: Callable[..., T], args: tuple, sent: list[Any], answer: Callable[[Any], Any] | None = None) -> T:
    """``work(*args)`` in this process, with ``sent`` to take in turn and ``answer`` for its questions."""
    global _inbox, _answer
    before = _inbox, _answer
    _inbox, _answer = list(sent), answer
    try:
        return work(*args)
    finally:
        _inbox, _answer = before


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

    def call(self, work: Callable[..., T], args: tuple, answer: Callable[[Any], Any] | None = None) -> Later:
        """Hand ``work(*args)`` over (``work`` a module-level function, ``args`` what pickles)."""
        try:
            self.conn.send(("work", (work, args)))
        except Exception:  # the worker is gone already, or the work does not pickle: made here
            self.close(end=True)
            return Later(work, args, answer=answer)
        return Later(work, args, self.conn, self.process, answer)

    def close(self, end: bool = False) -> None:
        self.conn.close()
        if end:
            self.process.terminate()
        self.process.join(timeout=1.0)
        if self.process.is_alive():
            self.process.terminate()
            self.process.join()


def _serve(conn, modules: tuple[str, ...]) -> None:
    """In a standing-by worker: import ``modules`` (``"module"``, or ``"module:function"`` to call the
    module's function after), then make the one piece of work handed over and send back (True, result) or
    (False, the exception it raised)."""
    global _inbox
    import importlib

    _settle()  # what it inherited is not scanned again by the collector while it loads its modules
    for entry in modules:
        module, _, function = entry.partition(":")
        loaded = importlib.import_module(module)
        if function:
            getattr(loaded, function)()
    try:
        _kind, (work, args) = conn.recv()
    except (EOFError, OSError):  # never given work
        return
    _inbox = conn
    try:
        answer = ("done", work(*args))
    except BaseException as exc:  # noqa: BLE001 - sent back, raised there
        answer = ("raised", exc)
    try:
        conn.send(answer)
    except Exception as exc:  # an answer that does not pickle: its error instead
        conn.send(("raised", RuntimeError(f"{getattr(work, '__name__', work)}: {exc}")))
    conn.close()


#: the workers standing by, by the role they were started for
_standing: dict[str, _Standby] = {}


def stand_by(*modules: str, role: str = "work") -> bool:
    """Fork one worker now for ``role``, which imports ``modules`` (``"module:function"`` also calls the
    function) while this process goes on and then waits for one piece of work (:func:`elsewhere`,
    :func:`handed_over`); False, and nothing started, if one stands by for the role already, fewer than two
    workers are available or processes cannot be forked."""
    if role in _standing or available() <= 1 or not sys.platform.startswith("linux"):
        return False
    _standing[role] = _Standby(modules)
    return True


def stands_by(role: str) -> bool:
    """Whether a worker stands by for ``role`` (:func:`stand_by`), not yet handed its work."""
    return role in _standing


def stand_down() -> None:
    """End the workers standing by that were never given their work."""
    while _standing:
        _standing.popitem()[1].close(end=True)


def handed_over(work: Callable[..., T], *args, role: str = "work", answer: Callable[[Any], Any] | None = None
                ) -> Later:
    """``work(*args)`` handed to the worker standing by for ``role``, which goes on with it while this
    process does; made in this process when its result is asked for if none stands by. The work can be
    sent more meanwhile (:meth:`Later.send`, :func:`received`), and ask for values, which ``answer`` gives
    (:func:`ask`)."""
    standby = _standing.pop(role, None)
    return standby.call(work, args, answer) if standby is not None else Later(work, args, answer=answer)


def elsewhere(work: Callable[..., T], *args, role: str = "work") -> Callable[[], T]:
    """``work(*args)`` made in another process while this one goes on; the function returned waits for the
    result (and raises what ``work`` raised).

    By the worker standing by for ``role`` (:func:`stand_by`) if there is one:
    it has the modules it was started for loaded already, and takes ``work``, a
    module-level function, and ``args`` pickled. Else as :func:`meanwhile`: in a
    worker forked now, or in this process when the result is asked for.
    """
    if role in _standing:
        return handed_over(work, *args, role=role)
    stack = contextlib.ExitStack()
    result = stack.enter_context(meanwhile(lambda: work(*args)))

    def wait() -> T:
        with stack:
            return result()

    return wait


def _settle() -> None:
    """In a new worker: what it inherited (modules, cases, ledgers) is moved out of the garbage collector's
    sight, so that no collection scans it again or writes to its pages (which it would then stop sharing
    with the parent); the worker ends with its parent (:func:`_end_with_parent`) and can be stopped by
    SIGTERM (the command blocks it in its own threads, see :mod:`tea.cli.entry`)."""
    import gc
    import signal

    gc.freeze()
    if hasattr(signal, "pthread_sigmask"):
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGTERM, signal.SIGHUP})
    _end_with_parent()


def _end_with_parent() -> None:
    """Have the kernel kill this worker when the process that forked it ends (Linux ``prctl``
    PR_SET_PDEATHSIG): a parent killed outright (``kill -9``) leaves no worker waiting for work, holding
    memory and the terminal's output open. Where that cannot be asked for, nothing changes."""
    import multiprocessing

    forked_by = multiprocessing.parent_process()  # known from the fork, even if that process is gone now
    parent = forked_by.pid if forked_by is not None else os.getppid()
    try:
        import ctypes
        import signal

        libc = ctypes.CDLL(None, use_errno=True)
        if libc.prctl(1, int(signal.SIGKILL), 0, 0, 0) != 0:  # 1: PR_SET_PDEATHSIG
            return
    except (OSError, AttributeError):
        return
    if os.getppid() != parent:  # the parent ended before the request took effect
        os._exit(0)


def _call(i: int):
    assert _work is not None
    return _work(i)
