"""Text that came from a user, made safe for the place it is written to.

One routine per kind of destination, used by every writer:

* :func:`csv_cell` — a CSV text cell that a spreadsheet program opens as
  text, never as a formula: a cell starting with ``=``, ``+``, ``-``, ``@``,
  a tab or a carriage return gets a leading single quote (the usual
  spreadsheet-injection advice; a plain number is left alone, it cannot be a
  formula), then RFC 4180 quoting.
* :func:`xlsx_text` — the content of an xlsx string cell (``<t>``): XML
  escaped, characters XML cannot hold written as the format's ``_xHHHH_``
  escapes so that they read back unchanged, cut to the 32,767 characters a
  cell holds with a visible mark. The caller writes it as a string cell,
  so it can never become a formula.
* :func:`terminal` — text for a terminal: control characters (ESC, BEL, NUL,
  backspace, DEL, C1) and bidirectional overrides shown as visible escapes.
* :func:`brief` — an offending value quoted in an error line: at most about
  80 characters of it.
* :func:`toml_value` — an offending value of a case file quoted in an error
  line as it is written in TOML (``true``, ``"text"``, ``[1, 2]``,
  ``{ value = 10 }``): at most about 80 characters of it.
* :func:`clip` — any text cut to a length with a visible mark.
"""

from __future__ import annotations

import datetime
import json
import math
import re

#: characters a spreadsheet cell holds (Excel's limit; LibreOffice's is the same for xlsx)
CELL_LIMIT = 32_767
#: characters of a page header or footer, codes included (Excel's limit)
HEADER_LIMIT = 255
#: characters of an offending value quoted in an error line
SHOWN_LIMIT = 80

#: first characters that make a spreadsheet read a cell as a formula
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")

#: bidirectional embedding, override and isolate controls, and the invisible direction marks
BIDI = "\u061c\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069"
_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f" + BIDI + "\u2028\u2029]")
_UNSAFE_ONE_LINE = re.compile("[\x00-\x1f\x7f-\x9f" + BIDI + "\u2028\u2029]")
#: characters XML 1.0 cannot hold, and text that looks like the format's own escape
_XML_ILLEGAL = re.compile("[^\u0009\u000a\u000d\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")
_OOXML_ESCAPE = re.compile(r"_x[0-9A-Fa-f]{4}_")


def clip(text: str, limit: int) -> str:
    """``text`` cut to ``limit`` characters, the cut shown.

    >>> clip("abcdefghij" * 10, 40)
    'abcdefghijabcdefg… [cut: 100 characters]'
    >>> clip("short", 40)
    'short'
    """
    if len(text) <= limit:
        return text
    mark = f"… [cut: {len(text):,} characters]"
    return text[: max(0, limit - len(mark))] + mark


def _escape_char(m: re.Match) -> str:
    code = ord(m.group(0))
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def terminal(text: str, one_line: bool = False) -> str:
    """Text for a terminal with every control and direction-override character shown escaped.

    Line breaks and tabs are kept unless ``one_line``.

    >>> terminal("name\\x1b]0;owned\\x07 \\u202eevil")
    'name\\\\x1b]0;owned\\\\x07 \\\\u202eevil'
    >>> terminal("two\\nlines"), terminal("two\\nlines", one_line=True)
    ('two\\nlines', 'two\\\\x0alines')
    """
    return (_UNSAFE_ONE_LINE if one_line else _UNSAFE).sub(_escape_char, text)


def brief(value: object, limit: int = SHOWN_LIMIT) -> str:
    """An offending value as an error line quotes it: its repr, at most ``limit`` characters.

    >>> brief("EUR")
    "'EUR'"
    >>> brief("X" * 10_000)
    "'XXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXX… [cut: 10,002 characters]"
    """
    if isinstance(value, int) and value.bit_length() > 4 * limit:  # too long to write out, and to convert
        return f"a whole number of about {int(value.bit_length() * 0.30103):,} digits"
    return clip(repr(value), limit)


_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
#: containers nested deeper than this are shown as ``[…]`` / ``{…}`` (an error line shows little of them anyway)
_SHOWN_DEPTH = 8


def _toml_string(text: str) -> str:
    """A TOML basic string: JSON's escapes (TOML has the same), and every character that does not print
    (controls, direction overrides, line separators) as a ``\\uXXXX`` escape."""
    body = json.dumps(text, ensure_ascii=False)
    return "".join(ch if ch.isprintable() else
                   (f"\\u{ord(ch):04x}" if ord(ch) <= 0xFFFF else f"\\U{ord(ch):08x}") for ch in body)


def _toml(value: object, depth: int = 0) -> str:
    """``value`` written as TOML (containers deeper than :data:`_SHOWN_DEPTH` elided)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        if value.bit_length() > 4 * SHOWN_LIMIT:  # too long to write out, and to convert
            return f"a whole number of about {int(value.bit_length() * 0.30103):,} digits"
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, (datetime.datetime, datetime.date, datetime.time)):
        return value.isoformat()
    if isinstance(value, (list, tuple)):
        if depth >= _SHOWN_DEPTH and value:
            return "[…]"
        return "[" + ", ".join(_toml(item, depth + 1) for item in value) + "]"
    if isinstance(value, dict):
        if not value:
            return "{}"
        if depth >= _SHOWN_DEPTH:
            return "{ … }"
        return "{ " + ", ".join(f"{_toml_key(key)} = {_toml(item, depth + 1)}" for key, item in value.items()) + " }"
    return repr(value)


def _toml_key(key: object) -> str:
    return key if isinstance(key, str) and _BARE_KEY.fullmatch(key) else _toml_string(str(key))


def toml_value(value: object, limit: int = SHOWN_LIMIT) -> str:
    """An offending value of a case file as an error line quotes it: written as in TOML, at most ``limit``
    characters, on one line.

    >>> toml_value({"value": 10}), toml_value(True), toml_value("yes"), toml_value([1, 2.5])
    ('{ value = 10 }', 'true', '"yes"', '[1, 2.5]')
    >>> toml_value(float("inf")), toml_value("two\\nlines \\u202e"), toml_value({"a b": [], "c": {}})
    ('inf', '"two\\\\nlines \\\\u202e"', '{ "a b" = [], c = {} }')
    >>> toml_value("X" * 10_000)
    '"XXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXXX… [cut: 10,002 characters]'
    """
    return clip(_toml(value), limit)


def csv_cell(text: str) -> str:
    """A CSV text cell: formula starts neutralised with a leading quote, then quoted where needed.

    >>> csv_cell('=HYPERLINK("http://x.invalid","click")')
    '"\\'=HYPERLINK(""http://x.invalid"",""click"")"'
    >>> csv_cell("@SUM(1+1)"), csv_cell("-12.5"), csv_cell("A, east")
    ("'@SUM(1+1)", '-12.5', '"A, east"')
    """
    if text.startswith(FORMULA_STARTS) and not _PLAIN_NUMBER.fullmatch(text):
        text = "'" + text
    if any(ch in text for ch in ',;"\r\n\t'):
        return '"' + text.replace('"', '""') + '"'
    return text


_AFTER_DELIMITER = re.compile(r"([,;\t]\s*)(?=[=+\-@\r])")


def csv_comment(text: str) -> str:
    """A ``# ...`` comment line of a CSV file, safe in a spreadsheet that splits it into cells.

    Every piece a comma, semicolon or tab would start is neutralised like a cell.

    >>> csv_comment("screen of a.csv over 'x,=HYPERLINK(1)'")
    "# screen of a.csv over 'x,'=HYPERLINK(1)'"
    """
    return "# " + _AFTER_DELIMITER.sub(r"\1'", text.replace("\r", " ").replace("\n", " "))


def csv_row(cells) -> str:
    """One CSV line of text cells (no line end)."""
    return ",".join(csv_cell(str(c)) for c in cells)


def _ooxml_escape(m: re.Match) -> str:
    return f"_x{ord(m.group(0)):04X}_"


def xlsx_text(text: str, limit: int = CELL_LIMIT) -> str:
    """Text as the XML content of an xlsx string cell, read back unchanged by spreadsheet programs and openpyxl.

    >>> xlsx_text("a<b & \\x1b[2J")
    'a&lt;b &amp; _x001B_[2J'
    >>> xlsx_text("_x0041_")
    '_x005F_x0041_'
    """
    text = clip(text, limit)
    text = _OOXML_ESCAPE.sub(lambda m: "_x005F" + m.group(0), text)
    text = _XML_ILLEGAL.sub(_ooxml_escape, text)
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def xlsx_literal(text: str, limit: int = CELL_LIMIT) -> str:
    """Text for a writer that escapes control characters and literal ``_xHHHH_`` itself (XlsxWriter):
    only clipped to what a cell holds.

    >>> len(xlsx_literal("a" * 40_000)) <= CELL_LIMIT
    True
    """
    return clip(text, limit)


def xlsx_unescape(text: str) -> str:
    """The text an xlsx string cell holds, its ``_xHHHH_`` escapes decoded (the inverse of :func:`xlsx_text`
    once the XML parser has decoded the entities).

    >>> xlsx_unescape("_x001B_[2J _x005F_x0041_")
    '\\x1b[2J _x0041_'
    """
    return _OOXML_ESCAPE.sub(lambda m: chr(int(m.group(0)[2:6], 16)), text) if "_x" in text else text
