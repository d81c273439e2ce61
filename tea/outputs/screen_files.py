"""What a screen shows: the ranked table (.csv, .xlsx or .parquet), the list of skipped rows, the terminal view.

Field ids, names and every other cell read from a field table are user text:
CSV cells go through :func:`tea.core.safe_text.csv_cell` (a leading ``=``,
``+``, ``-``, ``@``, tab or carriage return is neutralised), xlsx cells are
string cells (:mod:`tea.outputs.table_book`). The same screen gives the same
bytes: no file carries a time.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

from tea import __version__
from tea.analysis.screen import ScreenResult, file_columns, terminal_units_note
from tea.inputs.fieldtable import ID_COLUMN
from tea.core.errors import OutputError
from tea.core.files import atomic_write, atomic_write_text, check_target
from tea.core.safe_text import csv_cell, csv_comment, csv_row
from tea.core.texts import CAUTIONS
from tea.core.texts import WIDTH
from tea.outputs.terminal import wrapped

#: what the ranked table may be written as
TABLE_SUFFIXES = (".csv", ".xlsx", ".parquet")
#: what the list of skipped rows is written as
ERRORS_SUFFIXES = (".csv",)
ERROR_COLUMNS = ("line", "row", "column", "value", "reason")
#: rows formatted together when a table is written
BLOCK_ROWS = 4096


def parquet_available() -> bool:
    try:
        import pyarrow  # noqa: F401
    except ImportError:
        return False
    return True


def check_parquet(out: str | Path) -> None:
    """Refuse, before any work, a .parquet output without the library that writes it."""
    if Path(out).suffix.lower() == ".parquet" and not parquet_available():
        raise OutputError(f"{out}: Parquet output needs the pyarrow package (pip install pyarrow); "
                          "write .csv or .xlsx instead")


def write_table(result: ScreenResult, out: str | Path, force: bool = False) -> Path:
    """Write the ranked table: .csv (with # comment lines on top), .xlsx (with a notes sheet) or .parquet."""
    out = Path(out)
    check_target(out, force)
    suffix = out.suffix.lower()
    meta = metadata_lines(result)
    if suffix == ".csv":
        def write_csv(tmp: Path) -> None:
            table = result.table
            with tmp.open("w", encoding="utf-8", newline="") as f:
                f.write("".join(csv_comment(line) + "\n" for line in meta))
                f.write(csv_row(table.columns) + "\n")
                for start in range(0, len(table), BLOCK_ROWS):  # a block at a time: bounded memory
                    f.write(csv_text(table.iloc[start:start + BLOCK_ROWS], header=False))
        return atomic_write(out, write_csv, force=True)
    if suffix == ".xlsx":
        from tea.outputs.table_book import MAX_ROWS, write_book

        table = result.table
        if len(table) >= MAX_ROWS:
            raise OutputError(f"{out}: {len(table):,} fields do not fit a worksheet ({MAX_ROWS - 1:,} rows); "
                              "write .csv")
        sheets = [("ranked fields", [str(c) for c in table.columns], _rows(_numbers_as_numbers(table))),
                  ("notes", ["notes"], ([line] for line in meta))]
        return atomic_write(out, lambda tmp: write_book(tmp, sheets), force=True)
    if suffix == ".parquet":
        check_parquet(out)

        def write_pq(tmp: Path) -> None:
            table = result.table.copy()
            table.attrs = {"notes": "\n".join(meta)}
            table.to_parquet(tmp, index=False)
        return atomic_write(out, write_pq, force=True)
    raise OutputError(f"{out}: unknown output type {suffix or '(none)'}; expected {', '.join(TABLE_SUFFIXES)}")


def _numbers_as_numbers(table):
    """The table with the cells of its numeric input columns (echoed as read) as numbers, so that a
    spreadsheet sums and sorts them; an empty cell stays empty. Text columns (a field's id) stay text."""
    import pandas as pd

    from tea.inputs.fieldtable import resolve_column

    out = table
    for i, name in enumerate(table.columns):
        if pd.api.types.is_numeric_dtype(table[name].dtype) or pd.api.types.is_bool_dtype(table[name].dtype):
            continue
        col = resolve_column(str(name), i)
        if col.kind in ("key", "month") and col.key is not None and col.key.kind in ("float", "int", "list"):
            if out is table:
                out = table.copy()
            out[name] = pd.to_numeric(table[name].replace("", None), errors="coerce")
    return out


def _rows(table):
    """The rows of a DataFrame as lists of Python values, a block at a time (bounded memory)."""
    for start in range(0, len(table), BLOCK_ROWS):
        part = table.iloc[start:start + BLOCK_ROWS]
        yield from zip(*(part[c].tolist() for c in part.columns))


def csv_text(table, header: bool = True) -> str:
    """A DataFrame as CSV text: numbers to 10 significant digits, NaN as an empty cell, text made safe.

    Formats column by column (faster than ``DataFrame.to_csv`` with a float format).

    >>> import pandas as pd
    >>> print(csv_text(pd.DataFrame({"field_id": ["A, east", "=1+1"], "npv": [1234.56789012345, float("nan")]})), end="")
    field_id,npv
    "A, east",1234.56789
    '=1+1,
    """
    cols = []
    for name in table.columns:
        values = table[name].to_numpy()
        if values.dtype.kind == "f":
            cols.append(["" if v != v else "%.10g" % v for v in values.tolist()])
        elif values.dtype.kind in "iub":
            cols.append([str(v) for v in values.tolist()])
        else:
            cols.append([csv_cell(str(v)) for v in values.tolist()])
    lines = [csv_row(table.columns)] if header else []
    lines.extend(",".join(row) for row in zip(*cols))
    return "\n".join(lines) + "\n" if lines else ""


def write_errors(result: ScreenResult, out: str | Path, force: bool = True) -> Path:
    """Write the skipped rows' problems as CSV: line, row, column, value, reason."""
    lines = [csv_row(ERROR_COLUMNS)]
    lines.extend(csv_row((b.line, b.row, b.column, b.value, b.reason)) for b in result.bad)
    return atomic_write_text(out, "\n".join(lines) + "\n", force=force)


def _count(n: int, noun: str) -> str:
    """A count and its noun, plural unless one: ``1 row``, ``3 rows``."""
    return f"{n:,} {noun}" + ("" if n == 1 else "s")


def metadata_lines(result: ScreenResult) -> list[str]:
    """What the table is: the tool, the base case, the counts, the units, demo data, the cautions."""
    case = result.case
    lines = [
        f"tea {__version__} screen of {result.source} over base case {case.name!r} ({case.source}, hash {case.hash})",
        f"{_count(result.rows_evaluated, 'field')} evaluated, {_count(result.rows_skipped, 'row')} skipped; ranked "
        f"by {result.rank_by}"
        + (" (smallest first)" if result.ascending else " (largest first)"),
        result.units_note,
    ]
    if case["case.demo"]:
        lines.append("DEMO DATA: the base case is invented demo data")
    lines.extend(CAUTIONS)
    return lines


#: the widest a field's id or name is shown in the terminal's table (cut short with an ellipsis beyond it)
FIELD_NAME_WIDTH = 16


def summary_text(result: ScreenResult, top: int = 10) -> str:
    """The terminal view: counts, the best-ranked fields, the cautions."""
    from tea.inputs import display

    case = result.case
    tag = "   [DEMO DATA]" if case["case.demo"] else ""
    title = textwrap.wrap(f"Screen of {result.source} over {case.name}", WIDTH - len(tag), break_on_hyphens=False)
    title[-1] += tag
    out = [*title, "=" * max(len(line) for line in title)]
    out.append(f"{_count(result.rows_read, 'row')} read; {_count(result.rows_evaluated, 'field')} evaluated; "
               f"{_count(result.rows_skipped, 'row')} skipped" + (" (see the error file)" if result.rows_skipped else ""))
    out.append(wrapped(terminal_units_note(case)))  # the file's note says fractions; this table shows percent
    table = result.table
    if len(table):
        per = "acre" if case.unit_system == "us_customary" else "ha"
        tons = "short_ton" if case.unit_system == "us_customary" else "t"
        label = next((c for c in (ID_COLUMN, "field.name", "name") if c in table), "line")
        column = {name: shown for name, (shown, _factor) in file_columns(case).items()}  # as the file names them
        # each heading on two lines, so that the table stays within the terminal's width
        cols = [("rank", ("", "rank")), (label, ("", "field")),
                (column["eav_vs_current_use"], ("EAV vs now", f"/{per}/yr")),
                (column["npv_vs_current_use"], ("NPV vs now", f"/{per}")),
                (column["npv_vs_current_use_field"], ("NPV vs now", "field")), (column["irr"], ("", "IRR")),
                (column["payback_year"], ("payback", "year")),
                (column["soc_gain_t_co2e"], ("SOC gain", f"{tons.replace('_', ' ')} CO2e/{per}"))]
        cols = [(c, h) for c, h in cols if c in table]
        head = table.head(top)
        cells = []
        for c, h in cols:
            vals = []
            for v in head[c].tolist():
                if c == "irr":
                    vals.append(display.percent(float(v)) if v == v else "–")
                elif c == "payback_year":
                    vals.append(f"{v:.0f}" if v == v else "none")
                elif isinstance(v, float):
                    vals.append(display.number(v) if v == v else "–")
                elif c == label and len(str(v)) > FIELD_NAME_WIDTH:  # the file has it whole
                    vals.append(str(v)[:FIELD_NAME_WIDTH - 1] + "\u2026")
                else:
                    vals.append(str(v))
            cells.append((h, vals))
        widths = [max(*(len(line) for line in h), *(len(v) for v in vals)) for h, vals in cells]
        out.append("")
        out.append(f"Top {len(head)} by {_ranked_by(case, result.rank_by)}:")
        for row in (0, 1):
            out.append("  ".join(h[row].rjust(w) for (h, _), w in zip(cells, widths)).rstrip())
        for i in range(len(head)):
            out.append("  ".join(vals[i].rjust(w) for (_, vals), w in zip(cells, widths)))
    out.append("Cautions:")
    out.extend(wrapped(f"  - {c}") for c in CAUTIONS)
    return "\n".join(out)


def _ranked_by(case, column: str) -> str:
    """The figure a screen ranks by, in words, with the file's column that holds it: "EAV vs current use
    (column eav_vs_current_use_per_ha)"."""
    from tea.model.definition import MODEL

    name = next((n for n, (shown, _f) in file_columns(case).items() if shown == column), None)
    if name is None:
        return column
    whole = name.endswith("_field")
    try:
        label = MODEL.figure(name[:-len("_field")] if whole else name).label
    except (KeyError, ValueError):
        return column
    return f"{label}{', whole field' if whole else ''} (column {column})"
