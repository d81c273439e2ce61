"""What the commands share: loading every case at once, and checking output targets before any work."""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Sequence

from tea.core.errors import CaseError, OutputError, ReadRefused


def warn(message: object, file=None) -> None:
    """Say a warning on stderr (or ``file``): ``warning: MESSAGE``, one line per warning where stderr goes to
    a file or a pipe (a log, grep); on a terminal wrapped within the terminal summary's width
    (:data:`tea.core.texts.WIDTH`), each further line indented."""
    stream = file if file is not None else sys.stderr
    line = f"warning: {message}"
    try:
        if getattr(stream, "raw", stream).isatty():
            import textwrap

            from tea.core.texts import WIDTH

            line = "\n".join(textwrap.wrap(line, WIDTH, subsequent_indent="  ", break_on_hyphens=False))
        print(line, file=stream)
    except (OSError, ValueError):  # stderr gone: nothing to tell
        pass


def check_outputs(targets: Sequence[tuple[str | None, Sequence[str]]], force: bool,
                  inputs: Sequence[str] = ()) -> None:
    """Refuse, before any work, output files that cannot be written as asked.

    ``targets`` pairs each output path (None: not asked for) with the suffixes
    it may have. Checked together: each suffix, no two outputs naming one file, no output naming an input,
    no file overwritten without ``force``, the folder there and writable, no
    folder where the file should go. Usage problems raise one
    :class:`OutputError` listing them all (exit 2); a folder in the way or an
    unwritable folder raises :class:`WriteError` (exit 1).
    """
    from tea.core.files import check_target

    problems = []
    seen: dict[Path, str] = {}
    read = {Path(p).resolve(): p for p in inputs}
    given = [(p, suffixes) for p, suffixes in targets if p is not None]
    if any(not str(p).strip() for p, _ in given):
        raise OutputError("an output file name is empty; give a file name")
    for p, suffixes in given:
        path = Path(p)
        suffix = path.suffix.lower()
        if path.is_dir():
            continue  # check_target names it below
        if suffix not in suffixes:
            old = " (the old binary format; tea writes .xlsx)" if suffix == ".xls" else ""
            expected = ", ".join(suffixes[:-1]) + " or " + suffixes[-1] if len(suffixes) > 1 else suffixes[0]
            problems.append(f"{brief_path(p)}: unknown output type {suffix or '(none)'}{old}; expected {expected}")
        where = path.resolve()
        if where in read:
            problems.append(f"{brief_path(p)}: is an input of this run; give the output another name")
        if where in seen:
            problems.append(f"{brief_path(p)}: also given as {brief_path(seen[where])}; give each output its own file")
        seen[where] = p
    for p, _ in given:
        try:
            check_target(p, force)
        except OutputError as exc:
            problems.append(str(exc))
    if problems:
        raise OutputError("\n".join(dict.fromkeys(problems)))


def brief_path(p: str | Path) -> str:
    """A path as an error line names it: at most about 80 characters."""
    from tea.core.safe_text import SHOWN_LIMIT, clip

    return clip(str(p), SHOWN_LIMIT)


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
    CaseError listing the problems of all the bad ones (a ReadRefused where the machine refused each)."""
    from tea.inputs.case import load_case

    cases, problems, refused = [], [], True
    for path in paths:
        try:
            case = load_case(path)
        except CaseError as exc:
            problems.extend(exc.problems)
            refused = refused and isinstance(exc, ReadRefused)
            continue
        cases.append(case)
        if on_loaded:
            on_loaded(path, case)
    if problems:  # the machine's refusal only where every bad file was refused (else: bad input, status 2)
        raise ReadRefused(problems) if refused else CaseError(problems)
    return cases


class SafeStream:
    """A text stream (stdout, stderr) whose every write shows control and direction-override characters
    escaped (:func:`tea.core.safe_text.terminal`): case text can neither drive the terminal nor reorder a line.

    ``raw`` is the stream underneath, for the progress bar's own carriage returns.
    """

    def __init__(self, raw):
        self.raw = raw

    def write(self, text: str) -> int:
        from tea.core.safe_text import terminal

        return self.raw.write(terminal(text))

    def __getattr__(self, name: str):
        return getattr(self.raw, name)
