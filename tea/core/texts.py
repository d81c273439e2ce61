"""Fixed texts every output carries (the cautions), and the width of the terminal's lines."""

from __future__ import annotations

#: widest line the command line prints [characters] (the README promises it)
WIDTH = 100

CAUTIONS: tuple[str, ...] = (
    "Planning estimates only: these figures are not financial, tax or agronomic advice.",
    "Planting rules differ by place (invasive-species, licensing and planting rules); "
    "check local rules before planting.",
    "Carbon credits depend on the rules of the buyer or registry (eligibility, baselines, permanence, "
    "verification); the credit figures here are indicative only.",
    "Defer to local regulation and to licensed professionals (agronomist, accountant, lender, "
    "carbon-registry verifier) before acting.",
)


def on_terminal(stream=None) -> int | None:
    """The width lines are fitted to on ``stream`` (stdout): :data:`WIDTH` on a terminal; None (each item one
    line, for grep and scripts) where it goes to a file or a pipe."""
    import sys

    stream = sys.stdout if stream is None else stream
    try:
        return WIDTH if stream.isatty() else None
    except (AttributeError, ValueError, OSError):
        return None


def fitted(line: str, width: int | None = WIDTH) -> str:
    """A line of prose within ``width`` characters: its further lines start under its text, past its indent
    and its label ("formula:  ", "coppice: ") if it has one, else 4 further in. A word longer than a line
    stays whole.

    >>> print(fitted("  formula:  " + "x + " * 30 + "y", 60))
      formula:  x + x + x + x + x + x + x + x + x + x + x + x +
                x + x + x + x + x + x + x + x + x + x + x + x +
                x + x + x + x + x + x + y
    """
    import re
    import textwrap

    if width is None or len(line) <= width or "\n" in line:  # short, or laid out in lines already (:func:`commented`)
        return line
    lead = len(line) - len(line.lstrip(" "))
    label = re.match(r"[\w ]{1,24}:\s+(?=\S)", line[lead:])
    hang = " " * (lead + (label.end() if label else 4))
    return textwrap.fill(line, width, subsequent_indent=hang, break_on_hyphens=False, break_long_words=False)


def commented(code: str, comment: str, width: int | None = WIDTH) -> str:
    """A line of a case file and its comment (``code    # comment``) within ``width`` characters where the
    comment allows: a long comment goes on as comment lines, so that the text stays a valid case file.

    >>> print(commented("    rate = 0.1", "from memory: " + "word " * 20, 50))
        rate = 0.1    # from memory: word word word
            # word word word word word word word word
            # word word word word word word word word
            # word
    """
    import textwrap

    head, further = f"{code}    # ", " " * (len(code) - len(code.lstrip()) + 4) + "# "
    if width is None or len(head) + len(comment) <= width:
        return head + comment
    if len(head) + 20 > width:  # no room beside a long value: the comment on lines of its own, below it
        return code + "\n" + textwrap.fill(comment, width, initial_indent=further, subsequent_indent=further,
                                           break_on_hyphens=False, break_long_words=False)
    return textwrap.fill(comment, width, initial_indent=head, subsequent_indent=further,  # the code never broken
                         break_on_hyphens=False, break_long_words=False)
