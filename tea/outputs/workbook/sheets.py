"""The model's sheets: inputs, the year-by-year schedules, figures, published tables.

Every formula comes from :class:`tea.model.formulas.Renderer` with the case's
:class:`~tea.outputs.workbook.layout.CaseLayout`, and is written with the
engine's value cached beside it, so a viewer that does not calculate (a mail
preview, ``openpyxl`` with ``data_only=True``) shows the numbers.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from tea.core.safe_text import xlsx_literal
from tea.inputs import display, schema, units
from tea.inputs.case import Case
from tea.inputs.workbook_reader import INPUT_COLUMNS, INPUT_HEAD_ROW, KEPT_HEADER
from tea.model.declare import Def
from tea.model.evaluate import evaluate
from tea.model.formulas import Renderer
from tea.outputs.workbook.layout import (GROUP_TITLES, CARBON, CASH, DEBT, FIG_FIELD_COL, FIG_VALUE_COL, FIGURES, HEAD_ROW,
                                         KEY_COL, LABEL_COL, TABLES, UNIT_COL, YEAR0_COL, CaseLayout, InputRow)
from tea.outputs.workbook.style import Styles, number_format, unit_shown, whole_field_unit

#: what each schedule sheet is for, as its subtitle says
SUBTITLES = {
    CASH: "Per ha, one column per year from planting (year 0) to the end of the stand life; costs and revenues "
          "are positive amounts, only cash-flow lines carry a sign. Every cell is a live formula.",
    DEBT: "Per ha by year, then the money lines for the whole field. Cash available for debt service counts only "
          "what the case's loan switches count. Every cell is a live formula.",
    CARBON: "Per ha by year: soil carbon stock and greenhouse-gas lines, emissions positive, removals negative. "
            "Every cell is a live formula.",
}


def engine_values(case: Case, model) -> dict[tuple[str, str], Any]:
    """The engine's value of every declaration for the case: a list by year for a line, a number otherwise."""
    lines = [d.name for d in model if d.kind in ("line", "param")]
    figs = [d.name for d in model if d.kind == "figure"]
    got = evaluate(case.values, figures=figs, lines=lines, model=model, years=case.stand_life + 1, rows=1)
    out: dict[tuple[str, str], Any] = {}
    for d in model:
        if d.kind == "line":
            out[d.key] = [float(v) for v in got.lines[d.name][0]]
        elif d.kind == "param":
            v = got.lines[d.name][0]
            out[d.key] = v[0] if isinstance(v, np.ndarray) and v.ndim else v
        else:
            out[d.key] = got.figures[d.name][0]
    return out


def cached(v: Any) -> Any:
    """A value as cached beside its formula: a number, a text, or an empty text for "no value"."""
    if isinstance(v, (np.generic,)):
        v = v.item()
    if isinstance(v, float) and math.isnan(v):
        return ""
    if isinstance(v, bool):
        return int(v)
    return v


def text(ws, row: int, col: int, value: Any, fmt=None) -> None:
    """A text cell: never read as a formula, whatever it starts with."""
    ws.write_string(row, col, xlsx_literal("" if value is None else str(value)), fmt)


#: the flag a demo case's sheets carry at their top
DEMO_FLAG = "DEMO DATA: the case marks its farm, field and prices as invented (case.demo)."


class SheetWriter:
    """Writes one case's model sheets into an XlsxWriter workbook."""

    def __init__(self, wb, st: Styles, case: Case, lay: CaseLayout, values: dict, renderer: Renderer):
        self.wb, self.st, self.case, self.lay, self.values, self.ren = wb, st, case, lay, values, renderer
        self.cur = case.currency
        self.price_unit = case.price_unit

    def unit(self, unit: str) -> str:
        return unit_shown(unit, self.cur, self.price_unit)

    def formula(self, ws, row: int, col: int, d: Def, year: int | None, fmt) -> None:
        v = self.values[d.key][year] if year is not None else self.values[d.key]
        ws.write_formula(row, col, "=" + self.ren.formula(d, year), fmt, cached(v))

    def page_setup(self, ws, landscape: bool = True, repeat_cols: bool = False, head_row: int | None = None) -> None:
        ws.set_paper(9 if self.case["case.page_size"] == "A4" else 1)
        if landscape:
            ws.set_landscape()
        ws.fit_to_pages(1, 0)
        ws.set_margins(left=0.4, right=0.4, top=0.6, bottom=0.6)
        if head_row is not None:
            ws.repeat_rows(head_row)
        if repeat_cols:
            ws.repeat_columns(LABEL_COL, UNIT_COL)
        ws.set_footer(f"&L&8{xlsx_literal(self.case.name, 60).replace('&', '&&')}"
                      f"&C&8&A · case {self.case.hash} · printed &D&R&8page &P of &N")

    # -- inputs
    def inputs(self) -> None:
        lay, st, case = self.lay, self.st, self.case
        ws = self.wb.add_worksheet(lay.title("Inputs"))
        ws.set_tab_color("#B8893A")
        text(ws, 0, 0, f"Inputs: {case.name}", st("title"))
        text(ws, 1, 0, "Sand-coloured cells are the inputs, in the case's own units: edit them and every figure "
                       "follows (and `tea run` reads this sheet back). The source of each value is its cell's "
                       "comment. Every other cell of the workbook is a formula.", st("subtitle"))
        if case["case.demo"]:
            text(ws, 2, 0, DEMO_FLAG, st("flag"))
        head = st("head")
        for c, label in enumerate(INPUT_COLUMNS):
            text(ws, INPUT_HEAD_ROW - 1, c, label, head)
        col = {name: j for j, name in enumerate(INPUT_COLUMNS)}
        for item in lay.inputs:
            self._input_rows(ws, item, col)
        if lay.kept:
            r = lay.kept_head
            text(ws, r - 1, 0, "Case sections kept whole (read back by tea run; edit them in the case file)",
                 st("group"))
            text(ws, r, 0, KEPT_HEADER[0], head)
            text(ws, r, 1, KEPT_HEADER[1], head)
            for i, (section, chunk) in enumerate(lay.kept, start=1):
                text(ws, r + i, 0, section, st("label"))
                text(ws, r + i, 1, chunk, st("keyname"))
        widths = {"Input": 46, "Value": 16, "Unit": 16, "Origin": 18, "Source": 40, "Section": 12, "Key": 30,
                  "Canonical value": 14, "Canonical unit": 14, "Factor to canonical": 12, "Defined name": 30,
                  "As written": 10}
        for name, w in widths.items():
            ws.set_column(col[name], col[name], w, None, {"hidden": name == "As written"})
        ws.freeze_panes(INPUT_HEAD_ROW, 2)
        ws.autofilter(INPUT_HEAD_ROW - 1, 0, lay.inputs_end - 1, len(INPUT_COLUMNS) - 1)
        self.page_setup(ws, head_row=INPUT_HEAD_ROW - 1)
        ws.print_area(0, 0, lay.inputs_end - 1, col["Source"])

    def _input_rows(self, ws, item: InputRow, col: dict[str, int]) -> None:
        st, case, k = self.st, self.case, item.key
        value = case.values.get(k.path)
        shown = _display(value, item.factor)
        unit = k.unit_text(case.unit_system, self.cur)
        origin = case.origin.get(k.path, "not given")
        if origin == "preset":
            origin = f"preset {case['crop.preset']}"
        note = case.notes.get(k.path) or k.source or ("not used unless given" if value is None else "")
        numeric = k.kind in ("float", "int", "list")
        slots = shown if isinstance(shown, list) else [shown]
        label = units.in_words_of(k.doc, case.unit_system).rstrip(".")
        for i, r in enumerate(item.rows):
            v = slots[i] if i < len(slots) else None
            text(ws, r, col["Input"], label if i == 0 else f"  {i + 1}", st("label"))
            text(ws, r, col["Section"], k.section, st("keyname"))
            text(ws, r, col["Key"], item.spelled if len(item.rows) == 1 else f"{item.spelled}[{i + 1}]",
                 st("keyname"))
            vc = col["Value"]
            if numeric:
                if v is None:
                    ws.write_blank(r, vc, None, st("input", "General"))
                else:
                    ws.write_number(r, vc, float(v), st("input", "General"))
                fc, cc = col["Factor to canonical"], col["Canonical value"]
                ws.write_number(r, fc, item.factor, st("keyname"))
                cell_v = xl(r, vc)
                ws.write_formula(r, cc, f'=IF(ISNUMBER({cell_v}),{cell_v}*{xl(r, fc)},"")', st("computed"),
                                 "" if v is None else float(v) * item.factor)
                text(ws, r, col["Canonical unit"], k.unit_text("metric", self.cur), st("keyname"))
            elif k.kind == "bool":
                ws.write_boolean(r, vc, bool(v), st("input"))
            elif v in (None, ""):
                ws.write_blank(r, vc, None, st("input", "@"))
            else:
                text(ws, r, vc, v, st("input", "@"))
            text(ws, r, col["Unit"], unit, st("label"))
            if v is not None and v != "":
                if isinstance(v, str):
                    text(ws, r, col["As written"], v)
                elif isinstance(v, bool):
                    ws.write_boolean(r, col["As written"], v)
                else:
                    ws.write_number(r, col["As written"], float(v))
            if i == 0:
                text(ws, r, col["Origin"], origin, st("label"))
                text(ws, r, col["Source"], note, st("label"))
                text(ws, r, col["Defined name"], item.name, st("keyname"))
                if note:
                    ws.write_comment(r, vc, xlsx_literal(f"{k.path}: {note}", 2000),
                                     {"x_scale": 2.2, "y_scale": 1.2, "author": "tea"})
            self._validation(ws, r, vc, k, item.factor)
        target = col["Canonical value"] if numeric else col["Value"]
        first, last = item.rows[0], item.rows[-1]
        ref = xl(first, target, sheet=self.lay.title("Inputs"))
        if last != first:
            ref += ":" + xl(last, target)
        self.wb.define_name(item.name, "=" + ref)

    def _validation(self, ws, r: int, c: int, k: schema.Key, factor: float) -> None:
        if k.kind == "enum":
            ws.data_validation(r, c, r, c, {"validate": "list", "source": list(k.choices),
                                            "error_message": f"one of {', '.join(k.choices)}"[:255]})
            return
        if k.kind == "bool":
            ws.data_validation(r, c, r, c, {"validate": "list", "source": ["TRUE", "FALSE"]})
            return
        if k.kind not in ("float", "int", "list") or (k.lo is None and k.hi is None):
            return
        lo = None if k.lo is None else k.lo / factor
        hi = None if k.hi is None else k.hi / factor
        if k.path == "finance.stand_life_years":  # the sheets hold columns up to the stand life written
            hi = float(self.lay.last_year)
        kind = "integer" if k.kind == "int" else "decimal"
        if lo is not None and hi is not None:
            rule = {"criteria": "between", "minimum": lo, "maximum": hi}
            said = f"between {_short(lo)} and {_short(hi)}"
        elif lo is not None:
            rule = {"criteria": ">=", "value": lo}
            said = f"at least {_short(lo)}"
        else:
            rule = {"criteria": "<=", "value": hi}
            said = f"at most {_short(hi)}"
        ws.data_validation(r, c, r, c, {"validate": kind, **rule, "ignore_blank": True,
                                        "error_title": "Outside the accepted range",
                                        "error_message": f"{k.path}: {said} {k.unit_text(self.case.unit_system, self.cur)}"[:255]})

    # -- schedules, years across the columns
    def schedule(self, sheet: str) -> None:
        lay, st = self.lay, self.st
        ws = self.wb.add_worksheet(lay.title(sheet))
        text(ws, 0, 0, f"{sheet}: {self.case.name}", st("title"))
        subtitle = SUBTITLES[sheet]
        if self.case.unit_system == "us_customary":
            subtitle += (" The model's lines are in metric units (per ha, t), as its formulas are; below them the "
                         "same lines per acre and in short tons and pounds, each a formula of the line above "
                         "(1 acre = 0.40468564224 ha, 1 short ton = 0.90718474 t, 1 lb = 0.45359237 kg).")
        text(ws, 1, 0, subtitle, st("subtitle"))
        head = st("head")
        text(ws, HEAD_ROW, LABEL_COL, "Line", head)
        text(ws, HEAD_ROW, UNIT_COL, "Unit", head)
        text(ws, HEAD_ROW, KEY_COL, "Key", head)
        last = lay.last_year
        for y in range(last + 1):
            ws.write_number(HEAD_ROW, YEAR0_COL + y, y, st("year"))
        text(ws, HEAD_ROW - 1, YEAR0_COL, "Year (0 = planting)", st("keyname"))
        r = HEAD_ROW + 2
        for kind, item in lay.sheet_rows[sheet]:
            if kind == "group":
                text(ws, r, LABEL_COL, item, st("group"))
                if item == GROUP_TITLES["workings"]:
                    ws.set_row(r, None, None, {"level": 1, "hidden": True})
            elif kind == "line":
                d = item
                fmt = st("computed", number_format(d.unit))
                text(ws, r, LABEL_COL, d.label, st("label"))
                text(ws, r, UNIT_COL, self.unit(d.unit), st("keyname"))
                text(ws, r, KEY_COL, d.name, st("keyname"))
                for y in range(last + 1):
                    self.formula(ws, r, YEAR0_COL + y, d, y, fmt)
                if not d.show or d.group == "workings":  # working lines: folded away, shown on demand
                    ws.set_row(r, None, None, {"level": 1, "hidden": True})
            r += 1
        end = r
        if sheet == DEBT:
            end = self._whole_field(ws, r)
        if self.case.unit_system == "us_customary":
            end = self._us_customary(ws, end, sheet)
        ws.set_column(LABEL_COL, LABEL_COL, 38)
        ws.set_column(UNIT_COL, UNIT_COL, 11)
        ws.set_column(KEY_COL, KEY_COL, 24, None, {"level": 1, "hidden": True})
        ws.set_column(YEAR0_COL, YEAR0_COL + last, 11)
        ws.freeze_panes(HEAD_ROW + 1, YEAR0_COL)
        self.page_setup(ws, repeat_cols=True, head_row=HEAD_ROW)
        ws.print_area(0, 0, end, YEAR0_COL + last)
        # a printed page holds about 16 year columns at a legible size: wider sheets print across pages
        ws.fit_to_pages(1 if last <= 15 else 2 if last <= 31 else 3, 0)

    def _whole_field(self, ws, r: int) -> int:
        """Money lines of the debt and tax sheet for the whole field: the per-ha cell times the area."""
        lay, st = self.lay, self.st
        area = lay.input("field.area_ha")
        shown, unit = display.convert(self.case["field.area_ha"], "ha", self.case.unit_system)
        text(ws, r, LABEL_COL, f"Whole field ({_short(shown)} {unit})", st("group"))
        r += 1
        for kind, d in lay.sheet_rows[DEBT]:
            if kind != "line" or not d.unit.startswith("money") or not d.show:
                continue
            fmt = st("computed", number_format(d.unit))
            text(ws, r, LABEL_COL, d.label, st("label"))
            text(ws, r, UNIT_COL, self.unit(whole_field_unit(d.unit)), st("keyname"))
            text(ws, r, KEY_COL, d.name + " x area", st("keyname"))
            for y in range(lay.last_year + 1):
                v = cached(self.values[d.key][y])
                ws.write_formula(r, YEAR0_COL + y, f"={lay.cell(d.key, y)}*{area}", fmt,
                                 v * self.case["field.area_ha"] if isinstance(v, float) else v)
            r += 1
        return r

    def _us_customary(self, ws, r: int, sheet: str) -> int:
        """The sheet's lines whose unit has a US customary form (per acre, short tons, pounds), each the metric
        cell times its factor (:func:`tea.inputs.display.convert`): what a US reader reads the schedule in."""
        lay, st = self.lay, self.st
        text(ws, r, LABEL_COL, "Per acre, in short tons and pounds (US customary)", st("group"))
        r += 1
        for kind, d in lay.sheet_rows[sheet]:
            if kind != "line" or not d.show or d.group == "workings":
                continue
            unit = d.unit.replace("price unit", self.price_unit)
            factor, shown = display.convert(1.0, unit, "us_customary")
            if shown == unit:
                continue
            fmt = st("computed", number_format(d.unit))
            text(ws, r, LABEL_COL, d.label, st("label"))
            text(ws, r, UNIT_COL, self.unit(shown), st("keyname"))
            text(ws, r, KEY_COL, f"{d.name} x {factor:.10g}", st("keyname"))
            for y in range(lay.last_year + 1):
                v = cached(self.values[d.key][y])
                ws.write_formula(r, YEAR0_COL + y, f"={lay.cell(d.key, y)}*{factor!r}", fmt,
                                 v * factor if isinstance(v, float) else v)
            r += 1
        return r

    # -- parameters and figures, one per row
    def figures(self) -> None:
        lay, st = self.lay, self.st
        ws = self.wb.add_worksheet(lay.title(FIGURES))
        text(ws, 0, 0, f"Figures: {self.case.name}", st("title"))
        text(ws, 1, 0, "Every figure and parameter is a live formula of the inputs and the schedules; per ha, and "
                       "for the whole field where a figure scales with the area.", st("subtitle"))
        head = st("head")
        for c, label in enumerate(("Figure", "Key", "Per ha", "Whole field", "Unit", "Meaning", "Source")):
            text(ws, 3, c, label, head)
        area = lay.input("field.area_ha")
        r = 4
        for kind, item in lay.fig_rows:
            if kind in ("title", "group"):
                text(ws, r, 0, item, st("group" if kind == "group" else "title"))
            elif kind == "def":
                d = item
                fmt = st("key" if d.kind == "figure" else "computed", number_format(d.unit))
                text(ws, r, 0, d.label, st("label"))
                text(ws, r, 1, d.name, st("keyname"))
                self.formula(ws, r, FIG_VALUE_COL, d, None, fmt)
                if d.kind == "figure" and d.scales:
                    v = cached(self.values[d.key])
                    ws.write_formula(r, FIG_FIELD_COL, f"=IF(ISNUMBER({lay.cell(d.key, None)}),"
                                     f"{lay.cell(d.key, None)}*{area},\"\")", fmt,
                                     v * self.case["field.area_ha"] if isinstance(v, float) else v)
                text(ws, r, 4, self.unit(d.unit), st("keyname"))
                text(ws, r, 5, d.doc, st("label"))
                text(ws, r, 6, d.source, st("keyname"))
            r += 1
        ws.set_column(0, 0, 40)
        ws.set_column(1, 1, 26, None, {"level": 1, "hidden": True})
        ws.set_column(2, 3, 15)
        ws.set_column(4, 4, 12)
        ws.set_column(5, 5, 70)
        ws.set_column(6, 6, 40)
        ws.freeze_panes(4, 1)
        self.page_setup(ws, head_row=3)
        ws.print_area(0, 0, r, 5)

    # -- the published tables the formulas look up, and the named constants
    def tables(self) -> None:
        lay, st = self.lay, self.st
        ws = self.wb.add_worksheet(lay.title(TABLES))
        text(ws, 0, 0, "Published tables and constants the formulas use", st("title"))
        text(ws, 1, 0, "Looked up by the formulas (INDEX/MATCH); each table names its source.", st("subtitle"))
        for name, data in lay.tables.items():
            top = lay.table_top[name]
            text(ws, top, 0, f"{name}: {data.get('source', '')}", st("group"))
            text(ws, top + 1, 0, "key", st("head"))
            for j, c in enumerate(data["columns"], start=1):
                text(ws, top + 1, j, c, st("head"))
            for i, key in enumerate(data["keys"]):
                text(ws, top + 2 + i, 0, key, st("label"))
                for j, c in enumerate(data["columns"], start=1):
                    v = data["columns"][c][i]
                    if isinstance(v, str):
                        text(ws, top + 2 + i, j, v, st("label"))
                    else:
                        ws.write_number(top + 2 + i, j, float(v), st("computed"))
        r = max((lay.table_top[n] + len(d["keys"]) + 4 for n, d in lay.tables.items()), default=4)
        text(ws, r, 0, "Named constants (defined names; no number is typed inside a formula)", st("group"))
        for c, label in enumerate(("Defined name", "Value", "Unit", "Meaning", "Source")):
            text(ws, r + 1, c, label, st("head"))
        for i, (name, k) in enumerate(sorted(lay.constants.items())):
            rr = r + 2 + i
            text(ws, rr, 0, lay.constant(name), st("label"))
            ws.write_number(rr, 1, float(k.value), st("computed"))
            text(ws, rr, 2, k.unit, st("keyname"))
            text(ws, rr, 3, k.doc, st("label"))
            text(ws, rr, 4, k.source, st("keyname"))
            self.wb.define_name(lay.constant(name), f"={xl(rr, 1, sheet=lay.title(TABLES))}")
        ws.set_column(0, 0, 30)
        ws.set_column(1, 6, 13)
        ws.set_column(3, 3, 50)
        ws.set_column(4, 4, 50)
        self.page_setup(ws)


def xl(row: int, col: int, sheet: str | None = None) -> str:
    from xlsxwriter.utility import xl_rowcol_to_cell

    cell = xl_rowcol_to_cell(row, col, True, True)
    return f"'{sheet}'!{cell}" if sheet else cell


def _short(v: float) -> str:
    return f"{v:.10g}"


def _display(canonical: Any, factor: float) -> Any:
    """The value shown in the case's units: the shortest decimal that converts back exactly."""
    if canonical is None or isinstance(canonical, (str, bool)) or factor == 1.0:
        return canonical
    if isinstance(canonical, list):
        return [_display(v, factor) for v in canonical]
    shown = canonical / factor
    for digits in range(1, 17):
        candidate = round(shown, digits)
        if candidate * factor == canonical:
            return candidate
    return shown


__all__ = ["SheetWriter", "engine_values", "cached", "text", "xl"]
