"""Case loading: crop presets, case values over preset values, fresh yields, the case hash.

Demo cases serve as inputs only; expected values come from the named sources
or from the inputs themselves (a value given must come back as given).
"""

from __future__ import annotations

import re
import tomllib
from importlib import resources

import pytest

import tea
from tea.inputs import schema
from tea.inputs.case import load_case, load_mapping, load_preset, load_text, preset_names
from tea.core.errors import CaseError

from conftest import CASES_DIR, copy_case, to_toml

HA_PER_ACRE = 0.40468564224  # NIST Handbook 44 Appendix C: 1 acre = 0.40468564224 ha
T_PER_SHORT_TON = 0.90718474  # NIST Handbook 44 Appendix C: 1 short ton = 0.90718474 t

PRESET_FILES = sorted(p.name[:-5] for p in resources.files("tea.inputs.presets").iterdir() if p.name.endswith(".toml"))


def _raw_preset(name: str) -> dict:
    return tomllib.loads(resources.files("tea.inputs.presets").joinpath(f"{name}.toml").read_text(encoding="utf-8"))


def _spellings(section: str) -> set[str]:
    return {spelling for k in schema.keys_in(section) for spelling in k.spellings()}


# --------------------------------------------------------------------------------------
# presets
# --------------------------------------------------------------------------------------
class TestPresets:
    def test_names_are_the_packaged_files(self):
        assert preset_names() == PRESET_FILES
        assert {"rhizome_grass", "seeded_grass", "coppice"} <= set(PRESET_FILES)

    @pytest.mark.parametrize("name", PRESET_FILES)
    def test_every_key_is_a_schema_key_with_a_source(self, name):
        raw = _raw_preset(name)
        head = raw.pop("preset")
        assert head["title"].strip() and head["kind"].strip()
        assert raw, "a preset sets values"
        for section, table in raw.items():
            assert section in schema.SECTIONS, section
            for key, entry in table.items():
                assert key in _spellings(section), f"{section}.{key} is not a schema key"
                assert set(entry) == {"value", "source"}, f"{section}.{key}"
                assert isinstance(entry["source"], str) and entry["source"].strip(), f"{section}.{key} has no source"

    @pytest.mark.parametrize("name", PRESET_FILES)
    def test_loaded_preset(self, name):
        preset = load_preset(name)
        assert preset.name == name
        assert set(preset.values) == set(preset.sources)
        for path, source in preset.sources.items():
            assert path in schema.BY_PATH, path
            assert source.strip()

    @pytest.mark.parametrize("name", PRESET_FILES)
    def test_sets_every_preset_key_and_no_money(self, name):
        # the schema promises the preset supplies every PRESET key; money is local and never preset
        preset = load_preset(name)
        needed = {k.path for k in schema.KEYS if k.default is schema.PRESET}
        assert needed <= set(preset.values)
        assert not [p for p in preset.values if schema.BY_PATH[p].money]

    @pytest.mark.parametrize("name", PRESET_FILES)
    def test_values_inside_the_schema_ranges(self, name):
        for path, value in load_preset(name).values.items():
            k = schema.BY_PATH[path]
            for v in value if isinstance(value, list) else [value]:
                if k.kind in ("float", "int", "list"):
                    assert k.lo is None or v >= k.lo, path
                    assert k.hi is None or v <= k.hi, path
                elif k.kind == "enum":
                    assert v in k.choices, path

    @pytest.mark.parametrize("name", PRESET_FILES)
    def test_mature_yield_not_above_the_record(self, name):
        # common practice: a typical mature yield lies below the highest one recorded
        values = load_preset(name).values
        assert values["yield.mature_t_dm_per_ha"] < values["yield.record_t_dm_per_ha"]

    def test_unknown_preset_names_the_valid_ones(self):
        with pytest.raises(KeyError, match="valid presets: " + ", ".join(PRESET_FILES)):
            load_preset("no_such_crop")


class TestPresetValuesAgainstSources:
    """Preset values that have a published source, checked against that source."""

    def test_rhizome_grass(self):
        v = load_preset("rhizome_grass").values
        # Zub & Brancourt-Hulmel 2010, Agron. Sustain. Dev. 30:201: European maximum 49 t DM/ha at autumn peak
        assert v["yield.record_t_dm_per_ha"] == 49.0
        # Defra RB209 (archive), miscanthus offtake at a January harvest: N 6, P2O5 1, K2O 8.5 kg/t DM
        assert v["nutrients.n_late_winter_kg_per_t_dm"] == 6.0
        assert v["nutrients.p2o5_late_winter_kg_per_t_dm"] == 1.0
        assert v["nutrients.k2o_late_winter_kg_per_t_dm"] == 8.5
        # Himken et al. 1997, Plant and Soil: 30 % dry-matter loss September to March
        assert v["harvest.overwinter_dm_loss"] == 0.30
        # Defra PB5421: below 20 % moisture at a late harvest; NCV of dry miscanthus 17 GJ/t
        assert v["harvest.moisture_late_winter"] <= 0.20
        assert v["revenue.heating_value_gj_per_t_dm"] == 17.0
        # Defra RB209: established yield 12-14 t DM/ha harvested (late winter); the preset's mature
        # (autumn-peak) yield x (1 - overwinter loss) falls in that range
        harvested = v["yield.mature_t_dm_per_ha"] * (1 - v["harvest.overwinter_dm_loss"])
        assert 12.0 <= harvested <= 14.0
        # IPCC 2006 Vol.4 Ch.6 (cropland converted to grassland takes the Table 5.5 set-aside factor)
        assert v["carbon.crop_land_use"] == "perennial_grass"

    def test_coppice(self):
        v = load_preset("coppice").values
        # Forest Research (UK), SRC page: 15,000 cuttings/ha
        assert v["establishment.planting_units_per_ha"] == 15000
        # Forest Research (UK): 7-12 oven-dry t/ha/yr; harvest cycles of 2-5 years
        assert 7.0 <= v["yield.mature_t_dm_per_ha"] <= 12.0
        assert 2 <= v["harvest.interval_years"] <= 5

    def test_seeded_grass(self):
        v = load_preset("seeded_grass").values
        # Wullschleger et al. 2010, Agron. J. 102:1158: lowland 12.9, upland 8.7 t DM/ha
        assert 8.7 <= v["yield.mature_t_dm_per_ha"] <= 12.9

    @pytest.mark.parametrize("name", ["rhizome_grass", "seeded_grass"])
    def test_late_harvest_removes_less_n_per_tonne(self, name):
        # common practice (nutrients move back to the rhizomes as the grass senesces)
        v = load_preset(name).values
        for nut in ("n", "p2o5"):
            assert v[f"nutrients.{nut}_late_winter_kg_per_t_dm"] < v[f"nutrients.{nut}_autumn_kg_per_t_dm"]


# --------------------------------------------------------------------------------------
# case values over preset values, defaults, derived values
# --------------------------------------------------------------------------------------
@pytest.fixture
def clay(demo_mappings):
    return copy_case(demo_mappings["clay_corner_miscanthus"])


class TestMerge:
    def test_preset_fills_what_the_case_leaves_out(self, clay):
        clay.pop("site_climate")  # without a site climate the preset gives the yield (with one, see test_lue.py)
        case = load_mapping(clay, "clay.toml")
        preset = load_preset("rhizome_grass")
        assert "mature_t_dm_per_ha" not in clay["yield"]
        for path, value in preset.values.items():
            section, key = path.split(".")
            if key not in clay.get(section, {}):
                assert case[path] == value, path
                assert case.origin[path] == "preset"
                assert preset.sources[path] in case.notes[path]

    def test_case_value_overrides_preset(self, clay):
        preset = load_preset("rhizome_grass").values
        clay["yield"]["mature_t_dm_per_ha"] = 15.0
        clay["harvest"]["field_loss"] = 0.12
        clay["finance"]["stand_life_years"] = 17
        case = load_mapping(clay, "clay.toml")
        for path, given in (("yield.mature_t_dm_per_ha", 15.0), ("harvest.field_loss", 0.12),
                            ("finance.stand_life_years", 17)):
            assert preset[path] != given
            assert case[path] == given
            assert case.origin[path] == "case"
        assert case.stand_life == 17

    def test_us_case_overrides_in_its_own_units(self):
        # the US demo case (input) gives its mature yield in short tons per acre: it replaces
        # the preset's value, converted with NIST HB44 App. C factors
        text = (CASES_DIR / "sandy_slope_switchgrass.toml").read_text(encoding="utf-8")
        given = tomllib.loads(text)["yield"]["mature_short_ton_dm_per_acre"]
        case = load_text(text, "sandy.toml")
        assert case["yield.mature_t_dm_per_ha"] == pytest.approx(given * T_PER_SHORT_TON / HA_PER_ACRE, rel=1e-12)
        assert case.origin["yield.mature_t_dm_per_ha"] == "case"
        assert case.given_spelling["yield.mature_t_dm_per_ha"] == "mature_short_ton_dm_per_acre"

    def test_schema_defaults(self, clay):
        case = load_mapping(clay, "clay.toml")
        for k in schema.KEYS:
            if k.default not in (schema.REQUIRED, schema.PRESET, schema.DERIVED, None) \
                    and k.name not in clay.get(k.section, {}):
                assert case[k.path] == k.default, k.path
                assert case.origin[k.path] == "default"

    def test_reference_soc_derived_from_ipcc_table(self, demo_mappings):
        # IPCC 2006 Vol.4 Ch.2 Table 2.3 (via ILCD Handbook 2010 Annex B Table 10): cool temperate moist,
        # high-activity clay 95 t C/ha; warm temperate moist, sandy 34 t C/ha
        clay = load_mapping(copy_case(demo_mappings["clay_corner_miscanthus"]), "clay.toml")
        sandy = load_mapping(copy_case(demo_mappings["sandy_slope_switchgrass"]), "sandy.toml")
        assert clay["carbon.soc_ref_t_c_per_ha"] == 95
        assert sandy["carbon.soc_ref_t_c_per_ha"] == 34
        assert clay.origin["carbon.soc_ref_t_c_per_ha"] == "derived"
        # IPCC 2006 Table 5.5 (via ILCD Table 11): long-term cultivated, temperate moist F_LU = 0.69
        assert clay["carbon.current_f_lu"] == pytest.approx(0.69)

    def test_given_value_replaces_derived(self, clay):
        clay["carbon"]["soc_ref_t_c_per_ha"] = 80.0
        case = load_mapping(clay, "clay.toml")
        assert case["carbon.soc_ref_t_c_per_ha"] == 80.0
        assert case.origin["carbon.soc_ref_t_c_per_ha"] == "case"


# --------------------------------------------------------------------------------------
# fresh yields
# --------------------------------------------------------------------------------------
class TestFreshYield:
    # wet-basis moisture m: dry matter = fresh x (1 - m) (definition of wet-basis moisture, common practice)
    @pytest.mark.parametrize("fresh, moisture", [(30.0, 0.5), (25.0, 0.2), (12.0, 0.0)])
    def test_metric(self, clay, fresh, moisture):
        clay["yield"].update(mature_fresh_t_per_ha=fresh, fresh_moisture=moisture)
        case = load_mapping(clay, "clay.toml")
        assert case["yield.mature_t_dm_per_ha"] == pytest.approx(fresh * (1 - moisture), rel=1e-15)
        assert case.origin["yield.mature_t_dm_per_ha"] == "case"

    def test_us_customary(self, clay):
        # NIST HB44 App. C: short ton/acre -> t/ha, then the wet-basis definition
        clay["yield"].update(mature_fresh_short_ton_per_acre=10.0, fresh_moisture=0.4)
        case = load_mapping(clay, "clay.toml")
        expected = 10.0 * T_PER_SHORT_TON / HA_PER_ACRE * (1 - 0.4)
        assert case["yield.mature_t_dm_per_ha"] == pytest.approx(expected, rel=1e-12)

    def test_fresh_and_dry_give_the_same_ledger(self, clay):
        dry = copy_case(clay)
        dry["yield"]["mature_t_dm_per_ha"] = 16.0
        clay["yield"].update(mature_fresh_t_per_ha=20.0, fresh_moisture=0.2)  # 20 x 0.8 = 16
        a, b = tea.build_ledger(load_mapping(dry)), tea.build_ledger(load_mapping(clay))
        assert a["sold_t_dm"].to_numpy() == pytest.approx(b["sold_t_dm"].to_numpy(), rel=1e-12)

    def test_fresh_needs_its_moisture(self, clay):
        clay["yield"]["mature_fresh_t_per_ha"] = 30.0
        with pytest.raises(CaseError) as info:
            load_mapping(clay, "clay.toml")
        assert [p.key for p in info.value.problems] == ["yield.fresh_moisture"]
        assert "moisture" in info.value.problems[0].message

    def test_fresh_and_dry_together_is_twice(self, clay):
        clay["yield"].update(mature_t_dm_per_ha=15.0, mature_fresh_t_per_ha=30.0, fresh_moisture=0.5)
        with pytest.raises(CaseError, match="given twice"):
            load_mapping(clay, "clay.toml")

    @pytest.mark.parametrize("moisture", [1.0, 1.2, -0.1])
    def test_moisture_outside_0_to_1(self, clay, moisture):
        # a wet-basis moisture is a fraction below 1 (100 % water has no dry matter)
        clay["yield"].update(mature_fresh_t_per_ha=30.0, fresh_moisture=moisture)
        with pytest.raises(CaseError) as info:
            load_mapping(clay, "clay.toml")
        assert [p.key for p in info.value.problems] == ["yield.fresh_moisture"]


# --------------------------------------------------------------------------------------
# the resolved-case hash
# --------------------------------------------------------------------------------------
class TestHash:
    def test_stable_across_loads(self, demo_path):
        a, b = load_case(demo_path), load_case(demo_path)
        assert a.hash == b.hash
        assert re.fullmatch(r"[0-9a-f]{16}", a.hash)

    def test_ignores_comments_order_and_spelling_of_the_file(self, demo_path):
        text = demo_path.read_text(encoding="utf-8")
        data = tomllib.loads(text)
        reordered = {s: dict(reversed(list(t.items()))) if isinstance(t, dict) else list(reversed(t))
                     for s, t in reversed(list(data.items()))}  # [[operations]] reversed too
        a = load_case(demo_path)
        b = load_text(to_toml(reordered), str(demo_path))  # no comments, sections and keys reversed
        c = load_mapping(a.given(), str(demo_path))  # canonical (metric) spellings
        assert a.hash == b.hash == c.hash

    def test_changes_when_a_value_changes(self, demo_path):
        case = load_case(demo_path)
        price_key = "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"
        changed = case.replace(**{price_key: case[price_key] * 1.01})
        assert changed.hash != case.hash
        assert case.replace(**{price_key: case[price_key]}).hash == case.hash
        assert case.replace(**{"finance.discount_rate": case["finance.discount_rate"] + 0.001}).hash != case.hash
        # a preset value overridden by the case changes the hash too
        assert case.replace(**{"harvest.field_loss": case["harvest.field_loss"] + 0.01}).hash != case.hash

    def test_ledger_carries_the_hash(self, demo_path):
        case = load_case(demo_path)
        assert tea.build_ledger(case).attrs["case_hash"] == case.hash
        assert tea.summarise(case).case_hash == case.hash


# --------------------------------------------------------------------------------------
# replace, warnings, all problems at once
# --------------------------------------------------------------------------------------
class TestReplaceAndProblems:
    def test_replace_validates(self, demo_path):
        case = load_case(demo_path)
        with pytest.raises(CaseError) as info:
            case.replace(**{"harvest.field_loss": 1.5})
        assert [p.key for p in info.value.problems] == ["harvest.field_loss"]

    def test_replace_keeps_other_values(self, demo_path):
        case = load_case(demo_path)
        changed = case.replace(**{"costs.removal_per_ha": 123.0})
        assert changed["costs.removal_per_ha"] == 123.0
        for path, value in case.values.items():
            if path == "costs.removal_per_ha":
                continue
            expected = pytest.approx(value, rel=1e-12) if isinstance(value, float) else value
            assert changed.values[path] == expected, path

    def test_unusual_value_warns_and_loads(self, clay):
        clay["finance"]["discount_rate"] = 0.25  # above the usual 0..0.2
        case = load_mapping(clay, "clay.toml")
        assert any("finance.discount_rate" in w and "unusual" in w for w in case.warnings)
        assert all(w.startswith("clay.toml: ") for w in case.warnings)

    def test_every_problem_at_once(self, clay):
        clay["field"]["area_ha"] = -3.0
        clay["harvest"]["field_loss"] = 2.0
        clay["costs"].pop("removal_per_ha")
        with pytest.raises(CaseError) as info:
            load_mapping(clay, "clay.toml")
        keys = sorted(p.key for p in info.value.problems)
        assert keys == ["costs.removal_per_ha", "field.area_ha", "harvest.field_loss"]
        assert all(p.source == "clay.toml" for p in info.value.problems)
        assert str(info.value).count("\n") == 2

    def test_case_error_is_a_tea_error(self):
        assert issubclass(CaseError, tea.TeaError)
        with pytest.raises(ValueError):
            CaseError([])


def test_a_wrong_value_is_told_in_the_units_and_currency_the_case_uses():
    """A text where a US case's money per acre belongs: the one-line error names USD/acre/yr, as the key is
    spelled (not the metric currency/ha/yr)."""
    from conftest import CASES_DIR

    text = (CASES_DIR / "sandy_slope_switchgrass.toml").read_text(encoding="utf-8")
    assert "current_margin_per_acre = " in text
    bad = "\n".join('current_margin_per_acre = "lots"' if line.startswith("current_margin_per_acre = ") else line
                    for line in text.splitlines())
    with pytest.raises(CaseError) as err:
        load_text(bad, source="us.toml")
    [problem] = [p for p in err.value.problems if "current_margin" in p.key]
    assert problem.key == "field.current_margin_per_acre"
    assert problem.message == "expected a number [USD/acre/yr], got \"lots\""


@pytest.mark.parametrize(("section", "key", "value", "currency", "warned"), [
    ("revenue", "price_per_t_dm", 1e9, "EUR", True),          # a price typed with digits repeated
    ("establishment", "site_preparation_per_ha", 1e12, "EUR", True),
    ("revenue", "price_per_t_dm", 400.0, "EUR", False),       # dear, but a price some contracts pay
    ("revenue", "price_per_t_dm", 15_000.0, "JPY", False),    # a currency of about a hundredth of a euro
    ("revenue", "price_per_t_dm", 1e9, "JPY", True),
    ("revenue", "price_per_t_dm", 1_000_000.0, "VND", False),  # about 40 USD/t in a currency of ~25,000 per USD
])
def test_a_money_input_far_above_what_a_stand_costs_or_earns_is_pointed_out(demo_mappings, section, key, value,
                                                                            currency, warned):
    """Money inputs have no physical bound, but a biomass price of a billion per tonne is a slip (common
    practice: biomass sells for tens to a couple of hundred per t DM in a currency of about a dollar; the
    ceilings are ten times that or more): a warning in the terminal's technical form, naming the key."""
    data = copy_case(demo_mappings["clay_corner_miscanthus"])
    data[section][key] = value
    data["case"]["currency"] = currency
    case = load_text(to_toml(data), source="money.toml")
    said = [w for w in case.warnings if f"{section}.{key}:" in w and "is unusual" in w]
    assert bool(said) == warned, case.warnings
    if warned:
        assert said[0].startswith(f"money.toml: {section}.{key}: {value:g} is unusual (expected ..")


def test_the_demo_cases_have_no_unusual_money_input():
    for path in sorted(CASES_DIR.glob("*.toml")):
        assert not [w for w in load_case(path).warnings if "is unusual" in w], path
