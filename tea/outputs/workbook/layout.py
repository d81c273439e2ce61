"""Where every cell of one case sits in the credit-file workbook.

:class:`CaseLayout` answers the questions of :class:`tea.model.formulas.Layout`
(the cell of a line in a year, a parameter's or figure's cell, an input's
defined name, a named constant, a published table's column) for this
workbook's arrangement: years across the columns, from year 0 to the stand
life; line items down the rows, each line on the sheet of its group; model
parameters and figures one per row on the figures sheet. Nothing here knows a
particular line: a line declared anywhere in the model gets a row of the sheet
its group maps to (:data:`SHEET_OF_GROUP`; an unknown group goes to the cash
flow sheet).

A portfolio holds several cases: each case's sheets carry a prefix
(``C01 Inputs``) and its defined names another (``c01_``).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from xlsxwriter.utility import xl_col_to_name, xl_rowcol_to_cell

from tea.inputs import published, schema, units
from tea.inputs.case import EXTENSION_SECTIONS, Case
from tea.inputs.workbook_reader import INPUT_COLUMNS, INPUT_HEAD_ROW, INPUTS
from tea.model import expr as E
from tea.model.declare import Def, Model
from tea.model.slopes import expanded

# sheet titles (a portfolio prefixes "C01 ")
SUMMARY = "Summary"
CASH = "Cash flow"
DEBT = "Debt and tax"
CARBON = "Carbon"
FIGURES = "Figures"
CHECKS = "Checks"
SENSITIVITY = "Sensitivity"
RISK = "Risk"
CLIMATE = "Site climate"
TABLES = "Tables"
NOTES = "Notes"
COMPARISON = "Side by side"

#: the sheet each group of lines is laid out on, and the order of the groups there
SHEET_OF_GROUP: dict[str, str] = {
    "timing": CASH, "establishment": CASH, "yield": CASH, "nutrients": CASH, "revenue": CASH,
    "costs": CASH, "cash": CASH, "workings": CASH,
    "loan": DEBT, "tax": DEBT,
    "carbon": CARBON,
}
#: headings of the groups as shown
GROUP_TITLES: dict[str, str] = {
    "timing": "Years of the stand", "establishment": "Establishment", "yield": "Growth and harvest",
    "nutrients": "Nutrients", "revenue": "Revenue", "costs": "Costs", "cash": "Cash flow",
    "workings": "Workings (intermediate lines)", "loan": "Debt", "tax": "Tax", "carbon": "Soil carbon and greenhouse gases",
}
#: on schedule sheets: rows 1-2 titles, the year header on row HEAD (0-based 3), lines from FIRST
HEAD_ROW = 3
FIRST_ROW = 5
LABEL_COL, UNIT_COL, KEY_COL, YEAR0_COL = 0, 1, 2, 3
#: on the figures sheet: a row per parameter and figure; value columns
FIG_VALUE_COL, FIG_FIELD_COL = 2, 3
#: list inputs get this many cells at least (a ramp-up, a price path)
LIST_SLOTS = 12
#: text a sheet cell holds at most (a spreadsheet cell holds 32,767 characters)
CELL_TEXT_MAX = 32000


def sheet_of(d: Def) -> str:
    return SHEET_OF_GROUP.get(d.group, CASH)


@dataclass
class InputRow:
    key: schema.Key
    rows: list[int]  # 0-based sheet rows: one, or one per list slot
    name: str  # defined name of its canonical cell(s)
    spelled: str  # the key as spelled in the case's unit system
    factor: float  # shown value x factor = canonical value


class CaseLayout:
    """Sheet names, defined names and cell positions of one case (implements formulas.Layout)."""

    def __init__(self, case: Case, model: Model, prefix: str = "", sheet_prefix: str = ""):
        self.case = case
        self.model = expanded(model)
        self.prefix = prefix
        self.sheet_prefix = sheet_prefix
        self.last_year = int(case.stand_life)
        self.system = case.unit_system
        # schedule sheets: the lines of each sheet in group order, with a heading row per group
        self.line_cell: dict[tuple[str, str], tuple[str, int]] = {}
        self.sheet_rows: dict[str, list[tuple[str, Any]]] = {}  # sheet -> [("group", title) | ("line", Def)]
        by_sheet: dict[str, dict[str, list[Def]]] = {}
        for d in self.model:
            if d.kind == "line":
                by_sheet.setdefault(sheet_of(d), {}).setdefault(d.group, []).append(d)
        for sheet in (CASH, DEBT, CARBON):
            groups = by_sheet.get(sheet, {})
            order = sorted(groups, key=lambda g: (g == "workings", list(SHEET_OF_GROUP).index(g)
                                                  if g in SHEET_OF_GROUP else len(SHEET_OF_GROUP)))
            rows: list[tuple[str, Any]] = []
            r = FIRST_ROW
            for g in order:
                rows.append(("group", GROUP_TITLES.get(g, g.replace("_", " ").capitalize())))
                r += 1
                for d in groups[g]:
                    rows.append(("line", d))
                    self.line_cell[d.key] = (self.title(sheet), r)
                    r += 1
                rows.append(("gap", None))
                r += 1
            self.sheet_rows[sheet] = rows
        # figures sheet: parameters first, then figures by group
        self.fig_row: dict[tuple[str, str], int] = {}
        self.fig_rows: list[tuple[str, Any]] = []
        r = 4
        for kind, title in (("param", "Model parameters derived from the inputs"), ("figure", "Decision figures")):
            defs = [d for d in self.model if d.kind == kind]
            groups: dict[str, list[Def]] = {}
            for d in defs:
                groups.setdefault(d.group, []).append(d)
            self.fig_rows.append(("title", title))
            r += 1
            for g, members in groups.items():
                self.fig_rows.append(("group", GROUP_TITLES.get(g, g.replace("_", " ").capitalize())))
                r += 1
                for d in members:
                    self.fig_rows.append(("def", d))
                    self.fig_row[d.key] = r
                    r += 1
            self.fig_rows.append(("gap", None))
            r += 1
        # inputs sheet
        self.inputs: list[InputRow] = []
        r = INPUT_HEAD_ROW  # 0-based row after the header (header on sheet row INPUT_HEAD_ROW)
        for k in schema.KEYS:
            n = 1
            if k.kind == "list":
                given = case.values.get(k.path)
                n = max(LIST_SLOTS, len(given) if isinstance(given, list) else 0)
            spelled = units.spell(k.template, self.system)
            factor = k.spellings()[spelled]
            self.inputs.append(InputRow(k, list(range(r, r + n)), self.prefix + "in_" + k.path.replace(".", "_"),
                                        spelled, factor))
            r += n
        self.input_by_path = {row.key.path: row for row in self.inputs}
        self.inputs_end = r
        self.kept: list[tuple[str, str]] = []
        for section in EXTENSION_SECTIONS:
            if section in case.values:
                text = json.dumps(case.values[section], sort_keys=True, separators=(",", ":"))
                self.kept.extend((section, text[i:i + CELL_TEXT_MAX]) for i in range(0, len(text), CELL_TEXT_MAX))
        self.kept_head = r + 2
        # constants and published tables
        self.constants: dict[str, E.Constant] = {}
        for d in self.model:
            self.constants.update(E.constants(d.expr))
        self.tables = published.tables()
        self.table_top: dict[str, int] = {}
        top = 4
        for name, data in self.tables.items():
            self.table_top[name] = top
            top += len(data["keys"]) + 4

    # -- names
    def title(self, sheet: str) -> str:
        return self.sheet_prefix + sheet

    def ref(self, sheet: str, row: int, col: int) -> str:
        return f"'{self.title(sheet)}'!{xl_rowcol_to_cell(row, col, True, True)}"

    # -- formulas.Layout
    def cell(self, key: tuple[str, str], year: int | None) -> str:
        if year is None:
            return self.ref(FIGURES, self.fig_row[key], FIG_VALUE_COL)
        sheet, row = self.line_cell[key]
        return f"'{sheet}'!{xl_rowcol_to_cell(row, YEAR0_COL + year, True, True)}"

    def row(self, key: tuple[str, str], first: int, last: int) -> str:
        sheet, row = self.line_cell[key]
        a = xl_rowcol_to_cell(row, YEAR0_COL + first, True, True)
        b = xl_rowcol_to_cell(row, YEAR0_COL + last, True, True)
        return f"'{sheet}'!{a}:{b}"

    def year(self, year: int) -> str:
        return self.ref(CASH, HEAD_ROW, YEAR0_COL + year)

    def years(self) -> str:
        a = xl_rowcol_to_cell(HEAD_ROW, YEAR0_COL, True, True)
        b = xl_rowcol_to_cell(HEAD_ROW, YEAR0_COL + self.last_year, True, True)
        return f"'{self.title(CASH)}'!{a}:{b}"

    def input(self, path: str) -> str:
        return self.input_by_path[path].name

    def constant(self, name: str) -> str:
        return self.prefix + "k_" + name

    def table(self, table: str, column: str | None) -> str:
        data = self.tables[table]
        names = [None, *data["columns"]]
        j = names.index(column)
        top = self.table_top[table] + 2  # title row, header row, then the rows
        col = xl_col_to_name(j)
        return f"'{self.title(TABLES)}'!${col}${top + 1}:${col}${top + len(data['keys'])}"

    # -- the columns of the inputs sheet
    @staticmethod
    def input_col(name: str) -> int:
        return INPUT_COLUMNS.index(name)


__all__ = ["CaseLayout", "InputRow", "SHEET_OF_GROUP", "GROUP_TITLES", "sheet_of", "INPUTS", "SUMMARY", "CASH",
           "DEBT", "CARBON", "FIGURES", "CHECKS", "SENSITIVITY", "RISK", "TABLES", "NOTES", "COMPARISON"]
