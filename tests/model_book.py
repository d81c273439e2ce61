"""A plain workbook of the whole declared model, for checking its formulas in a spreadsheet engine.

One sheet per kind: ``In`` (every input the model reads, canonical, each a
defined name; a list input a row of cells), ``Tab`` (the published tables),
``Lines`` (one row per line, years 0..last across the columns, row 1 the
years), ``Rows`` (parameters and figures). Every formula comes from
:class:`tea.model.formulas.Renderer` with this layout, and is written with
the engine's value cached. Nothing here knows any line: a line declared in a
test shows up like the rest.
"""

from __future__ import annotations

import io
import math
from typing import Any

import numpy as np
import xlsxwriter
from xlsxwriter.utility import xl_col_to_name, xl_rowcol_to_cell

from tea.inputs import published
from tea.model import expr as E
from tea.model.declare import Model
from tea.model.evaluate import LIST_KEYS, evaluate
from tea.model.formulas import Renderer
from tea.model.slopes import expanded

LIST_CELLS = 61  # a list by year may run to the longest stand life (60) from year 0


def _name(path: str) -> str:
    return "in_" + path.replace(".", "_")


class PlainLayout:
    def __init__(self, model: Model, last_year: int):
        self.model = expanded(model)
        self.last_year = last_year
        lines = [d for d in self.model if d.kind == "line"]
        rows = [d for d in self.model if d.kind != "line"]
        self.line_row = {d.key: 1 + i for i, d in enumerate(lines)}  # 0-based rows on Lines; row 0 holds the years
        self.row_row = {d.key: i for i, d in enumerate(rows)}
        self.lines, self.rows = lines, rows
        consts = {}
        for d in self.model:
            consts.update(E.constants(d.expr))
        self.constants = consts
        self.tables = published.tables()
        self.inputs = sorted({p for d in self.model for p in E.inputs(d.expr)}
                             | {n.path for d in self.model for n in E.walk(d.expr) if isinstance(n, E.Input)})

    def cell(self, key, year):
        if year is None:
            return "Rows!" + xl_rowcol_to_cell(self.row_row[key], 1, True, True)
        return "Lines!" + xl_rowcol_to_cell(self.line_row[key], 1 + year, True, True)

    def row(self, key, first, last):
        r = self.line_row[key]
        return f"Lines!{xl_rowcol_to_cell(r, 1 + first, True, True)}:{xl_rowcol_to_cell(r, 1 + last, True, True)}"

    def year(self, year):
        return "Lines!" + xl_rowcol_to_cell(0, 1 + year, True, True)

    def years(self):
        return f"Lines!$B$1:${xl_col_to_name(1 + self.last_year)}$1"

    def input(self, path):
        return _name(path)

    def constant(self, name):
        return "k_" + name

    def table(self, table, column):
        data = self.tables[table]
        names = ["__keys__", *data["columns"]]
        j = names.index("__keys__" if column is None else column)
        top = self._table_top[table]
        n = len(data["keys"])
        col = xl_col_to_name(j)
        return f"Tab!${col}${top + 2}:${col}${top + 1 + n}"


def _value(v: Any) -> Any:
    if isinstance(v, (np.floating, float)):
        return None if math.isnan(v) else float(v)
    return v


def book(case_values: dict, model: Model, last_year: int) -> tuple[bytes, dict]:
    """The workbook (bytes) and the engine's values by (space, name) -> value or list by year."""
    lay = PlainLayout(model, last_year)
    ren = Renderer(model, lay)
    names = [d.name for d in lay.lines]
    figs = [d.name for d in lay.rows if d.kind == "figure"]
    params = [d.name for d in lay.rows if d.kind == "param"]
    got = evaluate(case_values, figures=figs, lines=(*names, *params), model=model, years=last_year + 1, rows=1)
    engine = {("line", n): got.lines[n][0] for n in names}
    engine.update({("line", n): got.lines[n][0, 0] for n in params})
    engine.update({("figure", n): got.figures[n][0] for n in figs})
    buf = io.BytesIO()
    wb = xlsxwriter.Workbook(buf, {"in_memory": True, "strings_to_formulas": False})
    ws_in, ws_tab = wb.add_worksheet("In"), wb.add_worksheet("Tab")
    ws_lines, ws_rows = wb.add_worksheet("Lines"), wb.add_worksheet("Rows")
    for i, path in enumerate(lay.inputs):
        v = case_values.get(path)
        ws_in.write_string(i, 0, path)
        if path in LIST_KEYS:
            items = list(v or [])
            for j in range(LIST_CELLS):
                if j < len(items):
                    ws_in.write_number(i, 1 + j, float(items[j]))
            wb.define_name(_name(path), f"=In!$B${i + 1}:${xl_col_to_name(LIST_CELLS)}${i + 1}")
        else:
            if isinstance(v, str):
                ws_in.write_string(i, 1, v)
            elif isinstance(v, bool):
                ws_in.write_boolean(i, 1, v)
            elif v is not None:
                ws_in.write_number(i, 1, float(v))
            wb.define_name(_name(path), f"=In!$B${i + 1}")
    for name, c in lay.constants.items():
        wb.define_name("k_" + name, f"={c.value!r}")
    lay._table_top = {}
    top = 0
    for table, data in lay.tables.items():
        lay._table_top[table] = top
        ws_tab.write_string(top, 0, table)
        for j, key in enumerate(data["keys"]):
            ws_tab.write_string(top + 1 + j, 0, key)
            for c, col in enumerate(data["columns"]):
                v = data["columns"][col][j]
                (ws_tab.write_string if isinstance(v, str) else ws_tab.write_number)(top + 1 + j, 1 + c, v)
        top += len(data["keys"]) + 3
    for y in range(last_year + 1):
        ws_lines.write_number(0, 1 + y, y)
    for d in lay.lines:
        r = lay.line_row[d.key]
        ws_lines.write_string(r, 0, d.name)
        for y in range(last_year + 1):
            v = _value(engine[d.key][y])
            ws_lines.write_formula(r, 1 + y, "=" + ren.formula(d, y), None, "" if v is None else v)
    for d in lay.rows:
        r = lay.row_row[d.key]
        ws_rows.write_string(r, 0, d.name)
        v = engine[d.key]
        v = _value(v if not isinstance(v, str) else v)
        ws_rows.write_formula(r, 1, "=" + ren.formula(d), None, "" if v is None else v)
    wb.close()
    return buf.getvalue(), {"layout": lay, "engine": engine}
