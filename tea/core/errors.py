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


def read_refused(exc: OSError, expected: str = "a case file (.toml)") -> str:
    """Why the machine would not let an input be read, in words: no errno, no repeated path.

    >>> read_refused(IsADirectoryError(21, "Is a directory", "cases"))
    'cannot read the file: it is a folder; expected a case file (.toml)'
    >>> read_refused(PermissionError(13, "Permission denied", "a.toml"))
    'cannot read the file: permission denied'
    >>> read_refused(OSError(5, "Input/output error", "a.toml"))
    'cannot read the file: input/output error'
    """
    if isinstance(exc, IsADirectoryError):
        return f"cannot read the file: it is a folder; expected {expected}"
    if isinstance(exc, FileNotFoundError):
        return "file not found"
    if isinstance(exc, PermissionError):
        return "cannot read the file: permission denied"
    reason = exc.strerror or exc.__class__.__name__
    return f"cannot read the file: {reason[:1].lower()}{reason[1:]}"


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


class Notice(str):
    """A warning about an input that does not stop the run: the technical line the terminal prints (the
    string itself, ``file: key: message``) and, kept apart so that another reader can word it anew (the
    grower's page, :mod:`tea.outputs.advice`), what it is about.

    ``key`` is the key as the file spells it, ``path`` the schema's key path
    it stands for (None: no one key, e.g. a field table's column). ``kind``
    says what sort of warning it is (:data:`UNUSUAL`, :data:`NOT_GIVEN`,
    :data:`WHAT_IF`, :data:`OTHER`); an unusual value carries the value, the
    usual range (``low``/``high``, None where open) and the unit, all as the
    file gives them; a warning about a what-if section (:data:`WHAT_IF`) has
    in ``path`` the input its range or distribution is over. ``check``: the
    terminal's line ends by asking the reader to check the value.

    >>> n = Notice("a.toml", "finance.discount_rate", "0.25 is unusual", path="finance.discount_rate",
    ...            kind=UNUSUAL, value=0.25, high=0.2, unit="fraction/yr")
    >>> n, n.path, n.high
    ('a.toml: finance.discount_rate: 0.25 is unusual', 'finance.discount_rate', 0.2)
    >>> import pickle; pickle.loads(pickle.dumps(n)).unit
    'fraction/yr'
    """

    source: str
    key: str
    message: str
    path: str | None
    kind: str
    value: float | None
    low: float | None
    high: float | None
    unit: str | None
    check: bool

    def __new__(cls, source: str, key: str, message: str, *, path: str | None = None, kind: str = "other",
                value: float | None = None, low: float | None = None, high: float | None = None,
                unit: str | None = None, check: bool = False) -> Notice:
        line = f"{message}; check it" if check else message  # the terminal asks for a check; the page says why
        self = super().__new__(cls, f"{source}: {key}: {line}" if key else f"{source}: {line}")
        self.__dict__.update(source=source, key=key, message=message, path=path, kind=kind, value=value,
                             low=low, high=high, unit=unit, check=check)
        return self

    def __reduce__(self):
        fields = dict(self.__dict__)
        return _notice, (fields,)


def _notice(fields: dict) -> Notice:
    """A :class:`Notice` again from its fields (how one is unpickled, e.g. coming back from a worker)."""
    return Notice(**fields)


#: the kinds of :class:`Notice`: a value outside its usual range; a key left out whose default may mislead;
#: a sensitivity range or risk distribution that does not sit on the case's own value; anything else
UNUSUAL, NOT_GIVEN, WHAT_IF, OTHER = "unusual", "not_given", "what_if", "other"


class CaseError(TeaError):
    """A case (or field table, or edited workbook) that cannot be computed.

    ``problems`` lists every problem found, not just the first.
    """

    def __init__(self, problems: list[Problem]):
        if not problems:
            raise ValueError("CaseError needs at least one problem")
        self.problems = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class ReadRefused(CaseError):
    """An input the machine would not let `tea` read (no permission, an input/output error): exit status 1,
    as for an output it would not let `tea` write. A file not found or a folder given is bad input (2)."""


def unreadable(source: str, exc: OSError, expected: str = "a case file (.toml)") -> CaseError:
    """The error of an input that could not be read (:func:`read_refused` says why): :class:`ReadRefused`
    where the machine refused it, a :class:`CaseError` where the path names no file."""
    problems = [Problem(source, "", read_refused(exc, expected))]
    return CaseError(problems) if isinstance(exc, (FileNotFoundError, IsADirectoryError)) else ReadRefused(problems)


class OutputError(TeaError):
    """An output file that cannot be written as asked."""


class WriteError(TeaError):
    """An output the machine would not let `tea` write: no permission, disk full, a folder in the way."""
