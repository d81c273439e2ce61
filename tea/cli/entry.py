"""The `tea` command's entry point, and how Ctrl-C ends it.

An interrupt must end the run at once, with one line and status 130, and
leave no output file half-written, whatever the process is doing. The
interpreter's own way (a ``KeyboardInterrupt`` raised in the main thread) is
not reliable in a process with native threads, which the numerical and
drawing libraries start when they load: the signal may be taken by such a
thread and reach the interpreter late or not at all (the run then finishes
as if never interrupted, or dies by the signal after it was reported), and a
library's catch-all ``except`` may swallow it. So, on POSIX, the command
blocks SIGINT before it loads anything, every thread it starts and every
worker it forks inherits the block, and one watching thread takes the signal
with ``sigwait``: it removes the temporary files being written
(:func:`tea.core.files.in_flight`), stops the worker processes and ends the
process with status 130. SIGTERM (a polite kill) and SIGHUP (the terminal
closed) end it the same way, with status 128 + the signal's number. The
worker processes end with the command however it ends, killed outright
included (:func:`tea.outputs.workers._end_with_parent`).

``tea.cli.main.main`` called in a process of its own (as the tests do) keeps
the interpreter's way: a ``KeyboardInterrupt`` is reported and gives 130.
"""

from __future__ import annotations

import gc
import os
import signal
import sys
import threading



#: the signals that end a run cleanly: Ctrl-C, a polite kill, the terminal closed
WATCHED = ("SIGINT", "SIGTERM", "SIGHUP")


def _watched() -> set:
    return {getattr(signal, name) for name in WATCHED if hasattr(signal, name)}


def _end_on_interrupt() -> None:
    """Wait for a watched signal (blocked in every thread), then clean up and end the process: status 130
    for SIGINT, 128 + its number for the others."""
    received = signal.sigwait(_watched())
    from tea.core.errors import INTERRUPTED, INTERRUPTED_MESSAGE

    from tea.core.files import not_written_note

    if received == signal.SIGINT:
        status, message = INTERRUPTED, INTERRUPTED_MESSAGE + not_written_note()
    else:
        status = 128 + int(received)
        message = f"stopped ({signal.Signals(received).name}); no output file was left half-written" \
                  + not_written_note()

    try:
        from tea.core.files import in_flight

        for tmp in in_flight():
            try:
                os.unlink(tmp)
            except OSError:
                pass
        import multiprocessing

        for child in multiprocessing.active_children():
            child.terminate()
        os.write(2, (message + "\n").encode())
    finally:
        os._exit(status)


def watch_interrupts() -> bool:
    """Block the watched signals in this thread (and so in all it starts or forks from now on; the workers
    unblock SIGTERM and SIGHUP, :func:`tea.outputs.workers._settle`) and start the thread that ends the
    process on them; False where signals cannot be waited for (not POSIX), and nothing changes."""
    if not hasattr(signal, "pthread_sigmask") or not hasattr(signal, "sigwait"):
        return False
    if threading.current_thread() is not threading.main_thread():
        return False
    signal.pthread_sigmask(signal.SIG_BLOCK, _watched())
    threading.Thread(target=_end_on_interrupt, name="tea-interrupt", daemon=True).start()
    return True


def _one_line(message, category, filename, lineno, file=None, line=None) -> None:
    """A warning raised while the command runs (by tea or a library), said as every warning of the command
    is (:func:`tea.cli.common.warn`), with no source location (the workers, forked from this process, say
    theirs so too)."""
    from tea.cli.common import warn

    warn(message, file)


def main() -> int:
    """Load the command line and run it; Ctrl-C at any point (loading the libraries, building the options,
    doing the work) exits 130 with one line."""
    try:
        watch_interrupts()
        import warnings

        warnings.showwarning = _one_line
        from tea.cli.main import main as run

        status = run()
        # the process ends now: the interpreter's last collections would go over everything the command
        # made (a laid-out page and its engine: about 0.15 s of a printed page's run) only to free it
        gc.freeze()
        return status
    except KeyboardInterrupt:  # where SIGINT cannot be watched for, or before the watch began
        from tea.core.errors import INTERRUPTED, INTERRUPTED_MESSAGE

        print(INTERRUPTED_MESSAGE, file=sys.stderr)
        return INTERRUPTED
