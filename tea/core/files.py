"""Writing output files atomically: a temporary file in the same folder, then a rename.

An interrupted run never leaves a half-written output; an existing file is
replaced only when the caller allows it. The temporary file is hidden and
named after the target and the writing process, ``.NAME.PID.RANDOM.part``;
a run killed outright (``kill -9``, a power cut) can leave one behind, and
the next write of the same target removes those whose process is gone.
The temporary files being written are listed in this process
(:func:`in_flight`), so that a run ended by Ctrl-C from outside the
interpreter's own exception path removes them before it exits; the outputs asked
for and not yet written (:func:`promised`) are named in its last words.
A write the machine refuses (no permission, disk full, a folder in the way)
raises :class:`~tea.core.errors.WriteError` naming the target.
"""

from __future__ import annotations

import errno
import os
import re
import tempfile
from pathlib import Path
from typing import Callable, Iterable

from tea.core.errors import OutputError, WriteError

#: the temporary files this process is writing now (added when made, removed once renamed or deleted)
_IN_FLIGHT: set[Path] = set()


def in_flight() -> list[Path]:
    """The temporary files this process is writing at this moment."""
    return list(_IN_FLIGHT)


#: the output files the command was asked for and has not written yet, by their resolved path
_PROMISED: dict[Path, str] = {}


def promised(paths: Iterable[str | Path | None]) -> None:
    """Note the output files a command was asked for (None: not asked for), so that a run interrupted after
    some of them can say which it did not write (:func:`not_written_note`)."""
    for p in paths:
        if p:
            _PROMISED[Path(p).resolve()] = str(p)


def not_written_note() -> str:
    """"; not written: b.pdf, c.html" for the output files asked for and not written yet; "" for none."""
    return f"; not written: {', '.join(_PROMISED.values())}" if _PROMISED else ""


_REASONS = {
    errno.ENOSPC: "the disk is full",
    errno.EFBIG: "the file is too large for this disk or its quota",
    errno.EDQUOT: "the disk quota is used up",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.EROFS: "the disk is read-only",
    errno.EISDIR: "it is a folder",
    errno.ENOTDIR: "a part of its path is not a folder",
    errno.ENAMETOOLONG: "its name is too long",
}


def write_refused(path: str | Path, exc: OSError) -> WriteError:
    """A :class:`WriteError` naming ``path`` and why the machine refused it, in one line."""
    reason = _REASONS.get(exc.errno) or (exc.strerror or exc.__class__.__name__).lower()
    return WriteError(f"{path}: cannot write the file: {reason}")


def check_target(path: str | Path, force: bool) -> Path:
    """Refuse an existing file (unless ``force``), a folder in the way, or a missing or unwritable folder."""
    path = Path(path)
    if path.is_dir():
        raise WriteError(f"{path}: is a folder; give a file name")
    if path.exists() and not force:
        raise OutputError(f"{path}: exists; add --force to replace it")
    parent = path.parent
    if not parent.exists():
        raise OutputError(f"{path}: folder {parent} does not exist")
    if not parent.is_dir():
        raise WriteError(f"{path}: {parent} is not a folder")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise WriteError(f"{path}: cannot write the file: permission denied in folder {parent}")
    return path


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # someone else's process: alive
        return True
    return True


def remove_stale_parts(path: str | Path) -> list[Path]:
    """Remove the hidden ``.NAME.PID.RANDOM.part`` files of ``path`` left by processes that have ended.

    Only files of this exact pattern are touched; returns those removed.
    """
    path = Path(path)
    pattern = re.compile(re.escape(f".{path.name}.") + r"(\d+)\.[A-Za-z0-9_]+\.part")
    removed = []
    try:
        entries = list(os.scandir(path.parent))
    except OSError:
        return removed
    for entry in entries:
        m = pattern.fullmatch(entry.name)
        if m and entry.is_file(follow_symlinks=False) and not _alive(int(m.group(1))):
            try:
                os.unlink(entry.path)
                removed.append(Path(entry.path))
            except OSError:
                pass
    return removed


def atomic_write(path: str | Path, write: Callable[[Path], None], force: bool = True) -> Path:
    """Call ``write(tmp_path)``, then move the finished file onto ``path``.

    If ``write`` fails, the temporary file is removed and ``path`` is untouched.
    """
    path = check_target(path, force)
    remove_stale_parts(path)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.{os.getpid()}.", suffix=".part", dir=path.parent)
    except OSError as exc:
        raise write_refused(path, exc) from None
    os.close(fd)
    tmp_path = Path(tmp)
    _IN_FLIGHT.add(tmp_path)
    try:
        write(tmp_path)
        os.chmod(tmp_path, 0o644)
        os.replace(tmp_path, path)
        _PROMISED.pop(path.resolve(), None)
    except OSError as exc:
        tmp_path.unlink(missing_ok=True)
        raise write_refused(path, exc) from None
    except BaseException:
        tmp_path.unlink(missing_ok=True)
        raise
    finally:
        _IN_FLIGHT.discard(tmp_path)
    return path


def atomic_write_text(path: str | Path, text: str, force: bool = True) -> Path:
    """Write text atomically (UTF-8)."""
    return atomic_write(path, lambda p: p.write_text(text, encoding="utf-8"), force)


def atomic_write_bytes(path: str | Path, data: bytes, force: bool = True) -> Path:
    """Write bytes atomically."""
    return atomic_write(path, lambda p: p.write_bytes(data), force)
