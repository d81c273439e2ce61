"""The workbook recalculated by an independent spreadsheet engine (LibreOffice Calc, headless).

Every workbook written here is opened in LibreOffice, recalculated and read back;
every ledger, schedule, carbon, results and comparison cell is compared with the
Python engine (tea.ledger.compute, tea.summarise) to 1e-9 relative, with an
absolute floor of 1e-9 near zero (LibreOffice returns 15 significant digits, so
the tolerance leaves six orders of magnitude of room and still catches any
formula that differs from the engine). No cell may hold an error value.

Sensitivity sheet: its values are tea's (:func:`tea.sensitivity.sensitivity_table`),
written when the file was; after the engine's recalculation every number of it
(the values, the swings, the per-acre columns, the live base NPV) is compared with
the table to the same tolerance, and the cell that says whether the table still
matches the inputs must say so, and must say NO after an input was edited.

Live-ness: inputs are changed inside a written file (the value cell of the
inputs sheet), LibreOffice recalculates it, and every cell is compared with the
engine run on the same change made to the case (``Case.replace``).

IRR: the engine (tea.finance.irr) returns NaN where no single rate exists. The
sheet shows a text note when the flows change sign an even number of times or
never (Descartes' rule of signs: then there is no single rate), and IRR(flows,
guess) otherwise; every IRR cell is compared where the engine has a value, and
must be text where the engine has none and the sign count says so.
"""

from __future__ import annotations

import math
import re
import zipfile
from pathlib import Path

import numpy as np
import pytest

import tea
import tea.inputs.schema
import tea.inputs.units
from tea.inputs import display
from tea.methods import finance
from tea.model import ledger
from tea.model.evaluate import evaluate
from tea.inputs import units
from tea.model.results import FIGURE_BY_NAME, FIGURE_NAMES
from tea.outputs.workbook import (LEDGER_KEY_ROW, LEDGER_TOP, N_ROWS, TABLE_KEY_ROW, TABLE_LABEL_ROW, TABLE_TOP,
                          portfolio_bytes, read_case_mapping, workbook_bytes)

import spreadsheet_engine as engine
from tea.analysis.sensitivity import FIGURES as SENS_FIGURES
from tea.analysis.sensitivity import sensitivity_table
from tea.outputs.workbook import SENS_KEY_ROW, SENS_TOP

ROOT = Path(__file__).resolve().parents[1]
DEMOS = {p.stem: p for p in sorted((ROOT / "cases").glob("*.toml"))}
RTOL = ATOL = 1e-9
STATS = {"cells": 0, "max_rel": 0.0, "max_abs_near_zero": 0.0, "files": 0}

INJECTED = {
    "case.name": '=HYPERLINK("http://example.invalid","open me")',
    "case.notes": "+1+2",
    "field.name": "@SUM(1,2)",
    "establishment.planting_unit": "-3+4",
}


# ----------------------------------------------------------------------------- the engine's side
PARAMS = {"rate": "discount_rate_real", "material": "planting_material_per_ha", "retention": "standing_retention",
          "moisture": "moisture_at_harvest", "n_per_t": "n_offtake_kg_per_t_dm", "p_per_t": "p2o5_offtake_kg_per_t_dm",
          "k_per_t": "k2o_offtake_kg_per_t_dm", "price": "price_per_t_dm_year1", "soc_start": "soc_start_t_c",
          "soc_target": "soc_target_t_c", "ef1": "ef1", "frac_gasf": "frac_gasf", "frac_leach": "frac_leach",
          "ef4": "ef4", "ef5": "ef5", "gwp_n2o": "gwp_n2o", "loan_rate": "loan_rate", "first_order": "soc_first_order",
          "loan_capitalised": "loan_capitalised", "mirr_finance_rate": "mirr_finance_rate_real",
          "mirr_reinvest_rate": "mirr_reinvest_rate_real"}


def engine_side(case):
    """Every ledger line over years 0..MAX_YEARS, the model's parameters, and the engine's decision figures."""
    got = evaluate(case.values, lines=(*ledger.LINE_NAMES, *PARAMS.values()), years=N_ROWS)
    lines = {k: got.lines[k][0] for k in ledger.LINE_NAMES}
    p = {short: got.lines[name][0, :1] for short, name in PARAMS.items()}
    figs = tea.summarise(case, tea.build_ledger(case)).per_ha
    return p, lines, figs


def _checks(lines, figs):
    """Expected check columns of the ledger sheet, computed here from the engine's lines."""
    out = {}
    for key, flow in (("chk_sign_net", "net_cash_flow"), ("chk_sign_incremental", "incremental_cash_flow")):
        sign, last = [], 0.0
        for v in lines[flow]:
            last = float(np.sign(v)) if v != 0 else last
            sign.append(last)
        out[key] = np.array(sign)
    for below, cand, cum in (("chk_cum_below", "chk_payback", "cumulative_cash_flow"),
                             ("chk_disc_below", "chk_disc_payback", "cumulative_discounted_cash_flow")):
        flag = np.maximum.accumulate(lines[cum] < 0).astype(float)
        out[below] = flag
        prev = np.concatenate([[0.0], flag[:-1]])
        years = np.arange(N_ROWS, dtype=float)
        out[cand] = np.where((prev == 1) & (lines[cum] >= 0), years, np.nan)
        out[cand][0] = np.nan  # year 0 cannot be a payback year: the cell is empty
    pay = figs["discounted_payback_year"]
    top = lines["cumulative_discounted_cash_flow"].max()
    out["chk_payback_marker"] = np.where(np.arange(N_ROWS) == (pay if pay is not None else -1), top, 0.0)
    return out


# ----------------------------------------------------------------------------- comparing
def close(actual, expected, where: str) -> None:
    """Compare one cell with the engine; NaN/None expected means text or blank in the sheet."""
    if expected is None or (isinstance(expected, float) and math.isnan(expected)):
        assert not isinstance(actual, (int, float)) or isinstance(actual, bool), \
            f"{where}: engine has no value, sheet shows {actual!r}"
        return
    assert isinstance(actual, (int, float)) and not isinstance(actual, bool), \
        f"{where}: expected a number {expected!r}, got {actual!r}"
    diff = abs(actual - expected)
    assert diff <= max(RTOL * abs(expected), ATOL), f"{where}: sheet {actual!r} vs engine {expected!r}"
    STATS["cells"] += 1
    if abs(expected) > 1e-6:
        STATS["max_rel"] = max(STATS["max_rel"], diff / abs(expected))
    else:
        STATS["max_abs_near_zero"] = max(STATS["max_abs_near_zero"], diff)


def _keyed_columns(ws, key_row: int) -> dict[str, int]:
    return {c.value: c.column for c in ws[key_row] if isinstance(c.value, str)}


def _keyed_rows(ws, key_col: int, first: int = 1) -> dict[str, int]:
    return {ws.cell(r, key_col).value: r for r in range(first, ws.max_row + 1)
            if isinstance(ws.cell(r, key_col).value, str)}


def compare_case(wb, case, prefix: str = "") -> int:
    """Compare every computed cell of one case's sheets with the engine; return the cells compared."""
    before = STATS["cells"]
    p, lines, figs = engine_side(case)
    life = case.stand_life
    area = case.area_ha

    # ledger: every line, every year 0..60; then the check columns
    ws = wb[prefix + "Ledger"]
    cols = _keyed_columns(ws, LEDGER_KEY_ROW)
    assert set(ledger.LINE_NAMES) <= set(cols), set(ledger.LINE_NAMES) - set(cols)
    checks = _checks(lines, figs)
    grid = list(ws.iter_rows(min_row=LEDGER_TOP, max_row=LEDGER_TOP + N_ROWS - 1, values_only=True))
    for name, c in cols.items():
        expected = lines.get(name, checks.get(name))
        assert expected is not None, f"ledger column {name!r} has no engine counterpart in this test"
        for i in range(N_ROWS):
            close(grid[i][c - 1], expected[i], f"{ws.title}!{name}[year {i}]")

    # results: per ha, whole field, case units; workings
    ws = wb[prefix + "Results"]
    head = {c.value: c.column for c in ws[4] if c.value}
    rows = _keyed_rows(ws, 1, 5)
    for name in FIGURE_NAMES:
        r = rows[name]
        fig = FIGURE_BY_NAME[name]
        v = figs[name]
        close(ws.cell(r, 3).value, v, f"{ws.title}!{name} per ha")
        whole = None if v is None else (v * area if fig.scales else v)
        close(ws.cell(r, 5).value, whole, f"{ws.title}!{name} whole field")
        if "Per acre" in head:
            unit = f"money/{'GJ' if case.price_basis == 'gj' else 't DM'}" if name.startswith("breakeven_price") \
                else fig.unit
            shown = display.convert(v, unit, case.unit_system)[0] if v is not None else None
            if name.startswith("breakeven_price") and case.price_basis == "gj":
                shown = v
            close(ws.cell(r, 7).value, shown, f"{ws.title}!{name} per acre")
    net = lines["net_cash_flow"][: life + 1]
    inc = lines["incremental_cash_flow"][: life + 1]
    close(ws.cell(rows["sign_changes_net"], 3).value, finance.sign_changes(net), "sign changes net")
    close(ws.cell(rows["sign_changes_incremental"], 3).value, finance.sign_changes(inc), "sign changes incr.")
    df = lines["discount_factor"]
    close(ws.cell(rows["price_pv"], 3).value, float(np.sum(lines["sold_t_dm"] * lines["price_index"] * df)),
          "price_pv")
    half = dict(case.values)
    half["yield.mature_t_dm_per_ha"] = case["yield.mature_t_dm_per_ha"] * 0.5  # NPV at half the yield: a two-point slope
    npv_half = float(np.sum(evaluate(half, lines=("net_cash_flow",), years=N_ROWS).lines["net_cash_flow"][0] * df))
    close(ws.cell(rows["yield_pv"], 3).value, 2.0 * (figs["npv"] - npv_half), "yield_pv")
    for name, changes in (("irr", finance.sign_changes(net)), ("irr_vs_current_use", finance.sign_changes(inc))):
        cell = ws.cell(rows[name], 3).value
        if changes == 0 or changes % 2 == 0:
            assert isinstance(cell, str) and "undefined" in cell, f"{name}: {cell!r} for {changes} sign changes"
        elif figs[name] is None:  # odd >= 3 with several roots: the sheet must say the rate may not be unique
            assert "may not be the only one" in ws.cell(rows[name + "_note"], 3).value

    # finance: loan figures and the amortisation schedule
    ws = wb[prefix + "Finance"]
    frows = {k: r for k, r in _keyed_rows(ws, 4, 4).items() if r < TABLE_LABEL_ROW - 1}
    v = case.values
    P = v["loan.share_of_establishment"] * lines["establishment_cost"][0]
    r_loan = v["loan.rate"] or 0.0
    cap = v["loan.grace_interest"] == "capitalised"
    expected_f = {
        "share_of_establishment": v["loan.share_of_establishment"], "rate": r_loan,
        "term_years": v["loan.term_years"], "grace_years": v["loan.grace_years"],
        "establishment_cost_year0": lines["establishment_cost"][0],
        "loan_balance_after_grace": P * (1 + r_loan) ** v["loan.grace_years"] if cap else P,
    }
    for name, r in frows.items():
        if name in ("grace_interest", "covenant_flag"):
            continue
        close(ws.cell(r, 2).value, figs[name] if name in FIGURE_BY_NAME else expected_f[name], f"Finance!{name}")
    flag = ws.cell(frows["covenant_flag"], 2).value
    assert ("BELOW" in flag) == (figs["years_below_covenant"] > 0), flag
    cols = _keyed_columns(ws, TABLE_KEY_ROW)
    equity = lines["equity_cash_flow"]
    sched = {
        "year": lines["year"], "interest_due": lines["loan_interest"],
        "interest_paid": lines["debt_service"] - lines["loan_principal"],
        "principal_repaid": lines["loan_principal"], "debt_service": lines["debt_service"],
        "closing_balance": lines["loan_balance"], "net_cash_flow": lines["net_cash_flow"], "dscr": lines["dscr"],
        "equity_cash_flow": equity, "cumulative_equity_cash_flow": np.cumsum(equity),
        "opening_balance": np.concatenate([[np.nan], lines["loan_balance"][:-1]]),
    }
    grid = list(ws.iter_rows(min_row=TABLE_TOP, max_row=TABLE_TOP + N_ROWS - 1, values_only=True))
    for name, c in cols.items():
        for i in range(N_ROWS):
            cell = grid[i][c - 1]
            if name == "below_covenant":
                d = lines["dscr"][i]
                assert (cell == "BELOW") == (not math.isnan(d) and d < v["loan.dscr_covenant"]), (i, cell)
            elif name == "phase":
                assert cell in (None, "", "drawdown", "grace", "repayment"), cell
            elif name == "period":
                k = i - v["loan.grace_years"]
                want = k if (P > 0 and 1 <= k <= v["loan.term_years"]) else None
                close(cell, want, f"Finance!period[{i}]")
            else:
                close(cell, sched[name][i], f"Finance!{name}[year {i}]")

    # carbon: totals and the yearly table
    ws = wb[prefix + "Carbon"]
    for name, r in _keyed_rows(ws, 4, 4).items():
        if name in FIGURE_BY_NAME:
            close(ws.cell(r, 2).value, figs[name], f"Carbon!{name}")
    cols = _keyed_columns(ws, TABLE_KEY_ROW)
    grid = list(ws.iter_rows(min_row=TABLE_TOP, max_row=TABLE_TOP + N_ROWS - 1, values_only=True))
    for name, c in cols.items():
        for i in range(N_ROWS):
            close(grid[i][c - 1], lines[name][i], f"Carbon!{name}[year {i}]")

    # inputs: canonical values and model parameters
    ws = wb[prefix + "Inputs"]
    for r in range(5, ws.max_row + 1):
        section, key = ws.cell(r, 1).value, ws.cell(r, 2).value
        if not (isinstance(section, str) and isinstance(key, str)):
            break
        m = re.fullmatch(r"(\w+)\[(\d+)\]", key)
        base = m.group(1) if m else key
        k = next(k for k in tea.inputs.schema.KEYS if k.section == section and base in k.spellings())
        value = v.get(k.path)
        if k.kind == "list":
            i = int(m.group(2)) - 1
            value = value[i] if value is not None and i < len(value) else None
        if k.kind in ("float", "int", "list"):
            close(ws.cell(r, 8).value, value, f"Inputs!{k.path} canonical")
    model = {"rate": p["rate"], "material": p["material"], "retention": p["retention"], "moisture": p["moisture"],
             "n_per_t": p["n_per_t"], "p_per_t": p["p_per_t"], "k_per_t": p["k_per_t"], "price": p["price"],
             "soc_start": p["soc_start"], "soc_target": p["soc_target"], "ef1": p["ef1"],
             "frac_gasf": p["frac_gasf"], "frac_leach": p["frac_leach"], "ef4": p["ef4"], "ef5": p["ef5"],
             "gwp_n2o": p["gwp_n2o"], "loan_rate": p["loan_rate"], "first_order": p["first_order"],
             "capitalised": p["loan_capitalised"],
             "mirr_finance": p["mirr_finance_rate"], "mirr_reinvest": p["mirr_reinvest_rate"]}
    mrows = {ws.cell(r, 10).value: r for r in range(5, ws.max_row + 1)
             if isinstance(ws.cell(r, 10).value, str) and ws.cell(r, 10).value.startswith(prefix_name(prefix) + "m_")}
    for key, value in model.items():
        close(ws.cell(mrows[prefix_name(prefix) + "m_" + key], 3).value, float(np.asarray(value).reshape(-1)[0]),
              f"Inputs!m_{key}")
    return STATS["cells"] - before


def prefix_name(sheet_prefix: str) -> str:
    return sheet_prefix.strip().lower() + "_" if sheet_prefix else ""


# ----------------------------------------------------------------------------- editing a file
def input_row(path: Path, path_key: str, sheet: str = "Inputs") -> int:
    from openpyxl import load_workbook

    section, _, name = path_key.partition(".")
    k = tea.inputs.schema.BY_PATH[path_key]
    wb = load_workbook(path, read_only=True)
    try:
        ws = wb[sheet]
        system = next(r[2] for r in ws.iter_rows(values_only=True) if r[0] == "case" and r[1] == "units")
        spelled = units.spell(k.template, system)
        for r, row in enumerate(ws.iter_rows(values_only=True), start=1):
            if row[0] == section and row[1] == spelled:
                return r
    finally:
        wb.close()
    raise KeyError(path_key)


def edit_input(src: Path, dst: Path, path_key: str, value: float) -> None:
    """Change one input value cell inside the file, as an advisor typing a number would."""
    row = input_row(src, path_key)
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                text, n = re.subn(rf'(<c r="C{row}" [^>]*>)<v>[^<]*</v>(</c>)', rf"\g<1><v>{value!r}</v>\g<2>",
                                  data.decode())
                assert n == 1, f"input cell C{row} of {path_key} not found"
                data = text.encode()
            zout.writestr(info, data)


def shown_value(case, path_key: str) -> float:
    """The value the inputs sheet shows for a key (case units)."""
    k = tea.inputs.schema.BY_PATH[path_key]
    factor = k.spellings()[units.spell(k.template, case.unit_system)]
    return case.values[path_key] / factor


# ----------------------------------------------------------------------------- the one LibreOffice run
@pytest.fixture(scope="module")
def recalculated(tmp_path_factory):
    """Write every workbook the tests need, recalculate them all in one LibreOffice call."""
    engine.require_engine()
    src = tmp_path_factory.mktemp("books")
    out = tmp_path_factory.mktemp("recalculated")
    cases = {name: tea.load_case(path) for name, path in DEMOS.items()}
    books: dict[str, tuple[Path, object]] = {}

    def put(name, case, data=None):
        path = src / f"{name}.xlsx"
        path.write_bytes(data if data is not None else workbook_bytes(case, tea.build_ledger(case),
                                                                      tea.summarise(case)))
        books[name] = (path, case)

    for name, case in cases.items():
        put(name, case)
    clay = cases["clay_corner_miscanthus"]
    us = cases["sandy_slope_switchgrass"]
    # branches the demo cases do not take: first-order SOC, autumn harvest, a price path, a late decline,
    # a limited payment, capitalised grace interest, 2019 N2O factors, AR5, MIRR rates, fresh-weight yield
    put("branches", clay.replace(**{
        "carbon.soc_method": "first_order", "harvest.timing": "autumn", "revenue.price_path": [1.0, 1.05, 0.95, 1.1],
        "yield.decline_start_year": 12, "yield.decline_per_year": 0.03, "revenue.annual_payment_per_ha": 55.0,
        "revenue.annual_payment_years": 5, "loan.grace_interest": "capitalised", "carbon.n2o_method": "ipcc2019",
        "carbon.gwp": "AR5", "finance.mirr_finance_rate": 0.05, "finance.mirr_reinvest_rate": 0.03,
        "harvest.field_loss": 0.07, "finance.stand_life_years": 23}))
    # a removal cost that turns the last year negative: two sign changes, no single IRR
    put("two_sign_changes", clay.replace(**{"costs.removal_per_ha": 9000.0}))
    # no loan, no credits
    put("no_loan", clay.replace(**{"loan.share_of_establishment": 0.0, "carbon.credit_price_per_t_co2e": 0.0}))
    put("injection", clay.replace(**INJECTED))
    # the sensitivity sheet of a US-customary case: inputs in its units, money per ha and per acre
    put("us_sensitivity", us, workbook_bytes(us, tea.build_ledger(us), tea.summarise(us), sensitivity=True))
    put("portfolio", None, portfolio_bytes(list(cases.values()), [tea.build_ledger(c) for c in cases.values()],
                                           [tea.summarise(c) for c in cases.values()]))
    books["portfolio"] = (books["portfolio"][0], list(cases.values()))
    # live-ness: inputs changed inside written files
    edits = {
        "edit_price": (clay, "revenue.price_per_t_dm", shown_value(clay, "revenue.price_per_t_dm") * 1.1),
        "edit_rate": (clay, "finance.discount_rate", 0.085),
        "edit_life": (clay, "finance.stand_life_years", 26),
        "edit_yield": (clay, "yield.mature_t_dm_per_ha", 15.0),
        "edit_us_price": (us, "revenue.price_per_t_dm", shown_value(us, "revenue.price_per_t_dm") * 1.1),
    }
    for name, (case, key, value) in edits.items():
        base = books["clay_corner_miscanthus" if case is clay else "sandy_slope_switchgrass"][0]
        path = src / f"{name}.xlsx"
        edit_input(base, path, key, value)
        k = tea.inputs.schema.BY_PATH[key]
        factor = k.spellings()[units.spell(k.template, case.unit_system)]
        books[name] = (path, case.replace(**{key: value * factor if k.kind == "float" else value}))
    files = engine.recalculate([p for p, _ in books.values()], out)
    STATS["files"] = len(files)
    return {name: (out / path.name, case) for name, (path, case) in books.items()}


# ----------------------------------------------------------------------------- tests
@pytest.mark.parametrize("name", sorted(DEMOS))
def test_demo_case_recalculates_to_the_engine(recalculated, name):
    path, case = recalculated[name]
    wb = engine.load_values(path)
    assert engine.error_cells(wb) == []
    assert compare_case(wb, case) > 6000


@pytest.mark.parametrize("name", ["branches", "two_sign_changes", "no_loan"])
def test_other_branches_recalculate_to_the_engine(recalculated, name):
    path, case = recalculated[name]
    wb = engine.load_values(path)
    assert engine.error_cells(wb) == []
    assert compare_case(wb, case) > 6000


def test_no_single_irr_is_shown_as_text(recalculated):
    path, case = recalculated["two_sign_changes"]
    figs = tea.summarise(case).per_ha
    assert figs["irr"] is None  # the engine finds no single rate
    wb = engine.load_values(path)
    ws = wb["Results"]
    row = _keyed_rows(ws, 1, 5)
    assert ws.cell(row["sign_changes_net"], 3).value == 2
    assert "undefined" in ws.cell(row["irr"], 3).value
    assert isinstance(ws.cell(row["mirr"], 3).value, float)


def test_portfolio_recalculates_to_the_engine(recalculated):
    path, cases = recalculated["portfolio"]
    wb = engine.load_values(path)
    assert engine.error_cells(wb) == []
    ws = wb["Comparison"]
    rows = [r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value in FIGURE_BY_NAME]
    whole_start = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 2).value == "Whole field")
    for j, case in enumerate(cases):
        assert ws.cell(4, 4 + j).value == case.name
        compare_case(wb, case, prefix=f"C{j + 1:02d} ")
        figs = tea.summarise(case).per_ha
        for r in rows:
            name = ws.cell(r, 1).value
            v = figs[name]
            if r > whole_start and v is not None:
                v = v * case.area_ha
            close(ws.cell(r, 4 + j).value, v, f"Comparison!{name}[{case.name}]")


@pytest.mark.parametrize("name", ["edit_price", "edit_rate", "edit_life", "edit_yield", "edit_us_price"])
def test_edited_input_moves_every_figure(recalculated, name):
    path, changed = recalculated[name]
    wb = engine.load_values(path)
    assert engine.error_cells(wb) == []
    assert compare_case(wb, changed) > 6000
    original = tea.summarise(tea.load_case(DEMOS[
        "sandy_slope_switchgrass" if name == "edit_us_price" else "clay_corner_miscanthus"]))
    npv = wb["Results"].cell(_keyed_rows(wb["Results"], 1, 5)["npv"], 3).value
    assert abs(npv - original["npv"]) > 1.0  # the figure moved with the input


def test_edited_workbook_saved_by_the_engine_reads_back(recalculated):
    # LibreOffice saved the edited file (shared strings, 15 significant digits): it still reads back
    path, changed = recalculated["edit_price"]
    case = tea.load_case(path)
    got, want = tea.summarise(case).per_ha, tea.summarise(changed).per_ha
    for name in FIGURE_NAMES:
        if want[name] is None:
            assert got[name] is None, name
        else:
            assert got[name] == pytest.approx(want[name], rel=1e-12, abs=1e-12), name
    assert case.origin["revenue.price_per_t_dm"] == "case"
    assert case.origin["yield.mature_t_dm_per_ha"] == "preset"  # untouched preset values stay preset values


def test_edited_preset_value_is_taken_as_given(recalculated):
    path, changed = recalculated["edit_yield"]
    case = tea.load_case(path)
    assert case["yield.mature_t_dm_per_ha"] == 15.0
    assert case.origin["yield.mature_t_dm_per_ha"] == "case"
    assert tea.summarise(case)["npv"] == pytest.approx(tea.summarise(changed)["npv"], rel=1e-12)


def test_formula_injection_stays_text(recalculated):
    path, case = recalculated["injection"]
    wb = engine.load_values(path)
    assert engine.error_cells(wb) == []
    ws = wb["Inputs"]
    shown = {(ws.cell(r, 1).value, ws.cell(r, 2).value): ws.cell(r, 3).value for r in range(5, ws.max_row + 1)}
    for key, text in INJECTED.items():
        section, _, name = key.partition(".")
        assert shown[(section, name)] == text, key  # the literal text, not a computed value
    notes = [c.value for row in wb["Notes"].iter_rows() for c in row if c.value is not None]
    assert INJECTED["case.name"] in notes and INJECTED["case.notes"] in notes
    assert compare_case(wb, case) > 6000
    # and the text reads back as the same text
    mapping = read_case_mapping(path)
    assert mapping["case"]["name"] == INJECTED["case.name"]
    assert mapping["field"]["name"] == INJECTED["field.name"]


def test_report_cells_compared(recalculated):
    assert STATS["cells"] > 90_000
    print(f"\nworkbook recalculation: {STATS['files']} files, {STATS['cells']} cells compared with the engine; "
          f"largest relative difference {STATS['max_rel']:.3g} (cells above 1e-6); "
          f"largest absolute difference near zero {STATS['max_abs_near_zero']:.3g}")


# ----------------------------------------------------------------------------- the sensitivity sheet
HA_PER_ACRE = 0.40468564224  # NIST Handbook 44 (2024), Appendix C, exact
T_PER_SHORT_TON = 0.90718474  # NIST Handbook 44 (2024), Appendix C, exact
KM_PER_MILE = 1.609344  # NIST Handbook 44 (2024), Appendix C, exact
#: canonical (metric, per ha) -> US customary display factor of the inputs a US case's sheet shows in its units
US_FACTORS = {
    "yield.mature_t_dm_per_ha": HA_PER_ACRE / T_PER_SHORT_TON,  # t/ha -> short ton/acre
    "revenue.price_per_t_dm": T_PER_SHORT_TON,  # money/t -> money/short ton
    "costs.haul_distance_km": 1.0 / KM_PER_MILE,  # km -> mile
    "field.current_margin_per_ha": HA_PER_ACRE,  # money/ha -> money/acre
}


def compare_sensitivity(wb, case, table, sheet: str = "Sensitivity", current: bool = True) -> int:
    """Compare every number of a recalculated sensitivity sheet with the table; return the cells compared."""
    before = STATS["cells"]
    ws = wb[sheet]
    cols = {c.value: c.column for c in ws[SENS_KEY_ROW] if isinstance(c.value, str)}
    rows = [r for r in range(SENS_TOP, ws.max_row + 1) if isinstance(ws.cell(r, cols["rank"]).value, (int, float))]
    assert len(rows) == len(table)
    base = {ws.cell(r, 5).value: r for r in range(1, SENS_TOP) if isinstance(ws.cell(r, 5).value, str)}
    written = table.attrs["base_npv"]
    close(ws.cell(base["base_npv"], 3).value, written, f"{sheet}!base_npv")
    close(ws.cell(base["base_eav"], 3).value, table.attrs["base_eav"], f"{sheet}!base_eav")
    figs = tea.summarise(case).per_ha  # the live base: the results sheet of the case as it is now
    close(ws.cell(base["npv_now"], 3).value, figs["npv"], f"{sheet}!npv_now")
    close(ws.cell(base["eav_now"], 3).value, figs["eav"], f"{sheet}!eav_now")
    status = ws.cell(base["current"], 3).value
    assert status.startswith("yes" if current else "NO"), status
    us = case.unit_system == "us_customary"
    for r, want in zip(rows, table.to_dict(orient="records")):
        where = f"{sheet}!{want['input']}"
        close(ws.cell(r, cols["rank"]).value, want["rank"], where + " rank")
        factor = US_FACTORS.get(want["input"], 1.0) if us else 1.0
        for side in ("low", "high", "base"):
            close(ws.cell(r, cols[f"{side}_case_units"]).value, want[side] * factor, f"{where} {side}")
        for fig in SENS_FIGURES:
            for side in ("low", "high", "swing"):
                close(ws.cell(r, cols[f"{fig}_{side}"]).value, want[f"{fig}_{side}"], f"{where} {fig}_{side}")
                if us and fig in ("npv", "eav"):
                    close(ws.cell(r, cols[f"{fig}_{side}_per_acre"]).value, want[f"{fig}_{side}"] * HA_PER_ACRE,
                          f"{where} {fig}_{side} per acre")
        for side in ("low", "high"):
            close(ws.cell(r, cols[f"chart_npv_change_{side}"]).value, want[f"npv_{side}"] - written,
                  f"{where} chart {side}")
    return STATS["cells"] - before


@pytest.mark.parametrize("name", ["clay_corner_miscanthus", "us_sensitivity"])
def test_sensitivity_sheet_recalculates_to_the_table(recalculated, name):
    path, case = recalculated[name]
    wb = engine.load_values(path)
    assert engine.error_cells(wb) == []
    assert compare_sensitivity(wb, case, sensitivity_table(case)) > 100


def test_sensitivity_sheet_says_when_an_edit_leaves_it_behind(recalculated):
    path, changed = recalculated["edit_price"]  # the price edited in the file after tea wrote the table
    original = tea.load_case(DEMOS["clay_corner_miscanthus"])
    wb = engine.load_values(path)
    assert compare_sensitivity(wb, changed, sensitivity_table(original), current=False) > 100


def test_portfolio_sensitivity_sheet_recalculates_to_the_table(recalculated):
    path, cases = recalculated["portfolio"]
    wb = engine.load_values(path)
    sheets = [(j, t) for j, case in enumerate(cases) for t in [f"C{j + 1:02d} Sensitivity"] if t in wb.sheetnames]
    assert [cases[j].name for j, _ in sheets] == [c.name for c in cases if "sensitivity" in c.values]
    for j, sheet in sheets:
        assert compare_sensitivity(wb, cases[j], sensitivity_table(cases[j]), sheet=sheet) > 100
