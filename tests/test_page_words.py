"""The grower's page speaks to a grower: sources a grower can trust, warnings in plain words.

Sources named beside each check:

* the project's source notes (tea/inputs/presets/*.toml, tea/inputs/schema.py):
  a value recalled without a document is marked ``from memory``, a fact of the
  trade ``common practice``; the page must show neither phrase and say
  "tea default" instead, while published sources (IPCC 2006 Vol. 4 Table 2.3
  for the reference soil carbon stock) are named;
* common practice: a warning for a reader who is not the file's author says
  what is unusual and why it matters, without file names or key paths.
"""

from __future__ import annotations

import json
import re

import pytest

import tea
from tea.inputs import schema
from tea.outputs.advice import grower_warnings
from tea.outputs import report

from conftest import copy_case, run_cli, to_toml, CASES_DIR


def _page_text(case) -> str:
    frame = tea.build_ledger(case)
    html = report.summary_html(case, frame, tea.summarise(case, frame), sensitivity=False)
    body = html[html.index("<body"):]
    body = re.sub(r"<svg.*?</svg>", " ", body, flags=re.S)
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", body)).replace("&#39;", "'")


def test_unpublished_sources_read_tea_default_and_published_ones_are_named(demo_mappings):
    data = copy_case(demo_mappings["flood_meadow_willow"])
    data["field"].pop("current_margin_per_ha")  # a schema default: shown as a tea default
    case = tea.load_text(to_toml(data), source="willow.toml")
    assert "from memory" in " ".join(case.notes.values())  # the coppice preset has such values
    text = _page_text(case)
    assert "from memory" not in text.lower() and "common practice" not in text.lower()
    assert "tea default" in text
    assert "IPCC 2006 Vol.4 Ch.2 Table 2.3" in text  # the reference SOC stock's published source


def test_warnings_on_the_page_are_for_a_grower_and_technical_in_the_terminal(demo_mappings, tmp_path):
    data = copy_case(demo_mappings["clay_corner_miscanthus"])
    data["yield"]["site_factor"] = 1.5  # legal but unusual: the schema warns above 1.2
    path = tmp_path / "pct.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    case = tea.load_case(path)
    text = _page_text(case)
    said = text[text.index("Worth a second look"):text.index("Before you decide")]
    assert "pct.toml" not in said and "yield.site_factor" not in said and "check it)" not in said
    assert "is 150 %, outside the usual range (up to 120 %)" in text and "the yield drives every receipt" in text
    res = run_cli(["run", path, "--brief"])
    assert res.code == 0
    warned = [line for line in res.err_lines if line.startswith("warning:")]
    assert warned == [f"warning: {path}: yield.site_factor: 1.5 is unusual (expected ..1.2 [fraction]); check it"]
    assert "warning:" not in res.out  # once, on stderr


def test_page_warnings_say_values_as_a_grower_reads_them(demo_mappings, tmp_path):
    """A rate as a percentage a year, an area with thousands separators and its unit in words, a range's bound
    rounded as people say it, and no key of the file in the words (common practice, as above)."""
    data = copy_case(demo_mappings["clay_corner_miscanthus"])
    data["finance"]["discount_rate"] = 0.25
    path = tmp_path / "rate.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    text = _page_text(tea.load_case(path))
    assert "Discount rate is 25 % a year, outside the usual range (0 to 20 % a year)" in text
    assert "rate_basis" not in text and "fraction" not in text
    us = copy_case(demo_mappings["sandy_slope_switchgrass"])
    us["field"]["area_acre"] = 20000
    path = tmp_path / "wide.toml"
    path.write_text(to_toml(us), encoding="utf-8")
    case = tea.load_case(path)
    assert any("(expected ..12355.3 [acre])" in w for w in case.warnings)  # the terminal's technical form
    assert "Area planted is 20,000 acres, outside the usual range (up to about 12,000 acres)" in _page_text(case)


def test_an_unusual_value_is_said_as_such_even_where_the_key_has_words_of_its_own(demo_mappings, tmp_path):
    """A key with its own sentence for another warning (a decline given without its start year) still gets
    "outside the usual range" when its value is unusual, never the other sentence (common practice, as
    above: the page says what is unusual)."""
    data = copy_case(demo_mappings["clay_corner_miscanthus"])
    data["yield"]["decline_per_year"] = 0.3  # above the usual 20 % a year
    data["yield"]["decline_start_year"] = 12
    path = tmp_path / "steep.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    case = tea.load_case(path)
    assert [w.kind for w in case.warnings if w.path == "yield.decline_per_year"] == ["unusual"]
    text = _page_text(case)
    assert "Yearly yield decline is 30 %, outside the usual range (up to 20 %)" in text
    assert "without the year it starts" not in text


def test_a_yield_above_the_sites_potential_is_warned_of_in_the_cases_units(demo_mappings, tmp_path):
    """The US demo field with a mature yield above what its climate gives: the terminal line names the key as
    the file spells it and gives both yields in short tons DM per acre (1 t/ha = 0.446090 short ton/acre,
    NIST SP 811 conversion factors)."""
    data = copy_case(demo_mappings["sandy_slope_switchgrass"])
    data["yield"]["mature_short_ton_dm_per_acre"] = 9.0
    data["yield"]["site_factor"] = 1.0
    data["site_climate"]["radiation_mj_per_m2_per_day"] = [r / 2 for r in data["site_climate"][
        "radiation_mj_per_m2_per_day"]]  # half the sunlight: a potential below 9 short tons
    path = tmp_path / "high.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    case = tea.load_case(path)
    line = next(w for w in case.warnings if "potential from its climate" in w)
    assert line.startswith(f"{path}: yield.mature_short_ton_dm_per_acre: 9 short ton DM/acre (with the site factor)")
    assert "t DM/ha" not in line and line.path == "yield.mature_t_dm_per_ha"
    potential = tea.inputs.site.season_for(case.values).peak_t_per_ha * 0.446090
    assert f"({potential:.3g} short ton DM/acre)" in line


WORDED = [  # (demo case, edits as (section, key, value), what the page must say)
    ("clay_corner_miscanthus", [("field", "current_margin_per_ha", 60000)],
     "Current-use margin is 60,000 EUR/ha/yr, outside the usual range (up to 50,000 EUR/ha/yr)"),
    ("flood_meadow_willow", [("site_climate", "temperature_c", [-5.0] * 12)],
     "Monthly mean temperature: the site is never warm enough for the crop's season"),
    ("clay_corner_miscanthus", [("case", "currency", "ISK")],
     "Currency: ISK is not a common ISO 4217 code; check it, because it applies to every figure."),
    ("sandy_slope_switchgrass", [("revenue", "price_per_short_ton_dm", 5000.0)],
     "Biomass price is 5,000 USD/short ton DM, outside the usual range (up to about 910 USD/short ton DM)"),
    ("flood_meadow_willow", [("operations", None, {"name": "late lime", "year": 40, "cost_per_ha": 10.0})],
     "Late lime: year 40 is after the stand's last year"),
    ("clay_corner_miscanthus", [("finance", "inflation", 0.3)],
     "General inflation per year is 30 % a year, outside the usual range"),
]


@pytest.mark.parametrize("stem, edits, said", WORDED, ids=[w[2][:24] for w in WORDED])
def test_each_kind_of_warning_reads_as_a_sentence_for_a_grower(demo_mappings, stem, edits, said):
    """Warnings of each kind (a value outside its usual range, in metric and US units; a rule between keys;
    the site climate; an operation; a currency) are said once each, as sentences that name no key of the
    file and do not say "check it" twice (common practice, as above); the terminal keeps its line, which
    ``--json`` gives as it is."""
    data = copy_case(demo_mappings[stem])
    for section, key, value in edits:
        if key is None:
            data[section].append(value)
        else:
            data[section][key] = value
    case = tea.load_text(to_toml(data), source="edited.toml")
    said_all = grower_warnings(case)
    assert any(said in s for s in said_all), said_all
    for sentence in said_all:
        assert sentence.endswith(".") and sentence.count("check it") <= 1, sentence
        assert not re.search(r"\b[a-z0-9]+_[a-z0-9_]+\b", sentence), sentence
    assert all(w.path is None or w.path in schema.BY_PATH or w.kind == "what_if" for w in case.warnings)


def test_json_gives_the_warnings_as_the_terminal_prints_them(demo_mappings, tmp_path):
    data = copy_case(demo_mappings["sandy_slope_switchgrass"])
    data["revenue"]["price_per_short_ton_dm"] = 5000.0
    path = tmp_path / "dear.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    res = run_cli(["run", path, "--json"])
    assert res.code == 0, res.text
    printed = [line.removeprefix("warning: ") for line in res.err_lines if line.startswith("warning: ")]
    assert json.loads(res.out)["warnings"] == printed and len(printed) == 1
    assert "price_per_short_ton_dm: 5000 is unusual" in printed[0]


def test_a_nominal_rate_is_made_real_on_the_page_by_division_not_subtraction(demo_mappings):
    """Fisher equation (1 + i) = (1 + r)(1 + inflation): the US demo's 7 % nominal with 2.5 % inflation is
    1.07 / 1.025 - 1 = 4.39 % real, not 7 - 2.5 = 4.5 %; the page shows the division a reader can redo."""
    case = tea.load_text(to_toml(copy_case(demo_mappings["sandy_slope_switchgrass"])), source="us.toml")
    assert case["finance.rate_basis"] == "nominal" and (case["finance.discount_rate"], case["finance.inflation"]) == (
        0.07, 0.025)
    assert f"{100 * (1.07 / 1.025 - 1):.2f}" == "4.39"
    text = _page_text(case)
    assert "7.0 % nominal with 2.5 % inflation = 4.39 % real (1.07 / 1.025 \u2212 1, Fisher)" in text
    assert "less" not in text[text.index("nominal") - 20:text.index("nominal") + 40]


def test_the_establishment_cost_credits_its_costs_and_its_planting_rate_each_to_their_source():
    """The clay demo gives every establishment cost in its case file and takes the planting rate from its crop
    preset, whose source is a published planting guide: the page's assumptions say both, never the guide as
    the source of the costs."""
    from tea.outputs.page import _assumptions

    case = tea.load_case(CASES_DIR / "clay_corner_miscanthus.toml")
    assert case.origin["establishment.site_preparation_per_ha"] == "case"
    assert case.origin["establishment.planting_units_per_ha"] == "preset"
    [row] = [a for a in _assumptions(case, tea.summarise(case)) if a["label"] == "Establishment"]
    guide = case.notes["establishment.planting_units_per_ha"].partition(": ")[2]
    assert row["source"] == f"case file; planting rate: {guide}"


# --------------------------------------------------------------------------- units kept whole on a line
# common practice (typesetting): a unit is not split over two lines; the PDF engine (WeasyPrint, with Pango's
# line breaking after UAX #14) would break after the slash of "USD/short"

UNIT_TEXT = ("to match the current use 78.58 USD/short ton DM on average; own funding peaks at 932 EUR/ha/yr "
             "and the soil holds 11.3 short ton CO2e at 5.5 % a year, 4.39 % real (1.07 / 1.025 - 1)")
WHOLE = ["USD/short ton DM", "EUR/ha/yr", "short ton CO2e", "5.5 %", "1.07 / 1.025"]


def _lines_at(width_cm: float, html_text: str) -> list[str]:
    import shutil
    import subprocess
    import tempfile

    from tea.outputs import pdf

    if not shutil.which("pdftotext"):
        pytest.skip("poppler-utils (pdftotext) not installed")
    doc = pdf.layout(f'<html><body style="width:{width_cm}cm; font: 11pt sans-serif; margin: 0">'
                     f"<p>{html_text}</p></body></html>")
    with tempfile.TemporaryDirectory() as folder:
        out = f"{folder}/p.pdf"
        pdf.write_pdf(doc, out)
        text = subprocess.run(["pdftotext", "-raw", out, "-"], capture_output=True, text=True, check=True).stdout
    return [line for line in text.replace("\f", "").splitlines() if line.strip()]


def test_units_are_never_broken_over_two_lines_in_the_pdf():
    from tea.outputs import pdf

    kept = pdf.units_kept_together(UNIT_TEXT)
    broke_before = False
    for tenth in range(30, 90, 3):  # 3.0 to 8.7 cm wide: every unit meets a line's end somewhere
        lines = _lines_at(tenth / 10, kept)
        assert " ".join(lines) == UNIT_TEXT  # pdftotext reads the joiner as nothing, a no-break space as a space
        for unit in WHOLE:
            assert any(unit in line for line in lines), (tenth, unit, lines)
        broke_before |= any(line.rstrip().endswith("/") for line in _lines_at(tenth / 10, UNIT_TEXT))
    assert broke_before  # the same text as written breaks after a slash at one of these widths


def test_units_kept_together_changes_text_only_never_markup():
    from tea.outputs import pdf

    html = ('<style>p { font: 10pt/1.2 sans-serif }</style><!-- a/b --><p class="x/y" title="3 t DM">'
            "3 t DM at 80 USD/acre</p><img src=\"data:image/svg+xml;base64,AB/CD\">")
    got = pdf.units_kept_together(html)
    assert got == ('<style>p { font: 10pt/1.2 sans-serif }</style><!-- a/b --><p class="x/y" title="3 t DM">'
                   "3 t\u00a0DM at 80 USD/\u2060acre</p><img src=\"data:image/svg+xml;base64,AB/CD\">")


def test_the_us_demo_page_has_no_line_ending_in_a_slash(tmp_path):
    import shutil
    import subprocess

    if not shutil.which("pdftotext"):
        pytest.skip("poppler-utils (pdftotext) not installed")
    out = tmp_path / "us.pdf"
    res = run_cli(["run", str(CASES_DIR / "sandy_slope_switchgrass.toml"), "--brief", "--pdf", str(out)])
    assert res.code == 0, res.err
    text = subprocess.run(["pdftotext", "-raw", str(out), "-"], capture_output=True, text=True, check=True).stdout
    assert "USD/short ton DM" in text
    assert not [line for line in text.splitlines() if line.rstrip().endswith("/")]
