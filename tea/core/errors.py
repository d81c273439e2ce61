"""The one exception hierarchy of `tea`.

``TeaError`` is the root. ``CaseError`` means the input is wrong (a case file,
a workbook read back as a case, a field table): it carries every problem found,
each naming the file, the key path and what was expected. ``OutputError`` means
an output file was asked for wrongly (it exists, its folder does not, its
type is unknown, two outputs name one file). ``WriteError`` means the machine
would not let a well-asked output be written (no permission, disk full, a
folder where the file should go). The command line maps each class to its
exit status in one table (:mod:`tea.cli.main`).
"""

from __future__ import annotations

from dataclasses import dataclass


#: the exit status of a run ended by Ctrl-C (128 + SIGINT, the shells' convention), and its one line
INTERRUPTED = 130
INTERRUPTED_MESSAGE = "interrupted; no output file was left half-written"


class TeaError(Exception):
    """Base class of every error `tea` raises on purpose."""


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input: where it is and what was expected."""

    source: str  # file name, as the user gave it
    key: str  # dotted key path, e.g. ``yield.mature_t_dm_per_ha``; "" for the whole file
    message: str  # what was expected and what was found

    def __str__(self) -> str:
        where = f"{self.source}: {self.key}" if self.key else self.source
        return f"{where}: {self.message}"


class CaseError(TeaError):
    """A case (or field table, or edited workbook) that cannot be computed.

    ``problems`` lists every problem found, not just the first.
    """

    def __init__(self, problems: list[Problem]):
        if not problems:
            raise ValueError("CaseError needs at least one problem")
        self.problems = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class OutputError(TeaError):
    """An output file that cannot be written as asked."""


class WriteError(TeaError):
    """An output the machine would not let `tea` write: no permission, disk full, a folder in the way."""
