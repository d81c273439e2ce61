"""What the commands share: loading every case at once, and checking output targets before any work."""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Sequence

from tea.core.errors import CaseError, OutputError


def check_outputs(paths: Sequence[str], force: bool) -> None:
    """Refuse, before any work, to overwrite files or write into missing folders."""
    problems = []
    for p in paths:
        path = Path(p)
        if path.exists() and not force:
            problems.append(f"{p}: exists; pass --force to overwrite it")
        elif not path.parent.exists():
            problems.append(f"{p}: folder {path.parent} does not exist")
    if problems:
        raise OutputError("\n".join(problems))


def check_suffixes(targets: Sequence[tuple[str | None, tuple[str, ...], str]]) -> None:
    """Refuse, before any work, an output whose name does not end as its format needs.

    ``targets``: (path or None, accepted suffixes, what is written there).
    """
    problems = []
    for path, suffixes, what in targets:
        if path and Path(path).suffix.lower() not in suffixes:
            problems.append(f"{path}: {what} is written to a file ending {' or '.join(suffixes)}; "
                            f"got {Path(path).suffix or 'no suffix'}")
    if problems:
        raise OutputError("\n".join(problems))


def say(text: str = "") -> None:
    """Print results to stdout; once the reader has gone (a closed pipe), print nothing more and go on.

    The run itself (files written, exit status) is not cut short by a reader
    that stopped reading, e.g. ``tea run X --pdf a.pdf | head -3``.
    """
    try:
        print(text, flush=True)
    except BrokenPipeError:
        quiet_stdout()


def quiet_stdout() -> None:
    """Send whatever is still printed (and Python's last flush at exit) to the null device."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):  # not a real file (e.g. captured in tests)
        pass


def load_all(paths: Sequence[str], on_loaded=None) -> list:
    """Load every case file (calling ``on_loaded(path, case)`` for each good one); then raise one
    CaseError listing the problems of all the bad ones."""
    from tea.inputs.case import load_case

    cases, problems = [], []
    for path in paths:
        try:
            case = load_case(path)
        except CaseError as exc:
            problems.extend(exc.problems)
            continue
        cases.append(case)
        if on_loaded:
            on_loaded(path, case)
    if problems:
        raise CaseError(problems)
    return cases
