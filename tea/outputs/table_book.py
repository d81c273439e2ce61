"""Plain tables as an xlsx workbook, streamed: one sheet per table, a bold header row, values only.

For outputs of many rows (a screen of 100,000 fields): each sheet's XML is
written into the zip while its rows are formatted, a block at a time, so
memory stays bounded by the block, and no spreadsheet library builds a cell
object per value. Text goes only into string cells through
:func:`tea.core.safe_text.xlsx_text`, so no text can become a formula; NaN
leaves the cell empty. Every zip entry carries one fixed date and the package
no creation time, so the same tables give the same bytes.
"""

from __future__ import annotations

import math
import zipfile
from pathlib import Path
from typing import Iterable, Sequence

from tea.core.safe_text import clip, xlsx_text

#: rows a worksheet holds, the header included
MAX_ROWS = 1_048_576
#: characters of a sheet title
MAX_TITLE = 31
#: rows formatted together before they are written to the zip
BLOCK_ROWS = 1024
#: the date every zip entry carries (the zip format's earliest)
ZIP_TIME = (1980, 1, 1, 0, 0, 0)

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_CT = "application/vnd.openxmlformats-officedocument.spreadsheetml"
_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
_STYLES = (_HEAD + f'<styleSheet xmlns="{_MAIN}">'
           '<fonts count="2"><font><sz val="11"/><name val="Calibri"/></font>'
           '<font><b/><sz val="11"/><name val="Calibri"/></font></fonts>'
           '<fills count="2"><fill><patternFill patternType="none"/></fill>'
           '<fill><patternFill patternType="gray125"/></fill></fills>'
           '<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders>'
           '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>'
           '<cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>'
           '<xf numFmtId="0" fontId="1" fillId="0" borderId="0" xfId="0" applyFont="1"/></cellXfs>'
           '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/></cellStyles></styleSheet>')


def column_letters(n: int) -> list[str]:
    """The letters of the first ``n`` columns.

    >>> column_letters(28)[-3:]
    ['Z', 'AA', 'AB']
    """
    out = []
    for i in range(1, n + 1):
        s = ""
        while i:
            i, rem = divmod(i - 1, 26)
            s = chr(65 + rem) + s
        out.append(s)
    return out


def _cells(values: Sequence, letters: Sequence[str], row: int, style: str = "") -> str:
    out = []
    for letter, v in zip(letters, values):
        if v is None:
            continue
        if isinstance(v, bool):
            out.append(f'<c r="{letter}{row}"{style} t="b"><v>{int(v)}</v></c>')
        elif isinstance(v, (int, float)) and not isinstance(v, bool):
            if isinstance(v, float) and not math.isfinite(v):
                continue
            out.append(f'<c r="{letter}{row}"{style}><v>{v!r}</v></c>')
        else:
            text = str(v)
            if text:
                out.append(f'<c r="{letter}{row}"{style} t="inlineStr"><is><t xml:space="preserve">'
                           f"{xlsx_text(text)}</t></is></c>")
    return f'<row r="{row}">{"".join(out)}</row>'


def _entry(name: str) -> zipfile.ZipInfo:
    info = zipfile.ZipInfo(name, date_time=ZIP_TIME)
    info.compress_type = zipfile.ZIP_DEFLATED
    info.external_attr = 0o644 << 16
    return info


def write_book(path: str | Path, sheets: Sequence[tuple[str, Sequence[str], Iterable[Sequence]]]) -> None:
    """Write ``sheets`` — each (title, header cells, rows of values) — as an xlsx file at ``path``.

    Values are numbers (int, float; NaN and None leave the cell empty),
    booleans or text. Raises ValueError for a sheet of more rows than a
    worksheet holds.
    """
    titles = [clip(t, MAX_TITLE) for t, _, _ in sheets]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as zf:
        types = "".join(f'<Override PartName="/xl/worksheets/sheet{i}.xml" ContentType="{_CT}.worksheet+xml"/>'
                        for i in range(1, len(sheets) + 1))
        zf.writestr(_entry("[Content_Types].xml"), _HEAD + (
            '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
            f'<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
            '<Default Extension="xml" ContentType="application/xml"/>'
            f'<Override PartName="/xl/workbook.xml" ContentType="{_CT}.sheet.main+xml"/>'
            f'<Override PartName="/xl/styles.xml" ContentType="{_CT}.styles+xml"/>{types}</Types>'))
        zf.writestr(_entry("_rels/.rels"), _HEAD + (
            f'<Relationships xmlns="{_PKG_REL}"><Relationship Id="rId1" Type="{_REL}/officeDocument" '
            'Target="xl/workbook.xml"/></Relationships>'))
        listed = "".join(f'<sheet name="{xlsx_text(t)}" sheetId="{i}" r:id="rId{i}"/>'
                         for i, t in enumerate(titles, start=1))
        zf.writestr(_entry("xl/workbook.xml"), _HEAD + (
            f'<workbook xmlns="{_MAIN}" xmlns:r="{_REL}"><sheets>{listed}</sheets></workbook>'))
        rels = "".join(f'<Relationship Id="rId{i}" Type="{_REL}/worksheet" Target="worksheets/sheet{i}.xml"/>'
                       for i in range(1, len(sheets) + 1))
        rels += f'<Relationship Id="rId{len(sheets) + 1}" Type="{_REL}/styles" Target="styles.xml"/>'
        zf.writestr(_entry("xl/_rels/workbook.xml.rels"), _HEAD + f'<Relationships xmlns="{_PKG_REL}">{rels}</Relationships>')
        zf.writestr(_entry("xl/styles.xml"), _STYLES)
        for i, (_, header, rows) in enumerate(sheets, start=1):
            letters = column_letters(len(header))
            with zf.open(_entry(f"xl/worksheets/sheet{i}.xml"), "w") as part:
                part.write((_HEAD + f'<worksheet xmlns="{_MAIN}"><sheetViews><sheetView workbookViewId="0">'
                            '<pane ySplit="1" topLeftCell="A2" activePane="bottomLeft" state="frozen"/>'
                            '</sheetView></sheetViews><sheetData>').encode())
                part.write(_cells(header, letters, 1, ' s="1"').encode())
                block: list[str] = []
                n = 1
                for values in rows:
                    n += 1
                    if n > MAX_ROWS:
                        raise ValueError(f"more than {MAX_ROWS - 1:,} rows do not fit a worksheet")
                    block.append(_cells(values, letters, n))
                    if len(block) >= BLOCK_ROWS:
                        part.write("".join(block).encode())
                        block = []
                part.write(("".join(block) + "</sheetData></worksheet>").encode())
