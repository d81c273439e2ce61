"""The credit-file workbook recalculated by an independent spreadsheet engine (LibreOffice Calc, headless).

Every workbook written here is opened in LibreOffice, recalculated and read
back. Every formula cell must equal the value tea saved beside it (the
engine's value) to 1e-9 relative, with an absolute floor of 1e-9 near zero:
LibreOffice returns 15 significant digits, so the tolerance leaves six orders
of magnitude of room and still catches any formula that differs from the
engine. A cell where the engine has a number may not hold an error value.

Live-ness: inputs are changed inside written files (the value cell of the
inputs sheet, as an advisor typing would), LibreOffice recalculates, and every
parameter and figure is compared with the engine run on the same change
(``Case.replace``): price, discount rate, a shorter stand life, the repayment
profile, the tax rate, the mature yield.

Printing: the demo workbooks are printed to PDF by LibreOffice; each page's
footer names its sheet, so the pages of each sheet are counted.
"""

from __future__ import annotations

import math
import re
import subprocess
import zipfile
from pathlib import Path

import pytest
from openpyxl import load_workbook

import tea
import tea.inputs.schema
from tea.inputs import units
from tea.inputs.workbook_reader import INPUT_COLUMNS
from tea.model.definition import MODEL
from tea.model.slopes import expanded
from tea.outputs.workbook import portfolio_bytes, workbook_bytes
from tea.outputs.workbook.sheets import engine_values

import spreadsheet_engine as engine

ROOT = Path(__file__).resolve().parents[1]
DEMOS = {p.stem: p for p in sorted((ROOT / "cases").glob("*.toml"))}
RTOL = ATOL = 1e-9
STATS = {"cells": 0, "files": 0}
COL = {name: j + 1 for j, name in enumerate(INPUT_COLUMNS)}


def _shown(case, path_key: str, canonical: float) -> float:
    k = tea.inputs.schema.BY_PATH[path_key]
    return canonical / k.spellings()[units.spell(k.template, case.unit_system)]


def _edit(src: Path, dst: Path, path_key: str, value) -> None:
    """Change one input's value cell inside the file, as an advisor typing would."""
    section, _, name = path_key.partition(".")
    wb = load_workbook(src, read_only=True)
    try:
        titles = wb.sheetnames
        system = None
        row = None
        for r, cells in enumerate(wb["Inputs"].iter_rows(values_only=True), start=1):
            if len(cells) < COL["Key"]:
                continue
            if cells[COL["Section"] - 1] == "case" and cells[COL["Key"] - 1] == "units":
                system = cells[COL["Value"] - 1]
        k = tea.inputs.schema.BY_PATH[path_key]
        spelled = units.spell(k.template, system)
        for r, cells in enumerate(wb["Inputs"].iter_rows(values_only=True), start=1):
            if len(cells) >= COL["Key"] and cells[COL["Section"] - 1] == section and cells[COL["Key"] - 1] == spelled:
                row = r
    finally:
        wb.close()
    assert row, path_key
    part = f"xl/worksheets/sheet{titles.index('Inputs') + 1}.xml"
    inner = (f'<is><t>{value}</t></is>', ' t="inlineStr"') if isinstance(value, str) else (f"<v>{value!r}</v>", "")
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == part:
                text, n = re.subn(rf'<c r="B{row}"( s="\d+")?[^>]*?(?:/>|>.*?</c>)',
                                  lambda m: f'<c r="B{row}"{m.group(1) or ""}{inner[1]}>{inner[0]}</c>',
                                  data.decode(), count=1)
                assert n == 1, path_key
                data = text.encode()
            zout.writestr(info, data)


@pytest.fixture(scope="module")
def recalculated(tmp_path_factory):
    """Write every workbook the tests need and recalculate them all in one LibreOffice call."""
    engine.require_engine()
    src = tmp_path_factory.mktemp("books")
    out = tmp_path_factory.mktemp("recalculated")
    cases = {name: tea.load_case(path) for name, path in DEMOS.items()}
    books: dict[str, tuple[Path, object]] = {}

    def put(name, case, data=None):
        path = src / f"{name}.xlsx"
        path.write_bytes(data if data is not None else workbook_bytes(case, sensitivity=False, risk=False))
        books[name] = (path, case)

    for name, case in cases.items():
        put(name, case, workbook_bytes(case))
    clay, us, willow = (cases["clay_corner_miscanthus"], cases["sandy_slope_switchgrass"],
                        cases["flood_meadow_willow"])
    # branches the demo cases do not take
    put("branches", clay.replace(**{
        "carbon.soc_method": "first_order", "harvest.timing": "autumn", "revenue.price_path": [1.0, 1.05, 0.95, 1.1],
        "yield.decline_start_year": 12, "yield.decline_per_year": 0.03, "carbon.n2o_method": "ipcc2019",
        "carbon.gwp": "AR5", "finance.mirr_finance_rate": 0.05, "finance.mirr_reinvest_rate": 0.03,
        "loan.profile": "straight_line", "tax.rate": 0.25, "finance.stand_life_years": 23}))
    put("two_sign_changes", clay.replace(**{"costs.removal_per_ha": 9000.0}))
    put("no_loan", clay.replace(**{"loan.share_of_establishment": 0.0, "carbon.credit_price_per_t_co2e": 0.0}))
    # biomass given away: the cash available is negative over the whole loan life (an LLCR below 0, no cover)
    put("no_cover", clay.replace(**{"revenue.price_per_t_dm": 0.0}))
    # the lender's downside of each demo as a case of its own (price, yield and a year's delay moved)
    from tea.analysis.lender import downside_values

    for name, case in cases.items():
        down = downside_values(case)
        put(f"downside_{name}", case.replace(**{k: v for k, v in down.items() if v != case.values.get(k)}))
    put("portfolio", None, portfolio_bytes(list(cases.values()), sensitivity=False, risk=False))
    books["portfolio"] = (books["portfolio"][0], list(cases.values()))
    edits = {
        "edit_price": (clay, "revenue.price_per_t_dm", clay["revenue.price_per_t_dm"] * 1.1),
        "edit_rate": (clay, "finance.discount_rate", 0.085),
        "edit_life": (clay, "finance.stand_life_years", 15),
        "edit_yield": (us, "yield.mature_t_dm_per_ha", us["yield.mature_t_dm_per_ha"] * 0.9),
        "edit_profile": (clay, "loan.profile", "straight_line"),
        "edit_tax": (willow, "tax.rate", 0.3),
        "edit_long_loan": (clay, "loan.term_years", 30),
    }
    for name, (case, key, value) in edits.items():
        base = src / f"{next(n for n, c in cases.items() if c is case)}.xlsx"
        path = src / f"{name}.xlsx"
        shown = value if isinstance(value, str) else _shown(case, key, value)
        _edit(base, path, key, shown)
        # a loan running past the stand is refused by tea; the sheet's checks must flag it
        books[name] = (path, case if name == "edit_long_loan" else case.replace(**{key: value}))
    files = engine.recalculate([p for p, _ in books.values()], out)
    STATS["files"] = len(files)
    return {name: (path, out / path.name, case) for name, (path, case) in books.items()}


def _close(a, b) -> bool:
    return abs(a - b) <= max(ATOL, RTOL * max(abs(a), abs(b)))


def _compare_cached(written: Path, recalculated: Path) -> int:
    """Every formula cell of the recalculated file equals the value saved when tea wrote it."""
    f = load_workbook(written)
    saved = load_workbook(written, data_only=True)
    got = load_workbook(recalculated, data_only=True)
    n = 0
    for ws in f.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if not (isinstance(c.value, str) and c.value.startswith("=")):
                    continue
                a, b = saved[ws.title][c.coordinate].value, got[ws.title][c.coordinate].value
                where = f"{written.name} {ws.title}!{c.coordinate} {c.value[:100]}"
                if isinstance(a, (int, float)) and not isinstance(a, bool):
                    assert isinstance(b, (int, float)), f"{where}: engine {a}, spreadsheet {b!r}"
                    assert _close(float(a), float(b)), f"{where}: engine {a}, spreadsheet {b}"
                elif isinstance(a, str) and a not in ("", "#N/A"):
                    assert b == a, f"{where}: engine {a!r}, spreadsheet {b!r}"
                else:
                    assert b in (None, "", "#N/A") or (isinstance(b, str) and engine.ERROR_VALUE.match(b)), where
                n += 1
    STATS["cells"] += n
    return n


@pytest.mark.parametrize("name", [*sorted(DEMOS), *(f"downside_{n}" for n in sorted(DEMOS)), "branches",
                                  "two_sign_changes", "no_loan", "no_cover", "portfolio"])
def test_every_formula_recalculates_to_the_engine(recalculated, name):
    written, again, _ = recalculated[name]
    assert _compare_cached(written, again) > 2000


def _figures(path: Path, title: str = "Figures") -> dict[str, object]:
    ws = load_workbook(path, data_only=True)[title]
    return {ws.cell(r, 2).value: ws.cell(r, 3).value for r in range(5, ws.max_row + 1) if ws.cell(r, 2).value}


@pytest.mark.parametrize("name", ["edit_price", "edit_rate", "edit_life", "edit_yield", "edit_profile", "edit_tax"])
def test_an_edited_input_recomputes_every_figure_as_the_engine(recalculated, name):
    written, again, case = recalculated[name]
    expected = engine_values(case, expanded(MODEL))
    shown = _figures(again)
    moved = 0
    before = _figures(written)
    for d in expanded(MODEL):
        if d.kind not in ("param", "figure") or d.name not in shown:
            continue
        want, got = expected[d.key], shown[d.name]
        if isinstance(want, float) and not math.isnan(want):
            assert isinstance(got, (int, float)) and _close(want, float(got)), (name, d.name, want, got)
            moved += isinstance(before[d.name], (int, float)) and not _close(float(before[d.name]), want)
        elif isinstance(want, str):
            assert got == want, (name, d.name)
    assert moved >= 1  # the edit moved figures, and the sheet followed
    # an edit is no failed check: the figures that moved are counted apart, as changed since tea wrote the file
    checks = load_workbook(again, data_only=True)["Checks"]
    assert checks["B4"].value == 0 and checks["D4"].value >= 1, (name, checks["B4"].value, checks["D4"].value)
    # the edited workbook read back by tea is the edited case
    assert tea.load_case(again).hash == case.hash or tea.summarise(tea.load_case(again))["npv"] == pytest.approx(
        tea.summarise(case)["npv"], rel=1e-12)


def test_the_checks_pass_on_every_demo_and_catch_a_loan_longer_than_the_stand(recalculated):
    for name in DEMOS:
        wb = load_workbook(recalculated[name][1], data_only=True)
        assert wb["Checks"]["B4"].value == 0, name
        summary = [c.value for row in wb["Summary"].iter_rows() for c in row]
        i = summary.index("Checks failing (see the Checks sheet)")
        assert summary[i + 1] == 0
    wb = load_workbook(recalculated["edit_long_loan"][1], data_only=True)
    ws = wb["Checks"]
    failing = {ws.cell(r, 1).value for r in range(6, ws.max_row + 1) if ws.cell(r, 5).value == "FAIL"}
    assert "Loan term within the stand life" in failing
    assert wb["Checks"]["B4"].value >= 1


def test_an_llcr_below_zero_is_shown_as_no_cover(recalculated):
    # with the biomass given away the cash available is negative in every year of the loan: the present value
    # of the CFADS over the remaining loan life is below 0, so no ratio covers the balance (Yescombe, Principles
    # of Project Finance, 2nd ed., ch. 12: LLCR = PV(CFADS) / debt outstanding). LibreOffice's recalculation
    # of the live formulas says so on the summary; the lender's table (values tea wrote) says the same.
    written, again, case = recalculated["no_cover"]
    ledger = tea.build_ledger(case)
    r, end = case["loan.rate"], case["loan.grace_years"] + case["loan.term_years"]
    first = case["loan.grace_years"] + 1  # the first covenant test: the first repayment year
    pv = sum(ledger.loc[t, "cfads"] / (1 + r) ** (t - first + 1) for t in range(first, end + 1))
    assert pv < 0
    rows = [[c.value for c in row] for row in load_workbook(again, data_only=True)["Summary"].iter_rows()]
    llcr = [row for row in rows if row[0] == "LLCR at the first test"]
    assert llcr and llcr[0][2] == "below 0: no cover", llcr
    lender = [row for row in rows if isinstance(row[0], str) and row[0].startswith("LLCR")
              and row[0] != "LLCR at the first test"]
    assert lender and lender[0][1:3] == ["below 0: no cover", "below 0: no cover"], lender
    assert not any(isinstance(v, (int, float)) and v < 0 for row in llcr + lender for v in row[1:3])


def test_saved_values_are_read_without_recalculation(recalculated):
    """A viewer that does not calculate (openpyxl data_only, a mail preview) shows the figures."""
    written, _, case = recalculated["clay_corner_miscanthus"]
    res = tea.summarise(case)
    shown = _figures(written)
    for name in ("npv", "irr", "eav", "min_dscr", "llcr", "npv_after_tax", "ghg_net_t_co2e"):
        assert shown[name] == pytest.approx(res[name], rel=1e-12), name


@pytest.fixture(scope="module")
def printed(recalculated, tmp_path_factory):
    """The demo workbooks printed to PDF by LibreOffice: pages per sheet, read from each page's footer."""
    out = tmp_path_factory.mktemp("pdf")
    binary = engine.require_engine()
    paths = [recalculated[name][0] for name in DEMOS]
    subprocess.run([binary, "--headless", "--norestore", "--convert-to", "pdf", "--outdir", str(out),
                    *map(str, paths)], capture_output=True, timeout=300)
    pages: dict[str, dict[str, int]] = {}
    for name in DEMOS:
        pdf = out / f"{name}.pdf"
        assert pdf.exists(), name
        info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True).stdout
        n = int(re.search(r"Pages:\s+(\d+)", info).group(1))
        count: dict[str, int] = {}
        for p in range(1, n + 1):
            text = subprocess.run(["pdftotext", "-f", str(p), "-l", str(p), "-layout", str(pdf), "-"],
                                  capture_output=True, text=True).stdout
            m = re.search(r"([A-Z][A-Za-z ]+?) · case [0-9a-f]{16}", text)
            count[m.group(1).strip() if m else "?"] = count.get(m.group(1).strip() if m else "?", 0) + 1
        pages[name] = count
    return pages


def test_each_sheet_prints_to_its_expected_page_count(printed):
    for name, count in printed.items():
        assert count.get("Summary") == 1, (name, count)  # the credit committee's page
        assert "?" not in count, (name, count)  # every page names its sheet
        # a schedule prints at most two pages across (16 year columns a page) and a few down
        assert count.get("Cash flow", 0) <= 6 and count.get("Debt and tax", 0) <= 6, (name, count)
        assert count.get("Carbon", 0) <= 2 and count.get("Notes", 0) <= 2, (name, count)
    print("pages per sheet:", printed)


def test_a_us_summary_is_per_acre_and_per_short_ton_throughout(recalculated):
    """After LibreOffice recalculates it, the US demo's summary gives its field in acres, the break-even
    price per short ton and the lender's cases per acre, each equal to the engine's figure converted with
    NIST Handbook 44 Appendix C (1 acre = 0.40468564224 ha, 1 short ton = 0.90718474 t)."""
    written, again, case = recalculated["sandy_slope_switchgrass"]
    res = tea.summarise(case)
    ws = load_workbook(again, data_only=True)["Summary"]
    rows = {row[0].value: [c.value for c in row] for row in ws.iter_rows() if row[0].value is not None}
    header = next(v[0] for k, v in rows.items() if isinstance(k, str) and " · " in k)
    assert "acres" in header and " ha " not in header
    price = rows["Break-even price"]
    assert price[3] == "USD/short ton DM"
    assert price[2] == pytest.approx(res["breakeven_price"] * 0.90718474, rel=1e-9)
    assert "Figure (per acre)" in rows
    npv = rows["NPV [USD/acre]"]
    assert npv[1] == pytest.approx(res["npv"] * 0.40468564224, rel=1e-9)


def test_a_key_figure_with_no_value_says_why_on_the_summary(tmp_path):
    """A stand whose cash never pays back at any rate has no IRR (numpy-financial's irr gives NaN for the same
    flows): the summary's IRR cell is blank, and beside it the reason the engine gives, marked as found when
    the file was written."""
    import numpy_financial as npf

    case = tea.load_case(DEMOS["clay_corner_miscanthus"]).replace(**{"revenue.price_per_t_dm": 20.0})
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)
    assert res["irr"] is None and math.isnan(npf.irr(frame["net_cash_flow"].to_numpy()))
    out = tea.write_workbook(case, frame, res, tmp_path / "book.xlsx")
    ws = load_workbook(out)["Summary"]
    row = next(r for r in ws.iter_rows(values_only=True) if r[0] == "IRR")  # the key figures come first
    assert row[5] == f"no value when tea wrote the file: {res.notes['irr']}"
    npv = next(r for r in ws.iter_rows(values_only=True) if r[0] == "NPV")
    assert npv[5] is None  # a figure with a value has no note
