"""Reading a workbook written by `tea` back as a case: the inputs sheet, as an advisor edited it.

:func:`read_case_mapping` returns the case-file mapping the inputs sheet holds,
for :func:`tea.inputs.case.load_mapping` to validate like a TOML file. The
sheet's layout constants live here, below the writer that lays the sheet out
(:mod:`tea.outputs.workbook`), which imports them.

A workbook handed back is untrusted input, so it is read with bounds and no
spreadsheet library: the file's size and every part's unpacked size are
checked before anything is unpacked (:data:`MAX_FILE_BYTES`,
:data:`MAX_PART_BYTES`); only the parts that locate the inputs sheet, the
shared strings and that sheet are parsed, with defusedxml (no DTD, no
entities, no external references) on expat, whose time grows linearly with
the input. Every value the sheet holds is its saved value; a cell holding a
formula without a saved value, a key given twice or a kept section nested too
deeply is a clear error, never a silent fallback.
"""
from __future__ import annotations

import errno
import json
import math
import posixpath
import re
import zipfile
import zlib
from functools import lru_cache
from pathlib import Path
from typing import Any, Sequence

from tea.core.errors import CaseError, Problem, unreadable
from tea.core.safe_text import SHOWN_LIMIT, brief, clip, xlsx_unescape
from tea.inputs import schema, units

#: title of the inputs sheet (a portfolio prefixes "C01 " etc.)
INPUTS = "Inputs"
INPUT_HEAD_ROW = 4
KEPT_HEADER = ("Section kept whole", "Content (JSON)")
INPUT_COLUMNS = ("Input", "Value", "Unit", "Origin", "Source", "Section", "Key", "Canonical value", "Canonical unit",
                 "Factor to canonical", "Defined name", "As written")


_COLS: list[str] = []


def col_letter(col: int) -> str:
    """Column letters of a 1-based column index (1 -> A, 27 -> AA)."""
    while len(_COLS) < col:
        n, s = len(_COLS) + 1, ""
        while n:
            n, rem = divmod(n - 1, 26)
            s = chr(65 + rem) + s
        _COLS.append(s)
    return _COLS[col - 1]


#: size of a workbook file accepted for reading (a tea workbook of one case is well under 1 MB)
MAX_FILE_BYTES = 64 << 20
#: unpacked size of one part read (the inputs sheet, shared strings, the workbook's index)
MAX_PART_BYTES = 32 << 20
#: parts of a zip accepted
MAX_PARTS = 10_000
#: the largest row and column a worksheet has
MAX_ROW, MAX_COL = 1_048_576, 16_384

_REL_TYPES = "/relationships/"


class _Formula:
    """A cell holding a formula and no saved result."""

    def __init__(self, text: str):
        self.text = text

    def __repr__(self) -> str:
        return f"={self.text}"


def read_with_cells(path: str | Path) -> tuple[dict[str, dict[str, Any]], dict[str, str]]:
    """The case-file mapping held by the inputs sheet of a workbook written by `tea`, and the cell of each key.

    Returns ``{section: {key spelled in the case's units: value}}`` for
    :func:`tea.inputs.case.load_mapping`. A row is taken when the case file gave it
    (origin "case") or when its value differs from the value the workbook was
    written with (an edit); preset, default and derived values left alone are
    filled in again by the loader, so an edited climate or preset takes effect.
    A blank value means "not given".

    and ``{"section.key": "Inputs!B12"}``.

    Raises
    ------
    CaseError
        naming the file and the cell or key when the workbook cannot be read;
        :class:`CellErrors` when single cells are wrong (the rest is read).
    """
    source = str(path)
    p = Path(path)
    if not p.exists():
        raise CaseError([Problem(source, "", "file not found")])
    book = _Book(p, source)
    try:
        sheets = book.sheets()
        titles = [t for t in sheets if t == INPUTS or t.endswith(" " + INPUTS)]
        if not titles:
            raise CaseError([Problem(source, "", f"no {INPUTS!r} sheet: not a workbook written by tea")])
        if len(titles) > 1:
            raise CaseError([Problem(source, "", f"holds {len(titles)} cases ({brief(', '.join(titles))}); "
                                     "read one case's workbook instead")])
        width = len(INPUT_COLUMNS)  # the columns read; any further ones are not the reader's
        grid = book.grid(sheets[titles[0]], titles[0], width)
    finally:
        book.close()
    empty = [None] * width
    rows = [grid.get(i, empty) for i in range(max(grid, default=-1) + 1)]
    return _mapping(rows, titles[0], source)


def read_case_mapping(path: str | Path) -> dict[str, dict[str, Any]]:
    """The case-file mapping of a workbook written by `tea` (:func:`read_with_cells` without the cells)."""
    return read_with_cells(path)[0]


class _Book:
    """The zip of an xlsx file, its parts read with bounds and parsed without entities."""

    def __init__(self, path: Path, source: str):
        self.source = source
        try:
            size = path.stat().st_size
        except OSError as exc:
            raise unreadable(source, exc, "a workbook written by tea (.xlsx)") from None
        if size > MAX_FILE_BYTES:
            raise self.error(f"{size:,} bytes: larger than a workbook written by tea can be "
                             f"({MAX_FILE_BYTES:,} bytes at most)")
        try:
            self.zip = zipfile.ZipFile(path)
        except OSError as exc:
            # a file too small to hold a zip's directory fails its seek (EINVAL); any other error of the machine
            # (no permission, a folder, an input/output error) is the file not read, not a file of another kind
            if exc.errno not in (None, errno.EINVAL):
                raise unreadable(source, exc, "a workbook written by tea (.xlsx)") from None
            raise self.error(f"cannot read the workbook: not an xlsx file ({exc.__class__.__name__}: "
                             f"{brief(str(exc))})") from None
        except (zipfile.BadZipFile, ValueError, EOFError) as exc:
            raise self.error(f"cannot read the workbook: not an xlsx file ({exc.__class__.__name__}: "
                             f"{brief(str(exc))})") from None
        if len(self.zip.infolist()) > MAX_PARTS:
            self.close()
            raise self.error(f"holds {len(self.zip.infolist()):,} parts: not a workbook written by tea")
        self.names = {info.filename for info in self.zip.infolist()}
        self._rels: dict[str, dict[str, str]] = {}

    def error(self, message: str, key: str = "") -> CaseError:
        return CaseError([Problem(self.source, key, message)])

    def close(self) -> None:
        if hasattr(self, "zip"):
            self.zip.close()

    def read(self, name: str, required: bool = True) -> bytes | None:
        """A part's bytes, refused before unpacking when it is larger than MAX_PART_BYTES."""
        if name not in self.names:
            if not required:
                return None
            raise self.error(f"cannot read the workbook: part {brief(name)} is missing")
        info = self.zip.getinfo(name)
        if info.file_size > MAX_PART_BYTES:
            raise self.error(f"cannot read the workbook: part {brief(name)} unpacks to {info.file_size:,} bytes "
                             f"(at most {MAX_PART_BYTES:,})")
        try:
            with self.zip.open(info) as f:
                data = f.read(MAX_PART_BYTES + 1)
        except (zipfile.BadZipFile, zlib.error, OSError, EOFError, RuntimeError, NotImplementedError, ValueError) as exc:
            raise self.error(f"cannot read the workbook: part {brief(name)} is damaged "
                             f"({exc.__class__.__name__}: {brief(str(exc))})") from None
        if len(data) > MAX_PART_BYTES:
            raise self.error(f"cannot read the workbook: part {brief(name)} unpacks to more than "
                             f"{MAX_PART_BYTES:,} bytes")
        return data

    def xml(self, name: str, required: bool = True):
        """A part parsed: no DTD, no entities, no external references."""
        from defusedxml import DefusedXmlException
        from defusedxml.ElementTree import ParseError, fromstring

        data = self.read(name, required)
        if data is None:
            return None
        try:
            return fromstring(data, forbid_dtd=True, forbid_entities=True, forbid_external=True)
        except DefusedXmlException as exc:
            raise self.error(f"cannot read the workbook: part {brief(name)} declares a DTD or entities, which a "
                             f"workbook does not need ({exc.__class__.__name__})") from None
        except (ParseError, ValueError, RecursionError) as exc:
            raise self.error(f"cannot read the workbook: part {brief(name)} is not well-formed XML "
                             f"({brief(str(exc))})") from None

    def _targets(self, part: str) -> dict[str, str]:
        """Relationship id -> target part name, of a part's relationships."""
        if part not in self._rels:
            self._rels[part] = self._read_targets(part)
        return self._rels[part]

    def _read_targets(self, part: str) -> dict[str, str]:
        folder, _, base = part.rpartition("/")
        rels = self.xml(f"{folder}/_rels/{base}.rels", required=False)
        out = {}
        for rel in [] if rels is None else rels:
            target, rid = rel.get("Target") or "", rel.get("Id") or ""
            if rel.get("TargetMode") == "External":
                continue
            out[rid] = target.lstrip("/") if target.startswith("/") else posixpath.normpath(f"{folder}/{target}")
        return out

    def sheets(self) -> dict[str, str]:
        """Sheet title -> its part name."""
        root = self.xml("xl/workbook.xml")
        targets = self._targets("xl/workbook.xml")
        out = {}
        for el in root.iter():
            if _local(el.tag) == "sheet":
                rid = next((v for k, v in el.attrib.items() if _local(k) == "id"), None)
                title = el.get("name") or ""
                if rid in targets:
                    out[xlsx_unescape(title)] = targets[rid]
        return out

    def shared_strings(self) -> list[str]:
        targets = self._targets("xl/workbook.xml")
        name = next((t for t in targets.values() if t.endswith("sharedStrings.xml")), "xl/sharedStrings.xml")
        root = self.xml(name, required=False)
        if root is None:
            return []
        return [_text_of(si) for si in root if _local(si.tag) == "si"]

    def grid(self, part: str, title: str, width: int) -> dict[int, list[Any]]:
        """The saved values of a sheet's first ``width`` columns: row index (0-based) -> cells (None where empty)."""
        root = self.xml(part)
        data = next((el for el in root if _local(el.tag) == "sheetData"), ())
        strings = None
        grid: dict[int, list[Any]] = {}
        row_no = 0
        for row in data:
            if _local(row.tag) != "row":
                continue
            row_no = _index(row.get("r"), row_no + 1, MAX_ROW, self, title)
            cells: list[Any] = [None] * width
            col_no = 0
            for c in row:
                if _local(c.tag) != "c":
                    continue
                ref = c.get("r")
                col_no = _index(_letters_to_col(ref) if ref else None, col_no + 1, MAX_COL, self, title)
                if col_no > width:
                    continue
                kind = c.get("t", "n")
                if kind == "s" and strings is None:
                    strings = self.shared_strings()
                value = _cell_value(c, kind, strings or [])
                if value is _BAD:
                    raise self.error(f"cell holds a value its type ({brief(kind)}) cannot have",
                                     f"{title}!{ref or col_letter(col_no)}")
                cells[col_no - 1] = value
            if any(v is not None for v in cells):
                grid.setdefault(row_no - 1, cells)
        return grid


_BAD = object()


def _local(tag: str) -> str:
    return tag.rpartition("}")[2]


def _text_of(el) -> str:
    """The text of a string item (<si> or <is>): its <t>, or its runs' <t>, phonetic runs left out."""
    parts = []
    for child in el:
        name = _local(child.tag)
        if name == "t":
            parts.append(child.text or "")
        elif name == "r":
            parts.extend(t.text or "" for t in child if _local(t.tag) == "t")
    return xlsx_unescape("".join(parts))


def _letters_to_col(ref: str) -> int | None:
    """The column number of a cell reference (``C12`` -> 3); -1 when it is not one."""
    n = 0
    for i, ch in enumerate(ref):
        if "A" <= ch <= "Z":
            n = n * 26 + ord(ch) - 64
        elif "a" <= ch <= "z":
            n = n * 26 + ord(ch) - 96
        else:
            return n if i and ref[i:].isdigit() and i <= 3 else -1
    return n if 0 < len(ref) <= 3 else -1


def _index(given: Any, default: int, limit: int, book: _Book, title: str) -> int:
    if given is None:
        return default
    try:
        n = int(given)
    except (TypeError, ValueError):
        raise book.error(f"a row or cell reference {brief(given)} is not one", title) from None
    if not 1 <= n <= limit:
        raise book.error(f"a row or cell reference {brief(given)} lies outside a worksheet", title)
    return n


def _number(text: str) -> Any:
    """A saved number as openpyxl gives it: int when written without a point or exponent."""
    if "." in text or "e" in text or "E" in text:
        return float(text)
    return int(text)


def _cell_value(c, kind: str, strings: list[str]) -> Any:
    v = f = inline = None
    for child in c:
        name = _local(child.tag)
        if name == "v":
            v = child.text
        elif name == "f":
            f = child.text or ""
        elif name == "is":
            inline = child
    if kind == "inlineStr":
        return _text_of(inline) if inline is not None else None
    if v is None or v == "":
        return _Formula(f) if f is not None else None
    try:
        if kind == "s":
            return strings[int(v)]
        if kind == "b":
            return v.strip() in ("1", "true")
        if kind in ("str", "e", "d"):
            return xlsx_unescape(v)
        value = _number(v.strip())
    except (ValueError, IndexError, OverflowError):
        return _BAD
    return value


def _mapping(rows: list[Sequence[Any]], title: str, source: str) -> tuple[dict[str, dict[str, Any]], dict[str, str]]:
    """The case mapping of the inputs sheet's rows, and the cell of each key's value."""
    head = None
    for i, row in enumerate(rows):
        if row and tuple(row[: len(INPUT_COLUMNS)]) == INPUT_COLUMNS:
            head = i
            break
    if head is None:
        raise CaseError([Problem(source, f"{title}!A{INPUT_HEAD_ROW}",
                                 f"header row {', '.join(INPUT_COLUMNS)} not found")])
    col = {name: j for j, name in enumerate(INPUT_COLUMNS)}
    problems: list[Problem] = []
    lists: dict[tuple[str, str], list[tuple[int, Any, Any, str, int]]] = {}
    out: dict[str, dict[str, Any]] = {}
    cells: dict[str, str] = {}  # "section.key" -> its value's cell, e.g. "Inputs!B12"
    current_origin: dict[tuple[str, str], str] = {}
    seen: dict[tuple[str, str], int] = {}
    index = _key_index()

    def cell(j: int, r: int) -> str:
        return f"{title}!{col_letter(j + 1)}{r}"

    i = head
    for i in range(head + 1, len(rows)):
        row = list(rows[i]) + [None] * len(INPUT_COLUMNS)
        section, key = row[col["Section"]], row[col["Key"]]
        if section is None and key is None:
            break
        r = i + 1
        if not isinstance(section, str) or not isinstance(key, str):
            problems.append(Problem(source, cell(col["Key"], r), "expected a section and a key in text"))
            continue
        if (section, key) in seen:
            problems.append(Problem(source, f"{_name(section)}.{_name(key)} ({cell(col['Key'], r)})",
                                    f"given twice (also on row {seen[(section, key)]}); keep one row"))
            continue
        seen[(section, key)] = r
        value, written = row[col["Value"]], row[col["As written"]]
        origin = row[col["Origin"]]
        if isinstance(value, _Formula):
            problems.append(Problem(source, f"{_name(section)}.{_name(key)} ({cell(col['Value'], r)})",
                                    f"holds a formula ({clip(repr(value), SHOWN_LIMIT)}) with no saved result; open the workbook "
                                    "in a spreadsheet program and save it, or type the value"))
            continue
        if isinstance(written, _Formula):
            written = None
        m = re.fullmatch(r"(\w+)\[(\d+)\]", key)
        base = m.group(1) if m else key
        k = index.get((section, base))
        if k is None:
            out.setdefault(section, {})[key] = value  # the loader names the unknown key
            continue
        if isinstance(origin, str):
            current_origin[(section, base)] = origin
        where = f"{_name(section)}.{_name(key)} ({cell(col['Value'], r)})"
        cells.setdefault(f"{section}.{base}", cell(col["Value"], r))
        if k.kind == "list":
            lists.setdefault((section, base), []).append((int(m.group(2)) if m else 1, value, written, where, r))
            continue
        why = _cell_type_error(k, value, base)
        if why:
            problems.append(Problem(source, where, why))
            continue
        if current_origin.get((section, base)) == "case" or not _same(value, written):
            if value is not None and value != "":
                out.setdefault(section, {})[base] = value
    for (section, base), items in lists.items():
        items.sort()
        values, written = [], []
        bad = False
        for _, value, w, where, _ in items:
            if value is not None and not _is_number(value):
                problems.append(Problem(source, where, f"expected a number or a blank cell, got {brief(value)}"))
                bad = True
            values.append(value)
            written.append(w)
        if bad:
            continue
        while values and values[-1] is None:
            values.pop()
        while written and written[-1] is None:
            written.pop()
        if None in values:
            problems.append(Problem(source, f"{section}.{base}", "a list needs its numbers in consecutive cells "
                                    "from the first one, with no blank between them"))
            continue
        if current_origin.get((section, base)) == "case" or values != written:
            if values:
                out.setdefault(section, {})[base] = values
    kept: dict[str, str] = {}
    start = next((j for j in range(i, len(rows)) if tuple(rows[j][:2]) == KEPT_HEADER), None)
    if start is not None:
        for j in range(start + 1, len(rows)):
            section, chunk = rows[j][0], rows[j][1]
            if section is None:
                break
            if not isinstance(section, str) or not isinstance(chunk, (str, type(None))):
                problems.append(Problem(source, f"{title}!A{j + 1}", "expected a section name and its JSON text, "
                                        f"got {brief(section)} and {brief(chunk)}"))
                continue
            kept[section] = kept.get(section, "") + (chunk or "")
    for section, text in kept.items():
        where = f"{_name(section)} ({title}!B{start + 2})"
        try:
            out[section] = json.loads(text)
        except ValueError as exc:
            problems.append(Problem(source, where, f"malformed JSON: {brief(str(exc))}"))
        except RecursionError:
            problems.append(Problem(source, where, "malformed JSON: nested too deeply (a kept section needs "
                                    "a few levels)"))
    if problems:
        raise CellErrors(problems, out, cells)
    return out, cells


class CellErrors(CaseError):
    """Problems of single cells, with the rest of the sheet read (``mapping``) and where each key's value sits
    (``cells``), so that the loader can tell every other problem of the workbook in the same run."""

    def __init__(self, problems: list[Problem], mapping: dict[str, dict[str, Any]], cells: dict[str, str]):
        super().__init__(problems)
        self.mapping, self.cells = mapping, cells


def _name(text: str) -> str:
    """A section or key name as an error line shows it: bare when it is a plain name, else quoted and short."""
    return text if re.fullmatch(r"[\w\[\]]{1,60}", text) else brief(text)


@lru_cache(maxsize=None)
def _key_index() -> dict[tuple[str, str], schema.Key]:
    index = {}
    for k in schema.KEYS:
        for spelling in k.spellings():
            index[(k.section, spelling)] = k
    return index


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _same(a: Any, b: Any) -> bool:
    if a is None or a == "":
        return b is None or b == ""
    if _is_number(a) and _is_number(b):
        return float(a) == float(b)
    return a == b


def _cell_type_error(k: schema.Key, value: Any, spelling: str = "") -> str | None:
    """Why a cell's value has the wrong type for ``k``, its unit in the system the key is ``spelling``-ed in."""
    if value is None or value == "":
        return None
    if isinstance(value, str) and value.startswith("#"):
        return f"the cell holds an error value {brief(value)}"
    if k.kind in ("float", "int") and not _is_number(value):
        us = spelling == units.spell(k.template, "us_customary") != units.spell(k.template)
        return f"expected a number [{k.unit_text('us_customary' if us else 'metric')}], got {brief(value)}"
    if k.kind == "bool" and not isinstance(value, bool):
        return f"expected TRUE or FALSE, got {brief(value)}"
    if k.kind in ("str", "enum") and not isinstance(value, str):
        return f"expected text, got {brief(value)}"
    return None
