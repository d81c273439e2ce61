"""Reading a workbook written by `tea` back as a case: the inputs sheet, as an advisor edited it.

:func:`read_case_mapping` returns the case-file mapping the inputs sheet holds,
for :func:`tea.inputs.case.load_mapping` to validate like a TOML file. The
sheet's layout constants live here, below the writer that lays the sheet out
(:mod:`tea.outputs.workbook`), which imports them.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path
from typing import Any

from tea.core.errors import CaseError, Problem
from tea.inputs import schema

#: title of the inputs sheet (a portfolio prefixes "C01 " etc.)
INPUTS = "Inputs"
INPUT_HEAD_ROW = 4
KEPT_HEADER = ("Section kept whole", "Content (JSON)")
INPUT_COLUMNS = ("Section", "Key", "Value", "Unit", "Origin", "Source note", "Factor to canonical",
                 "Canonical value", "Canonical unit", "Defined name", "As written")


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


def read_case_mapping(path: str | Path) -> dict[str, dict[str, Any]]:
    """The case-file mapping held by the inputs sheet of a workbook written by `tea`.

    Returns ``{section: {key spelled in the case's units: value}}`` for
    :func:`tea.inputs.case.load_mapping`. A row is taken when the case file gave it
    (origin "case") or when its value differs from the value the workbook was
    written with (an edit); preset, default and derived values left alone are
    filled in again by the loader, so an edited climate or preset takes effect.
    A blank value means "not given".

    Raises
    ------
    CaseError
        naming the file and the cell or key when the workbook cannot be read.
    """
    from openpyxl import load_workbook

    source = str(path)
    p = Path(path)
    if not p.exists():
        raise CaseError([Problem(source, "", "file not found")])
    try:
        wb = load_workbook(p, read_only=True, data_only=True)
    except Exception as exc:  # noqa: BLE001 - any unreadable file is a bad input
        raise CaseError([Problem(source, "", f"cannot read the workbook ({exc.__class__.__name__}: {exc})")]) from None
    try:
        titles = [t for t in wb.sheetnames if t == INPUTS or t.endswith(" " + INPUTS)]
        if not titles:
            raise CaseError([Problem(source, "", f"no {INPUTS!r} sheet: not a workbook written by tea")])
        if len(titles) > 1:
            raise CaseError([Problem(source, "", f"holds {len(titles)} cases ({', '.join(titles)}); "
                                     "read one case's workbook instead")])
        ws = wb[titles[0]]
        rows = list(ws.iter_rows(min_row=1, values_only=True))
    finally:
        wb.close()
    head = None
    for i, row in enumerate(rows):
        if row and tuple(row[: len(INPUT_COLUMNS)]) == INPUT_COLUMNS:
            head = i
            break
    if head is None:
        raise CaseError([Problem(source, f"{titles[0]}!A{INPUT_HEAD_ROW}",
                                 f"header row {', '.join(INPUT_COLUMNS)} not found")])
    col = {name: j for j, name in enumerate(INPUT_COLUMNS)}
    problems: list[Problem] = []
    lists: dict[tuple[str, str], list[tuple[int, Any, Any, str, int]]] = {}
    out: dict[str, dict[str, Any]] = {}
    current_origin: dict[tuple[str, str], str] = {}
    index = _key_index()

    def cell(j: int, r: int) -> str:
        return f"{titles[0]}!{col_letter(j + 1)}{r}"

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
        value, written = row[col["Value"]], row[col["As written"]]
        origin = row[col["Origin"]]
        m = re.fullmatch(r"(\w+)\[(\d+)\]", key)
        base = m.group(1) if m else key
        k = index.get((section, base))
        if k is None:
            out.setdefault(section, {})[key] = value  # the loader names the unknown key
            continue
        if isinstance(origin, str):
            current_origin[(section, base)] = origin
        where = f"{section}.{key} ({cell(col['Value'], r)})"
        if k.kind == "list":
            lists.setdefault((section, base), []).append((int(m.group(2)) if m else 1, value, written, where, r))
            continue
        why = _cell_type_error(k, value)
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
                problems.append(Problem(source, where, f"expected a number or a blank cell, got {value!r}"))
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
            kept[section] = kept.get(section, "") + (chunk or "")
    for section, text in kept.items():
        try:
            out[section] = json.loads(text)
        except ValueError as exc:
            problems.append(Problem(source, f"{section} ({titles[0]}!B{start + 2})", f"malformed JSON: {exc}"))
    if problems:
        raise CaseError(problems)
    return out


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


def _cell_type_error(k: schema.Key, value: Any) -> str | None:
    if value is None or value == "":
        return None
    if isinstance(value, str) and value.startswith("#"):
        return f"the cell holds an error value {value!r}"
    if k.kind in ("float", "int") and not _is_number(value):
        return f"expected a number [{k.unit_text()}], got {value!r}"
    if k.kind == "bool" and not isinstance(value, bool):
        return f"expected TRUE or FALSE, got {value!r}"
    if k.kind in ("str", "enum") and not isinstance(value, str):
        return f"expected text, got {value!r}"
    return None
