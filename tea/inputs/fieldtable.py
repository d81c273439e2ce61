"""Field tables: the CSV file ``tea screen`` reads, one row per field over a base case.

:class:`FieldTable` opens the file, finds the header row, works out the
delimiter (comma, semicolon or tab, from the header), names what each column
is (:func:`resolve_column`), then hands out the data rows in chunks; its
:meth:`FieldTable.check` merges a chunk's cells over the base case and checks
every cell and the rules that tie keys together, row by row.

A problem in one row skips that row only, and is reported with the row's line
in the file: a line that is not UTF-8 text, malformed quoting (a quoted cell
not closed on its line, text after a closing quote), a line or a cell too
long to be a field's (:data:`MAX_CELL_CHARS`, :data:`MAX_LINE_BYTES`), a cell
that is not a number where one is expected or out of range, an empty area, a
row with more or fewer cells than the header has columns (never filled up
with the base case's values: a cell missing anywhere would shift the rest).
Only a file whose header cannot be read, or whose columns contradict each
other, is refused as a whole. A field id given twice is a warning. The file
is read line by line, so its size does not bound what can be read, and a
UTF-8 byte-order mark is accepted.
"""

from __future__ import annotations

import re

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, BinaryIO, Iterator

import numpy as np

from tea.core.errors import CaseError, Problem, unreadable
from tea.core.safe_text import brief, clip
from tea.inputs import published, schema
from tea.inputs.case import MAGNITUDE_LIMIT, Case

ID_COLUMN = "field_id"
#: schema keys of kind str a field table may carry (labels, not model inputs)
LABEL_KEYS = ("field.name",)
#: the key whose empty cell is a bad row, not the base case's value: each field has its own area
AREA_KEY = "field.area_ha"
#: delimiters a field table may use, the first preferred on a tie
DELIMITERS = (",", ";", "\t")
#: characters one cell may hold (a field's name or id is far shorter)
MAX_CELL_CHARS = 10_000
#: bytes one line may hold; the rest of a longer line is skipped unread
MAX_LINE_BYTES = 1 << 20
#: repeated field ids named in the warning; the rest are counted
SHOWN_DUPLICATES = 5

_BOM = b"\xef\xbb\xbf"


@dataclass
class Column:
    """One column of a field table: what its header names."""

    header: str
    index: int
    kind: str  # "id" | "key" | "label" | "month" | "unknown"
    key: schema.Key | None = None
    factor: float = 1.0
    reason: str = ""
    month: int = 0  # a site-climate column: its month, 1 = January


@dataclass
class BadRow:
    """One problem of one row of a field table."""

    line: int  # line number in the file (the header is line 1 when there are no comment lines)
    row: int  # data row number, 1 = the first data row
    column: str
    value: str
    reason: str

    def __str__(self) -> str:
        where = f"line {self.line} (row {self.row})"
        col = f": {self.column}" if self.column else ""
        return f"{where}{col}: {self.reason}"


@dataclass
class Record:
    """One data row as read: its line, its row number, its cells (stripped), or why it cannot be read."""

    line: int
    row: int
    cells: list[str]
    problem: str = ""


def _all_spellings() -> dict[str, list[tuple[schema.Key, float]]]:
    from tea.inputs.case import _spelling_index

    out: dict[str, list[tuple[schema.Key, float]]] = {}
    for section, table in _spelling_index().items():
        for spelling, (k, factor) in table.items():
            out.setdefault(spelling, []).append((k, factor))
    return out


#: a site-climate column of one month: ``radiation_mj_per_m2_per_day_7`` (July), ``temperature_c_1``
_MONTH_COLUMN = re.compile(r"(?:site_climate\.)?(radiation_mj_per_m2_per_day|temperature_c|rainfall_mm|pet_mm)_(\d{1,2})")


def resolve_column(header: str, index: int) -> Column:
    """What a field-table header names: the id column, a case key (any spelling), or nothing known."""
    from tea.inputs.case import _spelling_index, _suggest

    name = header.strip()
    if name == ID_COLUMN:
        return Column(header, index, "id")
    month = _MONTH_COLUMN.fullmatch(name)
    if month:
        n = int(month.group(2))
        path = f"site_climate.{month.group(1)}"
        if not 1 <= n <= 12:
            return Column(header, index, "unknown", reason=f"{path} has months 1 to 12, not {n}")
        return Column(header, index, "month", schema.BY_PATH[path], 1.0, month=n)
    spelled = _spelling_index()
    hit = None
    if "." in name:
        section, _, key = name.partition(".")
        found = spelled.get(section, {}).get(key)
        if found is None:
            candidates = [f"{s}.{k}" for s in spelled for k in spelled[s]]
            return Column(header, index, "unknown", reason="unknown column" + _suggest(name, candidates))
        hit = found
    else:
        options = _all_spellings().get(name, [])
        if len(options) > 1:
            paths = ", ".join(f"{k.section}.{name}" for k, _ in options)
            return Column(header, index, "unknown", reason=f"ambiguous column: write it as one of {paths}")
        if not options:
            return Column(header, index, "unknown",
                          reason="unknown column" + _suggest(name, list(_all_spellings()) + [ID_COLUMN]))
        hit = options[0]
    k, factor = hit
    if k.path in LABEL_KEYS:
        return Column(header, index, "label", k, factor)
    if k.section in ("case", "crop") or k.kind in ("list", "bool", "str"):
        return Column(header, index, "unknown", k, factor,
                      reason=f"{k.path} cannot differ between fields of one screen (it belongs to the base case)")
    return Column(header, index, "key", k, factor)


# ----------------------------------------------------------------------------- reading lines and cells
def _physical_lines(handle: BinaryIO) -> Iterator[tuple[int, bytes | None]]:
    """(line number, bytes without the line end) of each line; None for a line longer than MAX_LINE_BYTES,
    whose rest is skipped unread. A lone carriage return also ends a line."""
    number = 0
    first = True
    while True:
        raw = handle.readline(MAX_LINE_BYTES + 1)
        if not raw:
            return
        if first:
            raw = raw.removeprefix(_BOM)
            first = False
        too_long = len(raw) > MAX_LINE_BYTES and not raw.endswith(b"\n")
        if too_long:
            while raw and not raw.endswith(b"\n"):
                raw = handle.readline(MAX_LINE_BYTES)
            number += 1
            yield number, None
            continue
        body = raw.rstrip(b"\n").rstrip(b"\r")
        for part in body.split(b"\r") if b"\r" in body else (body,):
            number += 1
            yield number, part


def _decode(data: bytes) -> tuple[str, str]:
    """(text, problem) of one line's bytes."""
    try:
        return data.decode("utf-8"), ""
    except UnicodeDecodeError as exc:
        bad = data[exc.start:exc.start + 1].hex()
        return "", (f"not UTF-8 text (byte 0x{bad} at byte {exc.start + 1} of the line); "
                    "save the table as UTF-8 CSV")


def split_line(text: str, delimiter: str) -> tuple[list[str], str]:
    """(cells, problem) of one line, quoted the CSV way (RFC 4180); cells stripped of surrounding spaces.

    A quoted cell ends on its own line; inside it a quote is written as two.
    A quote inside an unquoted cell, or text after a closing quote, is
    malformed quoting, reported rather than guessed at.

    >>> split_line('F1, "North, upper" ,5', ",")
    (['F1', 'North, upper', '5'], '')
    >>> split_line('F1,"North,5', ",")[1]
    'malformed quoting: a quoted cell is not closed on its line'
    >>> split_line('F1,No"rth,5', ",")[1]
    'malformed quoting: a quote inside an unquoted cell (cell 2); quote the whole cell and write the quote as two'
    """
    if "\x00" in text:
        return [], "holds a NUL character: not a text line"
    if '"' not in text:
        return [c.strip() for c in text.split(delimiter)], ""
    cells: list[str] = []
    i, n = 0, len(text)
    while True:
        j = i
        while j < n and text[j] in " \t" and text[j] != delimiter:
            j += 1
        if j < n and text[j] == '"':
            parts, k = [], j + 1
            while True:
                q = text.find('"', k)
                if q < 0:
                    return [], "malformed quoting: a quoted cell is not closed on its line"
                parts.append(text[k:q])
                if text.startswith('"', q + 1):
                    parts.append('"')
                    k = q + 2
                    continue
                break
            end = text.find(delimiter, q + 1)
            rest = text[q + 1:] if end < 0 else text[q + 1:end]
            if rest.strip():
                return [], (f"malformed quoting: text after a closing quote in cell {len(cells) + 1}; inside a "
                            'quoted cell write a quote as two ("")')
            cells.append("".join(parts).strip())
        else:
            end = text.find(delimiter, i)
            cell = text[i:] if end < 0 else text[i:end]
            if '"' in cell:
                return [], (f"malformed quoting: a quote inside an unquoted cell (cell {len(cells) + 1}); quote the "
                            "whole cell and write the quote as two")
            cells.append(cell.strip())
        if end < 0:
            return cells, ""
        i = end + 1


def sniff_delimiter(header: str) -> str:
    """The delimiter that splits the header row into the most cells (a comma on a tie).

    >>> sniff_delimiter("field_id;area_ha;site_factor"), sniff_delimiter("field_id"), sniff_delimiter("a\\tb")
    (';', ',', '\\t')
    """
    best, most = DELIMITERS[0], 1
    for d in DELIMITERS:
        cells, problem = split_line(header, d)
        if not problem and len(cells) > most:
            best, most = d, len(cells)
    return best


# ----------------------------------------------------------------------------- the table
class FieldTable:
    """An open field table: its columns, then its data rows in chunks, each checked over the base case.

    Raises :class:`CaseError` for the file as a whole (not found, unreadable,
    no header, a header that cannot be read, columns naming one key twice).
    """

    def __init__(self, path: str | Path, case: Case):
        self.path = Path(path)
        self.source = str(path)
        self.case = case
        try:
            self._handle = self.path.open("rb")
        except OSError as exc:  # not found or a folder (exit 2); refused by the machine (exit 1)
            raise unreadable(self.source, exc, "a field table (.csv)") from None
        self._lines = _physical_lines(self._handle)
        self.header_line, header = self._header()
        self.delimiter = sniff_delimiter(header)
        cells, problem = split_line(header, self.delimiter)
        if problem:
            self.close()
            raise CaseError([Problem(self.source, f"line {self.header_line}", f"header row: {problem}")])
        self.columns = [resolve_column(h, j) for j, h in enumerate(cells)]
        empty = [c for c in self.columns if not c.header.strip()]
        if empty:
            self.close()
            raise CaseError([Problem(self.source, f"column {empty[0].index + 1}", "has no name in the header row")])
        self.checker = _Checker(case, self.columns, self.source)
        self.warnings = [f"{self.source}: column {brief(c.header)}: {c.reason}; rows with a value there are skipped"
                         for c in self.columns if c.kind == "unknown"]
        if len(self.columns) == 1 and self.columns[0].kind == "unknown" and any(d in header for d in ";\t|"):
            self.warnings.append(f"{self.source}: the header row is one column; separate columns with commas, "
                                 "semicolons or tabs")
        self.rows_read = 0
        self._ids: dict[str, int] = {}
        self._repeated: list[tuple[str, int, int]] = []

    def _header(self) -> tuple[int, str]:
        for number, data in self._lines:
            if data is None:
                self.close()
                raise CaseError([Problem(self.source, f"line {number}", f"header row longer than "
                                         f"{MAX_LINE_BYTES:,} bytes: not a field table")])
            text, problem = _decode(data)
            if problem:
                self.close()
                raise CaseError([Problem(self.source, f"line {number}", f"header row {problem}")])
            if text.strip() and not text.lstrip().startswith("#"):
                return number, text
        self.close()
        raise CaseError([Problem(self.source, "", "no header row: expected a row naming the columns")])

    def close(self) -> None:
        self._handle.close()

    def __enter__(self) -> "FieldTable":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()

    def records(self) -> Iterator[Record]:
        """Every data row (comment and blank lines skipped), unreadable ones with their problem."""
        for number, data in self._lines:
            if data is None:
                self.rows_read += 1
                yield Record(number, self.rows_read, [], f"line longer than {MAX_LINE_BYTES:,} bytes")
                continue
            text, problem = _decode(data)
            if not problem:
                stripped = text.strip()
                if not stripped or stripped.startswith("#"):
                    continue
                cells, problem = split_line(text, self.delimiter)
                if not problem and not any(cells):
                    continue  # a row of empty cells (a spreadsheet's trailing delimiters)
                long = next((j for j, c in enumerate(cells) if len(c) > MAX_CELL_CHARS), None)
                if long is not None:
                    problem = (f"cell {long + 1} holds {len(cells[long]):,} characters; a field-table cell "
                               f"holds at most {MAX_CELL_CHARS:,}")
            self.rows_read += 1
            yield Record(number, self.rows_read, [] if problem else cells, problem)

    def chunks(self, size: int) -> Iterator[list[Record]]:
        """The data rows, ``size`` at a time."""
        chunk: list[Record] = []
        for record in self.records():
            chunk.append(record)
            if len(chunk) >= size:
                yield chunk
                chunk = []
        if chunk:
            yield chunk

    def check(self, chunk: list[Record]) -> tuple[dict[str, Any], np.ndarray, list[BadRow], dict[str, np.ndarray]]:
        """Merged values of a chunk's rows, which rows are good, their problems, and the cells to show."""
        values, good, bad, shown = self.checker.check(chunk)
        ids = next((c for c in self.columns if c.kind == "id"), None)
        if ids is not None:
            for i in np.flatnonzero(good):
                fid = shown[ids.header][i]
                if fid in self._ids:
                    self._repeated.append((fid, self._ids[fid], chunk[i].line))
                else:
                    self._ids[fid] = chunk[i].line
        return values, good, bad, shown

    def duplicate_warnings(self) -> list[str]:
        """One warning naming the first repeated field ids (after every row was checked)."""
        if not self._repeated:
            return []
        named = "; ".join(f"{brief(fid)} on line {line} (first on line {first})"
                          for fid, first, line in self._repeated[:SHOWN_DUPLICATES])
        more = len(self._repeated) - SHOWN_DUPLICATES
        return [f"{self.source}: {ID_COLUMN} given more than once: {named}"
                + (f"; and {more} more repeats" if more > 0 else "") + "; each field is evaluated, check the ids"]


def count_rows(path: str | Path) -> int:
    """About how many data rows a table holds (for a progress bar): non-blank, non-comment lines less the header."""
    try:
        with Path(path).open("rb") as f:
            return max(0, sum(1 for line in f if line.strip() and not line.lstrip().startswith(b"#")) - 1)
    except OSError:
        return 0


# ----------------------------------------------------------------------------- checking rows
def _numbers(raw: np.ndarray, present: np.ndarray, header: str, flag) -> np.ndarray:
    """A column's cells as numbers (NaN where empty); a cell that is no finite number, or one beyond the
    size a case file allows (``MAGNITUDE_LIMIT``), is flagged and NaN."""
    import pandas as pd

    nums = np.array(pd.to_numeric(pd.Series(raw, dtype=object), errors="coerce"), dtype=float)
    for i in np.flatnonzero(present & ~np.isfinite(nums)):
        flag(i, header, str(raw[i]), _number_reason(str(raw[i])))
    with np.errstate(invalid="ignore"):
        huge = present & np.isfinite(nums) & (np.abs(nums) > MAGNITUDE_LIMIT)
    for i in np.flatnonzero(huge):
        flag(i, header, str(raw[i]), f"expected a number of size at most {MAGNITUDE_LIMIT:g}, got {brief(str(raw[i]))}")
    nums[~present | ~np.isfinite(nums) | huge] = np.nan
    return nums


def _range_reason(k: schema.Key, value: float, factor: float, system: str) -> str | None:
    from tea.inputs.case import _range_error

    return _range_error(k, value, factor, system)


def _number_reason(text: str) -> str:
    """Why a cell is not a number, with the likely fix."""
    try:
        float(text)
        return f"expected a finite number, got {brief(text)}"
    except ValueError:
        pass
    hint = ""
    if text.count(",") == 1 and text.replace(",", "", 1).replace(".", "", 1).strip("+-").isdigit():
        hint = "; write the decimal mark as a point (5.5, not 5,5)"
    return f"expected a number, got {brief(text)}{hint}"


def _width_problem(cells: list[str], width: int) -> str:
    """Why a row's cells cannot be matched to the header's ``width`` columns ("" when they can).

    A cell missing or one too many may sit anywhere in the row, so every cell after it could be in the
    wrong column: such a row is never filled up with the base case's values nor cut to the header.

    >>> print(_width_problem(["F", "5", "0.9"], 5))
    expected 5 cells, one per header column, got 3; to keep a base value leave its cell empty
    >>> print(_width_problem(["F", "5", "x"], 2))
    expected 2 cells, one per header column, got 3: a value ('x') in no known column
    """
    n = len(cells)
    if n == width:
        return ""
    expected = f"expected {width} cells, one per header column, got {n}"
    if n < width:
        return expected + "; to keep a base value leave its cell empty"
    extra = next((v for v in cells[width:] if v), None)
    return expected + (f": a value ({brief(extra)}) in no known column" if extra is not None
                       else ": empty cells after the last column (a delimiter too many?)")


class _Checker:
    """Checks and merges the rows of a field table over a base case, chunk by chunk."""

    def __init__(self, case: Case, columns: list[Column], source: str):
        self.case = case
        self.columns = columns
        self.source = source
        self.system = case.unit_system
        by_path: dict[str, Column] = {}
        problems = []
        for c in columns:
            if c.kind in ("key", "label"):
                if c.key.path in by_path:
                    problems.append(Problem(source, clip(c.header, 80), "names the same key as column "
                                            f"{brief(by_path[c.key.path].header)}; keep one of them"))
                by_path[c.key.path] = c
        ids = [c for c in columns if c.kind == "id"]
        if len(ids) > 1:
            problems.append(Problem(source, ID_COLUMN, "given twice; keep one column"))
        price_key = "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"
        for c in columns:
            if c.kind == "key" and c.key.path in ("revenue.price_per_gj", "revenue.price_per_t_dm") \
                    and c.key.path != price_key:
                c.kind, c.reason = "unknown", (f"the base case prices by {price_key}; give the price in that key, "
                                               "not in this one")
        self.keys = [c for c in columns if c.kind == "key"]
        self.months = [c for c in columns if c.kind == "month"]
        if self.months and case.origin.get("yield.mature_t_dm_per_ha") == "case":
            problems.append(Problem(source, clip(self.months[0].header, 80),
                                    "the base case gives its mature yield, so a field's own climate would change "
                                    "nothing: leave yield.mature_t_dm_per_ha out of the base case to estimate each "
                                    "field's yield from its climate"))
        if self.months and "yield.mature_t_dm_per_ha" in {c.key.path for c in self.keys}:
            problems.append(Problem(source, "yield.mature_t_dm_per_ha", "a column of the mature yield and columns "
                                    "of the site climate: give one or the other"))
        if problems:
            raise CaseError(problems)
        self.by_path = {c.key.path: c for c in self.keys}

    def check(self, chunk: list[Record]) -> tuple[dict[str, Any], np.ndarray, list[BadRow], dict[str, np.ndarray]]:
        """Merged values for the chunk's rows, which rows are good, the problems, and the shown cells."""
        import pandas as pd

        from tea.inputs.case import _suggest

        m = len(chunk)
        width = len(self.columns)
        bad_rows: list[BadRow] = []
        good = np.ones(m, dtype=bool)

        unreadable = np.array([bool(r.problem) for r in chunk], dtype=bool)

        def flag(i: int, column: str, value: str, reason: str) -> None:
            if unreadable[i]:  # its one problem is that it cannot be read
                return
            good[i] = False
            bad_rows.append(BadRow(chunk[i].line, chunk[i].row, column, clip(value, 200), reason))

        for i, record in enumerate(chunk):
            problem = record.problem or _width_problem(record.cells, width)
            if problem:
                good[i] = False
                unreadable[i] = True  # its one problem: a row whose cells cannot be matched to the columns
                extra = next((v for v in record.cells[width:] if v), "")
                bad_rows.append(BadRow(record.line, record.row, "", clip(extra, 200), problem))
        # the table column by column: each an object array of stripped strings
        padded = [r.cells[:width] + [""] * (width - len(r.cells)) if len(r.cells) != width else r.cells
                  for r in chunk]
        columns = [np.array(col, dtype=object) for col in zip(*padded)] if m else \
            [np.empty(0, dtype=object) for _ in range(width)]

        for c in self.columns:
            if c.kind == "unknown":
                raw = columns[c.index]
                for i in np.flatnonzero(raw != ""):
                    flag(i, c.header, str(raw[i]), c.reason)

        values: dict[str, Any] = dict(self.case.values)
        shown: dict[str, np.ndarray] = {}
        given: dict[str, np.ndarray] = {}
        for c in self.columns:
            if c.kind in ("id", "label"):
                shown[c.header] = columns[c.index]
            if c.kind == "id":
                for i in np.flatnonzero(columns[c.index] == ""):
                    flag(i, c.header, "", "no field id given: each field needs one, or its figures could not be "
                         "told apart from the others'")
        for c in self.keys:
            k = c.key
            raw = columns[c.index]
            shown[c.header] = raw
            present = raw != ""
            if k.path == AREA_KEY:
                for i in np.flatnonzero(~present):
                    flag(i, c.header, "", "no area given: each field needs its own area (an empty cell would "
                         "take the base case's)")
            given[k.path] = present
            base = values.get(k.path)
            if k.kind == "enum":
                for i in np.flatnonzero(present & ~np.isin(raw, k.choices)):
                    v = str(raw[i])
                    flag(i, c.header, v, f"expected one of {', '.join(k.choices)}, got {brief(v)}"
                         + _suggest(v, k.choices))
                values[k.path] = np.where(present, raw, base if base is not None else "").astype(str)
                continue
            nums = _numbers(raw, present, c.header, flag)
            if k.kind == "int":
                fractional = np.isfinite(nums) & (nums != np.round(nums))
                for i in np.flatnonzero(fractional):
                    flag(i, c.header, str(raw[i]), f"expected a whole number, got {brief(str(raw[i]))}")
                nums[fractional] = np.nan
            with np.errstate(over="ignore", invalid="ignore"):
                canonical = nums * c.factor
            ok = present & np.isfinite(canonical)
            out_of_range = np.zeros(m, dtype=bool)
            if k.lo is not None:
                out_of_range |= ok & ((canonical < k.lo) | ((canonical == k.lo) if k.lo_open else False))
            if k.hi is not None:
                out_of_range |= ok & ((canonical > k.hi) | ((canonical == k.hi) if k.hi_open else False))
            for i in np.flatnonzero(out_of_range):
                flag(i, c.header, str(raw[i]),
                     _range_reason(k, float(canonical[i]), c.factor, self.system) or "out of range")
            base_value = np.nan if base is None else float(base)
            merged = np.where(ok & ~out_of_range, canonical, base_value)
            if k.kind == "int":
                merged = np.where(np.isfinite(merged) & (np.abs(merged) < 2**53), merged, 0).astype(np.int64)
            values[k.path] = merged

        if self.months:
            self._climate(values, columns, shown, flag, good, m)
        self._derive(values, given, flag, good.copy(), m)
        self._cross_checks(values, given, flag, good.copy(), m)
        return values, good, bad_rows, shown

    def _climate(self, values, columns, shown, flag, good, m) -> None:
        """Each field's mature yield estimated from its own site climate (months it leaves empty: the base's)."""
        import pandas as pd

        from tea.inputs import site

        base = self.case.values
        own: dict[str, np.ndarray] = {}
        present_any = np.zeros(m, dtype=bool)
        for c in self.months:
            raw = columns[c.index]
            shown[c.header] = raw
            present = raw != ""
            nums = _numbers(raw, present, c.header, flag)
            k = c.key
            wrong = np.isfinite(nums) & (((nums < k.lo) if k.lo is not None else False)
                                         | ((nums > k.hi) if k.hi is not None else False))
            for i in np.flatnonzero(wrong):  # the same range a case file's 12 months must keep
                flag(i, c.header, str(raw[i]), _range_reason(k, float(nums[i]), 1.0, self.system) or "out of range")
            nums[wrong] = np.nan
            path = c.key.path
            if path not in own:
                start = base.get(path)
                own[path] = np.tile(np.asarray(start if start is not None else [np.nan] * 12, dtype=float), (m, 1))
            own[path][:, c.month - 1] = np.where(present & np.isfinite(nums), nums, own[path][:, c.month - 1])
            present_any |= present
        yields = np.broadcast_to(np.asarray(values["yield.mature_t_dm_per_ha"], dtype=float), (m,)).copy()
        for i in np.flatnonzero(present_any & good):
            row = dict(base)
            for path, table in own.items():
                row[path] = table[i].tolist()
            missing = [p for p in (site.RADIATION, site.TEMPERATURE) if row.get(p) is None
                       or not np.all(np.isfinite(row[p]))]
            if missing:
                flag(i, missing[0], "", f"{missing[0]}: give all 12 months (the base case has no site climate "
                     "to fill the others)")
                continue
            if (row.get(site.RAINFALL) is None) != (row.get(site.PET) is None):
                flag(i, site.RAINFALL, "", "rainfall_mm and pet_mm go together: give both or neither")
                continue
            season = site.season_for(row)
            potential = season.peak_t_per_ha
            if not potential > 0.0:
                why = site.no_yield_problem(season, "")
                flag(i, why.key, "", f"this field's {why.message}")
                continue
            yields[i] = potential
        values["yield.mature_t_dm_per_ha"] = yields

    def _derive(self, values, given, flag, ok, m) -> None:
        """Re-derive, per row, the values the base case looked up from climate, soil and current use.

        Only rows still ``ok`` (no bad cell) are looked up.
        """
        case = self.case
        climate = np.broadcast_to(np.asarray(values["field.climate"], dtype=str), (m,))
        soil = np.broadcast_to(np.asarray(values["field.soil"], dtype=str), (m,))
        use = np.broadcast_to(np.asarray(values["field.current_use"], dtype=str), (m,))
        none = np.zeros(m, bool)
        site_changed = ok & (given.get("field.climate", none) | given.get("field.soil", none))
        use_changed = ok & (given.get("field.climate", none) | given.get("field.current_use", none))
        ref = "carbon.soc_ref_t_c_per_ha"
        if case.origin.get(ref) != "case" and site_changed.any():
            refs = np.broadcast_to(np.asarray(values[ref], dtype=float), (m,)).copy()
            own = given.get(ref, none)
            for combo in set(zip(climate[site_changed & ~own], soil[site_changed & ~own])):
                rows = np.flatnonzero(site_changed & ~own & (climate == combo[0]) & (soil == combo[1]))
                try:
                    refs[rows] = published.soc_ref_t_c_per_ha(combo[0], combo[1])
                except KeyError:
                    for i in rows:
                        flag(i, ref, "", f"IPCC Table 2.3 has no reference SOC stock for {combo[0]} on {combo[1]}; "
                             "give soc_ref_t_c_per_ha in this row")
            values[ref] = refs
        names = ("carbon.current_f_lu", "carbon.current_f_mg", "carbon.current_f_i")
        derived = [p for p in names if case.origin.get(p) != "case"]
        if derived and use_changed.any():
            cols = {p: np.broadcast_to(np.asarray(values[p], dtype=float), (m,)).copy() for p in derived}
            for combo in set(zip(use[use_changed], climate[use_changed])):
                rows = np.flatnonzero(use_changed & (use == combo[0]) & (climate == combo[1]))
                factors = dict(zip(names, published.land_use_factors(combo[0], combo[1])))
                for p in derived:
                    keep = rows[~given.get(p, none)[rows]]
                    cols[p][keep] = factors[p]
            values.update(cols)
        prior = "carbon.prior_biomass_t_dm_per_ha"
        if case.origin.get(prior) == "derived" and use_changed.any():
            col = np.broadcast_to(np.asarray(values[prior], dtype=float), (m,)).copy()
            for combo in set(zip(use[use_changed], climate[use_changed])):
                rows = np.flatnonzero(use_changed & (use == combo[0]) & (climate == combo[1]))
                keep = rows[~given.get(prior, none)[rows]]
                col[keep] = published.prior_biomass_t_dm_per_ha(combo[0], combo[1])[0]
            values[prior] = col
        crop_names = ("carbon.crop_f_lu", "carbon.crop_f_mg", "carbon.crop_f_i")
        crop_use = case.values.get("carbon.crop_land_use")
        derived = [p for p in crop_names if case.origin.get(p) == "derived"]
        if derived and crop_use in published.LAND_USES and use_changed.any():
            cols = {p: np.broadcast_to(np.asarray(values[p], dtype=float), (m,)).copy() for p in derived}
            for combo in set(zip(use[use_changed], climate[use_changed])):
                rows = np.flatnonzero(use_changed & (use == combo[0]) & (climate == combo[1]))
                under = published.crop_land_use(crop_use, combo[0])
                factors = dict(zip(crop_names, published.land_use_factors(under, combo[1])))
                for p in derived:
                    keep = rows[~given.get(p, none)[rows]]
                    cols[p][keep] = factors[p]
            values.update(cols)

    def _cross_checks(self, values, given, flag, ok, m) -> None:
        """The case loader's rules that tie keys together, row by row (rows still ``ok`` only)."""
        from tea.inputs.case import YIELD_CEILING_T_DM_PER_HA, harvest_energy_problem

        g = lambda path: np.broadcast_to(np.asarray(values[path]), (m,))  # noqa: E731
        flag_ok = flag

        def flag(i, *args):  # noqa: F811
            if ok[i]:
                flag_ok(i, *args)
        touched = lambda *paths: any(p in given for p in paths)  # noqa: E731
        if touched("yield.mature_t_dm_per_ha", "yield.record_t_dm_per_ha"):
            y, rec = g("yield.mature_t_dm_per_ha").astype(float), g("yield.record_t_dm_per_ha").astype(float)
            ceiling = np.minimum(YIELD_CEILING_T_DM_PER_HA, 2.0 * rec)
            for i in np.flatnonzero(y > ceiling):
                flag(i, "yield.mature_t_dm_per_ha", f"{y[i]:g}",
                     f"{y[i]:g} t DM/ha is far above the highest recorded for this crop ({rec[i]:g} t DM/ha); "
                     f"expected at most {ceiling[i]:g}")
        if touched("harvest.timing", "harvest.moisture_autumn", "harvest.moisture_late_winter",
                   "revenue.heating_value_gj_per_t_dm"):
            late = g("harvest.timing") == "late_winter"
            moisture = np.where(late, g("harvest.moisture_late_winter").astype(float),
                                g("harvest.moisture_autumn").astype(float))
            low, why = harvest_energy_problem(g("revenue.heating_value_gj_per_t_dm").astype(float), moisture)
            for i in np.flatnonzero(low):
                key = "harvest.moisture_late_winter" if late[i] else "harvest.moisture_autumn"
                flag(i, key, f"{moisture[i]:g}", why(int(i)))
        life = g("finance.stand_life_years").astype(int)
        if touched("finance.stand_life_years", "harvest.first_year"):
            first = g("harvest.first_year").astype(int)
            for i in np.flatnonzero(first > life):
                flag(i, "harvest.first_year", f"{first[i]}",
                     f"the first harvest (year {first[i]}) falls after the stand's life ({life[i]} years)")
        if touched("finance.stand_life_years", "loan.term_years", "loan.grace_years", "loan.share_of_establishment"):
            share = g("loan.share_of_establishment").astype(float)
            grace, term = g("loan.grace_years").astype(int), g("loan.term_years").astype(int)
            for i in np.flatnonzero((share > 0) & (grace + term > life)):
                flag(i, "loan.term_years", f"{term[i]}",
                     f"grace ({grace[i]}) + term ({term[i]}) years run past the stand life ({life[i]} years)")
            if values.get("loan.rate") is None:
                for i in np.flatnonzero(share > 0):
                    flag(i, "loan.share_of_establishment", f"{share[i]:g}",
                         "a loan needs its interest rate (loan.rate), which the base case does not give")
