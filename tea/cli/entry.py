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
process with status 130.

``tea.cli.main.main`` called in a process of its own (as the tests do) keeps
the interpreter's way: a ``KeyboardInterrupt`` is reported and gives 130.
"""

from __future__ import annotations

import gc
import os
import signal
import sys
import threading



def _end_on_interrupt() -> None:
    """Wait for SIGINT (blocked in every thread), then clean up and end the process."""
    signal.sigwait({signal.SIGINT})
    from tea.core.errors import INTERRUPTED, INTERRUPTED_MESSAGE as MESSAGE

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
        os.write(2, (MESSAGE + "\n").encode())
    finally:
        os._exit(INTERRUPTED)


def watch_interrupts() -> bool:
    """Block SIGINT in this thread (and so in all it starts or forks from now on) and start the thread that
    ends the process on it; False where signals cannot be waited for (not POSIX), and nothing changes."""
    if not hasattr(signal, "pthread_sigmask") or not hasattr(signal, "sigwait"):
        return False
    if threading.current_thread() is not threading.main_thread():
        return False
    signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT})
    threading.Thread(target=_end_on_interrupt, name="tea-interrupt", daemon=True).start()
    return True


def main() -> int:
    """Load the command line and run it; Ctrl-C at any point (loading the libraries, building the options,
    doing the work) exits 130 with one line."""
    try:
        watch_interrupts()
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
