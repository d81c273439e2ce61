"""US customary all the way, crop names, another crop on the same field, and cases side by side.

Sources named beside each check:

* NIST Handbook 44 (2024) Appendix C: 1 acre = 0.40468564224 ha, 1 short ton =
  0.90718474 t, 1 lb = 0.45359237 kg; NIST SP 811 (2008) B.8: 1 Btu (IT) =
  1055.05585262 J, so 1 MMBtu = 1.05505585262 GJ;
* TDWG World Geographical Scheme for Recording Plant Distributions, level 1
  (Brummitt 2001) for the region names;
* the presets' own region notes (each names its source) for which crop is
  native where: the check is that the caution follows the preset, not a fact
  of botany.
"""

from __future__ import annotations

import re
import tomllib

import pytest

import tea
from tea.outputs import side_by_side, terminal

from conftest import CASES_DIR, copy_case, run_cli, to_toml

HA_PER_ACRE = 0.40468564224  # NIST Handbook 44 Appendix C
T_PER_SHORT_TON = 0.90718474  # NIST Handbook 44 Appendix C
GJ_PER_MMBTU = 1.05505585262  # NIST SP 811 B.8
SANDY = CASES_DIR / "sandy_slope_switchgrass.toml"
CLAY = CASES_DIR / "clay_corner_miscanthus.toml"


def _summary(case) -> str:
    frame = tea.build_ledger(case)
    return terminal.summary_text(case, frame, tea.summarise(case, frame), yearly=False)


def _row(text: str, label: str) -> str:
    return next(line for line in text.splitlines() if line.strip().startswith(label))


def test_us_summary_shows_carbon_in_short_tons_and_energy_in_gj_and_mmbtu():
    case = tea.load_case(SANDY)
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)
    text = terminal.summary_text(case, frame, res, yearly=False)
    soc = _row(text, "SOC gain ")
    assert "short ton C/acre" in soc and " t C" not in soc
    gained = res["soc_gain_t_c"] * HA_PER_ACRE / T_PER_SHORT_TON  # t C/ha -> short ton C/acre
    assert f"{gained:,.2f}" in soc or f"{gained:,.3g}" in soc
    energy = _row(text, "Energy sold")
    gj = res["sold_gj"] * HA_PER_ACRE
    assert f"{gj:,.0f} GJ/acre" in energy and f"{gj / GJ_PER_MMBTU:,.0f} MMBtu/acre" in energy


def test_us_starter_has_round_us_values_and_us_words(tmp_path):
    res = run_cli(["new", tmp_path / "us", "--crop", "switchgrass", "--units", "us_customary", "--currency", "USD"])
    assert res.code == 0, res.text
    text = (tmp_path / "us.toml").read_text(encoding="utf-8")
    data = tomllib.loads(text)
    assert data["crop"] == {"preset": "seeded_grass", "name": "switchgrass"}
    given = [v for table in data.values() for k, v in table.items() if k.endswith(("_acre", "_lb", "_mile"))
             and isinstance(v, float)]
    assert given and all(round(v, 2) == v for v in given), given  # common practice: examples are round numbers
    comments = "\n".join(line for line in text.splitlines() if line.startswith("# ") and "Preset:" not in line)
    assert not re.search(r"\bper ha\b", comments) and "t DM/ha" not in comments
    assert "per harvest" in comments and "acrervest" not in comments  # whole words: "harvest" is no "ha"
    assert run_cli(["check", tmp_path / "us.toml"]).code == 0


def test_presets_in_us_units():
    res = run_cli(["presets", "-v", "--units", "us_customary"])
    assert res.code == 0
    block = res.out[res.out.index("rhizome_grass:"):]
    line = next(l for l in block.splitlines() if "yield.mature_short_ton_dm_per_acre" in l and "=" in l)
    shown = float(line.split("=")[1].split("#")[0])
    metric = tea.load_case(CLAY).preset.values["yield.mature_t_dm_per_ha"]  # the rhizome grass preset
    assert shown == pytest.approx(metric * HA_PER_ACRE / T_PER_SHORT_TON, rel=5e-3)  # shown to 3 figures
    assert "mature_t_dm_per_ha" not in res.out


@pytest.mark.parametrize(("stem", "region", "said"), [
    ("clay_corner_miscanthus", "europe", True), ("clay_corner_miscanthus", "asia_temperate", False),
    ("clay_corner_miscanthus", None, None),
    # willow (Salix viminalis) is native to Europe and northern Asia (Spencer 1997, Horticultural Flora of
    # South-eastern Australia vol. 2, as the coppice preset cites): non-native in North America and Africa
    ("flood_meadow_willow", "europe", False), ("flood_meadow_willow", "northern_america", True),
    ("flood_meadow_willow", "africa", True),
    # a region the preset's sources do not settle: said so, never taken as native
    ("flood_meadow_willow", "pacific", None), ("sandy_slope_switchgrass", "southern_america", None),
])
def test_non_native_caution_follows_the_preset_for_the_region(demo_mappings, stem, region, said):
    data = copy_case(demo_mappings[stem])
    data["field"].pop("region", None)
    if region:
        data["field"]["region"] = region
    case = tea.load_text(to_toml(data), source="r.toml")
    assert case.preset.non_native_in(region) is said
    text = _summary(case)
    assert ("is not native to" in text) is (said is True)
    assert ("do not say whether the crop" in text) is (said is None and region is not None)
    frame = tea.build_ledger(case)
    assert terminal.json_payload(case, frame, tea.summarise(case, frame))["non_native_crop"] is said


def test_crop_names_are_aliases_of_presets(demo_mappings):
    data = copy_case(demo_mappings["flood_meadow_willow"])
    data["crop"]["preset"] = "Poplar"
    case = tea.load_text(to_toml(data), source="p.toml")
    assert case["crop.preset"] == "poplar_coppice" and case["crop.name"] == "Poplar"
    data["crop"]["preset"] = "Willow"
    case = tea.load_text(to_toml(data), source="w.toml")
    assert case["crop.preset"] == "coppice" and case["crop.name"] == "Willow"


def test_new_from_a_case_keeps_the_field_and_deal_and_changes_the_crop(tmp_path):
    res = run_cli(["new", tmp_path / "willow", "--from", SANDY, "--crop", "willow"])
    assert res.code == 0, res.text
    base = tea.load_case(SANDY)
    new = tea.load_case(tmp_path / "willow.toml")
    assert new["crop.preset"] == "coppice" and new["crop.name"] == "willow"
    assert new.unit_system == base.unit_system and new.currency == base.currency
    for path in ("field.area_ha", "field.climate", "field.soil", "field.current_margin_per_ha", "finance.discount_rate",
                 "finance.inflation", "costs.overheads_per_ha", "revenue.price_per_t_dm", "yield.site_factor"):
        assert new[path] == (base[path] if isinstance(base[path], str) else pytest.approx(base[path], rel=1e-9))
    # the crop's own yield: the field's site climate comes along, so the new crop's yield is estimated from it
    from tea.inputs import site

    assert new.origin["yield.mature_t_dm_per_ha"] == "estimated"
    assert new["yield.mature_t_dm_per_ha"] == pytest.approx(site.season_for(new.values).peak_t_per_ha)
    assert new.stand_life == new.preset.values["finance.stand_life_years"]
    # the starter says so beside the preset's yield it shows, in the case's units (NIST Handbook 44: 1 short ton
    # = 0.90718474 t, 1 acre = 0.40468564224 ha)
    text = (tmp_path / "willow.toml").read_text(encoding="utf-8")
    shown = new["yield.mature_t_dm_per_ha"] * 0.40468564224 / 0.90718474
    assert f"gives an estimate of {shown:.3g} short ton DM/acre" in text
    # and a yield estimated above the crop's record is warned in the case's units, as an estimate
    record = new["yield.record_t_dm_per_ha"] * 0.40468564224 / 0.90718474
    assert new["yield.mature_t_dm_per_ha"] > new["yield.record_t_dm_per_ha"]  # so on this demo field
    assert any(f"{shown:.3g} short ton DM/acre, estimated from the site climate, is above the highest recorded "
               f"for this crop ({record:.3g} short ton DM/acre)" in w for w in new.warnings), new.warnings


def test_several_cases_side_by_side_in_the_terminal(tmp_path):
    assert run_cli(["new", tmp_path / "willow", "--from", SANDY, "--crop", "willow"]).code == 0
    res = run_cli(["run", CLAY, SANDY, tmp_path / "willow.toml", "--brief"])
    assert res.code == 0, res.text
    table = res.out[:res.out.index("Tessel Hollow - clay corner, miscanthus   [DEMO DATA]")]
    lines = table.splitlines()
    assert max(len(line) for line in lines) <= side_by_side.WIDTH
    # the columns line up: every row's last value ends in the same column (long labels included)
    # (block by block: the cases that do not fit beside the others come below them)
    for block in table.split("\n\n"):
        rows = [line for line in block.splitlines() if line.startswith("  ") and line.strip()]
        assert len({len(line) for line in rows}) <= 1, sorted({(len(line), line) for line in rows})[-2:]
    for label in ("Crop", "Stand life", "Establishment loan", "Lowest DSCR", "NPV"):
        assert any(line.strip().startswith(label) for line in lines), label
    crop = " ".join(line for line in lines if line.strip().startswith("Crop"))
    assert "rhizome grass" in crop and "willow" in crop
    assert any("no loan" in line for line in lines if line.strip().startswith("Lowest DSCR"))


def test_terminal_lines_stay_within_100_characters():
    res = run_cli(["run", CLAY])
    assert res.code == 0
    assert max(len(line) for line in res.out.splitlines()) <= 100  # common practice: a 100-column terminal


def test_a_long_figure_continues_under_the_figures_not_the_labels():
    """The US demo's IRR against current use is undefined with its reason, longer than the line: its second
    line starts in the figures' column (common practice: a two-column table keeps its columns)."""
    lines = run_cli(["run", SANDY, "--brief"]).out.splitlines()
    at = next(i for i, line in enumerate(lines) if line.lstrip().startswith("IRR vs current use"))
    column = lines[at].index("\u2013 (IRR undefined")
    assert len(lines[at]) <= 100 and lines[at + 1][:column].strip() == "" and lines[at + 1][column] != " "


@pytest.mark.parametrize(("section", "key", "value", "written"), [
    ("yield", "site_factor", 85, "0.85 for 85"),
    ("yield", "ramp_up_fractions", [0, 40, 80], "[0, 0.4, 0.8] for [0, 40, 80]"),
    ("revenue", "price_change_per_year", 2, "0.02 for 2"),
])
def test_a_percentage_typed_as_a_whole_number_gets_a_hint(demo_mappings, section, key, value, written):
    """common practice: 85 typed for 85 % is the usual slip; the hint shows the fraction to write."""
    data = copy_case(demo_mappings["clay_corner_miscanthus"])
    data[section][key] = value
    with pytest.raises(tea.CaseError) as err:
        tea.load_text(to_toml(data), source="p.toml")
    (problem,) = err.value.problems
    assert problem.key == f"{section}.{key}" and "looks like a percentage" in problem.message
    assert written in problem.message


def test_a_missing_price_in_a_us_case_names_the_us_key(demo_mappings):
    data = copy_case(demo_mappings["sandy_slope_switchgrass"])
    data["revenue"].pop("price_per_short_ton_dm")
    with pytest.raises(tea.CaseError) as err:
        tea.load_text(to_toml(data), source="us.toml")
    assert [p.key for p in err.value.problems] == ["revenue.price_per_short_ton_dm"]
    assert "per short ton of dry matter" in err.value.problems[0].message


def test_price_per_gj_unit_is_currency_per_gj():
    from tea.inputs import schema

    assert schema.BY_PATH["revenue.price_per_gj"].unit_text("metric", "EUR") == "EUR/GJ"


def test_a_us_case_prints_on_letter_paper_unless_it_says_otherwise(tmp_path):
    """ANSI/ASME Y14.1 Letter (8.5 x 11 in) is the US paper: the default of a US customary case; A4 where the
    case asks for it, and for a metric case."""
    assert run_cli(["new", tmp_path / "us", "--crop", "switchgrass", "--units", "us_customary",
                    "--currency", "USD"]).code == 0
    text = (tmp_path / "us.toml").read_text(encoding="utf-8")
    assert tea.load_case(tmp_path / "us.toml")["case.page_size"] == "Letter"
    (tmp_path / "us_a4.toml").write_text(text.replace("[case]", '[case]\npage_size = "A4"', 1), encoding="utf-8")
    assert tea.load_case(tmp_path / "us_a4.toml")["case.page_size"] == "A4"
    assert tea.load_case(CLAY)["case.page_size"] == "A4"


def test_a_us_workbook_gives_each_schedule_per_acre_and_in_short_tons(tmp_path):
    """Every schedule sheet of a US case carries, below the model's metric lines, the same lines per acre and
    in short tons: each cell the metric cell times the NIST Handbook 44 factor, for every year. The cached
    value is checked here against the engine's ledger; tests/test_workbook.py has LibreOffice recompute
    every formula of the demo workbooks, these cells included."""
    import openpyxl

    case = tea.load_case(SANDY)
    frame = tea.build_ledger(case)
    out = tmp_path / "us.xlsx"
    tea.write_workbook(case, frame, tea.summarise(case, frame), out)
    wb = openpyxl.load_workbook(out)
    found = {}
    for ws in wb.worksheets:
        rows = list(ws.iter_rows(values_only=True))
        starts = [i for i, row in enumerate(rows) if row[0] == "Per acre, in short tons and pounds (US customary)"]
        for row in rows[starts[0] + 1:] if starts else []:
            if row[0] and row[1]:
                found[(ws.title, row[0])] = row
    cash = found[("Cash flow", "Incremental cash flow")]
    assert cash[1] == "USD/acre" and cash[3].endswith(f"*{HA_PER_ACRE!r}")
    assert any(unit == "short ton DM/acre" for _, unit, *_ in found.values())
    # diesel in US gallons per acre (NIST HB44: 1 US gallon = 3.785411784 L), never litres per acre
    diesel = [row for row in found.values() if "l/acre" in row[1] or "gal/acre" in row[1]]
    assert diesel and all(row[1].startswith("gal/acre") for row in diesel), diesel
    assert all(float(row[3].rsplit("*", 1)[1]) == pytest.approx(HA_PER_ACRE / 3.785411784, rel=1e-14)
               for row in diesel)
    debt = [row[0] for row in wb["Debt and tax"].iter_rows(values_only=True) if str(row[0]).startswith("Whole field")]
    assert debt == [f"Whole field ({case['field.area_ha'] / HA_PER_ACRE:.10g} acre)"]
    values = openpyxl.load_workbook(out, data_only=True)["Cash flow"]
    row = next(r for r in values.iter_rows(values_only=True) if r[0] == "Incremental cash flow"
               and r[1] == "USD/acre")
    per_acre = [v for v in row[3:] if isinstance(v, float)]
    assert per_acre == pytest.approx([v * HA_PER_ACRE for v in frame["incremental_cash_flow"]], rel=1e-12)
    metric = tmp_path / "metric.xlsx"
    clay = tea.load_case(CLAY)
    tea.write_workbook(clay, tea.build_ledger(clay), tea.summarise(clay), metric)
    assert not any(row[0] == "Per acre, in short tons and pounds (US customary)"
                   for ws in openpyxl.load_workbook(metric).worksheets for row in ws.iter_rows(values_only=True))


def test_us_terminal_labels_name_no_metric_unit():
    """A US customary case's figures are shown in short tons and acres: no label beside them names a metric
    unit (t DM, ha), which the value is not in (NIST Handbook 44 Appendix C for the units themselves)."""
    res = run_cli(["run", SANDY, "--brief"])
    assert res.code == 0, res.text
    labels = [line[:37] for line in res.out.splitlines() if line.startswith("  ") and "short ton" in line]
    assert labels, res.out
    assert not [t for t in labels if re.search(r"\b(t DM|t C|t CO2e|ha)\b", t)], labels
    assert any(t.strip() == "Net GHG per short ton DM" for t in labels), labels


def test_a_carbon_credit_price_in_a_us_case_says_its_ton_is_metric():
    """Carbon credits are counted in metric tonnes of CO2e wherever they are sold (common practice: one
    credit, one tonne), while a US case shows carbon stocks in short tons: the price's unit says which ton."""
    from tea.inputs import schema

    key = schema.BY_PATH["carbon.credit_price_per_t_co2e"]
    assert key.unit_text("us_customary", "USD") == "USD/metric ton CO2e"
    assert key.unit_text("metric", "EUR") == "EUR/t CO2e"
    res = run_cli(["sensitivity", SANDY])
    assert res.code == 0 and "USD/metric ton CO2e" in res.out and "USD/t CO2e" not in res.out, res.out


def test_seed_is_counted_in_pounds_in_a_us_case(demo_mappings, tmp_path):
    """US seed is sold by the pound: a US customary case counts the seed-sown grass preset's 8.0 kg/ha of seed
    as pounds, 7.1 lb/acre as the preset's source gives it (Oklahoma State University, switchgrass stand
    establishment: "8.0 kg/ha (7.1 lb/acre)"; 1 lb = 0.45359237 kg, 1 acre = 0.40468564224 ha, NIST
    Handbook 44 Appendix C). The preset's rate follows the unit the case counts in, named or not, so that the
    seed costs rate x price in one unit; a US case that prices seed without naming the unit is warned."""
    data = copy_case(demo_mappings["sandy_slope_switchgrass"])
    for key in ("planting_unit", "planting_units_per_acre"):
        data["establishment"].pop(key)

    def loaded(**establishment):
        edited = copy_case(data)
        edited["establishment"].update(establishment)
        return tea.load_text(to_toml(edited), source="us.toml")

    unnamed, pounds, kilos = loaded(), loaded(planting_unit="lb seed"), loaded(planting_unit="kg seed")
    assert unnamed["establishment.planting_unit"] == "lb seed"
    assert round(unnamed["establishment.planting_units_per_ha"] * HA_PER_ACRE, 1) == 7.1
    assert pounds["establishment.planting_units_per_ha"] == unnamed["establishment.planting_units_per_ha"]
    assert kilos["establishment.planting_units_per_ha"] == unnamed.preset.values["establishment.planting_units_per_ha"]
    assert [w.path for w in unnamed.warnings if "planting" in w] == ["establishment.planting_unit_price"]
    assert not [w for w in pounds.warnings if "planting" in w]
    # a starter says the unit; another case of the same crop keeps the unit its carried price is in
    assert run_cli(["new", tmp_path / "seed", "--crop", "switchgrass", "--units", "us_customary",
                    "--currency", "USD"]).code == 0
    text = (tmp_path / "seed.toml").read_text(encoding="utf-8")
    assert '\nplanting_unit = "lb seed"' in text and "# planting_units_per_acre = 7.14" in text
    assert run_cli(["new", tmp_path / "metric", "--crop", "switchgrass", "--currency", "USD"]).code == 0
    assert run_cli(["new", tmp_path / "to_us", "--from", tmp_path / "metric.toml", "--crop", "switchgrass",
                    "--units", "us_customary"]).code == 0
    cost = {}
    for name in ("metric", "to_us"):
        case = tea.load_case(tmp_path / f"{name}.toml")
        cost[name] = case["establishment.planting_units_per_ha"] * case["establishment.planting_unit_price"]
    assert cost["to_us"] == pytest.approx(cost["metric"], rel=1e-12)


def test_a_us_pages_credit_price_is_per_short_ton_beside_its_tonnages_in_short_tons():
    """A credit is a metric tonne of CO2e wherever it is sold; a US case's page gives the credited tonnage in
    short tons, so it gives the price per short ton too (price per t x 0.90718474 t per short ton, NIST HB44),
    and the price per metric ton as given: the two multiply to the credits' worth as the page reads."""
    from tea.outputs import report

    case = tea.load_case(SANDY).replace(**{"carbon.credit_price_per_t_co2e": 30.0})
    frame = tea.build_ledger(case)
    page = " ".join(re.sub(r"<[^>]+>", " ", report.summary_html(case, frame, tea.summarise(case, frame))).split())
    per_short_ton = 30.0 * T_PER_SHORT_TON
    assert f"short ton CO2e/acre credited over the stand life at {per_short_ton:.2f} USD/short ton CO2e " \
           f"(30.00 USD/metric ton)" in page
    assert "USD/t CO2e" not in page


def test_the_crop_is_described_with_the_cases_own_harvest_interval(demo_mappings):
    # common practice: a grass cut every second year is described so; the preset's usual interval (every
    # year) must not be printed over the case's own, which drives the cash and the loan cover
    from tea.outputs import report

    data = copy_case(demo_mappings["sandy_slope_switchgrass"])
    data.setdefault("harvest", {})["interval_years"] = 2
    case = tea.load_text(to_toml(data), source="two.toml")
    text = _summary(case)
    assert "switchgrass type), harvested every 2 years" in text
    assert "harvested every year" not in text
    frame = tea.build_ledger(case)
    html = report.summary_html(case, frame, tea.summarise(case, frame), sensitivity=False)
    assert "harvested every 2 years" in html and "harvested every year" not in html
    res = run_cli(["presets"])
    assert "switchgrass type), harvested every year" in res.out  # the preset's own interval
    assert "willow type), cut back after year 1, harvested every 3 years" in res.out


@pytest.mark.parametrize("system, paper", [("us_customary", "Letter"), ("metric", "A4")])
def test_a_starters_commented_defaults_are_the_ones_the_case_takes(tmp_path, system, paper):
    # ANSI/ASME Y14.1 Letter paper is the US default: a starter's commented page_size must say what the
    # case takes when the line stays commented, as every other commented default does
    target = tmp_path / "s"
    assert run_cli(["new", str(target), "--crop", "switchgrass", "--units", system]).code == 0
    text = target.with_suffix(".toml").read_text(encoding="utf-8")
    assert f'# page_size = "{paper}"' in text
    assert tea.load_case(target.with_suffix(".toml"))["case.page_size"] == paper


def test_a_us_starter_gives_the_metric_value_its_source_speaks_of(tmp_path):
    # a preset's source speaks of its metric value ("35 lies below both"); beside a value in US units the
    # starter says that metric value first, and converting it by NIST HB44 gives the US value shown
    target = tmp_path / "u"
    assert run_cli(["new", str(target), "--crop", "switchgrass", "--units", "us_customary"]).code == 0
    lines = target.with_suffix(".toml").read_text(encoding="utf-8").splitlines()
    key = next(i for i, line in enumerate(lines) if line.startswith("# record_short_ton_dm_per_acre = "))
    assert "Preset: metric value 35 t DM/ha/yr; " in lines[key - 1]
    shown = float(lines[key].split(" = ")[1])
    assert shown == pytest.approx(35 * HA_PER_ACRE / 0.90718474, abs=0.05)  # 1 short ton = 0.90718474 t
    metric = tea.load_preset("seeded_grass")
    assert metric.source_in("yield.record_t_dm_per_ha", "metric") == metric.sources["yield.record_t_dm_per_ha"]


def test_us_json_gives_the_figures_as_the_case_shows_them_too():
    # NIST HB44 Appendix C: 1 acre = 0.40468564224 ha, 1 short ton = 0.90718474 t. The canonical figures stay
    # (per ha, metric t); a US case's JSON adds them per acre and in short tons, with their units
    import json

    res = run_cli(["run", str(SANDY), "--json"])
    assert res.code == 0, res.err
    doc = json.loads(res.out)
    shown, canonical = doc["figures_in_case_units"], doc["figures_per_ha"]
    assert shown["npv"] == {"value": pytest.approx(canonical["npv"] * HA_PER_ACRE, rel=1e-12), "unit": "USD/acre"}
    assert shown["breakeven_price"]["unit"] == "USD/short ton DM"
    assert shown["breakeven_price"]["value"] == pytest.approx(canonical["breakeven_price"] * 0.90718474, rel=1e-12)
    assert shown["soc_gain_t_co2e"]["unit"] == "short ton CO2e/acre"
    assert shown["irr"] == {"value": canonical["irr"], "unit": "fraction"}
    metric = json.loads(run_cli(["run", str(CLAY), "--json"]).out)
    assert "figures_in_case_units" not in metric
