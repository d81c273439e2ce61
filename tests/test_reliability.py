"""Regression tests of the reliability holes: one test (or a few) per numbered hole, named after it.

Each builds the input that broke the tool and checks what the command line
now does: a clear one-line error with exit status 2 for bad input, a clear
one-line error with exit status 1 for a machine that refuses a write, a
skipped row for a bad row of a field table, or the right result. The
tests of hole 1 hold the evaluator's shape rule: a batch always has its rows.
"""

from __future__ import annotations

import errno
import io
import os
import re
import time
import tomllib
import tracemalloc
import warnings
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

import tea
from tea.core.safe_text import CELL_LIMIT, HEADER_LIMIT
from tea.inputs.case import load_case
from tea.inputs.fieldtable import MAX_CELL_CHARS, FieldTable

from conftest import CASES_DIR, run_cli, to_toml

BASE = CASES_DIR / "clay_corner_miscanthus.toml"
GJ_BASE = CASES_DIR / "flood_meadow_willow.toml"
#: characters that drive or reorder a terminal
CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def _table(tmp_path: Path, text: str | bytes, name: str = "fields.csv") -> Path:
    path = tmp_path / name
    path.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    return path


def _screen(tmp_path: Path, table: Path, *extra: str, out: str = "ranked.csv"):
    return run_cli(["screen", table, "--case", BASE, "--out", tmp_path / out, "--no-progress", *extra])


def _screen_ids(tmp_path: Path, text: str | bytes) -> tuple:
    """Screen a table given as text; the run and the ids of the fields evaluated, sorted."""
    result = _screen(tmp_path, _table(tmp_path, text))
    assert result.code == 0, result.err
    return result, sorted(_ranked(tmp_path)["field_id"])


def _ranked(tmp_path: Path, out: str = "ranked.csv") -> pd.DataFrame:
    return pd.read_csv(tmp_path / out, comment="#", dtype={"field_id": str})


def _one_line_errors(result) -> None:
    """Every stderr line is one short line; no traceback, no internal error."""
    assert "Traceback" not in result.err and "internal error" not in result.err
    for line in result.err_lines:
        assert len(line) < 1200, line[:200]


@pytest.fixture(scope="module")
def base_mapping() -> dict:
    return tomllib.loads(BASE.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def book(tmp_path_factory) -> Path:
    """One workbook written by tea for the whole module (the demo case without its sensitivity sheet)."""
    path = tmp_path_factory.mktemp("book") / "book.xlsx"
    case = load_case(BASE)
    ledger = tea.build_ledger(case)
    tea.write_workbook(case, ledger, tea.summarise(case, ledger), path, sensitivity=False)
    return path


def _tamper(book: Path, target: Path, edit, part: str = "xl/worksheets/sheet2.xml") -> Path:
    """A copy of ``book`` with one part's bytes edited."""
    with zipfile.ZipFile(book) as zin, zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info)
            zout.writestr(info.filename, edit(data) if info.filename == part else data)
    return target


# ----------------------------------------------------------------------------- 1. the natural field table
def test_hole_01_area_only_table(tmp_path):
    table = _table(tmp_path, "field_id,area_ha\nF1,5\nF2,6\n")
    result = _screen(tmp_path, table)
    assert result.code == 0, result.err
    ranked = _ranked(tmp_path)
    assert sorted(ranked["field_id"]) == ["F1", "F2"]
    assert np.allclose(ranked["npv_field"], ranked["npv_per_ha"] * ranked["area_ha"])


def test_hole_01_id_only_table(tmp_path):
    result = _screen(tmp_path, _table(tmp_path, "field_id\nF1\nF2\n"))
    assert result.code == 0, result.err
    assert len(_ranked(tmp_path)) == 2


def test_hole_01_name_only_table(tmp_path):
    result = _screen(tmp_path, _table(tmp_path, "field_id,field.name\nF1,North\nF2,South\n"))
    assert result.code == 0, result.err
    assert len(_ranked(tmp_path)) == 2


def test_hole_01_area_with_an_empty_cell(tmp_path):
    result = _screen(tmp_path, _table(tmp_path, "field_id,area_ha\nF1,5\nF2,\nF3,7\n"))
    assert result.code == 0, result.err
    assert sorted(_ranked(tmp_path)["field_id"]) == ["F1", "F3"]


def test_hole_01_an_empty_area_is_a_bad_row_not_the_base_area(tmp_path):
    result, ids = _screen_ids(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\nF2,,1.0\nF3,7,1.1\n")
    assert ids == ["F1", "F3"]
    assert "line 3 (row 2): area_ha: no area given" in result.err


def test_a_row_without_a_field_id_is_a_bad_row_not_a_blank_in_the_ranking(tmp_path):
    """common practice: a ranked field must be one the advisor can find again."""
    result, ids = _screen_ids(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\n,5,1.0\nF3,7,1.1\n")
    assert ids == ["F1", "F3"]
    assert "line 3 (row 2): field_id: no field id given" in result.err
    assert "1 row skipped" in result.out


# ----------------------------------------------------------------------------- 2. formula injection
INJECTED = ['=HYPERLINK("http://x.invalid","click")', "+cmd|' /C calc'!A0", "@SUM(1+1)", "-2+3", "-A1*2"]


def _csv_quoted(text: str) -> str:
    return '"' + text.replace('"', '""') + '"'


def test_hole_02_formula_injection_in_screen_outputs(tmp_path):
    lines = ["field_id,field.name,area_ha,site_factor"]
    lines += [f"{_csv_quoted(t)},{_csv_quoted(t)},{5 + i},{0.8 + 0.05 * i}" for i, t in enumerate(INJECTED)]
    lines += [f'F9,{_csv_quoted(INJECTED[0])},{_csv_quoted(INJECTED[0])},1.0']  # a bad row: text in a number column
    table = _table(tmp_path, "\n".join(lines) + "\n")
    for out in ("ranked.csv", "ranked.xlsx"):
        result = _screen(tmp_path, table, "--force", out=out)
        assert result.code == 0, result.err
    ranked = (tmp_path / "ranked.csv").read_text(encoding="utf-8").splitlines()
    errors = (tmp_path / "ranked.errors.csv").read_text(encoding="utf-8").splitlines()
    for line in ranked + errors:
        for cell in next(iter(__import__("csv").reader([line]))):
            assert not cell.startswith(("=", "+", "@", "\t", "\r")) and not re.match(r"-\D", cell), (line, cell)
    with zipfile.ZipFile(tmp_path / "ranked.xlsx") as zf:
        sheet = zf.read("xl/worksheets/sheet1.xml").decode()
    assert "<f>" not in sheet
    got = load_workbook(tmp_path / "ranked.xlsx")["ranked fields"]
    ids = {got.cell(r, 3).value for r in range(2, got.max_row + 1)}
    assert ids == set(INJECTED)  # string cells, the text as given


@pytest.mark.parametrize("text, cell", [
    ("\t=1+1", "\"'\t=1+1\""), ("\r=1+1", "\"'\r=1+1\""), ("=1+1", "'=1+1"), ("-3", "-3"), ("-3e5", "-3e5"),
    ("-A1", "'-A1"), ("+1", "+1"), ("a=b", "a=b"),
])
def test_hole_02_csv_cells_starting_a_formula_are_neutralised(text, cell):
    from tea.core.safe_text import csv_cell

    assert csv_cell(text) == cell  # a leading quote, the advice of spreadsheet-injection guidance; plain numbers kept


# ----------------------------------------------------------------------------- 3. a comment that stalled the reader
def test_hole_03_comment_stall(book, tmp_path):
    comments = b"".join(b"<!--" + b" " * 2000 + b"\n" + b" " * 2000 + b"-->" for _ in range(1000))  # 4 MB
    path = _tamper(book, tmp_path / "stall.xlsx", lambda d: d.replace(b"</row>", b"</row>" + comments, 3))
    start = time.perf_counter()
    result = run_cli(["check", path])
    seconds = time.perf_counter() - start
    assert result.code == 0, result.err
    assert f"hash {load_case(BASE).hash}" in result.out
    assert seconds < 20  # the quadratic reader took minutes on a file this size; linear parsing takes about 1 s


# ----------------------------------------------------------------------------- 4. negative energy
def test_hole_04_negative_energy_is_refused(tmp_path):
    data = tomllib.loads(GJ_BASE.read_text(encoding="utf-8"))
    data.setdefault("harvest", {}).update(moisture_autumn=0.9, moisture_late_winter=0.9)
    path = tmp_path / "wet.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    result = run_cli(["run", path, "--brief"])
    assert result.code == 2
    # q = 18.5 - 2.443 x 0.9/0.1 = -3.49 GJ/t DM (the ISO 18125 relation the model uses, by hand)
    assert re.search(r"harvest\.moisture_\w+: at 0\.9 moisture the net heating value is -3\.49 GJ/t DM", result.err)
    _one_line_errors(result)


def test_hole_04_negative_energy_row_is_skipped(tmp_path):
    result, ids = _screen_ids(tmp_path, "field_id,area_ha,moisture_late_winter\nF1,5,0.3\nF2,6,0.95\nF3,7,0.2\n")
    assert ids == ["F1", "F3"]
    assert "line 3 (row 2): harvest.moisture_late_winter: at 0.95 moisture the net heating value" in result.err


# ----------------------------------------------------------------------------- 5. workbook edits ignored or chosen
def _inputs_row(book: Path, key: str) -> re.Match:
    """The row of the inputs sheet holding a key (a match whose group 1 is the row number)."""
    from tea.inputs.workbook_reader import INPUT_COLUMNS

    ws = load_workbook(book, read_only=True)["Inputs"]
    col = INPUT_COLUMNS.index("Key")
    row = next(r for r, cells in enumerate(ws.iter_rows(values_only=True), start=1)
               if len(cells) > col and cells[col] == key)
    return re.match(r"(\d+)", str(row))


def test_hole_05_formula_without_a_saved_value(book, tmp_path):
    def edit(data: bytes) -> bytes:
        row = _inputs_row(book, "mature_t_dm_per_ha").group(1)
        return re.sub(rf'<c r="B{row}"([^>]*)><v>[^<]*</v></c>'.encode(),
                      rf'<c r="B{row}"\1><f>B1*2</f></c>'.encode(), data)
    result = run_cli(["run", _tamper(book, tmp_path / "formula.xlsx", edit), "--brief"])
    assert result.code == 2
    assert "yield.mature_t_dm_per_ha (Inputs!B" in result.err and "formula (=B1*2) with no saved result" in result.err
    _one_line_errors(result)


def test_hole_05_a_repeated_input_row(book, tmp_path):
    def edit(data: bytes) -> bytes:  # the row below the mature yield's becomes a copy of it
        row = int(_inputs_row(book, "mature_t_dm_per_ha").group(1))
        whole = re.search(rf'<row r="{row}"[^>]*>.*?</row>'.encode(), data, re.S).group(0)
        below = re.search(rf'<row r="{row + 1}"[^>]*>.*?</row>'.encode(), data, re.S).group(0)
        copy = re.sub(rf'r="([A-Z]*){row}"'.encode(), lambda m: b'r="' + m.group(1) + str(row + 1).encode() + b'"',
                      whole)
        return data.replace(below, copy, 1)
    result = run_cli(["run", _tamper(book, tmp_path / "twice.xlsx", edit), "--brief"])
    assert result.code == 2, result.err
    assert re.search(r"yield\.mature_t_dm_per_ha \(Inputs![A-Z]+\d+\): given twice \(also on row \d+\)", result.err)
    _one_line_errors(result)


# ----------------------------------------------------------------------------- 6. internal errors on bad input or a bad machine
def test_hole_06_deeply_nested_toml(tmp_path):
    path = tmp_path / "deep.toml"
    path.write_text(BASE.read_text(encoding="utf-8") + "\n[deep]\nx = " + "[" * 100_000 + "]" * 100_000 + "\n")
    result = run_cli(["check", path])
    assert result.code == 2 and "nested too deeply" in result.err
    _one_line_errors(result)


def test_hole_06_deeply_nested_json_in_a_kept_section(tmp_path):
    case = load_case(BASE)  # it has [sensitivity] and [risk]: both kept whole as JSON
    ledger = tea.build_ledger(case)
    book = tmp_path / "kept.xlsx"
    tea.write_workbook(case, ledger, tea.summarise(case, ledger), book, sensitivity=False)
    deep = "[" * 30_000 + "]" * 30_000
    edited = _tamper(book, tmp_path / "deep.xlsx", lambda d: re.sub(  # the kept section's JSON text
        rb'(<t[^>]*>)\{[^<]*(</t>)', lambda m: m.group(1) + deep.encode() + m.group(2), d, count=1),
        part="xl/sharedStrings.xml")
    result = run_cli(["check", edited])
    assert result.code == 2 and "malformed JSON: nested too deeply" in result.err, result.err
    _one_line_errors(result)


@pytest.mark.parametrize("text, message", [
    ("[case]\nname = " + "9" * 5000 + "\n", "malformed TOML: a number too long to read"),
    ("[field]\narea_ha = " + "9" * 4000 + "\n", "got a whole number of about 4,000 digits"),
])
def test_hole_06_a_number_of_thousands_of_digits(tmp_path, text, message):
    path = tmp_path / "digits.toml"
    path.write_text(text, encoding="utf-8")
    result = run_cli(["check", path])
    assert result.code == 2 and message in result.err
    _one_line_errors(result)


@pytest.mark.parametrize("doctype", [
    b'<!DOCTYPE x [<!ENTITY a "aaaa">]>',
    b'<!DOCTYPE x [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]>',
    b'<!DOCTYPE x [<!ENTITY e SYSTEM "file:///etc/passwd">]>',
])
def test_hole_06_entities_in_a_workbook_part(book, tmp_path, doctype):
    path = _tamper(book, tmp_path / "entity.xlsx", lambda d: d.replace(b"<worksheet", doctype + b"<worksheet", 1))
    result = run_cli(["check", path])
    assert result.code == 2 and "declares a DTD or entities" in result.err
    _one_line_errors(result)


@pytest.mark.parametrize("code, reason", [(errno.EACCES, "permission denied"), (errno.ENOSPC, "the disk is full"),
                                          (errno.EFBIG, "the file is too large")])
def test_hole_06_a_machine_that_refuses_the_write(tmp_path, monkeypatch, code, reason):
    real = os.replace

    def refuse(src, dst):
        raise OSError(code, os.strerror(code), str(src))
    monkeypatch.setattr(os, "replace", refuse)
    out = tmp_path / "book.xlsx"
    result = run_cli(["run", BASE, "--brief", "--xlsx", out])
    monkeypatch.setattr(os, "replace", real)
    assert result.code == 1
    assert f"error: {out}: cannot write the file: {reason}" in result.err
    assert not list(tmp_path.iterdir())  # no output, no leftover temporary file
    _one_line_errors(result)


def test_hole_06_a_full_disk_under_the_screen_xlsx_writer(tmp_path, monkeypatch):
    from tea.outputs import table_book

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")
    monkeypatch.setattr(table_book, "write_book", full)
    table = _table(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\nF2,6,1.0\n")
    result = _screen(tmp_path, table, out="ranked.xlsx")
    assert result.code == 1
    assert f"{tmp_path / 'ranked.xlsx'}: cannot write the file: the disk is full" in result.err
    _one_line_errors(result)


def test_hole_06_a_folder_given_as_the_output_file(tmp_path):
    (tmp_path / "book.xlsx").mkdir()
    result = run_cli(["run", BASE, "--brief", "--xlsx", tmp_path / "book.xlsx"])
    assert result.code == 1 and "book.xlsx: is a folder; give a file name" in result.err
    assert result.out == ""  # refused before any work
    (tmp_path / "some_folder").mkdir()
    result = run_cli(["run", BASE, "--brief", "--xlsx", tmp_path / "some_folder"])
    assert result.code in (1, 2) and "some_folder" in result.err
    _one_line_errors(result)


def test_hole_06_a_read_only_folder(tmp_path, monkeypatch):
    real = os.access
    monkeypatch.setattr(os, "access", lambda p, mode, **kw: False if Path(p) == tmp_path else real(p, mode, **kw))
    result = run_cli(["run", BASE, "--brief", "--pdf", tmp_path / "summary.pdf"])
    assert result.code == 1 and "summary.pdf: cannot write the file: permission denied" in result.err
    assert result.out == ""


# ----------------------------------------------------------------------------- 7. output paths cross-checked
@pytest.mark.parametrize("args, message", [
    (["--xlsx", "same.pdf", "--pdf", "same.pdf"], "same.pdf: unknown output type .pdf; expected .xlsx"),
    (["--xlsx", "out.xlsx", "--html", "out.xlsx"], "also given as"),
    (["--xlsx", "book.txt"], "book.txt: unknown output type .txt; expected .xlsx"),
    (["--xlsx", "book.xls"], "the old binary format"),
    (["--pdf", "page.html"], "expected .pdf"),
])
def test_hole_07_output_paths_cross_checked(tmp_path, args, message):
    result = run_cli(["run", BASE, "--brief", *args], cwd=tmp_path)
    assert result.code == 2 and message in result.err
    assert result.out == "" and not list(tmp_path.iterdir())  # nothing computed, nothing written


def test_hole_07_an_output_never_overwrites_an_input(tmp_path):
    table = _table(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\n")
    before = table.read_bytes()
    result = run_cli(["screen", table, "--case", BASE, "--out", table, "--force"])
    assert result.code == 2 and "is an input of this run" in result.err and table.read_bytes() == before
    case = tmp_path / "case.toml"
    case.write_bytes(BASE.read_bytes())
    result = run_cli(["run", case, "--html", tmp_path / "case.toml", "--force"])
    assert result.code == 2 and "is an input of this run" in result.err


def test_hole_07_screen_outputs_cross_checked(tmp_path):
    table = _table(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\n")
    result = run_cli(["screen", table, "--case", BASE, "--out", tmp_path / "a.csv", "--errors", tmp_path / "a.csv"])
    assert result.code == 2 and "also given as" in result.err
    result = run_cli(["screen", table, "--case", BASE, "--out", tmp_path / "a.txt"])
    assert result.code == 2 and "expected .csv, .xlsx or .parquet" in result.err


# ----------------------------------------------------------------------------- 8. screen mis-parses
@pytest.mark.parametrize("sep", [";", "\t"])
def test_hole_08_semicolon_and_tab_tables(tmp_path, sep):
    text = sep.join(["field_id", "area_ha", "site_factor"]) + "\n" + "\n".join(
        sep.join([f"F{i}", str(4 + i), f"{0.8 + 0.1 * i:.1f}"]) for i in range(3)) + "\n"
    result = _screen(tmp_path, _table(tmp_path, text))
    assert result.code == 0, result.err
    assert sorted(_ranked(tmp_path)["field_id"]) == ["F0", "F1", "F2"]
    assert "no rows skipped" in result.err


def test_hole_08_an_unterminated_quote_skips_its_row_only(tmp_path):
    result, ids = _screen_ids(tmp_path, 'field_id,area_ha,site_factor\nF1,5,0.9\n"F2,6,1.0\nF3,7,1.1\n')
    assert ids == ["F1", "F3"]
    assert "line 3 (row 2): malformed quoting: a quoted cell is not closed on its line" in result.err


def test_hole_08_a_decoding_error_at_its_line(tmp_path):
    result, ids = _screen_ids(tmp_path, b"field_id,area_ha,site_factor\nF1,5,0.9\nF2,6,1.0\nF\xe93,7,1.1\nF4,8,1.2\n")
    assert ids == ["F1", "F2", "F4"]
    assert "line 4 (row 3): not UTF-8 text (byte 0xe9 at byte 2 of the line)" in result.err


def test_hole_08_one_huge_cell_refuses_its_row_only(tmp_path):
    result, ids = _screen_ids(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\nF2," + "9" * 1_000_000 + ",1.0\nF3,7,1.1\n")
    assert ids == ["F1", "F3"]
    assert f"line 3 (row 2): cell 2 holds 1,000,000 characters; a field-table cell holds at most {MAX_CELL_CHARS:,}" \
        in result.err


def test_hole_08_repeated_field_ids_warn(tmp_path):
    table = _table(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\nF2,6,1.0\nF1,7,1.1\n")
    result = _screen(tmp_path, table)
    assert result.code == 0, result.err
    assert "field_id given more than once: 'F1' on line 4 (first on line 2)" in result.err
    assert len(_ranked(tmp_path)) == 3


def test_hole_08_a_byte_order_mark_before_the_header(tmp_path):
    table = _table(tmp_path, b"\xef\xbb\xbffield_id,area_ha,site_factor\nF1,5,0.9\nF2,6,1.0\n")
    with FieldTable(table, load_case(BASE)) as fields:
        assert [c.kind for c in fields.columns] == ["id", "key", "key"]


# ----------------------------------------------------------------------------- 9. terminal escape injection
NASTY = "Farm\x1b]0;owned\x07\x1b[2J\x00\x08\x7f\u202eevil"


def test_hole_09_terminal_escape_injection(tmp_path, base_mapping):
    data = dict(base_mapping, case=dict(base_mapping["case"], name=NASTY))
    data["field"] = dict(data["field"], name=NASTY)
    path = tmp_path / "nasty.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    for argv in (["run", path, "--brief"], ["check", path]):
        result = run_cli(argv)
        assert result.code == 0, result.err
        assert not CONTROL.search(result.out + result.err)
    assert "Farm\\x1b]0;owned\\x07\\x1b[2J\\x00\\x08\\x7f\\u202eevil" in result.out
    from tea.outputs.report import summary_html

    case = load_case(path)
    ledger = tea.build_ledger(case)
    html = summary_html(case, ledger, tea.summarise(case, ledger), sensitivity=False)
    assert not CONTROL.search(html) and "\\u202eevil" in html


# ----------------------------------------------------------------------------- 10. resources
def test_hole_10_screen_xlsx_is_streamed_in_bounded_memory(tmp_path):
    from tea.outputs.table_book import write_book

    header = [f"c{j}" for j in range(30)]

    def rows(n):
        for i in range(n):
            yield [f"F{i}"] + [i * 0.5 + j for j in range(29)]

    def peak(n: int) -> int:
        tracemalloc.start()
        try:
            write_book(tmp_path / f"big{n}.xlsx", [("ranked fields", header, rows(n))])
            return tracemalloc.get_traced_memory()[1]
        finally:
            tracemalloc.stop()
    small, large = peak(1_000), peak(3_000)
    # three times the rows, about the same memory: a block of rows at a time (cell objects grew with the rows,
    # about 1.7 GB for 100,000)
    assert large < 1.5 * small, (small, large)
    with zipfile.ZipFile(tmp_path / "big3000.xlsx") as zf:
        sheet = zf.read("xl/worksheets/sheet1.xml").decode()
    assert sheet.count("<row ") == 3_001 and '<c r="B3001"><v>1499.5</v></c>' in sheet


# ----------------------------------------------------------------------------- 11. determinism
def test_hole_11_screen_xlsx_and_plots_carry_no_date_or_random_ids(tmp_path):
    table = _table(tmp_path, "field_id,area_ha,site_factor\nF1,5,0.9\nF2,6,1.0\n")
    assert _screen(tmp_path, table, out="ranked.xlsx").code == 0
    with zipfile.ZipFile(tmp_path / "ranked.xlsx") as zf:
        assert {i.date_time for i in zf.infolist()} == {(1980, 1, 1, 0, 0, 0)}
        assert not any("core.xml" in n for n in zf.namelist())  # no creation time at all
    for suffix in ("svg", "pdf"):
        out = tmp_path / f"tornado.{suffix}"
        assert run_cli(["sensitivity", BASE, "--no-surface", "--plot", out]).code == 0
        data = out.read_bytes()
        assert b"<dc:date>" not in data and b"CreationDate" not in data
        if suffix == "svg":
            assert re.search(rb'clipPath id="p[0-9a-f]+"', data)


# ----------------------------------------------------------------------------- 12. the smaller ones
def test_hole_12_byte_order_mark_before_a_case(tmp_path):
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + BASE.read_bytes())
    result = run_cli(["check", path])
    assert result.code == 0 and f"hash {load_case(BASE).hash}" in result.out


def test_hole_12_a_tiny_loan_rate_is_a_loan(tmp_path, base_mapping):
    data = dict(base_mapping, loan=dict(base_mapping["loan"], rate=5e-324))
    case = tea.load_mapping(data, "tiny.toml")
    assert case["loan.rate"] == 0.0 and any("taken as 0, an interest-free loan" in w for w in case.warnings)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        res = tea.summarise(case, tea.build_ledger(case))
    assert res["loan_principal"] > 0 and res["loan_interest_total"] == 0.0
    assert res["min_dscr"] is not None  # repaid in equal parts: a debt service falls due
    # an interest-free loan repaid over the term: payment = principal / term
    assert res["loan_payment"] == pytest.approx(res["loan_principal"] / data["loan"]["term_years"])


def test_hole_12_error_lines_quote_at_most_80_characters_of_a_value(tmp_path, base_mapping):
    data = dict(base_mapping, case=dict(base_mapping["case"], currency="X" * 10_000))
    data["field"] = dict(data["field"], **{"Y" * 10_000: 1})
    path = tmp_path / "long.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    result = run_cli(["check", path])
    assert result.code == 2
    for line in result.err_lines:
        assert not re.search("X{81,}|Y{81,}", line) and len(line) < 400, line[:120]


@pytest.mark.parametrize("currency", ["EU\nR", "euro", "E", "X" * 10_000, "EUR\x1b"])
def test_hole_12_tea_new_checks_the_currency(tmp_path, currency):
    result = run_cli(["new", tmp_path / "starter", "--crop", "rhizome_grass", "--currency", currency])
    assert result.code == 2 and "ISO 4217" in result.err
    assert not list(tmp_path.iterdir())


def test_hole_12_names_beyond_spreadsheet_limits(tmp_path, base_mapping):
    data = dict(base_mapping, case=dict(base_mapping["case"], name="N&" * 25_000))
    path = tmp_path / "long.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    assert run_cli(["run", path, "--brief", "--xlsx", tmp_path / "b.xlsx"]).code == 0
    wb = load_workbook(tmp_path / "b.xlsx")
    for ws in wb.worksheets:
        for row in ws.iter_rows(values_only=True):
            assert all(len(v) <= CELL_LIMIT for v in row if isinstance(v, str))
    with zipfile.ZipFile(tmp_path / "b.xlsx") as zf:
        sheet = zf.read("xl/worksheets/sheet2.xml").decode()
    raw = re.search(r"<oddFooter>(.*?)</oddFooter>", sheet).group(1).replace("&amp;", "&").replace("&quot;", '"')
    assert len(raw) <= HEADER_LIMIT and "[cut: 50,000 characters]" in raw
    assert any("[cut: 50,000 characters]" in str(v) for row in wb["Inputs"].iter_rows(values_only=True) for v in row)


def test_hole_12_control_characters_in_xlsx_text_keep_the_case_hash(tmp_path, base_mapping):
    data = dict(base_mapping, case=dict(base_mapping["case"], name="Farm\x01\x1b[31m _x0041_ \u202e"))
    data["field"] = dict(data["field"], name="North\x0bfield")
    case = tea.load_mapping(data, "ctl.toml")
    book = tmp_path / "ctl.xlsx"
    ledger = tea.build_ledger(case)
    tea.write_workbook(case, ledger, tea.summarise(case, ledger), book, sensitivity=False)
    again = load_case(book)
    assert again["case.name"] == case["case.name"] and again.hash == case.hash


def test_hole_12_stale_part_files_of_our_own_are_cleaned(tmp_path):
    out = tmp_path / "book.xlsx"
    dead = tmp_path / ".book.xlsx.2147483646.k2j4h1.part"  # a process id no live process has here
    alive = tmp_path / f".book.xlsx.{os.getpid()}.abc123.part"
    other = tmp_path / ".other.xlsx.2147483646.k2j4h1.part"
    for p in (dead, alive, other):
        p.write_bytes(b"half")
    assert run_cli(["run", BASE, "--brief", "--xlsx", out]).code == 0
    assert out.exists() and not dead.exists() and alive.exists() and other.exists()


def _until_watching(proc, most: float = 30.0) -> None:
    """Wait until the command has started its first thread, the one that waits for Ctrl-C (the interpreter
    starts none of its own, and tea starts it before it loads anything): a signal before then falls on the
    interpreter's own start-up, which tea cannot take it from."""
    import time

    tasks = Path(f"/proc/{proc.pid}/task")
    end = time.perf_counter() + most
    while time.perf_counter() < end and proc.poll() is None:
        try:
            if len(list(tasks.iterdir())) >= 2:
                return
        except OSError:
            return
        time.sleep(0.002)


@pytest.mark.parametrize("after", [0.1, 0.25, "late"])
def test_an_interrupt_ends_the_run_quietly(tmp_path, after):
    """Ctrl-C (SIGINT, POSIX) while tea loads its libraries (0.1 s, 0.25 s after it starts watching for the
    signal, which on a loaded machine may be well after the process started) or late in the run, while it
    lays out and draws the page with its worker processes: exit 130 and one line, no traceback, no file,
    no worker left. The numerical libraries start native threads that could take the signal; under load
    the run once finished as if never interrupted, or died by the signal after reporting it.

    "late" is a share of the time an uninterrupted run takes here and now (the machine may be loaded or
    not); a run that still finishes before the signal, file written, is tried again with the signal
    earlier, twice at most: a run that never takes the signal fails."""
    import signal
    import subprocess
    import sys
    import time

    out = tmp_path / "a.pdf"
    command = [sys.executable, "-m", "tea", "run", str(CASES_DIR / "clay_corner_miscanthus.toml"), "--pdf", str(out)]
    env = {**os.environ, "TEA_JOBS": "2"}
    if after == "late":
        started = time.perf_counter()
        subprocess.run(command, env=env, capture_output=True, check=True)
        whole = time.perf_counter() - started
        out.unlink()
        tries = [0.7 * whole, 0.5 * whole, 0.35 * whole]
    else:
        tries = [after]
    for wait in tries:
        proc = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
        if after != "late":
            _until_watching(proc)
        time.sleep(wait)
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=120)
        if proc.returncode == 0 and out.exists() and wait is not tries[-1]:
            out.unlink()  # the run was over before the signal came: earlier
            continue
        break
    assert proc.returncode == 130, err
    said = "interrupted; no output file was left half-written"
    # the file asked for is named as not written, unless the signal came before the run knew of it
    assert "Traceback" not in err and err.strip() in (said, f"{said}; not written: {out}"), err
    if after == "late":
        assert err.strip() == f"{said}; not written: {out}", err
    assert not out.exists() and not list(tmp_path.glob(".*.part"))
    time.sleep(0.2)  # a forked worker has the command line of the run, which names this test's own folder
    left = [p for p in Path("/proc").glob("[0-9]*") if str(out).encode() in _cmdline(p)]
    assert not left, left


@pytest.mark.parametrize("name, status", [("SIGTERM", 143), ("SIGHUP", 129)])
def test_a_polite_kill_or_a_closed_terminal_ends_the_run_as_an_interrupt_does(tmp_path, name, status):
    """SIGTERM (kill, a job scheduler) and SIGHUP (the terminal closed) once killed the run outright, leaving
    a .part file and its workers. POSIX convention: status 128 + the signal's number, and one line."""
    import signal
    import subprocess
    import sys
    import time

    out = tmp_path / "a.pdf"
    proc = subprocess.Popen([sys.executable, "-m", "tea", "run", str(CASES_DIR / "clay_corner_miscanthus.toml"),
                             "--pdf", str(out)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env={**os.environ, "TEA_JOBS": "2"})
    time.sleep(0.6)
    proc.send_signal(getattr(signal, name))
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == status, err
    said = f"stopped ({name}); no output file was left half-written"
    assert err.strip() in (said, f"{said}; not written: {out}"), err
    assert not out.exists() and not list(tmp_path.glob(".*.part"))


def _cmdline(proc_dir: Path) -> bytes:
    try:
        return (proc_dir / "cmdline").read_bytes()
    except OSError:
        return b""



def test_an_interrupt_after_some_outputs_names_those_not_written(tmp_path):
    """An interrupt once the workbook is written (its "wrote" line on stderr) and before the page: the workbook
    stays whole, and the last line names the outputs asked for and not written (README: each file whole)."""
    import signal
    import subprocess
    import sys

    book, page, html = tmp_path / "a.xlsx", tmp_path / "a.pdf", tmp_path / "a.html"
    proc = subprocess.Popen([sys.executable, "-m", "tea", "run", str(CASES_DIR / "clay_corner_miscanthus.toml"),
                             "--xlsx", str(book), "--pdf", str(page), "--html", str(html), "--brief"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                            env={**os.environ, "TEA_JOBS": "2"})
    first = proc.stderr.readline()
    assert first.strip() == f"wrote {book}", first
    proc.send_signal(signal.SIGINT)
    err = proc.stderr.read()
    proc.wait(timeout=120)
    missing = [str(p) for p in (page, html) if not p.exists()]
    assert proc.returncode == 130 and book.exists() and missing, err
    assert err.strip().splitlines()[-1] == ("interrupted; no output file was left half-written; not written: "
                                            + ", ".join(missing)), err
