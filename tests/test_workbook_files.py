"""The workbook as a file: round trip, structure, safety and determinism (no spreadsheet engine needed).

What the formulas evaluate to is checked against the engine in
tests/test_workbook.py (LibreOffice); these tests check the file itself, read
with openpyxl.
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
from tea.core.errors import CaseError, OutputError
from tea.inputs import schema, units
from tea.inputs.workbook_reader import INPUT_COLUMNS
from tea.model.definition import MODEL
from tea.model.slopes import expanded
from tea.outputs.workbook.sheets import engine_values
from tea.outputs.workbook import portfolio_bytes, read_case_mapping, workbook_bytes, write_portfolio, write_workbook

ROOT = Path(__file__).resolve().parents[1]
DEMOS = {p.stem: p for p in sorted((ROOT / "cases").glob("*.toml"))}
COL = {name: j + 1 for j, name in enumerate(INPUT_COLUMNS)}  # 1-based columns of the inputs sheet
SHEETS = ["Summary", "Inputs", "Cash flow", "Debt and tax", "Carbon", "Figures", "Checks"]


@pytest.fixture(scope="module")
def demo():
    out = {}
    for name, path in DEMOS.items():
        case = tea.load_case(path)
        frame = tea.build_ledger(case)
        out[name] = (case, frame, tea.summarise(case, frame))
    return out


def _write(tmp_path, case, name="book.xlsx", **options):
    path = tmp_path / name
    write_workbook(case, tea.build_ledger(case), tea.summarise(case), path, **options)
    return path


def _part_of(path: Path, title: str) -> str:
    """The zip part of a sheet (XlsxWriter numbers the parts in sheet order)."""
    wb = load_workbook(path, read_only=True)
    try:
        return f"xl/worksheets/sheet{wb.sheetnames.index(title) + 1}.xml"
    finally:
        wb.close()


def _cells(xml: str):
    """(ref, attributes, inner xml) of every cell of a sheet part."""
    return re.findall(r'<c r="([A-Z]+\d+)"([^>]*?)(?:/>|>(.*?)</c>)', xml)


# ----------------------------------------------------------------------------- round trip
@pytest.mark.parametrize("name", sorted(DEMOS))
def test_unedited_workbook_reads_back_as_the_same_case(tmp_path, demo, name):
    case, frame, res = demo[name]
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    again = tea.load_mapping(read_case_mapping(path), source=str(path))
    assert again.values == case.values
    assert again.hash == case.hash
    assert tea.summarise(again).per_ha == res.per_ha
    # preset, default and derived values were not frozen into the case
    assert {p for p, o in again.origin.items() if o == "case"} == {p for p, o in case.origin.items() if o == "case"}


def test_a_float_input_given_as_a_whole_number_is_the_same_case(demo):
    case = demo["clay_corner_miscanthus"][0]
    import tomllib

    data = tomllib.loads(DEMOS["clay_corner_miscanthus"].read_text(encoding="utf-8"))
    whole = {**data, "revenue": {**data["revenue"], "price_per_t_dm": 95}}
    decimal = {**data, "revenue": {**data["revenue"], "price_per_t_dm": 95.0}}
    a, b = tea.load_mapping(whole, "a.toml"), tea.load_mapping(decimal, "b.toml")
    assert a.values == b.values and a.hash == b.hash and isinstance(a["revenue.price_per_t_dm"], float)
    assert a.hash == case.replace(**{"revenue.price_per_t_dm": 95.0}).hash


def test_tea_run_reads_a_workbook(tmp_path, demo, capsys):
    case, _, res = demo["sandy_slope_switchgrass"]
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    assert cli.main(["run", str(path), "--json"]) == 0
    payload = json.loads(capsys.readouterr().out)
    assert payload["case_hash"] == case.hash
    assert payload["figures_per_ha"]["npv"] == res["npv"]


def _replace_cell(src: Path, dst: Path, ref: str, new_cell_inner: str, attrs: str = "") -> None:
    part = _part_of(src, "Inputs")
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w") as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == part:
                text, n = re.subn(rf'<c r="{ref}"( s="\d+")?[^>]*?(?:/>|>.*?</c>)',
                                  lambda m: f'<c r="{ref}"{m.group(1) or ""}{attrs}>{new_cell_inner}</c>',
                                  data.decode(), count=1)
                assert n == 1
                data = text.encode()
            zout.writestr(info, data)


def _row_of(path: Path, section: str, key: str) -> int:
    wb = load_workbook(path, read_only=True)
    try:
        for r, row in enumerate(wb["Inputs"].iter_rows(values_only=True), start=1):
            if len(row) >= COL["Key"] and row[COL["Section"] - 1] == section and row[COL["Key"] - 1] == key:
                return r
    finally:
        wb.close()
    raise KeyError(key)


def test_text_in_a_number_cell_names_the_file_and_cell(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    row = _row_of(path, "revenue", "price_per_t_dm")
    bad = tmp_path / "bad.xlsx"
    _replace_cell(path, bad, f"B{row}", '<is><t>ninety</t></is>', ' t="inlineStr"')
    with pytest.raises(CaseError) as err:
        tea.load_case(bad)
    text = str(err.value)
    assert str(bad) in text and f"Inputs!B{row}" in text and "revenue.price_per_t_dm" in text
    assert cli.main(["run", str(bad)]) == 2


def test_an_edited_list_reads_back(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    row = _row_of(path, "yield", "ramp_up_fractions[2]")
    edited = tmp_path / "edited.xlsx"
    _replace_cell(path, edited, f"B{row}", "<v>0.5</v>")
    again = tea.load_case(edited)
    assert again["yield.ramp_up_fractions"] == [0.0, 0.5, 0.8]
    assert again.origin["yield.ramp_up_fractions"] == "case"


def test_an_edited_climate_derives_the_reference_stock_again(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    row = _row_of(path, "field", "climate")
    edited = tmp_path / "edited.xlsx"
    _replace_cell(path, edited, f"B{row}", "<is><t>warm_temperate_moist</t></is>", ' t="inlineStr"')
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
    path.write_bytes(portfolio_bytes(cases, sensitivity=False, risk=False))
    with pytest.raises(CaseError, match="holds 3 cases"):
        read_case_mapping(path)


# ----------------------------------------------------------------------------- structure
def test_every_computed_cell_is_a_formula_with_its_value_saved(tmp_path, demo):
    """Every line of every year, every parameter and figure: a formula, and a value beside it for viewers."""
    case = demo["flood_meadow_willow"][0]
    path = _write(tmp_path, case)
    formulas = load_workbook(path)
    values = load_workbook(path, data_only=True)  # no recalculation: the saved values only
    lines = {d.name for d in MODEL if d.kind == "line"}
    engine = engine_values(case, expanded(MODEL))
    seen = set()
    for title in ("Cash flow", "Debt and tax", "Carbon"):
        ws, wv = formulas[title], values[title]
        for r in range(6, ws.max_row + 1):
            key = ws.cell(r, 3).value
            if key in lines:
                seen.add(key)
                for y, c in enumerate(range(4, 4 + case.stand_life + 1)):
                    assert str(ws.cell(r, c).value).startswith("="), (title, r, c)
                    v = engine[("line", key)][y]
                    if v == v:  # the engine has a number: the file carries it (a viewer shows it)
                        assert wv.cell(r, c).value == pytest.approx(v, rel=1e-12, abs=1e-12), (title, key, y)
    assert seen == lines
    ws, wv = formulas["Figures"], values["Figures"]
    shown = {ws.cell(r, 2).value: r for r in range(5, ws.max_row + 1)}
    for d in MODEL:
        if d.kind in ("param", "figure"):
            r = shown[d.name]
            assert str(ws.cell(r, 3).value).startswith("="), d.name
    # the decision figures a lender reads first carry numbers without recalculation
    for name in ("npv", "irr", "min_dscr", "llcr", "npv_after_tax", "sources_loan", "uses_total"):
        assert isinstance(wv.cell(shown[name], 3).value, float), name
    assert wv.cell(shown["npv"], 3).value == pytest.approx(demo["flood_meadow_willow"][2]["npv"], rel=1e-12)


def test_no_volatile_function_and_no_constant_typed_in_a_formula(tmp_path, demo):
    path = _write(tmp_path, demo["clay_corner_miscanthus"][0])
    with zipfile.ZipFile(path) as zf:
        text = " ".join(zf.read(n).decode() for n in zf.namelist() if n.startswith("xl/worksheets/sheet"))
    formulas = re.findall(r"<f>(.*?)</f>", text)
    assert len(formulas) > 3000
    for f in formulas:
        assert not re.search(r"\b(OFFSET|INDIRECT|NOW|TODAY|RAND)\(", f), f
        # stoichiometry and unit identities are defined names, never numbers typed inside a formula
        for typed in ("44/12", "44/28", "2.443", "0.40468564224", "3.6666"):
            assert typed not in f, f


def test_inputs_are_in_plain_words_with_units_validation_and_sources(tmp_path, demo):
    case = demo["sandy_slope_switchgrass"][0]  # US customary: per acre, short tons
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    wb = load_workbook(path)
    ws = wb["Inputs"]
    assert [c.value for c in ws[4]][:len(INPUT_COLUMNS)] == list(INPUT_COLUMNS)
    rows = {(ws.cell(r, COL["Section"]).value, ws.cell(r, COL["Key"]).value): r for r in range(5, ws.max_row + 1)}
    names = wb.defined_names
    for k in schema.KEYS:
        spelled = units.spell(k.template, "us_customary")
        r = rows.get((k.section, spelled)) or rows[(k.section, spelled + "[1]")]
        label = ws.cell(r, COL["Input"]).value  # plain words first, in the case's units
        assert label == units.in_words_of(k.doc, "us_customary").rstrip("."), k.path
        assert not re.search(r"\bper ha\b|t DM/ha", label), k.path
        name = "in_" + k.path.replace(".", "_")
        col = COL["Canonical value"] if k.kind in ("float", "int", "list") else COL["Value"]
        letter = ws.cell(1, col).column_letter
        assert names[name].attr_text.startswith(f"'Inputs'!${letter}${r}"), (name, names[name].attr_text)
    r = rows[("yield", "mature_short_ton_dm_per_acre")]
    assert ws.cell(r, COL["Value"]).value == 4.6  # the value as the case gave it
    assert ws.cell(r, COL["Unit"]).value == "short ton DM/acre/yr"
    # 1 short ton/acre = 0.90718474 t / 0.40468564224 ha (NIST Handbook 44, Appendix C)
    assert ws.cell(r, COL["Factor to canonical"]).value == pytest.approx(0.90718474 / 0.40468564224, rel=1e-15)
    # each value's source is its comment; numeric inputs carry the schema's range, choices a drop-down list
    assert ws.cell(r, COL["Value"]).comment is not None
    checks = {str(dv.sqref): dv for dv in ws.data_validations.dataValidation}
    value_letter = ws.cell(1, COL["Value"]).column_letter
    rate = rows[("finance", "discount_rate")]
    dv = checks[f"{value_letter}{rate}"]
    assert dv.type == "decimal" and float(dv.formula2) == schema.BY_PATH["finance.discount_rate"].hi
    timing = rows[("harvest", "timing")]
    assert checks[f"{value_letter}{timing}"].type == "list"


def test_sheets_print_setup_and_properties(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0]
    path = _write(tmp_path, case)
    wb = load_workbook(path)
    # the demo case has [sensitivity], [risk] and [site_climate] sections: their sheets of values follow the checks
    assert wb.sheetnames == [*SHEETS, "Sensitivity", "Risk", "Site climate", "Tables", "Notes"]
    assert wb.active.title == "Summary"
    for title in ("Cash flow", "Debt and tax", "Carbon"):
        ws = wb[title]
        assert ws.page_setup.orientation == "landscape" and ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.print_title_rows == "$4:$4" and ws.print_title_cols == "$A:$B"
        assert ws.print_area  # limited to the stand life's columns
        last = ws.cell(4, 4 + case.stand_life)
        assert last.value == case.stand_life and ws.cell(4, 5 + case.stand_life).value is None
        assert case.hash in ws.oddFooter.center.text and "&D" in ws.oddFooter.center.text
    summary = wb["Summary"]
    assert summary.sheet_properties.pageSetUpPr.fitToPage  # one page: 1 x 1 is the file format's default
    assert summary.page_setup.fitToHeight in (None, 1) and summary.page_setup.fitToWidth in (None, 1)
    assert wb.properties.created.year == 2000
    notes = [c.value for row in wb["Notes"].iter_rows() for c in row if isinstance(c.value, str)]
    assert tea.__version__ in " ".join(notes) and case.hash in notes
    for caution in tea.core.texts.CAUTIONS:
        assert caution in notes
    # DSCR is defined as lending practice, not by a regulation made for other loans
    assert not any("telephone" in n.lower() or "rural utilities" in n.lower() for n in notes)
    with zipfile.ZipFile(path) as zf:
        charts = [zf.read(n).decode() for n in zf.namelist() if n.startswith("xl/charts/chart")]
    assert any("Summary!" in c and "Covenant" in c and "DSCR" in c for c in charts)  # DSCR against the covenant
    assert any("Sensitivity!" in c for c in charts)
    # each chance of the risk sheet says how sure it is: a standard error where some draws fall each way, the
    # exact one-sided bound where none or all do (Clopper and Pearson, Biometrika 26(4), 1934), never a
    # standard error of 0
    chances = [r[:3] for r in wb["Risk"].iter_rows(values_only=True) if str(r[0]).startswith("P(")]
    assert len(chances) == 3, chances
    for label, value, note in chances:
        assert note.startswith("s.e. ") if 0 < value < 1 else "at 95% confidence" in note, (label, value, note)
        assert "0.0% (standard error" not in note


def test_units_are_shown_once(tmp_path, demo):
    path = _write(tmp_path, demo["clay_corner_miscanthus"][0], sensitivity=False, risk=False)
    wb = load_workbook(path)
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                assert "EUR" not in (c.number_format or ""), (ws.title, c.coordinate, c.number_format)
    # a share is a percentage in its cell; its unit column does not say % again ("17.72 % %")
    for title, unit_col, value_cols in (("Summary", 4, (2, 3)), ("Figures", 5, (3,))):
        ws = wb[title]
        for r in range(1, ws.max_row + 1):
            if any("%" in (ws.cell(r, c).number_format or "") for c in value_cols):
                assert "%" not in str(ws.cell(r, unit_col).value or ""), (title, r)


# ----------------------------------------------------------------------------- safety
def test_injected_text_is_written_as_text_cells(tmp_path, demo):
    case = demo["clay_corner_miscanthus"][0].replace(**{
        "case.name": "=1+1 & co", "case.notes": "@SUM(A1:A3)", "field.name": "+SUM(1)", "establishment.planting_unit": "-1"})
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    wb = load_workbook(path)
    texts = {c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row if isinstance(c.value, str)}
    for text in ("=1+1 & co", "@SUM(A1:A3)", "+SUM(1)", "-1"):
        assert text in texts
    with zipfile.ZipFile(path) as zf:
        xml = " ".join(zf.read(n).decode() for n in zf.namelist() if n.startswith("xl/worksheets/sheet"))
    for f in re.findall(r"<f>(.*?)</f>", xml):
        assert "=1+1" not in f and "SUM(A1" not in f and "SUM(1)" not in f
    assert "=1+1 && co" in wb["Cash flow"].oddFooter.left.text  # '&' is a code in footers: doubled
    again = tea.load_case(path)
    assert again["case.name"] == "=1+1 & co" and again["field.name"] == "+SUM(1)"


def test_existing_file_needs_force(tmp_path, demo):
    case, frame, res = demo["clay_corner_miscanthus"]
    path = tmp_path / "book.xlsx"
    path.write_bytes(b"keep me")
    with pytest.raises(OutputError, match="exists"):
        write_workbook(case, frame, res, path)
    assert path.read_bytes() == b"keep me"
    write_workbook(case, frame, res, path, force=True, sensitivity=False, risk=False)
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
        write_workbook(case, frame, res, path, sensitivity=False, risk=False)
    assert list(tmp_path.iterdir()) == []


def test_same_case_gives_the_same_bytes(tmp_path, demo):
    case, frame, res = demo["flood_meadow_willow"]
    a, b = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    write_workbook(case, frame, res, a)
    write_workbook(tea.load_case(DEMOS["flood_meadow_willow"]), frame, res, b)
    assert a.read_bytes() == b.read_bytes()


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
    assert wb.sheetnames[0] == "Side by side" and "C03 Notes" in wb.sheetnames
    assert [t for t in wb.sheetnames if t.endswith("Sensitivity")] == ["C01 Sensitivity"]
    assert sum(t.endswith(" Summary") for t in wb.sheetnames) == 3
    # the demos are in EUR and USD: no unit on the side-by-side sheet names one currency for all of them,
    # and each case's own currency heads its column
    side = wb["Side by side"]
    rows = [[c for c in row] for row in side.iter_rows(min_row=1, max_row=40, values_only=True)]
    units = [row[1] for row in rows[6:] if row and row[1]]
    assert units and not [u for u in units if "EUR" in u or "USD" in u], units
    heads = " ".join(str(c) for c in rows[5] if c)
    assert "EUR" in heads and "USD" in heads
    # the willow case is priced per GJ, the others per t DM: the break-even price's unit names neither for all
    # of them, and each case's column says what its price is per, as the case's own summary sheet does
    label = {row[0]: row for row in rows if row and row[0]}
    assert label["Break-even price"][1] == "currency/price unit"
    by_case = {str(rows[3][2 + j]): str(rows[5][2 + j]) for j in range(3)}
    for j in range(3):
        own = wb[f"C0{j + 1} Summary"]
        text = " ".join(str(v) for row in own.iter_rows(values_only=True) for v in row if v is not None)
        per = "GJ" if "EUR/GJ" in text else "t DM"
        assert rows[5][2 + j].endswith(f"price per {per}"), (by_case, per)
    wb.close()
    assert cli.main(args) == 2  # exists: not overwritten without --force
    assert "exists" in capsys.readouterr().err
    assert cli.main(args + ["--force"]) == 0


def test_write_portfolio_checks_the_target(tmp_path, demo):
    items = list(demo.values())
    path = tmp_path / "missing" / "farm.xlsx"
    with pytest.raises(OutputError, match="does not exist"):
        write_portfolio([c for c, _, _ in items], [f for _, f, _ in items], [r for *_, r in items], path)


# ----------------------------------------------------------------------------- the spreadsheet engine's presence
def test_a_missing_spreadsheet_engine_fails_in_ci_and_skips_loudly_elsewhere(monkeypatch):
    import spreadsheet_engine as engine

    monkeypatch.setattr(engine.shutil, "which", lambda name: None)
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception, match="never a skip"):
        engine.require_engine()
    monkeypatch.setenv("CI", "")
    with pytest.warns(UserWarning, match="LibreOffice"), pytest.raises(pytest.skip.Exception, match="LOUDLY"):
        engine.require_engine()




def test_site_climate_sheet_holds_the_potential_tea_computed(tmp_path, demo):
    from tea.inputs.site import potential

    case = demo["clay_corner_miscanthus"][0]
    wb = load_workbook(_write(tmp_path, case, sensitivity=False, risk=False), data_only=True)
    ws = wb["Site climate"]
    pot = potential(case.values, case.origin)
    assert ws["B4"].value == pytest.approx(pot["potential_t_dm_per_ha"], rel=1e-12)
    assert ws["B7"].value == pytest.approx(pot["assumed_share"], rel=1e-12)
    head = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "Month")
    assert [ws.cell(r, 1).value for r in range(head + 1, head + 13)] == list(range(1, 13))
    assert pot["estimated"] and any("this estimate is used" in str(ws.cell(r, 1).value) for r in range(1, head))


def test_a_us_workbook_read_back_names_the_unit_it_is_written_in(tmp_path, demo):
    """A text typed into the area of a US workbook: the one-line error gives the unit of its row (acre)."""
    case = demo["sandy_slope_switchgrass"][0]
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    wb = load_workbook(path)
    ws = wb["Inputs"]
    r = next(r for r in range(5, ws.max_row + 1) if ws.cell(r, COL["Key"]).value == "area_acre")
    ws.cell(r, COL["Value"]).value = "forty"
    wb.save(path)
    with pytest.raises(tea.CaseError) as err:
        tea.load_case(path)
    assert any("field.area_acre" in p.key and "expected a number [acre]" in p.message for p in err.value.problems)


def test_a_workbook_read_back_tells_every_problem_at_once_each_at_its_cell(tmp_path, demo):
    """A text in one cell and a discount rate of 5 (500 %) in another: both in one run, each naming its cell
    on the inputs sheet, and no spurious 'missing value' for the cell already told."""
    case = demo["sandy_slope_switchgrass"][0]
    path = _write(tmp_path, case, sensitivity=False, risk=False)
    wb = load_workbook(path)
    ws = wb["Inputs"]
    row = {ws.cell(r, COL["Key"]).value: r for r in range(5, ws.max_row + 1)}
    ws.cell(row["area_acre"], COL["Value"]).value = "forty"
    ws.cell(row["discount_rate"], COL["Value"]).value = 5
    wb.save(path)
    with pytest.raises(tea.CaseError) as err:
        tea.load_case(path)
    keys = [p.key for p in err.value.problems]
    area_cell = f"Inputs!{ws.cell(row['area_acre'], COL['Value']).coordinate}"
    rate_cell = f"Inputs!{ws.cell(row['discount_rate'], COL['Value']).coordinate}"
    assert f"field.area_acre ({area_cell})" in keys, keys
    assert f"finance.discount_rate ({rate_cell})" in keys, keys
    assert not [p for p in err.value.problems if "area" in p.key and "missing value" in p.message]


@pytest.mark.parametrize("made, status, said", [
    # README (exit statuses): 2 for a file that is not what was expected, 1 for one the machine would not read
    (OSError(22, "Invalid argument"), 2, "not an xlsx file"),  # a file too small to seek its zip directory in
    (OSError(5, "Input/output error"), 1, "input/output error"),
    (PermissionError(13, "Permission denied"), 1, "permission denied"),
])
def test_a_workbook_the_machine_cannot_read_is_not_called_a_wrong_file(tmp_path, demo, monkeypatch, capsys, made,
                                                                        status, said):
    case, frame, res = demo["clay_corner_miscanthus"]
    path = tmp_path / "book.xlsx"
    write_workbook(case, frame, res, path)

    def refused(*_args, **_kwargs):
        raise made

    monkeypatch.setattr(zipfile, "ZipFile", refused)
    assert cli.main(["run", str(path), "--brief"]) == status
    err = capsys.readouterr().err
    assert said in err.lower() and "book.xlsx" in err and len(err.strip().splitlines()) == 1, err
