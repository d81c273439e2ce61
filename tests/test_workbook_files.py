"""The workbook as a file: round trip, structure, safety and determinism (no spreadsheet engine needed).

What the numbers in the sheets evaluate to is checked against the engine in
tests/test_workbook.py (LibreOffice); these tests check the file itself.
"""

from __future__ import annotations

import json
import re
import zipfile
from pathlib import Path

import pytest
from openpyxl import load_workbook

import tea
import tea.core.texts
from tea.cli import main as cli
from tea.inputs import schema, units
from tea.core.errors import CaseError, OutputError
from tea.model.ledger import LINE_NAMES
from tea.model.results import FIGURE_NAMES
from tea.outputs.workbook import (LEDGER_FORMULAS, LEDGER_TOP, N_ROWS, RESULT_FORMULAS, portfolio_bytes,
                          read_case_mapping, workbook_bytes, write_portfolio, write_workbook)

ROOT = Path(__file__).resolve().parents[1]
DEMOS = {p.stem: p for p in sorted((ROOT / "cases").glob("*.toml"))}


@pytest.fixture(scope="module")
def demo():
    out = {}
    for name, path in DEMOS.items():
        case = tea.load_case(path)
        frame = tea.build_ledger(case)
        out[name] = (case, frame, tea.summarise(case, frame))
    return out


def _write(tmp_path, case, name="book.xlsx"):
    path = tmp_path / name
    write_workbook(case, tea.build_ledger(case), tea.summarise(case), path)
    return path


def _sheet_xml(path: Path, index: int) -> str:
    with zipfile.ZipFile(path) as zf:
        return zf.read(f"xl/worksheets/sheet{index}.xml").decode()


def _cells(xml: str):
    """(ref, attributes, inner xml) of every cell of a sheet part."""
    return re.findall(r'<c r="([A-Z]+\d+)"([^>]*?)(?:/>|>(.*?)</c>)', xml)


# ----------------------------------------------------------------------------- the formula tables
def test_every_ledger_line_and_figure_has_a_formula():
    assert set(LEDGER_FORMULAS) == set(LINE_NAMES) - {"year"}
    assert set(RESULT_FORMULAS) == set(FIGURE_NAMES)


# ----------------------------------------------------------------------------- round trip
@pytest.mark.parametrize("name", sorted(DEMOS))
def test_unedited_workbook_reads_back_as_the_same_case(tmp_path, demo, name):
    case, frame, res = demo[name]
    path = _write(tmp_path, case)
    again = tea.load_mapping(read_case_mapping(path), source=str(path))
    assert again.values == case.values
    assert again.hash == case.hash
    assert tea.summarise(again).per_ha == res.per_ha
    # preset, default and derived values were not frozen into the case
    assert {p for p, o in again.origin.items() if o == "case"} == {p for p, o in case.origin.items() if o == "case"}


def test_tea_run_reads_a_workbook(tmp_path, demo, capsys):
    case, _, res = demo["sandy_slope_switchgrass"]
    path = _write(tmp_path, case)
    assert cli.main(["run", str(path), "--json"]) == 0
    payload = json.loads(capsys.readouterr().out)
    assert payload["case_hash"] == case.hash
    assert payload["figures_per_ha"]["npv"] == res["npv"]


def _replace_cell(src: Path, dst: Path, ref: str, new_cell_inner: str, attrs: str = "") -> None:
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w") as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                text, n = re.subn(rf'<c r="{ref}" s="(\d+)"[^>]*?(?:/>|>.*?</c>)',
                                  lambda m: f'<c r="{ref}" s="{m.group(1)}"{attrs}>{new_cell_inner}</c>',
                                  data.decode(), count=1)
                assert n == 1
                data = text.encode()
            zout.writestr(info, data)


def _row_of(path: Path, section: str, key: str) -> int:
    wb = load_workbook(path, read_only=True)
    try:
        for r, row in enumerate(wb["Inputs"].iter_rows(values_only=True), start=1):
            if row[0] == section and row[1] == key:
                return r
    finally:
        wb.close()
    raise KeyError(key)


def test_text_in_a_number_cell_names_the_file_and_cell(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case)
    row = _row_of(path, "revenue", "price_per_t_dm")
    bad = tmp_path / "bad.xlsx"
    _replace_cell(path, bad, f"C{row}", '<is><t>ninety</t></is>', ' t="inlineStr"')
    with pytest.raises(CaseError) as err:
        tea.load_case(bad)
    text = str(err.value)
    assert str(bad) in text and f"Inputs!C{row}" in text and "revenue.price_per_t_dm" in text
    assert cli.main(["run", str(bad)]) == 2


def test_an_edited_list_reads_back(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case)
    row = _row_of(path, "yield", "ramp_up_fractions[2]")
    edited = tmp_path / "edited.xlsx"
    _replace_cell(path, edited, f"C{row}", "<v>0.5</v>")
    again = tea.load_case(edited)
    assert again["yield.ramp_up_fractions"] == [0.0, 0.5, 0.8]
    assert again.origin["yield.ramp_up_fractions"] == "case"


def test_an_edited_climate_derives_the_reference_stock_again(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case)
    row = _row_of(path, "field", "climate")
    edited = tmp_path / "edited.xlsx"
    _replace_cell(path, edited, f"C{row}", "<is><t>warm_temperate_moist</t></is>", ' t="inlineStr"')
    again = tea.load_case(edited)
    # IPCC 2006 Vol.4 Ch.2 Table 2.3: warm temperate moist, high-activity clay soils, 88 t C/ha
    assert again["carbon.soc_ref_t_c_per_ha"] == 88.0


@pytest.mark.parametrize("content, expected", [
    (b"this is not a zip file", "cannot read the workbook"),
    (None, "no 'Inputs' sheet"),
])
def test_unreadable_workbooks_are_case_errors(tmp_path, content, expected):
    path = tmp_path / "x.xlsx"
    if content is None:
        from openpyxl import Workbook
        wb = Workbook()
        wb.active.title = "Other"
        wb.save(path)
    else:
        path.write_bytes(content)
    with pytest.raises(CaseError, match=re.escape(expected)) as err:
        read_case_mapping(path)
    assert err.value.problems[0].source == str(path)
    assert cli.main(["run", str(path)]) == 2


def test_a_portfolio_is_not_read_as_one_case(tmp_path, demo):
    cases = [v[0] for v in demo.values()]
    path = tmp_path / "farm.xlsx"
    path.write_bytes(portfolio_bytes(cases))
    with pytest.raises(CaseError, match="holds 3 cases"):
        read_case_mapping(path)


# ----------------------------------------------------------------------------- structure
def test_no_computed_cell_is_a_pasted_value(tmp_path, demo):
    case = demo["flood_meadow_willow"][0]
    path = _write(tmp_path, case)
    wb = load_workbook(path)
    allowed = {"Inputs": set("CGK"), "Carbon": set("EFGHIJ")}
    for i, ws in enumerate(wb.worksheets, start=1):
        for ref, attrs, inner in _cells(_sheet_xml(path, i)):
            if "<v>" in (inner or "") and "<f>" not in inner:
                col = re.match(r"[A-Z]+", ref).group(0)
                ok = col in allowed.get(ws.title, set()) or (ws.title == "Ledger" and ref == f"A{LEDGER_TOP}")
                assert ok, f"{ws.title}!{ref} holds a constant"
    # every ledger cell of every year is a formula
    ledger = _sheet_xml(path, 2)
    formulas = {ref for ref, _, inner in _cells(ledger) if inner and "<f>" in inner}
    for col in range(2, len(LINE_NAMES) + 1):
        letter = wb["Ledger"].cell(1, col).column_letter
        for r in range(LEDGER_TOP, LEDGER_TOP + N_ROWS):
            assert f"{letter}{r}" in formulas, f"Ledger!{letter}{r}"


def test_inputs_are_named_labelled_and_styled(tmp_path, demo):
    case = demo["sandy_slope_switchgrass"][0]  # US customary: per acre, short tons
    path = _write(tmp_path, case)
    wb = load_workbook(path)
    ws = wb["Inputs"]
    rows = {(ws.cell(r, 1).value, ws.cell(r, 2).value): r for r in range(5, ws.max_row + 1)}
    names = wb.defined_names
    for k in schema.KEYS:
        spelled = units.spell(k.template, "us_customary")
        r = rows.get((k.section, spelled)) or rows[(k.section, spelled + "[1]")]
        name = f"{k.section}_{k.name}"
        assert name in names, name
        col = "H" if k.kind in ("float", "int", "list") else "C"
        assert names[name].attr_text.startswith(f"'Inputs'!${col}${r}"), (name, names[name].attr_text)
        assert ws.cell(r, 10).value == name
    r = rows[("yield", "mature_short_ton_dm_per_acre")]
    assert ws.cell(r, 3).value == 4.6  # the value as the case gave it
    assert ws.cell(r, 4).value == "short ton DM/acre/yr"
    assert ws.cell(r, 8).value == f'=IF(ISNUMBER(C{r}),C{r}*G{r},"")'
    # 1 short ton/acre = 0.90718474 t / 0.40468564224 ha (NIST Handbook 44, Appendix C)
    assert ws.cell(r, 7).value == pytest.approx(0.90718474 / 0.40468564224, rel=1e-15)
    value_cell, canonical_cell = ws.cell(r, 3), ws.cell(r, 8)
    assert value_cell.fill.fgColor.rgb != canonical_cell.fill.fgColor.rgb
    assert value_cell.style == "tea input" and canonical_cell.style == "tea formula"


def test_sheets_views_print_setup_and_properties(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case)
    wb = load_workbook(path)
    # the demo case has a [sensitivity] section: its workbook has the sensitivity sheet
    assert wb.sheetnames == ["Inputs", "Ledger", "Results", "Finance", "Carbon", "Sensitivity", "Notes"]
    assert wb["Ledger"].freeze_panes == f"B{LEDGER_TOP}"
    for ws in wb.worksheets:
        assert ws.page_setup.orientation == "landscape"
        assert ws.page_setup.fitToWidth == 1 and ws.sheet_properties.pageSetUpPr.fitToPage
        assert case.name in ws.oddHeader.left.text
        assert "&P" in ws.oddFooter.right.text and "&N" in ws.oddFooter.right.text
    assert wb.properties.title == case.name
    assert wb.properties.created.year == 2000 and wb.properties.modified == wb.properties.created
    res = wb["Results"]
    npv_row = next(r for r in range(1, res.max_row + 1) if res.cell(r, 1).value == "npv")
    assert '"EUR"' in res.cell(npv_row, 3).number_format
    assert res.cell(npv_row, 3).value.startswith("=$B$") or "NPV(m_rate," in res.cell(npv_row, 3).value
    notes = [c.value for row in wb["Notes"].iter_rows() for c in row if isinstance(c.value, str)]
    assert tea.__version__ in " ".join(notes) and case.hash in notes
    for caution in tea.core.texts.CAUTIONS:
        assert caution in notes
    with zipfile.ZipFile(path) as zf:
        charts = [n for n in zf.namelist() if n.startswith("xl/charts/")]
        assert len(charts) == 4  # yield, payback, SOC and the tornado
        text = " ".join(zf.read(n).decode() for n in charts)
        for line in ("cumulative_discounted_cash_flow", "growth_t_dm", "soc_t_c"):
            col = wb["Ledger"].cell(1, 2 + LINE_NAMES.index(line) - 1).column_letter
            assert f"'Ledger'!${col}$" in text or line == "soc_t_c"
        assert "'Carbon'!$B$" in text  # the SOC stock chart


# ----------------------------------------------------------------------------- safety
def test_injected_text_is_written_as_text_cells(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0].replace(**{
        "case.name": "=1+1 & co", "case.notes": "@SUM(A1:A3)", "field.name": "+SUM(1)", "establishment.planting_unit": "-1"})
    path = _write(tmp_path, case)
    xml = _sheet_xml(path, 1)
    for text in ("=1+1 &amp; co", "@SUM(A1:A3)", "+SUM(1)", "-1"):
        cells = [(ref, inner) for ref, attrs, inner in _cells(xml)
                 if f'<t xml:space="preserve">{text}</t>' in (inner or "")]
        assert cells, text
        assert all('t="inlineStr"' in attrs for ref, attrs, inner in _cells(xml)
                   if f">{text}<" in (inner or ""))
    with zipfile.ZipFile(path) as zf:
        parts = len([n for n in zf.namelist() if re.fullmatch(r"xl/worksheets/sheet\d+\.xml", n)])
    assert parts == 7  # the sensitivity sheet too: the demo case has a [sensitivity] section
    for i in range(1, parts + 1):
        for ref, attrs, inner in _cells(_sheet_xml(path, i)):
            f = re.search(r"<f>(.*?)</f>", inner or "")
            assert not f or "=1+1" not in f.group(1) and "SUM(A1" not in f.group(1), ref
    wb = load_workbook(path)
    assert "=1+1 && co" in wb["Inputs"].oddHeader.left.text  # '&' is a code in headers: doubled


def test_existing_file_needs_force(tmp_path, demo):
    case, frame, res = demo["clay_corner_miscanthus"]
    path = tmp_path / "book.xlsx"
    path.write_bytes(b"keep me")
    with pytest.raises(OutputError, match="exists"):
        write_workbook(case, frame, res, path)
    assert path.read_bytes() == b"keep me"
    write_workbook(case, frame, res, path, force=True)
    assert zipfile.is_zipfile(path)
    assert cli.main(["run", str(DEMOS["clay_corner_miscanthus"]), "--xlsx", str(path), "--brief"]) == 2


def test_interrupted_write_leaves_no_file(tmp_path, demo, monkeypatch):
    case, frame, res = demo["clay_corner_miscanthus"]
    path = tmp_path / "book.xlsx"

    def half_then_fail(self, data):
        with open(self, "wb") as fh:
            fh.write(data[: len(data) // 2])
        raise KeyboardInterrupt

    monkeypatch.setattr(Path, "write_bytes", half_then_fail)
    with pytest.raises(KeyboardInterrupt):
        write_workbook(case, frame, res, path)
    assert list(tmp_path.iterdir()) == []


def test_same_case_gives_the_same_bytes(tmp_path, demo):
    case, frame, res = demo["flood_meadow_willow"]
    a, b = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    write_workbook(case, frame, res, a)
    write_workbook(tea.load_case(DEMOS["flood_meadow_willow"]), frame, res, b)
    assert a.read_bytes() == b.read_bytes()
    with zipfile.ZipFile(a) as zf:
        assert {i.date_time for i in zf.infolist()} == {(1980, 1, 1, 0, 0, 0)}


def test_ledger_of_another_case_is_refused(demo):
    case = demo["clay_corner_miscanthus"][0]
    with pytest.raises(ValueError, match="does not belong"):
        workbook_bytes(case, demo["flood_meadow_willow"][1])


# ----------------------------------------------------------------------------- the command line
def test_cli_writes_a_portfolio(tmp_path, capsys):
    out = tmp_path / "farm.xlsx"
    args = ["run", *map(str, DEMOS.values()), "--xlsx", str(out), "--brief"]
    assert cli.main(args) == 0
    wb = load_workbook(out, read_only=True)
    # the comparison, six sheets per case, and the sensitivity sheet of the case with a [sensitivity] section
    assert wb.sheetnames[0] == "Comparison" and "C03 Notes" in wb.sheetnames and len(wb.sheetnames) == 20
    assert [t for t in wb.sheetnames if t.endswith("Sensitivity")] == ["C01 Sensitivity"]
    wb.close()
    assert cli.main(args) == 2  # exists: not overwritten without --force
    assert "exists" in capsys.readouterr().err
    assert cli.main(args + ["--force"]) == 0


def test_write_portfolio_checks_the_target(tmp_path, demo):
    items = list(demo.values())
    path = tmp_path / "missing" / "farm.xlsx"
    with pytest.raises(OutputError, match="does not exist"):
        write_portfolio([c for c, _, _ in items], [f for _, f, _ in items], [r for *_, r in items], path)


# ----------------------------------------------------------------------------- the engine helper
def test_a_missing_spreadsheet_engine_fails_in_ci_and_skips_loudly_elsewhere(monkeypatch):
    import spreadsheet_engine as engine

    monkeypatch.setattr(engine.shutil, "which", lambda name: None)
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception, match="never a skip"):
        engine.require_engine()
    monkeypatch.setenv("CI", "")
    with pytest.warns(UserWarning, match="LibreOffice"), pytest.raises(pytest.skip.Exception, match="LOUDLY"):
        engine.require_engine()


# ----------------------------------------------------------------------------- the sensitivity sheet
HA_PER_ACRE = 0.40468564224  # NIST Handbook 44 (2024), Appendix C, exact


def _sensitivity_rows(ws):
    """The keyed columns of the sensitivity table and its rows: ({key: column}, [row numbers])."""
    from tea.outputs.workbook import SENS_KEY_ROW, SENS_TOP

    cols = {c.value: c.column for c in ws[SENS_KEY_ROW] if isinstance(c.value, str)}
    rows = [r for r in range(SENS_TOP, ws.max_row + 1) if isinstance(ws.cell(r, cols["rank"]).value, int)]
    return cols, rows


def test_sensitivity_sheet_holds_the_sensitivity_table(tmp_path, demo):
    import numpy_financial as npf

    from tea.analysis.sensitivity import FIGURES as SENS_FIGURES
    from tea.analysis.sensitivity import sensitivity_table

    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case)  # the case has a [sensitivity] section: the sheet is there by default
    table = sensitivity_table(case)
    wb = load_workbook(path)
    ws = wb["Sensitivity"]
    cols, rows = _sensitivity_rows(ws)
    assert len(rows) == len(table)
    for r, want in zip(rows, table.to_dict(orient="records")):
        assert ws.cell(r, cols["rank"]).value == want["rank"]
        for key in ("input", "label", "range"):
            assert ws.cell(r, cols[key]).value == want[key], (r, key)
        for side in ("low", "high", "base"):  # a metric case: its units are the table's
            assert ws.cell(r, cols[f"{side}_case_units"]).value == want[side], (r, side)
        for fig in SENS_FIGURES:
            for side in ("low", "high"):  # written by their shortest repr: the same doubles
                assert ws.cell(r, cols[f"{fig}_{side}"]).value == want[f"{fig}_{side}"], (r, fig, side)
            hi, lo = (ws.cell(r, cols[f"{fig}_{s}"]).column_letter for s in ("high", "low"))
            assert ws.cell(r, cols[f"{fig}_swing"]).value == f"=ABS({hi}{r}-{lo}{r})"
    # the price row against numpy-financial: NPV of the ledger's net cash flows with the price at its low value
    r = next(r for r in rows if ws.cell(r, cols["input"]).value == "revenue.price_per_t_dm")
    assert case["finance.rate_basis"] == "real"
    changed = case.replace(**{"revenue.price_per_t_dm": ws.cell(r, cols["low_case_units"]).value})
    expected = npf.npv(changed["finance.discount_rate"], tea.build_ledger(changed)["net_cash_flow"].to_numpy())
    assert ws.cell(r, cols["npv_low"]).value == pytest.approx(expected, rel=1e-9)
    # the base: the value the table was computed at, and a live link to the results sheet's NPV cell
    base = {ws.cell(r, 5).value: r for r in range(1, rows[0]) if isinstance(ws.cell(r, 5).value, str)}
    assert ws.cell(base["base_npv"], 3).value == table.attrs["base_npv"]
    assert ws.cell(base["base_eav"], 3).value == table.attrs["base_eav"]
    res = wb["Results"]
    npv_row = next(r for r in range(1, res.max_row + 1) if res.cell(r, 1).value == "npv")
    assert ws.cell(base["npv_now"], 3).value == f"='Results'!$C${npv_row}"
    assert "IF(ABS(" in ws.cell(base["current"], 3).value
    # labelled as values computed by tea when the file was written
    texts = " ".join(c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str))
    assert "Values computed by tea" in texts and case.hash in texts and "not formulas" in texts
    assert ws.cell(rows[0], cols["npv_low"]).style == "tea constant"
    notes = " ".join(c.value for row in wb["Notes"].iter_rows() for c in row if isinstance(c.value, str))
    assert "Sensitivity sheet holds values tea computed" in notes


def test_sensitivity_sheet_constants_are_only_tea_values(tmp_path, demo):
    """Every number that is not a formula is a value of the table (or the rank), styled as a constant."""
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case)
    wb = load_workbook(path)
    index = wb.sheetnames.index("Sensitivity") + 1
    ws = wb["Sensitivity"]
    cols, rows = _sensitivity_rows(ws)
    valued = {ws.cell(1, c).column_letter for k, c in cols.items()
              if k == "rank" or k.endswith(("_case_units", "_low", "_high"))}
    for ref, attrs, inner in _cells(_sheet_xml(path, index)):
        if "<v>" in (inner or "") and "<f>" not in inner:
            col = re.match(r"[A-Z]+", ref).group(0)
            row = int(ref[len(col):])
            assert (col in valued and row >= rows[0]) or (col == "C" and row < rows[0]), ref
            assert ws[ref].style == "tea constant", ref
    for key in ("chart_npv_change_low", "chart_npv_change_high"):
        assert ws.cell(rows[0], cols[key]).value.startswith("=")


def test_sensitivity_sheet_as_asked(tmp_path, demo):
    willow = demo["flood_meadow_willow"][0]  # no [sensitivity] section
    assert "Sensitivity" not in load_workbook(_write(tmp_path, willow, "w.xlsx"), read_only=True).sheetnames
    path = tmp_path / "asked.xlsx"
    write_workbook(willow, tea.build_ledger(willow), tea.summarise(willow), path, sensitivity=True)
    assert "Sensitivity" in load_workbook(path, read_only=True).sheetnames
    clay = demo["clay_corner_miscanthus"][0]
    path = tmp_path / "without.xlsx"
    write_workbook(clay, tea.build_ledger(clay), tea.summarise(clay), path, sensitivity=False)
    assert "Sensitivity" not in load_workbook(path, read_only=True).sheetnames
    with pytest.raises(TypeError):
        workbook_bytes(clay, sensitivity="yes")


def test_sensitivity_sheet_of_a_us_case_and_the_command_line_flag(tmp_path):
    out = tmp_path / "us.xlsx"
    assert cli.main(["run", str(DEMOS["sandy_slope_switchgrass"]), "--xlsx", str(out), "--brief",
                     "--sensitivity"]) == 0
    wb = load_workbook(out)
    ws = wb["Sensitivity"]
    cols, rows = _sensitivity_rows(ws)
    r = next(r for r in rows if ws.cell(r, cols["input"]).value == "revenue.price_per_t_dm")
    assert ws.cell(r, cols["unit_case"]).value == "USD/short ton DM"
    # money per acre: the per-ha value x 0.40468564224 (NIST Handbook 44, Appendix C: 1 acre in ha)
    per_ha = ws.cell(r, cols["npv_low"]).column_letter
    formula = ws.cell(r, cols["npv_low_per_acre"]).value
    m = re.fullmatch(rf"={per_ha}{r}\*([0-9.eE+-]+)", formula)
    assert m and float(m.group(1)) == HA_PER_ACRE, formula


def test_sensitivity_sheet_chart_is_a_native_tornado(tmp_path, demo):
    path = _write(tmp_path, demo["clay_corner_miscanthus"][0])
    with zipfile.ZipFile(path) as zf:
        charts = [zf.read(n).decode() for n in sorted(zf.namelist()) if n.startswith("xl/charts/")]
    tornado = [c for c in charts if "'Sensitivity'!" in c]
    assert len(tornado) == 1
    from lxml import etree

    root = etree.fromstring(tornado[0].encode())
    ns = {"c": "http://schemas.openxmlformats.org/drawingml/2006/chart"}
    # ECMA-376 Part 1, DrawingML charts (from memory): barDir "bar" draws horizontal bars, and the category
    # axis scaling orientation "maxMin" runs it from the top, so the largest swing comes first
    assert root.xpath("//c:barChart/c:barDir/@val", namespaces=ns) == ["bar"]
    assert root.xpath("//c:catAx/c:scaling/c:orientation/@val", namespaces=ns) == ["maxMin"]
    assert len(root.xpath("//c:barChart/c:ser", namespaces=ns)) == 2


def test_sensitivity_sheet_same_bytes(tmp_path, demo):
    case, frame, res = demo["clay_corner_miscanthus"]
    a, b = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    write_workbook(case, frame, res, a)
    write_workbook(tea.load_case(DEMOS["clay_corner_miscanthus"]), frame, res, b)
    assert a.read_bytes() == b.read_bytes()
