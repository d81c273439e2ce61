"""The one-line errors a case file gets: what they say and where they point.

Values in them are written as TOML writes them, checked by reading them back with the standard library's TOML
parser (``tomllib``); line and column of a byte that is not UTF-8 are counted on the file independently of
the loader; the percentage hint is checked against the entries' own arithmetic (70 % = 0.7).
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest

from conftest import CASES_DIR, copy_case, run_cli, to_toml
from tea.core.errors import CaseError
from tea.inputs.case import load_case, load_preset, load_text, preset_names

BASE = (CASES_DIR / "clay_corner_miscanthus.toml").read_text(encoding="utf-8")


def _with(old: str, new: str, text: str = BASE) -> str:
    assert text.count(old) == 1, old
    return text.replace(old, new)


def _problems(text: str) -> list[tuple[str, str]]:
    with pytest.raises(CaseError) as err:
        load_text(text, source="c.toml")
    return [(p.key, p.message) for p in err.value.problems]


# ----------------------------------------------------------------------------- a percentage among fractions
@pytest.mark.parametrize("typed, meant", [
    ("[0.3, 70, 1.0]", "[0.3, 0.7, 1.0]"),      # only the entry above the bound (1.5) was a percentage
    ("[30, 70, 100]", "[0.3, 0.7, 1.0]"),       # every entry a percentage
    ("[0, 40, 80.5]", "[0, 0.4, 0.805]"),       # 0 stays 0, as written
    ("[0.3, 1.2, 70]", "[0.3, 1.2, 0.7]"),      # 1.2 is a legal share (up to 1.5): only 70 is a percentage
])
def test_only_entries_above_the_bound_are_read_as_percentages_in_the_hint(typed, meant):
    text = _with("[yield]\n", f"[yield]\nramp_up_fractions = {typed}\n")
    [(key, message)] = [p for p in _problems(text) if p[0] == "yield.ramp_up_fractions"]
    first_above = next(x for x in tomllib.loads(f"x = {typed}")["x"] if x > 1.5)
    assert message == (f"must be <= 1.5, got {first_above:g}; it looks like a percentage: "
                       f"write fractions, {meant} for {typed}")
    # the hint, written back into the case, is accepted
    load_text(text.replace(f"ramp_up_fractions = {typed}", f"ramp_up_fractions = {meant}"), source="c.toml")


def test_a_whole_number_at_an_open_bound_is_read_as_a_percentage():
    """A moisture must be below 1 (the bound is open): 1 typed for 1 % fails it, so the hint divides it
    (1 % = 0.01) rather than offering the refused value back."""
    text = _with("buyer_moisture_max = 0.25 ", "buyer_moisture_max = 1 ")
    [(key, message)] = [p for p in _problems(text) if p[0] == "harvest.buyer_moisture_max"]
    assert message.endswith("it looks like a percentage: write fractions, 0.01 for 1"), message


@pytest.mark.parametrize("section, key", [("finance", "discount_rate"), ("finance", "inflation"),
                                          ("loan", "rate"), ("costs", "change_per_year")])
def test_a_yearly_rate_of_1_is_refused_as_a_percentage(section, key):
    """A yearly rate or change of 1 is 100 % a year: never meant in a stand's economics (common practice: real
    discount rates of a few percent), and what a percentage typed as a whole number gives (1 for 1 %). It is
    refused with the hint; the fraction it offers (1 % = 0.01) is accepted."""
    head, rest = BASE.split(f"[{section}]\n", 1)
    body, tail = rest.split("\n[", 1)
    body = "\n".join(line for line in body.split("\n") if not line.startswith(f"{key} ="))  # the demo's own
    text = f"{head}[{section}]\n{key} = 1\n{body}\n[{tail}"
    [(_, message)] = [p for p in _problems(text) if p[0] == f"{section}.{key}"]
    assert message == "must be < 1, got 1; it looks like a percentage: write fractions, 0.01 for 1"
    load_text(text.replace(f"{key} = 1\n", f"{key} = 0.01\n", 1), source="c.toml")


# ----------------------------------------------------------------------------- a file that is not UTF-8
def test_a_file_not_in_utf8_names_the_line_and_column_of_its_first_bad_byte(tmp_path):
    # the case name holds a UTF-8 "Ü" (two bytes, one character) and then a Latin-1 "é" (one byte, 0xe9)
    good = _with('name = "Clay corner"', 'name = "Über Clay corn@@"').encode("utf-8")
    assert good.count(b"@@") == 1
    data = good.replace(b"@@", b"\xe9")
    path = tmp_path / "latin.toml"
    path.write_bytes(data)
    lines = data.split(b"\n")
    line = next(i for i, raw in enumerate(lines, start=1) if b"\xe9" in raw)
    column = len('name = "Über Clay corn') + 1   # counted in characters, not bytes
    with pytest.raises(CaseError) as err:
        load_case(path)
    [problem] = err.value.problems
    assert (problem.key, problem.message) == (
        "", f"cannot read the file: not UTF-8 text: line {line}, column {column} holds the byte 0xe9; "
            "save the file as UTF-8")
    result = run_cli(["check", path])
    assert result.code == 2
    assert result.err_lines == [f"error: {path}: {problem.message}"]


def test_a_file_with_windows_line_ends_reads_as_the_same_case(tmp_path):
    unix, windows = tmp_path / "unix.toml", tmp_path / "windows.toml"
    unix.write_bytes(BASE.encode("utf-8"))
    windows.write_bytes(BASE.replace("\n", "\r\n").encode("utf-8"))
    assert load_case(windows).hash == load_case(unix).hash


# ----------------------------------------------------------------------------- a file the machine will not read
@pytest.mark.parametrize("name", ["folder.toml", "folder.xlsx", "folder"])
def test_a_folder_given_as_the_case_file_is_said_to_be_a_folder(tmp_path, name):
    folder = tmp_path / name
    folder.mkdir()
    result = run_cli(["check", folder])
    assert result.code == 2
    assert result.err_lines == [f"error: {folder}: cannot read the file: it is a folder; expected a case file (.toml)"]


def test_a_case_file_it_may_not_read_says_permission_denied(tmp_path, monkeypatch):
    path = tmp_path / "locked.toml"
    path.write_text(BASE, encoding="utf-8")

    def refuse(self):
        raise PermissionError(13, "Permission denied", str(self))

    monkeypatch.setattr(Path, "read_bytes", refuse)
    result = run_cli(["check", path])
    assert result.code == 1  # the README's exit statuses: 1 where the machine refused (no permission)
    assert result.err_lines == [f"error: {path}: cannot read the file: permission denied"]


def test_a_missing_case_file_is_said_to_be_missing(tmp_path):
    result = run_cli(["check", tmp_path / "none.toml"])
    assert (result.code, result.err_lines) == (2, [f"error: {tmp_path / 'none.toml'}: file not found"])


# ----------------------------------------------------------------------------- values as TOML writes them
@pytest.mark.parametrize("old, new, key, expected", [
    ("area_ha = 6.4", "area_ha = { value = 10 }", "field.area_ha", "expected a number [ha], got { value = 10 }"),
    ("area_ha = 6.4", "area_ha = [1, 2]", "field.area_ha", "expected a number [ha], got [1, 2]"),
    ("area_ha = 6.4", 'area_ha = "6.4 ha"', "field.area_ha", 'expected a number [ha], got "6.4 ha"'),
    ('units = "metric"', "units = true", "case.units", "expected one of metric, us_customary, got true"),
    ("demo = true", 'demo = "yes"', "case.demo", 'expected true or false, got "yes"'),
    ("demo = true", 'demo = "say \\"no\\"\\tthen"', "case.demo", 'expected true or false, got "say \\"no\\"\\tthen"'),
    ("demo = true", "demo = 1979-05-27", "case.demo", "expected true or false, got 1979-05-27"),
    ('currency = "EUR"', 'currency = "euro"', "case.currency",
     'expected a three-letter ISO 4217 code such as EUR or USD, got "euro"'),
])
def test_an_offending_value_is_shown_as_it_is_written_in_toml(old, new, key, expected):
    [message] = [m for k, m in _problems(_with(old, new)) if k == key]
    assert message == expected
    shown = message.rpartition("got ")[2]
    assert tomllib.loads(f"x = {shown}")["x"] == tomllib.loads(new.replace(new.split(" = ")[0], "x", 1))["x"]


def test_operation_and_analysis_values_are_shown_as_in_toml():
    text = BASE + '\n[[operations]]\nname = true\nyear = 2\ncost_per_ha = 10.0\n'
    assert ("operations[1].name", "expected text, got true") in _problems(text)
    text = _with("[sensitivity]\n", '[sensitivity]\ninputs = "yield.site_factor"\n')
    assert ("sensitivity.inputs", 'expected a non-empty list of case keys, got "yield.site_factor"') in _problems(text)


# ----------------------------------------------------------------------------- operations
def test_a_negative_operation_cost_is_the_one_error_of_its_operation():
    text = BASE + '\n[[operations]]\nname = "lime"\nevery = 5\nfrom = 5\ncost_per_ha = -65.0\n'
    assert [p for p in _problems(text) if p[0].startswith("operations")] == [
        ("operations[1].cost_per_ha", "expected a number >= 0, got -65.0")]


def test_an_operation_with_no_amount_at_all_is_still_told_it_needs_one():
    text = BASE + '\n[[operations]]\nname = "lime"\nyear = 5\n'
    assert [p for p in _problems(text) if p[0].startswith("operations")] == [
        ("operations[1].cost_per_ha", "an operation needs a cost, diesel or N amount")]


# ----------------------------------------------------------------------------- preset notes
@pytest.mark.parametrize("name", preset_names())
def test_preset_notes_give_the_basis_and_source_not_an_edit_history(name):
    preset = load_preset(name)
    notes = {**preset.sources, **preset.region_sources}
    history = {path: note for path, note in notes.items()
               if re.search(r"changed from|\bkept \d|\d kept\b|previously|\bwas \d", note, re.IGNORECASE)}
    assert history == {}


@pytest.mark.parametrize("key, given, meant", [
    # IPCC 2006 Vol. 4 Ch. 3 (Figure 3A.5.1): four temperate climate zones, two with "clay" soils in Table 2.3
    ("climate", "temperate", ["cool_temperate_dry", "cool_temperate_moist", "warm_temperate_dry",
                              "warm_temperate_moist"]),
    ("soil", "clay", ["high_activity_clay", "low_activity_clay"]),
    ("climate", "borel", ["boreal"]),
])
def test_a_near_miss_names_every_choice_it_could_mean_never_one_of_equals(demo_mappings, key, given, meant):
    data = copy_case(demo_mappings["clay_corner_miscanthus"])
    data["field"][key] = given
    with pytest.raises(CaseError) as caught:
        load_text(to_toml(data), source="x.toml")
    said = str(caught.value).split("did you mean ", 1)[1]
    assert sorted(re.findall(r"'(\w+)'", said)) == sorted(meant), said
