"""Property-based tests of the files a user hands `tea`: field tables for ``tea screen`` and workbooks read back.

Hypothesis writes field tables (delimiters, quoting, comments, blank lines,
byte-order marks, bytes that are not UTF-8, line breaks of every kind, long
cells, formula-like text, control characters, values in and out of range,
unknown and repeated columns) and tampers with a workbook written by `tea`
(values of every type, formulas without a saved result, repeated and dropped
rows, broken cell references, comments, entities, truncated XML, deeply
nested JSON, damaged zips). Every run must end in one of three ways, through
the command line: a clear error with exit status 2 (one short line per
problem, no traceback), skipped rows with their line, or a correct result —
never exit status 1. A result is correct when each evaluated field's NPV
equals the full ledger of the base case with that field's values
(:func:`tea.build_ledger`, :func:`tea.summarise`), its whole-field figures
are per ha x area and no output cell can start a formula; for a workbook,
when the values read back are the ones written. ``derandomize=True`` draws
the same examples on every run.
"""

from __future__ import annotations

import csv
import functools
import math
import re
import zipfile
from pathlib import Path

import hypothesis.strategies as st
import pytest
from hypothesis import HealthCheck, given, settings

import tea
import tea.inputs.case as case_module
from tea.inputs.case import load_case
from tea.inputs.units import HA_PER_ACRE

from conftest import CASES_DIR, run_cli

BASE = CASES_DIR / "clay_corner_miscanthus.toml"
COMMON = dict(deadline=None, derandomize=True, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                     HealthCheck.function_scoped_fixture])
FORMULA_START = re.compile(r"^[=+\-@\t\r]")
PLAIN_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")


@functools.lru_cache(maxsize=None)
def _base():
    return load_case(BASE)


def _cached_load_case(path):
    return _base() if Path(path) == BASE else load_case(path)


def _clean_exit(result) -> None:
    assert result.code in (0, 2), (result.code, result.err[-2000:])
    assert "Traceback" not in result.err and "internal error" not in result.err, result.err[-2000:]
    for line in result.err_lines:
        assert len(line) < 1200, line[:300]


# ============================================================================= field tables
#: the columns a table may have, each with the cells a valid row holds there
VALID = {
    "field_id": ["F1", "F2", "North 7", "=HYPERLINK(\"http://x.invalid\",\"x\")", "@SUM(1+1)", "+1-2", "-A1",
                 "Ünïcode ✓", "a\u202eb"],
    "field.name": ["North", "", "South slope", "=1+1", "x, y"],
    "area_ha": ["1", "2.5", "10", " 4 "],
    "site_factor": ["0.8", "0.9", "1", "1.1"],
    "haul_distance_km": ["", "10", "30"],
    "rent_per_ha": ["", "0", "100"],
    "climate": ["", "cool_temperate_moist", "warm_temperate_moist"],
    "soil": ["", "high_activity_clay", "sandy"],
    "moisture_late_winter": ["", "0.2", "0.5"],
}
OPTIONAL = ["field_id", "field.name", "area_ha", "site_factor", "haul_distance_km", "rent_per_ha", "climate", "soil",
            "moisture_late_winter", "colour", "area_acre"]
JUNK = ["", "abc", "-1", "1e400", "nan", "inf", "5,5", "=1+1", '"', 'a"b', "0x10", "1_000", "\x00", "\x1b[2J",
        "\u202e", "é", " ", "9" * 12_000, "0.95", "1e-320", "-0", "+3", "2e3", "sandy", "unknown_climate"]

cells = st.one_of(st.sampled_from(JUNK), st.text(max_size=8))


@st.composite
def field_tables(draw) -> tuple[bytes, list[str]]:
    """(file bytes, header) of a generated field table."""
    header = draw(st.lists(st.sampled_from(OPTIONAL), min_size=1, max_size=6, unique=True))
    if draw(st.integers(0, 20)) == 0:
        header.append(draw(st.sampled_from(header)))  # a column twice: the file is refused
    delimiter = draw(st.sampled_from([",", ",", ";", "\t"]))
    quote_all = draw(st.booleans())
    end = draw(st.sampled_from(["\n", "\n", "\r\n", "\r"]))

    def cell_text(text: str) -> str:
        if quote_all or any(ch in text for ch in f'"{delimiter}\r\n') or text != text.strip():
            return '"' + text.replace('"', '""') + '"'
        return text

    lines: list[bytes] = []
    if draw(st.booleans()):
        lines.append(b"# a comment, before the header")
    lines.append(delimiter.join(cell_text(h) for h in header).encode())
    for _ in range(draw(st.integers(0, 6))):
        kind = draw(st.integers(0, 9))
        if kind <= 5:  # a valid row, perhaps with a few cells spoiled
            row = [draw(st.sampled_from(VALID.get(h, [""]))) for h in header]
            for _ in range(draw(st.integers(0, 2)) if kind >= 4 else 0):
                row[draw(st.integers(0, len(row) - 1))] = draw(cells)
            line = delimiter.join(cell_text(c) for c in row).encode("utf-8", "surrogatepass")
            if draw(st.integers(0, 12)) == 0:
                line += delimiter.encode() + b"extra"
        elif kind == 6:
            line = draw(st.sampled_from([b"", b"   ", b"# comment", delimiter.encode() * 3]))
        elif kind == 7:  # malformed quoting
            line = draw(st.sampled_from([b'"F9' + delimiter.encode() + b"5", b'F9"x' + delimiter.encode() + b"1",
                                         b'"F9"x' + delimiter.encode() + b"1"]))
        elif kind == 8:  # not UTF-8
            line = b"F\xe9" + delimiter.encode() + b"5\xff"
        else:
            line = draw(st.binary(max_size=20)).replace(b"\n", b" ").replace(b"\r", b" ")
        lines.append(line)
    data = end.encode().join(lines) + (end.encode() if draw(st.booleans()) else b"")
    if draw(st.integers(0, 6)) == 0:
        data = b"\xef\xbb\xbf" + data
    return data, header


@functools.lru_cache(maxsize=None)
def _reference(overrides: tuple[tuple[str, str], ...]):
    """NPV per ha of the base case with a row's values, through the full ledger."""
    paths = {"site_factor": "yield.site_factor", "haul_distance_km": "costs.haul_distance_km",
             "rent_per_ha": "costs.rent_per_ha", "climate": "field.climate", "soil": "field.soil",
             "moisture_late_winter": "harvest.moisture_late_winter"}
    changes = {}
    for column, text in overrides:
        if text == "" or column not in paths:
            continue
        changes[paths[column]] = text if column in ("climate", "soil") else float(text)
    case = _base().replace(**changes) if changes else _base()  # climate and soil derive the reference stock again
    return tea.summarise(case, tea.build_ledger(case))["npv"]


@settings(max_examples=1000, **COMMON)
@given(field_tables())
def test_generated_field_tables(tmp_path_factory, monkeypatch, table):
    data, header = table
    monkeypatch.setattr(case_module, "load_case", _cached_load_case)
    folder = tmp_path_factory.mktemp("fields")
    path = folder / "fields.csv"
    path.write_bytes(data)
    out = folder / "ranked.csv"
    result = run_cli(["screen", path, "--case", BASE, "--out", out, "--no-progress"])
    _clean_exit(result)
    if result.code == 2:
        return
    ranked = list(csv.reader(line for line in out.read_text(encoding="utf-8").splitlines()
                             if not line.startswith("#")))
    columns, rows = ranked[0], ranked[1:]
    skipped = int(re.search(r"([\d,]+) rows? skipped", result.out).group(1).replace(",", ""))
    read = int(re.search(r"([\d,]+) rows? read", result.out).group(1).replace(",", ""))
    assert len(rows) + skipped == read
    if skipped:
        assert (folder / "ranked.errors.csv").exists()
    for row in rows:
        for cell in row:
            assert not FORMULA_START.match(cell) or PLAIN_NUMBER.fullmatch(cell), cell
        got = dict(zip(columns, row))
        if got.get("area_ha"):
            area = float(got["area_ha"])
        elif got.get("area_acre"):
            area = float(got["area_acre"]) * HA_PER_ACRE  # NIST: 1 acre = 4,046.856 422 4 m²
        else:
            area = _base().area_ha
        overrides = tuple((c, got[c]) for c in columns if c in ("site_factor", "haul_distance_km", "rent_per_ha",
                                                                  "climate", "soil", "moisture_late_winter"))
        npv = float(got["npv_per_ha"])
        assert math.isclose(npv, _reference(overrides), rel_tol=1e-8, abs_tol=1e-6), (row, overrides)
        assert math.isclose(float(got["npv_field"]), npv * area, rel_tol=1e-8, abs_tol=1e-6)


# ============================================================================= tampered workbooks
@pytest.fixture(scope="module")
def small_book(tmp_path_factory) -> dict[str, bytes]:
    return small_book_parts(tmp_path_factory.mktemp("book"))


def small_book_parts(folder: Path) -> dict[str, bytes]:
    """The parts of a workbook written by tea, its inputs sheet cut to the rows the case file gave and the
    sections kept whole (the rows a reader takes; the others it derives again), its text written inline:
    a small sheet to tamper with."""
    from openpyxl import load_workbook
    from openpyxl.utils import get_column_letter

    from tea.inputs.workbook_reader import INPUT_COLUMNS

    case = _base()
    ledger = tea.build_ledger(case)
    path = folder / "book.xlsx"
    tea.write_workbook(case, ledger, tea.summarise(case, ledger), path, sensitivity=False, risk=False)
    wb = load_workbook(path, read_only=True)
    titles = wb.sheetnames
    grid = [tuple(r) for r in wb["Inputs"].iter_rows(values_only=True)]
    wb.close()
    part = f"xl/worksheets/sheet{titles.index('Inputs') + 1}.xml"
    with zipfile.ZipFile(path) as zf:
        parts = {n: zf.read(n) for n in ("[Content_Types].xml", "_rels/.rels", "xl/workbook.xml",
                                         "xl/_rels/workbook.xml.rels", "xl/styles.xml", part)}
    origin = INPUT_COLUMNS.index("Origin")
    kept_from = next(i for i, r in enumerate(grid) if r[:2] == ("Section kept whole", "Content (JSON)"))
    key_col = INPUT_COLUMNS.index("Key")
    keep, kept_key = [], None
    for i, r in enumerate(grid):
        if i < 4:
            keep.append(r)
        elif i < kept_from and len(r) > key_col:
            base = str(r[key_col]).split("[")[0]
            if len(r) > origin and r[origin] == "case":  # a key the case gave (a list's first cell)
                keep.append(r)
                kept_key = base
            elif base == kept_key and "[" in str(r[key_col]):  # the rest of that list
                keep.append(r)
    keep += [()] + [r for r in grid[kept_from:] if r and r[0] is not None]

    def cell(ref: str, v) -> str:
        if isinstance(v, bool):
            return f'<c r="{ref}" t="b"><v>{int(v)}</v></c>'
        if isinstance(v, (int, float)):
            return f'<c r="{ref}"><v>{v!r}</v></c>'
        return f'<c r="{ref}" t="inlineStr"><is><t xml:space="preserve">{_xml_text(str(v))}</t></is></c>'

    body = "".join(f'<row r="{n}">' + "".join(cell(f"{get_column_letter(j + 1)}{n}", v) for j, v in enumerate(r)
                                               if v is not None and v != "") + "</row>"
                   for n, r in enumerate(keep, start=1) if any(v not in (None, "") for v in r))
    sheet = parts.pop(part).decode()
    parts["xl/worksheets/sheet2.xml"] = re.sub(r"<sheetData>.*</sheetData>|<sheetData/>",
                                               lambda m: "<sheetData>" + body + "</sheetData>", sheet,
                                               flags=re.S).encode()
    # the defined names point into sheets left out here; the reader does not read them
    parts["xl/workbook.xml"] = re.sub(rb"<definedNames>.*</definedNames>", b"", parts["xl/workbook.xml"], flags=re.S)
    return _Parts(parts)


class _Parts(dict):
    """A workbook's parts by name (shown short when a failing example is printed)."""

    def __repr__(self) -> str:
        return f"<{len(self)} workbook parts>"


def _zip(parts: dict[str, bytes]) -> bytes:
    import io

    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_STORED) as zf:
        for name, data in parts.items():
            zf.writestr(name, data)
    return buf.getvalue()


NUMBER_KEYS = ("mature_t_dm_per_ha", "area_ha", "discount_rate", "price_per_t_dm", "harvest_per_ha",
               "haul_distance_km")
values = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.sampled_from(["1e400", "-1e400", "NaN", "INF", "", " ", "0x1A", "1,5", "5.", ".5", "1e-320", "-0"]),
    st.integers(-10**20, 10**20).map(str),
)
texts = st.one_of(st.text(max_size=12), st.sampled_from(["=1+1", "\x1b[2J", "_x001B_", "_x005F_x0041_", "#N/A",
                                                         "\u202e", "a" * 40_000]))
deep_json = st.integers(1, 60_000).map(lambda n: "[" * n + "]" * n)


def _xml_text(text: str) -> str:
    from tea.core.safe_text import xlsx_text

    return xlsx_text(text)


@st.composite
def tamperings(draw) -> list[tuple]:
    """A list of edits, each (name, arguments)."""
    ops = []
    for _ in range(draw(st.integers(1, 3))):
        op = draw(st.sampled_from(["number", "number", "text", "typed", "formula", "comment", "attribute",
                                   "doctype", "truncate", "repeat", "drop", "reference", "key", "json", "zip"]))
        if op == "number":
            ops.append((op, draw(st.sampled_from(NUMBER_KEYS)), draw(values)))
        elif op == "text":
            ops.append((op, draw(st.sampled_from(["name", "currency", "climate", "timing", "area_ha"])), draw(texts)))
        elif op == "typed":
            ops.append((op, draw(st.sampled_from(NUMBER_KEYS + ("name", "climate"))),
                        draw(st.sampled_from([("b", "1"), ("b", "7"), ("e", "#DIV/0!"), ("s", "0"), ("s", "99999"),
                                              ("s", "x"), ("str", "12"), ("d", "2020-01-01"), ("n", "abc"),
                                              ("inlineStr", "")]))))
        elif op == "formula":
            ops.append((op, draw(st.sampled_from(NUMBER_KEYS)), draw(st.booleans())))
        elif op in ("comment", "attribute"):
            ops.append((op, draw(st.integers(0, 10**6)), draw(st.integers(0, 3000))))
        elif op == "doctype":
            ops.append((op, draw(st.sampled_from([
                '<!DOCTYPE x [<!ENTITY a "aaaa">]>', '<!DOCTYPE x SYSTEM "http://x.invalid/x.dtd">',
                '<!DOCTYPE x [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;">]>']))))
        elif op == "truncate":
            ops.append((op, draw(st.floats(0.0, 1.0))))
        elif op in ("repeat", "drop"):
            ops.append((op, draw(st.integers(0, 10**6))))
        elif op == "reference":
            ops.append((op, draw(st.integers(0, 10**6)), draw(st.sampled_from(["A0", "ZZZZ5", "5A", "A99999999",
                                                                               "", "a7", "XFD1", "B-1"]))))
        elif op == "key":
            ops.append((op, draw(st.integers(0, 10**6)), draw(st.one_of(texts, st.sampled_from(
                ["area_acre", "mature_t_dm_per_hectare", "ramp_up_fractions[9]", "ramp_up_fractions[x]"])))))
        elif op == "json":
            ops.append((op, draw(st.one_of(deep_json, st.text(max_size=20),
                                           st.sampled_from(['{"draws": 1e999}', "{}", "[]", "null", '{"a":'])))))
        else:
            ops.append((op, draw(st.sampled_from(["drop sheet", "drop workbook", "drop rels", "flip", "cut",
                                                  "not a zip", "drop strings"])), draw(st.integers(0, 10**6))))
    return ops


def _row_of(sheet: str, key: str) -> int:
    m = re.search(rf'<c r="G(\d+)"[^>]*><is><t xml:space="preserve">{re.escape(key)}</t>', sheet)
    return int(m.group(1)) if m else -1


def _set_cell(sheet: str, ref: str, xml: str) -> str:
    pattern = rf'<c r="{ref}"(?: [^>]*)?(?:/>|>.*?</c>)'
    if re.search(pattern, sheet, re.S):
        return re.sub(pattern, lambda m: xml, sheet, count=1, flags=re.S)
    row = re.sub(r"\D", "", ref)
    return re.sub(rf'(<row r="{row}"[^>]*>)', lambda m: m.group(1) + xml, sheet, count=1)


def _apply(parts: dict[str, bytes], ops: list[tuple]) -> tuple[bytes, set[str], list[tuple]]:
    """The tampered file, the kinds of edit that change nothing the reader takes, and the numbers written."""
    parts = dict(parts)
    sheet = parts["xl/worksheets/sheet2.xml"].decode()
    rows = re.findall(r'<row r="\d+"[^>]*>.*?</row>', sheet, re.S)
    zip_ops, numbers = [], []
    for op in ops:
        name = op[0]
        if name == "number":
            r = _row_of(sheet, op[1])
            if r > 0:
                sheet = _set_cell(sheet, f"B{r}", f'<c r="B{r}"><v>{op[2]}</v></c>')
                numbers.append(op)
        elif name == "text":
            r = _row_of(sheet, op[1])
            if r > 0:
                sheet = _set_cell(sheet, f"B{r}", f'<c r="B{r}" t="inlineStr"><is><t>{_xml_text(op[2])}</t></is></c>')
        elif name == "typed":
            r = _row_of(sheet, op[1])
            kind, v = op[2]
            if r > 0:
                inner = "<is><t></t></is>" if kind == "inlineStr" else f"<v>{v}</v>"
                sheet = _set_cell(sheet, f"B{r}", f'<c r="B{r}" t="{kind}">{inner}</c>')
        elif name == "formula":
            r = _row_of(sheet, op[1])
            if r > 0:
                cached = "<v>12.5</v>" if op[2] else ""
                sheet = _set_cell(sheet, f"B{r}", f'<c r="B{r}"><f>H{r}*1</f>{cached}</c>')
        elif name == "comment":
            at = [m.end() for m in re.finditer(r"</row>|</c>", sheet)] or [len(sheet)]
            i = at[op[1] % len(at)]
            sheet = sheet[:i] + "<!--" + " \n" * op[2] + "-->" + sheet[i:]
        elif name == "attribute":
            sheet = sheet.replace("<sheetData>", f'<sheetData xmlns:q="urn:x" q:junk="{op[2]}">', 1)
        elif name == "doctype":
            sheet = sheet.replace("<worksheet", op[1] + "<worksheet", 1)
        elif name == "truncate":
            sheet = sheet[: int(len(sheet) * op[1])]
        elif name in ("repeat", "drop") and rows:
            row = rows[op[1] % len(rows)]
            sheet = sheet.replace(row, row + row if name == "repeat" else "", 1)
        elif name == "reference":
            refs = re.findall(r'<c r="([A-Z]+\d+)"', sheet)
            if refs:
                sheet = sheet.replace(f'<c r="{refs[op[1] % len(refs)]}"', f'<c r="{op[2]}"', 1)
        elif name == "key":
            keys = re.findall(r'<c r="(G\d+)"[^>]*><is><t xml:space="preserve">[a-z_\[\]0-9]+</t>', sheet)
            if keys:
                ref = keys[op[1] % len(keys)]
                sheet = _set_cell(sheet, ref, f'<c r="{ref}" t="inlineStr"><is><t>{_xml_text(op[2])}</t></is></c>')
        elif name == "json":
            sheet = re.sub(r'(<c r="B\d+"[^>]*><is><t xml:space="preserve">)\{[^<]*(</t>)',
                           lambda m: m.group(1) + _xml_text(op[1]) + m.group(2), sheet, count=1)
        else:
            zip_ops.append(op)
    parts["xl/worksheets/sheet2.xml"] = sheet.encode("utf-8", "surrogatepass")
    for _, what, n in zip_ops:
        if what.startswith("drop"):
            parts.pop({"drop sheet": "xl/worksheets/sheet2.xml", "drop workbook": "xl/workbook.xml",
                       "drop rels": "xl/_rels/workbook.xml.rels", "drop strings": "xl/sharedStrings.xml"}[what], None)
    data = _zip(parts)
    for _, what, n in zip_ops:
        if what == "flip":
            i = n % len(data)
            data = data[:i] + bytes([data[i] ^ 0x5A]) + data[i + 1:]
        elif what == "cut":
            data = data[: n % len(data)]
        elif what == "not a zip":
            data = b"PK\x03\x04 not really" + data[:100]
    neutral = {op[0] for op in ops} <= {"comment", "attribute"}
    return data, {"neutral"} if neutral else set(), numbers


@settings(max_examples=1000, **COMMON)
@given(tamperings())
def test_tampered_workbooks(small_book, tmp_path_factory, ops):
    data, kinds, numbers = _apply(small_book, ops)
    path = tmp_path_factory.mktemp("tampered") / "book.xlsx"
    path.write_bytes(data)
    result = run_cli(["check", path])
    _clean_exit(result)
    base = _base()
    if "neutral" in kinds:  # comments and foreign attributes change nothing the reader takes
        assert result.code == 0 and f"hash {base.hash}" in result.out, result.err
    if result.code != 0:
        return
    case = load_case(path)
    if len(ops) == 1 and numbers:  # an edited number that was taken is the number written (the case is metric)
        _, key, text = numbers[0]
        path = next(p for p in case.values if p.rpartition(".")[2] == key)
        assert case[path] == pytest.approx(float(text), rel=1e-12, abs=1e-300), (numbers, case[path])


# ============================================================================= every writer, twice
def test_every_writer_twice_gives_the_same_bytes(tmp_path):
    """Each output written twice, a second apart, in two folders: the same bytes.

    The PDF summary and the comparison report are held to the same rule by
    ``test_report.py`` (same case, same bytes, no dates); here every other
    writer is.
    """
    import time

    fields = CASES_DIR / "fields_demo.csv"
    other = CASES_DIR / "flood_meadow_willow.toml"
    bad = tmp_path / "bad_fields.csv"
    bad.write_text("field_id,area_ha,site_factor\nF1,5,0.9\nF2,x,1\n", encoding="utf-8")
    runs = [
        ["run", BASE, "--brief", "--xlsx", "one.xlsx", "--html", "one.html"],
        ["run", BASE, other, "--brief", "--xlsx", "two.xlsx"],
        ["screen", fields, "--case", BASE, "--out", "ranked.csv", "--no-progress"],
        ["screen", fields, "--case", BASE, "--out", "ranked.xlsx", "--no-progress"],
        ["screen", bad, "--case", BASE, "--out", "bad.csv", "--errors", "skipped.csv", "--no-progress"],
        ["sensitivity", BASE, "--no-surface", "--plot", "tornado.svg"],
        ["sensitivity", BASE, "--no-surface", "--plot", "tornado.pdf"],
        ["sensitivity", BASE, "--no-surface", "--plot", "tornado.png"],
        ["risk", BASE, "--draws", "200", "--seed", "3", "--plot", "risk.svg", "--no-progress"],
        ["new", "starter", "--crop", "coppice", "--currency", "GBP"],
    ]
    written = {}
    for attempt in (1, 2):
        folder = tmp_path / f"try{attempt}"
        folder.mkdir()
        for argv in runs:
            result = run_cli(argv, cwd=folder)
            assert result.code == 0, (argv, result.err)
        written[attempt] = {p.name: p.read_bytes() for p in sorted(folder.iterdir())}
        if attempt == 1:
            time.sleep(1.1)  # a clock in any output would tick between the two
    assert len(written[1]) == 12 and written[1].keys() == written[2].keys(), sorted(written[1])
    differ = [name for name in written[1] if written[1][name] != written[2][name]]
    assert not differ
