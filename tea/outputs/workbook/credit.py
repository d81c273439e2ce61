"""The credit-file sheets: a one-page summary, the checks, the values of sensitivity and risk, notes.

The summary links to the live figures (per ha and whole field) and shows what
tea computed when it wrote the file where a sheet cannot compute it live (the
decision sentence, the lender's downside, sensitivity and risk): those cells
are values, and are said to be so.
"""

from __future__ import annotations

import math
from typing import Any, Sequence

from tea import __version__
from tea.core.texts import CAUTIONS
from tea.inputs import display
from tea.inputs.case import Case
from tea.model.declare import Def
from tea.outputs.analysis_text import probability_note
from tea.outputs.workbook.layout import (CHECKS, CLIMATE, FIG_FIELD_COL, FIG_VALUE_COL, FIGURES, NOTES, RISK, SENSITIVITY,
                                         SUMMARY, CaseLayout)
from tea.outputs.workbook.sheets import DEMO_FLAG, SheetWriter, cached, text, xl
from tea.outputs.workbook.style import PALETTE, number_format, unit_shown, whole_field_unit

#: figures on the summary, whole field first where they scale with the area
KEY_FIGURES = ("npv", "npv_vs_current_use", "irr", "eav", "eav_vs_current_use", "payback_year", "peak_funding_need",
               "npv_after_tax", "irr_after_tax", "min_dscr", "years_below_covenant", "min_interest_cover", "llcr",
               "loan_repaid_year", "breakeven_price", "breakeven_price_at_covenant", "breakeven_yield_at_covenant_t_dm_per_ha",
               "ghg_net_t_co2e", "carbon_credit_pv")
#: the sources of the planting year's money, which the Checks sheet adds up against the uses
SOURCES = ("sources_loan", "sources_bridge", "sources_grant", "sources_working_capital", "sources_own")
SOURCES_USES = ("uses_establishment", "uses_reserve", "uses_other", "uses_total", *SOURCES, "loan_to_cost")
LENDER_LABELS = {"npv": "NPV", "npv_vs_current_use": "NPV against the current use", "irr": "IRR",
                 "min_dscr": "Lowest DSCR (test years)", "years_below_covenant": "Years below the covenant",
                 "llcr": "LLCR", "money_short_of_debt_service": "Money short of debt service",
                 "equity_peak_funding_need": "Peak own funding after the loan"}
#: a ratio with no value where it is below 0, and the figure flagging that: shown as no cover, not left blank
NO_COVER = {"llcr": "llcr_no_cover_at_first_test"}
NO_COVER_TEXT = "below 0: no cover"
#: relative tolerance of the checks that compare two computations of one number
CHECK_TOLERANCE = 1e-9
STATUS_COL = 4
#: summary columns holding the factors to the case's unit system (beside the printed page)
FACTOR_COL = 15
#: the summary column saying why a key figure has no value (after the unit column and a narrow gap)
NOTE_COL = 5


class CreditWriter(SheetWriter):
    """The summary, checks, analysis values and notes of one case."""

    def __init__(self, *args, headline=None, notes=None, lender=None, sensitivity=None, risk=None):
        super().__init__(*args)
        self.headline, self.lender, self.sens, self.risk = headline, lender, sensitivity, risk
        #: why a figure has no value, by name, as tea found it when it wrote the file (Results.notes)
        self.why_blank: dict[str, str] = dict(notes or {})
        self.checks_count_cell: str | None = None
        self.tolerance_cell: str | None = None  # the Checks sheet's tolerance, read by other sheets

    def fig(self, name: str) -> Def:
        return self.lay.model.figure(name)

    # -- the summary, one printed page
    def summary(self, ws) -> None:
        """The summary, on a sheet added first (it shows first) and filled last (it counts the checks)."""
        lay, st, case = self.lay, self.st, self.case
        ws.set_tab_color(PALETTE["head_fill"])
        area, area_unit = display.area(case["field.area_ha"], case.unit_system)
        text(ws, 0, 0, f"Credit summary: {case.name}", st("title"))
        text(ws, 1, 0, f"{case['field.name']} · {case['crop.preset']} · {display.number(area)} {area_unit} · "
                       f"{case.currency} · "
                       f"{case.stand_life}-year stand · tea {__version__} · case {case.hash}", st("subtitle"))
        if case["case.demo"]:
            text(ws, 2, 0, DEMO_FLAG, st("flag"))
        if self.headline is not None:
            ws.merge_range(3, 0, 3, 13, "", st("wrap"))
            text(ws, 3, 0, f"{self.headline.verdict}. {self.headline.sentence}", st("wrap"))
            ws.set_row(3, 30)
            text(ws, 4, 0, "(the decision in words, as tea wrote it; the figures below are live)", st("keyname"))
        per = "Per acre" if case.unit_system == "us_customary" else "Per ha"
        r = 6
        for title, first, names in (("Key figures", "Figure", KEY_FIGURES),
                                    ("Sources and uses of the establishment money", "Item", SOURCES_USES)):
            text(ws, r, 0, title, st("group"))
            for c, label in enumerate((first, "Whole field", per, "Unit")):
                text(ws, r + 1, c, label, st("head"))
            r += 2
            for name in names:
                r = self._figure_row(ws, r, self.fig(name))
            r += 1
        if self.lender is not None:
            r = self._lender(ws, r)
        text(ws, r, 0, "Checks failing (see the Checks sheet)", st("label"))
        ws.write_formula(r, 1, f"={self.checks_count_cell}", st("key", "0"), self._checks_failing)
        ws.conditional_format(r, 1, r, 1, {"type": "cell", "criteria": ">", "value": 0, "format": st.flag_fmt})
        r += 1
        text(ws, r, 0, "Figures changed since tea wrote the file (an input edited)", st("label"))
        ws.write_formula(r, 1, f"={self.changed_count_cell}", st("key", "0"), 0)
        r += 2
        text(ws, r, 0, "Cautions", st("group"))
        r += 1
        for line in CAUTIONS:
            ws.merge_range(r, 0, r, 13, "", st("wrap"))
            text(ws, r, 0, line, st("wrap"))
            ws.set_row(r, 26)
            r += 1
        end = r
        self._dscr_chart(ws, end + 2)
        ws.set_column(0, 0, 44)
        ws.set_column(1, 2, 15)
        ws.set_column(3, 3, 13)
        ws.set_column(4, 4, 2)
        self.page_setup(ws)
        ws.fit_to_pages(1, 1)
        ws.print_area(0, 0, max(end, 30), 13)
        ws.activate()

    def _figure_row(self, ws, r: int, d: Def) -> int:
        """A figure whole field and per unit of area, in the case's unit system.

        In US customary units the factor from the canonical unit (``t DM/ha`` to ``short ton DM/acre``) sits
        in a column beside the page (no number is typed inside a formula).
        """
        st, lay, case = self.st, self.lay, self.case
        fmt = st("key", number_format(d.unit))
        text(ws, r, 0, d.label, st("label"))
        v = cached(self.values[d.key])
        whole_unit = whole_field_unit(d.unit)
        f_per, unit = display.convert(1.0, self._priced(d.unit), case.unit_system)
        f_whole, whole_shown = display.convert(1.0, whole_unit, case.unit_system)
        if d.scales:
            whole = lay.ref(FIGURES, lay.fig_row[d.key], FIG_FIELD_COL)
            wv = v * case["field.area_ha"] * f_whole if isinstance(v, float) else v
            if f_whole == 1.0:
                ws.write_formula(r, 1, f"={whole}", fmt, wv)
            else:
                ws.write_number(r, FACTOR_COL + 1, f_whole, st("keyname"))
                ws.write_formula(r, 1, f'=IF(ISNUMBER({whole}),{whole}*{xl(r, FACTOR_COL + 1)},"")', fmt, wv)
        cell = lay.cell(d.key, None)
        if d.name in NO_COVER:  # a ratio below 0 is no cover: said so, from the live flag beside it
            flag = self.fig(NO_COVER[d.name])
            no_cover = isinstance(v, str) and cached(self.values[flag.key]) == 1
            ws.write_formula(r, 2, f'=IF(ISNUMBER({cell}),{cell},IF({lay.cell(flag.key, None)}=1,'
                                   f'"{NO_COVER_TEXT}",""))', fmt, NO_COVER_TEXT if no_cover else v)
        elif f_per == 1.0:
            ws.write_formula(r, 2, f"={cell}", fmt, v)
        else:
            ws.write_number(r, FACTOR_COL, f_per, st("keyname"))
            ws.write_formula(r, 2, f'=IF(ISNUMBER({cell}),{cell}*{xl(r, FACTOR_COL)},"")', fmt,
                             v * f_per if isinstance(v, float) else v)
        unit = self.unit(unit)
        text(ws, r, 3, unit if not d.scales else f"{self.unit(whole_shown)} | {unit}", st("keyname"))
        if not isinstance(v, float) and d.name in self.why_blank and d.name not in NO_COVER:  # says why it is blank
            text(ws, r, NOTE_COL, f"no value when tea wrote the file: {self.why_blank[d.name]}", st("keyname"))
        return r + 1

    def _priced(self, unit: str) -> str:
        """A unit with the price unit spelled out (per t DM or per GJ), so that it converts to US customary
        units (per short ton DM) like any other."""
        return unit.replace("price unit", self.case.price_unit)

    def _lender(self, ws, r: int) -> int:
        st, lc = self.st, self.lender
        t = lc.terms
        text(ws, r, 0, "The lender's cases (values tea computed when it wrote the file)", st("group"))
        r += 1
        text(ws, r, 0, f"Downside: price {t['price_change']:+.0%}, yield {t['yield_change']:+.0%}, "
                       f"{t['delay_years']} year(s) late; debt service as drawn in the bankable case", st("keyname"))
        r += 1
        per = "acre" if self.case.unit_system == "us_customary" else "ha"
        for c, label in enumerate((f"Figure (per {per})", "Bankable", "Downside")):
            text(ws, r, c, label, st("head"))
        r += 1
        for name, label in LENDER_LABELS.items():
            d = self.fig(name)
            factor, unit = display.convert(1.0, self._priced(d.unit), self.case.unit_system)
            fmt = st("value", number_format(d.unit))
            shown = self.unit(unit)
            text(ws, r, 0, f"{label} [{shown}]" if shown else label, st("label"))
            for c, v in ((1, lc.base.get(name)), (2, lc.downside.get(name))):
                if v is None or (isinstance(v, float) and math.isnan(v)):
                    flags = lc.base if c == 1 else lc.downside
                    no_cover = name in NO_COVER and flags.get(NO_COVER[name]) == 1
                    text(ws, r, c, NO_COVER_TEXT if no_cover else "n/a", st("value"))
                else:
                    ws.write_number(r, c, float(v) * factor, fmt)
            r += 1
        return r + 1

    def _dscr_chart(self, ws, helper_row: int) -> None:
        """DSCR by year against the covenant: a column per year, the covenant a line.

        The chart reads a small table of formulas below the printed page: year, DSCR, covenant, a row per year.
        """
        lay, st = self.lay, self.st
        last = lay.last_year
        dscr, cov = lay.model.line("dscr"), self.fig("dscr_covenant")
        text(ws, helper_row, 0, "Chart data (formulas): year, DSCR, covenant", st("keyname"))
        top = helper_row + 1
        for y in range(last + 1):
            r = top + y
            v = self.values[dscr.key][y]
            ws.write_formula(r, 1, f"={lay.year(y)}", st("keyname"), y)
            ws.write_formula(r, 2, f"=IF(ISNUMBER({lay.cell(dscr.key, y)}),{lay.cell(dscr.key, y)},NA())",
                             st("keyname", "0.00"), "#N/A" if _nan(v) else cached(v))
            ws.write_formula(r, 3, f"={lay.cell(cov.key, None)}", st("keyname", "0.00"), cached(self.values[cov.key]))
        title = lay.title(SUMMARY)
        years = [title, top, 1, top + last, 1]
        chart = self.wb.add_chart({"type": "column"})
        chart.add_series({"name": "DSCR", "categories": years, "values": [title, top, 2, top + last, 2],
                          "fill": {"color": PALETTE["series"][0]}, "gap": 60})
        line = self.wb.add_chart({"type": "line"})
        line.add_series({"name": "Covenant", "categories": years, "values": [title, top, 3, top + last, 3],
                         "line": {"color": PALETTE["series"][1], "dash_type": "dash", "width": 1.5},
                         "marker": {"type": "none"}})
        chart.combine(line)
        chart.set_title({"name": "DSCR by year against the covenant (covenant test years)",
                         "name_font": {"size": 10, "bold": True}})
        chart.set_x_axis({"name": "Year", "interval_unit": 1 if last <= 25 else 5})
        chart.set_y_axis({"name": "DSCR", "major_gridlines": {"visible": True, "line": {"color": "#DDDDDD"}}})
        chart.set_legend({"position": "bottom"})
        chart.show_na_as_empty_cell()
        ws.insert_chart(6, 5, chart, {"x_scale": 1.1, "y_scale": 1.2})

    # -- checks
    def checks(self) -> None:
        lay, st, case = self.lay, self.st, self.case
        ws = self.wb.add_worksheet(lay.title(CHECKS))
        title = lay.title(CHECKS)
        text(ws, 0, 0, f"Checks: {case.name}", st("title"))
        text(ws, 1, 0, "Each row is a live test of the workbook; the summary counts the failures.", st("subtitle"))
        text(ws, 2, 0, "Relative tolerance of the comparisons", st("label"))
        ws.write_number(2, 1, CHECK_TOLERANCE, st("input", "0.0E+00"))
        tol = xl(2, 1)
        self.tolerance_cell = xl(2, 1, sheet=title)
        head = st("head")
        for c, label in enumerate(("Check", "Value", "Expected", "Upper bound", "Status", "What it means")):
            text(ws, 4, c, label, head)
        rows: list[tuple[str, str, Any, Any, str, bool, str]] = []  # label, value formula, v, expected, status, ok, note
        fig = lambda n: lay.cell(("figure", n), None)  # noqa: E731
        sources = "+".join(fig(n) for n in SOURCES)
        val = lambda n: cached(self.values[("figure", n)])  # noqa: E731
        s_v = sum(float(val(n) or 0.0) for n in SOURCES)
        u_v = float(val("uses_total") or 0.0)
        self._check(ws, rows, "Sources equal uses", f"={sources}", s_v, ("formula", f"={fig('uses_total')}", u_v),
                    lambda v, e: f"ABS({v}-{e})<={tol}*MAX(1,ABS({e}))", abs(s_v - u_v) <= CHECK_TOLERANCE * max(1, abs(u_v)),
                    "the money raised pays for what is spent: the own funds come from the own cash flow of year 0, "
                    "so the loan, bridge, grant, reserve and tax lines must add up")
        bal = lay.model.line("loan_balance")
        b_v = float(self.values[bal.key][lay.last_year])
        amount = lay.cell(("line", "loan_amount"), None)
        a_v = float(cached(self.values[("line", "loan_amount")]) or 0.0)
        self._check(ws, rows, "Loan repaid within the stand life", f"={lay.cell(bal.key, lay.last_year)}", b_v,
                    ("value", 0.0), lambda v, e: f"ABS({v})<={tol}*MAX(1,{amount})",
                    abs(b_v) <= CHECK_TOLERANCE * max(1.0, a_v), "the balance left in the last year of the stand")
        term, grace = lay.input("loan.term_years"), lay.input("loan.grace_years")
        life = lay.input("finance.stand_life_years")
        t_v = (case.values.get("loan.term_years") or 0) + (case.values.get("loan.grace_years") or 0)
        self._check(ws, rows, "Loan term within the stand life",
                    f"=IF(ISNUMBER({term}),{term},0)+IF(ISNUMBER({grace}),{grace},0)", float(t_v),
                    ("formula", f"={life}", float(case.stand_life)), lambda v, e: f"{v}<={e}",
                    t_v <= case.stand_life, "grace and repayment years: a loan is repaid from the stand's own years")
        self._check(ws, rows, "Stand life within the years this workbook holds", f"={life}", float(case.stand_life),
                    ("value", float(lay.last_year)), lambda v, e: f"{v}<={e}", True,
                    "a longer stand needs the workbook written again: tea run BOOK.xlsx --xlsx NEW.xlsx")
        for item in lay.inputs:
            k = item.key
            if k.kind not in ("float", "int", "list") or (k.lo is None and k.hi is None):
                continue
            v = case.values.get(k.path)
            self._range_check(ws, rows, item, v, tol)
        for d in lay.model.figures:
            v = cached(self.values[d.key])
            self._engine_check(ws, rows, d, v, tol)
        r = 5
        for label, formula, v, expected, status, ok, note in rows:
            text(ws, r, 0, label, st("label"))
            if formula is not None:
                ws.write_formula(r, 1, formula, st("computed", "General"), v)
            if expected[0] == "formula":
                ws.write_formula(r, 2, expected[1], st("computed", "General"), expected[2])
            elif expected[0] == "value":
                ws.write_number(r, 2, expected[1], st("computed", "General"))
            elif expected[0] == "range":
                if expected[1] is not None:
                    ws.write_number(r, 2, expected[1], st("computed", "General"))
                if expected[2] is not None:
                    ws.write_number(r, 3, expected[2], st("computed", "General"))
            elif expected[0] == "text":
                text(ws, r, 2, expected[1], st("computed"))
            ws.write_formula(r, STATUS_COL, status.replace("{r}", str(r + 1)), st("key"), "PASS" if ok else "FAIL")
            text(ws, r, 5, note, st("keyname"))
            r += 1
        end = r - 1
        status_range = f"{xl(5, STATUS_COL, sheet=title)}:{xl(end, STATUS_COL)}"
        text(ws, 3, 0, "Checks failing", st("label"))
        failing = sum(1 for row in rows if not row[5])
        ws.write_formula(3, 1, f'=COUNTIF({status_range},"FAIL")', st("key", "0"), failing)
        text(ws, 3, 2, "Figures changed since tea wrote the file", st("label"))
        ws.write_formula(3, 3, f'=COUNTIF({status_range},"{CHANGED}")', st("key", "0"), 0)
        self.changed_count_cell = xl(3, 3, sheet=title)
        ws.conditional_format(5, STATUS_COL, end, STATUS_COL, {"type": "cell", "criteria": "==", "value": '"FAIL"',
                                                              "format": st.flag_fmt})
        self.checks_count_cell = xl(3, 1, sheet=title)
        self._checks_failing = failing
        ws.set_column(0, 0, 50)
        ws.set_column(1, 3, 15)
        ws.set_column(4, 4, 8)
        ws.set_column(5, 5, 60)
        ws.freeze_panes(5, 1)
        self.page_setup(ws, landscape=False, head_row=4)
        ws.print_area(0, 0, end, 5)

    def _check(self, ws, rows, label, formula, v, expected, test, ok, note) -> None:
        e_ref = "C{r}" if expected[0] in ("formula", "value") else None
        status = f'=IF({test("B{r}", e_ref)},"PASS","FAIL")'
        rows.append((label, formula, v, expected, status, bool(ok), note))

    def _range_check(self, ws, rows, item, v, tol) -> None:
        k = item.key
        name = item.name
        ge = ">" if k.lo_open else ">="
        le = "<" if k.hi_open else "<="
        parts = []
        if k.lo is not None:
            parts.append(f"MIN({name}){ge}C{{r}}")
        if k.hi is not None:
            parts.append(f"MAX({name}){le}D{{r}}")
        cond = parts[0] if len(parts) == 1 else f"AND({','.join(parts)})"
        status = f'=IF(COUNT({name})=0,"PASS",IF({cond},"PASS","FAIL"))'
        values = [x for x in (v if isinstance(v, list) else [v]) if isinstance(x, (int, float))]
        ok = all((k.lo is None or (x > k.lo if k.lo_open else x >= k.lo))
                 and (k.hi is None or (x < k.hi if k.hi_open else x <= k.hi)) for x in values)
        label = f"Input inside its range: {k.path}"
        formula = f'=IF(COUNT({name})=0,"",MIN({name}))' if k.kind == "list" else f'=IF(COUNT({name})=0,"",{name})'
        shown = (min(values) if values else "")
        rows.append((label, formula, shown, ("range", k.lo, k.hi), status, ok,
                     f"canonical units ({k.unit_text('metric', self.cur)})"))

    def _engine_check(self, ws, rows, d: Def, v, tol) -> None:
        live = self.lay.cell(d.key, None)
        if isinstance(v, str):
            status = f'=IF(ISNUMBER(B{{r}}),"{CHANGED}",IF(B{{r}}=C{{r}},"PASS","{CHANGED}"))'
            rows.append((f"Live formula equals tea's value: {d.name}", f"={live}", v, ("text", v), status, True,
                         "no value when tea wrote the file" if v == "" else "a text when tea wrote the file"))
            return
        status = f'=IF(ISNUMBER(B{{r}}),IF(ABS(B{{r}}-C{{r}})<={tol}*MAX(1,ABS(C{{r}})),"PASS","{CHANGED}"),"{CHANGED}")'
        rows.append((f"Live formula equals tea's value: {d.name}", f"={live}", v, ("value", float(v)), status, True,
                     "the workbook's formula gives the value tea computed; if an input is edited the status reads "
                     f"{CHANGED} (not a failure): run tea run BOOK.xlsx to recompute and check"))

    # -- values computed by tea
    def sensitivity(self) -> None:
        table = self.sens
        lay, st, case = self.lay, self.st, self.case
        ws = self.wb.add_worksheet(lay.title(SENSITIVITY))
        text(ws, 0, 0, f"Sensitivity: {case.name}", st("title"))
        text(ws, 1, 0, "Values tea computed when it wrote the file (each variant runs the whole model again, which a "
                       "sheet cannot do live). Inputs in canonical units, figures per ha.", st("subtitle"))
        from tea.analysis.sensitivity import FIGURES as SENS_FIGURES

        text(ws, 2, 0, "Base NPV now (live)", st("label"))
        npv = lay.cell(("figure", "npv"), None)
        base = float(table.attrs["base_npv"])
        ws.write_formula(2, 1, f"={npv}", st("key", number_format("money/ha")), base)
        ws.write_number(2, 2, base, st("value", number_format("money/ha")))
        ws.write_formula(2, 3, f'=IF(ABS(B3-C3)<={self.tolerance_cell}*MAX(1,ABS(C3)),"matches the inputs",'
                               f'"INPUTS EDITED: run tea sensitivity again")', st("flag"), "matches the inputs")
        cols = ["Rank", "Input", "Label", "Unit", "Base", "Low", "High", "Range"]
        for fig in SENS_FIGURES:
            cols += [f"{fig} low", f"{fig} high", f"{fig} swing"]
        for c, label in enumerate(cols):
            text(ws, 4, c, label, st("head"))
        keys = ["rank", "input", "label", "unit", "base", "low", "high", "range"]
        for fig in SENS_FIGURES:
            keys += [f"{fig}_low", f"{fig}_high", f"{fig}_swing"]
        for i, row in enumerate(table.to_dict("records")):
            for c, key in enumerate(keys):
                v = row.get(key)
                if isinstance(v, str):
                    text(ws, 5 + i, c, v, st("label"))
                elif v is not None and not _nan(v):
                    ws.write_number(5 + i, c, float(v), st("value", "#,##0.00"))
        n = len(table)
        if n:
            chart = self.wb.add_chart({"type": "bar"})
            title = lay.title(SENSITIVITY)
            lo, hi = keys.index("npv_low"), keys.index("npv_high")
            for j, (c, name) in enumerate(((lo, "NPV at the low value"), (hi, "NPV at the high value"))):
                chart.add_series({"name": name, "categories": [title, 5, 2, 4 + n, 2],
                                  "values": [title, 5, c, 4 + n, c], "fill": {"color": PALETTE["series"][j]}})
            chart.set_title({"name": f"NPV per ha at each input's low and high value ({case.currency}/ha)",
                             "name_font": {"size": 10}})
            chart.set_y_axis({"reverse": True})
            chart.set_legend({"position": "bottom"})
            ws.insert_chart(6 + n, 1, chart, {"x_scale": 1.4, "y_scale": 1.2})
        ws.set_column(0, 0, 6)
        ws.set_column(1, 1, 30)
        ws.set_column(2, 2, 34)
        ws.set_column(3, len(cols), 13)
        self.page_setup(ws, head_row=4)

    def risk_sheet(self) -> None:
        res = self.risk
        lay, st, case = self.lay, self.st, self.case
        ws = self.wb.add_worksheet(lay.title(RISK))
        text(ws, 0, 0, f"Risk: {case.name}", st("title"))
        text(ws, 1, 0, f"Values tea computed when it wrote the file: {res.draws:,} draws, seed {res.seed}. Per ha; "
                       "IRR under the project's rule (the single rate, or the single positive one by Norström's "
                       "criterion); draws without a value are counted, never given one.", st("subtitle"))
        from tea.analysis.risk import PERCENTILES

        cols = ["Figure", *[f"P{q}" for q in PERCENTILES], "Mean", "Draws with a value", "Draws without"]
        for c, label in enumerate(cols):
            text(ws, 3, c, label, st("head"))
        r = 4
        for name, s in res.stats.items():
            d = lay.model.figure(name) if ("figure", name) in lay.model else None
            unit = self.unit(d.unit) if d else ""
            text(ws, r, 0, f"{d.label if d else name} [{unit}]", st("label"))
            fmt = st("value", number_format(d.unit) if d else "#,##0.00")
            for j, q in enumerate(PERCENTILES, start=1):
                if not _nan(s.percentiles[q]):
                    ws.write_number(r, j, s.percentiles[q], fmt)
            if not _nan(s.mean):
                ws.write_number(r, 1 + len(PERCENTILES), s.mean, fmt)
            ws.write_number(r, 2 + len(PERCENTILES), s.defined, st("value", "#,##0"))
            ws.write_number(r, 3 + len(PERCENTILES), s.undefined, st("value", "#,##0"))
            r += 1
        r += 1
        probs = [("P(NPV < 0)", res.prob_npv_negative),
                 ("P(NPV against the current use < 0)", res.prob_npv_vs_current_use_negative),
                 (f"P(lowest DSCR in the test years < {res.covenant:g})", res.prob_dscr_below_covenant)]
        for label, p in probs:
            if p is None:
                continue
            text(ws, r, 0, label, st("label"))
            if not _nan(p.value):
                ws.write_number(r, 1, p.value, st("value", "0.0%"))
                text(ws, r, 2, probability_note(p, count=True), st("keyname"))
            r += 1
        for note in res.notes:
            text(ws, r, 0, note, st("keyname"))
            r += 1
        ws.set_column(0, 0, 44)
        ws.set_column(1, len(cols), 13)
        self.page_setup(ws, head_row=3)

    def site_climate(self) -> None:
        """The yield potential of the site's climate (Monteith's equation), month by month: values tea computed."""
        from tea.inputs.site import potential, season_for

        lay, st, case = self.lay, self.st, self.case
        season = season_for(case.values)
        pot = potential(case.values, case.origin)
        ws = self.wb.add_worksheet(lay.title(CLIMATE))
        text(ws, 0, 0, f"Yield potential from the site climate: {case.name}", st("title"))
        text(ws, 1, 0, "Values tea computed when it wrote the file: Y = S x f x e x H (Monteith 1977), seasonal "
                       "radiation times the share intercepted times the conversion efficiency times the share "
                       "harvested. A planning check on the assumed yield, not a forecast.", st("subtitle"))
        r = 3
        summary = [("Potential dry matter at the autumn peak", pot["potential_t_dm_per_ha"], "t DM/ha/yr"),
                   ("Harvested in late winter, after the loss from the peak", pot["harvested_t_dm_per_ha"],
                    "t DM/ha/yr"),
                   ("Assumed in the case (mature yield x site factor)", pot["assumed_t_dm_per_ha"], "t DM/ha/yr"),
                   ("Assumed as a share of the potential", pot["assumed_share"], "fraction")]
        for label, v, unit in summary:
            text(ws, r, 0, label, st("label"))
            if v is not None and not _nan(v):
                ws.write_number(r, 1, float(v), st("value", number_format(unit)))
            text(ws, r, 2, self.unit(unit), st("keyname"))
            r += 1
        if pot.get("estimated"):
            text(ws, r, 0, "The case gives no mature yield: this estimate is used.", st("flag"))
            r += 1
        r += 1
        rows = season.rows()
        keys = list(rows[0]) if rows else []
        heads = {"month": "Month", "global_radiation_mj_per_m2": "Global radiation [MJ/m2]",
                 "par_in_season_mj_per_m2": "PAR in the season [MJ/m2]",
                 "intercepted_par_mj_per_m2": "PAR intercepted [MJ/m2]", "share_intercepted": "Share intercepted",
                 "water_factor": "Water factor", "dry_matter_t_per_ha": "Dry matter [t/ha]"}
        for c, k in enumerate(keys):
            text(ws, r, c, heads.get(k, k), st("head"))
        for i, row in enumerate(rows, start=1):
            for c, k in enumerate(keys):
                v = row[k]
                if isinstance(v, (int, float)) and not _nan(float(v)):
                    ws.write_number(r + i, c, float(v), st("value", "0" if k == "month" else "#,##0.00"))
        ws.set_column(0, 0, 50)
        ws.set_column(1, len(keys), 14)
        self.page_setup(ws, landscape=False)

    def notes(self, defs: Sequence[Def]) -> None:
        lay, st, case = self.lay, self.st, self.case
        ws = self.wb.add_worksheet(lay.title(NOTES))
        text(ws, 0, 0, "Notes", st("title"))
        rows = [("Written by", f"tea {__version__}"), ("Case", case.name), ("Case hash", case.hash),
                ("Currency", case.currency), ("Units of the inputs", case.unit_system),
                ("Timing", "Year 0 is planting; every later flow is booked at the end of its year; discount factor "
                           "(1 + r)^-t. A spreadsheet's NPV discounts its first value, so NPV is written as year 0 "
                           "plus NPV(rate, years 1 ...)."),
                ("Signs", "Costs and revenues are positive amounts; only cash-flow lines carry a sign; "
                          "greenhouse-gas lines are emissions positive, removals negative."),
                ("DSCR", "Cash available for debt service over debt service, in the covenant test years only; "
                         "where the cash is negative the ratio is shown as not meaningful and the money short of "
                         "the debt service is reported instead."),
                ("Formulas", "Every computed cell is a live formula with its value saved beside it; no volatile "
                             "function; constants are defined names on the Tables sheet.")]
        r = 2
        for label, value in rows:
            text(ws, r, 0, label, st("label"))
            text(ws, r, 1, value, st("wrap"))
            r += 1
        r += 1
        text(ws, r, 0, "Cautions", st("group"))
        r += 1
        for line in CAUTIONS:
            text(ws, r, 1, line, st("wrap"))
            r += 1
        r += 1
        text(ws, r, 0, "Published methods the formulas follow", st("group"))
        r += 1
        seen: set[str] = set()
        for d in defs:
            if d.source and d.source not in seen:
                seen.add(d.source)
                text(ws, r, 0, d.label, st("label"))
                text(ws, r, 1, d.source, st("wrap"))
                r += 1
        ws.set_column(0, 0, 34)
        ws.set_column(1, 1, 110)
        self.page_setup(ws, landscape=False)


#: the status of a figure whose live formula no longer gives the value tea wrote: an input was edited (not a
#: failed check; `tea run BOOK.xlsx` recomputes the edited case)
CHANGED = "CHANGED"


def comparison(ws, st, cases: Sequence[Case], layouts: Sequence[CaseLayout], values: Sequence[dict]) -> None:
    """The first sheet of a portfolio, the cases side by side: each cell a link to the case's own figures sheet."""
    ws.set_tab_color(PALETTE["head_fill"])
    text(ws, 0, 0, f"Side by side: {len(cases)} cases", st("title"))
    currencies = {c.currency for c in cases}
    price_units = {c.price_unit for c in cases}
    price_unit = next(iter(price_units)) if len(price_units) == 1 else "price unit"  # each case's own, as money
    money = next(iter(currencies)) if len(currencies) == 1 else "currency"  # each case's own, in its column head
    text(ws, 1, 0, "Every figure links to the case's own figures sheet; whole field where a figure scales with the "
                   "area, per ha otherwise, in metric units (ha, metric t) for every case"
                   + (", even those in US customary units (their own sheets give acres and short tons)"
                      if any(c.unit_system == "us_customary" for c in cases) else "")
                   + ("; money in each case's own currency (under its name)" if len(currencies) > 1 else "")
                   + ("; prices per each case's own price unit (under its name)" if len(price_units) > 1 else "")
                   + ". Planning estimates, not financial advice.", st("subtitle"))
    head = st("head")
    for c, label in enumerate(("Figure", "Unit")):
        text(ws, 3, c, label, head)
    for j, case in enumerate(cases):
        text(ws, 3, 2 + j, case.name, head)
        text(ws, 4, 2 + j, f"{case['field.name']} · {case['crop.preset']}", st("keyname"))
        text(ws, 5, 2 + j, f"{layouts[j].sheet_prefix.strip()} sheets · {case.currency}"
             + (f" · price per {case.price_unit}" if len(price_units) > 1 else ""), st("keyname"))
    r = 7
    model = layouts[0].model
    for name in (*KEY_FIGURES, *SOURCES_USES):
        d = model.figure(name)
        text(ws, r, 0, d.label + (" (whole field)" if d.scales else ""), st("label"))
        text(ws, r, 1, unit_shown(whole_field_unit(d.unit) if d.scales else d.unit, money, price_unit), st("keyname"))
        for j, (case, lay) in enumerate(zip(cases, layouts)):
            v = cached(values[j][d.key])
            col = FIG_FIELD_COL if d.scales else FIG_VALUE_COL
            if d.scales and isinstance(v, float):
                v = v * case["field.area_ha"]
            ws.write_formula(r, 2 + j, f"={lay.ref(FIGURES, lay.fig_row[d.key], col)}",
                             st("key", number_format(d.unit)), v)
        r += 1
    ws.set_column(0, 0, 44)
    ws.set_column(1, 1, 12)
    ws.set_column(2, 1 + len(cases), 18)
    ws.freeze_panes(4, 2)
    ws.set_landscape()
    ws.fit_to_pages(1, 0)
    ws.repeat_rows(3)


def _nan(v: Any) -> bool:
    return isinstance(v, float) and math.isnan(v)


__all__ = ["CreditWriter", "comparison", "KEY_FIGURES", "SOURCES_USES", "CHECK_TOLERANCE"]
