"""Writing output files atomically: a temporary file in the same folder, then a rename.

An interrupted run never leaves a half-written output; an existing file is
replaced only when the caller allows it.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Callable

from tea.core.errors import OutputError


def check_target(path: str | Path, force: bool) -> Path:
    """Refuse an existing file (unless ``force``) or a missing folder."""
    path = Path(path)
    if path.exists() and not force:
        raise OutputError(f"{path}: exists; pass --force (force=True) to overwrite it")
    if not path.parent.exists():
        raise OutputError(f"{path}: folder {path.parent} does not exist")
    return path


def atomic_write(path: str | Path, write: Callable[[Path], None], force: bool = True) -> Path:
    """Call ``write(tmp_path)``, then move the finished file onto ``path``.

    If ``write`` fails, the temporary file is removed and ``path`` is untouched.
    """
    path = check_target(path, force)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        write(tmp_path)
        os.chmod(tmp_path, 0o644)
        os.replace(tmp_path, path)
    except BaseException:
        tmp_path.unlink(missing_ok=True)
        raise
    return path


def atomic_write_text(path: str | Path, text: str, force: bool = True) -> Path:
    """Write text atomically (UTF-8)."""
    return atomic_write(path, lambda p: p.write_text(text, encoding="utf-8"), force)


def atomic_write_bytes(path: str | Path, data: bytes, force: bool = True) -> Path:
    """Write bytes atomically."""
    return atomic_write(path, lambda p: p.write_bytes(data), force)
