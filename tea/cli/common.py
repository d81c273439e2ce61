"""What the commands share: loading every case at once, and checking output targets before any work."""

from __future__ import annotations

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
