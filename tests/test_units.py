"""Units of measure: the conversion factors and the key spellings of `tea.units`.

Expected factors are written out from their legal definitions (NIST Handbook 44,
2024, Appendix C, "General Tables of Units of Measurement"), not taken from
`tea.units`. A US-customary case must load to the same canonical values and
give the same ledger and figures as the metric case it was converted from.
"""

from __future__ import annotations

import math
import re
import tomllib

import numpy as np
import pytest
from numpy.testing import assert_allclose

import tea
from tea.inputs import schema, units
from tea.inputs.case import load_mapping, load_text

from conftest import CASES_DIR, to_toml

# --- exact definitions, NIST Handbook 44 (2024) Appendix C -----------------------------
M_PER_INTERNATIONAL_FOOT = 0.3048  # NIST HB44 App. C: 1 foot = 0.3048 m (exact)
M_PER_INCH = 0.0254  # NIST HB44 App. C: 1 inch = 2.54 cm (exact)
KG_PER_LB = 0.45359237  # NIST HB44 App. C: 1 avoirdupois pound = 0.453 592 37 kg (exact)
LB_PER_SHORT_TON = 2000  # NIST HB44 App. C: 1 short ton = 2000 lb
FT_PER_MILE = 5280  # NIST HB44 App. C: 1 mile = 5280 ft
SQFT_PER_ACRE = 43560  # NIST HB44 App. C: 1 acre = 43 560 ft²
IN3_PER_US_GALLON = 231  # NIST HB44 App. C: 1 US liquid gallon = 231 in³

HA_PER_ACRE = 0.40468564224  # NIST HB44 App. C: 1 acre = 4046.856 422 4 m² (international foot)
T_PER_SHORT_TON = 0.90718474  # NIST HB44 App. C: 1 short ton = 907.184 74 kg
KM_PER_MILE = 1.609344  # NIST HB44 App. C: 1 mile = 1.609 344 km
L_PER_US_GALLON = 3.785411784  # NIST HB44 App. C: 1 US gallon = 3.785 411 784 L

M2_PER_HA = 10_000  # SI: 1 ha = 1 hm² = 10^4 m² (unit identity)
KG_PER_T = 1000  # SI: 1 t = 10^3 kg (unit identity)


class TestDefinitions:
    """The constants `tea` converts with equal the legal definitions."""

    def test_acre(self):
        # NIST Handbook 44 Appendix C: 1 acre = 0.40468564224 ha
        assert units.HA_PER_ACRE == HA_PER_ACRE
        # ... and it is 43,560 ft² of 0.3048 m each (NIST HB44 App. C)
        assert math.isclose(SQFT_PER_ACRE * M_PER_INTERNATIONAL_FOOT**2 / M2_PER_HA, units.HA_PER_ACRE, rel_tol=1e-15)

    def test_short_ton(self):
        # NIST Handbook 44 Appendix C: 1 short ton = 0.90718474 t
        assert units.T_PER_SHORT_TON == T_PER_SHORT_TON
        # ... 2000 lb of 0.45359237 kg (NIST HB44 App. C)
        assert math.isclose(LB_PER_SHORT_TON * KG_PER_LB / KG_PER_T, units.T_PER_SHORT_TON, rel_tol=1e-15)

    def test_pound(self):
        # NIST Handbook 44 Appendix C: 1 lb = 0.45359237 kg
        assert units.KG_PER_LB == KG_PER_LB

    def test_mile(self):
        # NIST Handbook 44 Appendix C: 1 mile = 1.609344 km = 5280 ft of 0.3048 m
        assert units.KM_PER_MILE == KM_PER_MILE
        assert math.isclose(FT_PER_MILE * M_PER_INTERNATIONAL_FOOT / 1000, units.KM_PER_MILE, rel_tol=1e-15)

    def test_us_gallon(self):
        # NIST Handbook 44 Appendix C: 1 US gallon = 231 in³ = 3.785411784 L
        assert units.L_PER_US_GALLON == L_PER_US_GALLON
        litres = IN3_PER_US_GALLON * (M_PER_INCH * 10) ** 3  # 1 in = 0.254 dm; 1 L = 1 dm³
        assert math.isclose(litres, units.L_PER_US_GALLON, rel_tol=1e-15)

    def test_kg_per_m2_is_10_t_per_ha(self):
        # unit identity (common practice): 1 kg/m² = (1/1000 t) / (1/10,000 ha) = 10 t/ha
        identity = (1 / KG_PER_T) / (1 / M2_PER_HA)
        assert identity == 10.0
        assert units.T_PER_HA_PER_KG_PER_M2 == identity


# --- spellings of keys -------------------------------------------------------------
SPELLING_FACTORS = [
    # (template, spelling, factor to canonical), each factor from the definitions above
    ("area_{ha}", "area_ha", 1.0),
    ("area_{ha}", "area_acre", HA_PER_ACRE),  # acre -> ha
    ("rent_per_{ha}", "rent_per_acre", 1 / HA_PER_ACRE),  # money/acre -> money/ha
    ("mature_{t}_dm_per_{ha}", "mature_short_ton_dm_per_acre", T_PER_SHORT_TON / HA_PER_ACRE),
    ("mature_{t}_dm_per_{ha}", "mature_short_ton_dm_per_ha", T_PER_SHORT_TON),  # a mix is accepted
    ("mature_{t}_dm_per_{ha}", "mature_t_dm_per_acre", 1 / HA_PER_ACRE),
    ("n_{kg}_per_{ha}", "n_lb_per_acre", KG_PER_LB / HA_PER_ACRE),  # lb/acre -> kg/ha
    ("haul_distance_{km}", "haul_distance_mile", KM_PER_MILE),
    ("haul_per_{t}_{km}", "haul_per_short_ton_mile", 1 / (T_PER_SHORT_TON * KM_PER_MILE)),
    ("diesel_{l}_per_{t}_dm", "diesel_gal_per_short_ton_dm", L_PER_US_GALLON / T_PER_SHORT_TON),
    ("diesel_establishment_{l}_per_{ha}", "diesel_establishment_gal_per_acre", L_PER_US_GALLON / HA_PER_ACRE),
    ("n_price_per_{kg}", "n_price_per_lb", 1 / KG_PER_LB),  # money/lb -> money/kg
    ("n_autumn_{kg}_per_{t}_dm", "n_autumn_lb_per_short_ton_dm", KG_PER_LB / T_PER_SHORT_TON),
    ("haul_{kg}_co2e_per_{t}_{km}", "haul_lb_co2e_per_short_ton_mile", KG_PER_LB / (T_PER_SHORT_TON * KM_PER_MILE)),
]


class TestSpellings:
    @pytest.mark.parametrize("template, spelling, factor", SPELLING_FACTORS)
    def test_factor_from_definitions(self, template, spelling, factor):
        # factors from NIST Handbook 44 Appendix C definitions (above)
        assert units.spellings(template)[spelling] == pytest.approx(factor, rel=1e-15)

    @pytest.mark.parametrize("template", sorted({k.template for k in schema.KEYS}))
    def test_every_mix_of_spellings_is_accepted(self, template):
        # two spellings per distinct slot, any mix: 2^slots spellings (the rule stated in tea.units)
        n_slots = len({name for name, _ in units.slots_of(template)})
        spelled = units.spellings(template)
        assert len(spelled) == 2**n_slots
        assert spelled[units.spell(template, "metric")] == 1.0

    @pytest.mark.parametrize("nutrient", ["n", "p2o5", "k2o"])
    def test_ratio_of_like_units_is_a_pure_number(self, nutrient):
        # unit algebra: kg CO2e per kg = lb CO2e per lb, a factor of exactly 1 (regression:
        # the repeated slot was once spelled inconsistently, scaling kg/kg by 0.4536)
        template = f"{nutrient}_manufacture_{{kg}}_co2e_per_{{kg}}"
        assert units.spellings(template) == {
            f"{nutrient}_manufacture_kg_co2e_per_kg": 1.0,
            f"{nutrient}_manufacture_lb_co2e_per_lb": 1.0,
        }

    def test_ratio_key_in_a_case(self, demo_mappings):
        # a case value of a dimensionless ratio is stored as given (unit algebra)
        data = {s: dict(t) for s, t in demo_mappings["clay_corner_miscanthus"].items()}
        data["carbon"]["n_manufacture_kg_co2e_per_kg"] = 5.0
        data["carbon"]["k2o_manufacture_lb_co2e_per_lb"] = 0.5
        case = load_mapping(data, "x.toml")
        assert case["carbon.n_manufacture_kg_co2e_per_kg"] == 5.0
        assert case["carbon.k2o_manufacture_kg_co2e_per_kg"] == 0.5

    def test_us_spelling(self):
        # the US customary words of each slot: acre, short ton, lb, mile, US gallon (NIST HB44 App. C names)
        assert units.spell("mature_{t}_dm_per_{ha}", "us_customary") == "mature_short_ton_dm_per_acre"
        assert units.spell("haul_per_{t}_{km}", "us_customary") == "haul_per_short_ton_mile"
        assert units.spell("diesel_{l}_per_{ha}", "us_customary") == "diesel_gal_per_acre"

    def test_numerator_and_denominator(self):
        # a slot after "_per_" divides (unit algebra)
        assert units.slots_of("n_autumn_{kg}_per_{t}_dm") == [("kg", 1), ("t", -1)]
        assert units.slots_of("haul_per_{t}_{km}") == [("t", -1), ("km", -1)]
        assert units.slots_of("area_{ha}") == [("ha", 1)]

    @pytest.mark.parametrize("template, expected", [
        ("mature_{t}_dm_per_{ha}", HA_PER_ACRE / T_PER_SHORT_TON),  # t/ha shown as short ton/acre
        ("area_{ha}", 1 / HA_PER_ACRE),  # ha shown as acre
        ("haul_distance_{km}", 1 / KM_PER_MILE),  # km shown as mile
    ])
    def test_display_factor(self, template, expected):
        # NIST HB44 App. C definitions; display is the inverse of loading
        assert units.display_factor(template, "us_customary") == pytest.approx(expected, rel=1e-15)
        assert units.display_factor(template, "metric") == 1.0

    def test_scalar_list_and_array(self):
        # the same factor on a scalar, a list and an ndarray (a list scales element-wise)
        from tea.inputs.case import _scale

        f = units.spellings("area_{ha}")["area_acre"]
        assert _scale(10.0, f) == pytest.approx(10 * HA_PER_ACRE, rel=1e-15)
        assert _scale([10.0, 20.0], f) == pytest.approx([10 * HA_PER_ACRE, 20 * HA_PER_ACRE], rel=1e-15)
        assert_allclose(_scale(np.array([10.0, 20.0]), f), [10 * HA_PER_ACRE, 20 * HA_PER_ACRE], rtol=1e-15)


# --- a whole case in US customary units -----------------------------------------------
# The miscanthus demo case (an input only), with a few preset values given explicitly
# so that lb, gal and mixed keys are exercised too. Canonical units: ha, t, kg, km, l.
METRIC_EXTRA = {
    "establishment": {"n_kg_per_ha": 30.0},
    "yield": {"mature_t_dm_per_ha": 17.0},
    "nutrients": {"n_late_winter_kg_per_t_dm": 6.5, "k2o_late_winter_kg_per_t_dm": 9.0},
    "carbon": {"diesel_establishment_l_per_ha": 55.0, "diesel_l_per_t_dm": 1.4, "haul_kg_co2e_per_t_km": 0.11},
}

# metric key -> (US key, multiplier turning the metric value into the US value),
# written out from the NIST definitions (not from tea.units)
TO_US = {
    ("field", "area_ha"): ("area_acre", 1 / HA_PER_ACRE),
    ("field", "current_margin_per_ha"): ("current_margin_per_acre", HA_PER_ACRE),
    ("establishment", "site_preparation_per_ha"): ("site_preparation_per_acre", HA_PER_ACRE),
    ("establishment", "weed_control_per_ha"): ("weed_control_per_acre", HA_PER_ACRE),
    ("establishment", "planting_operation_per_ha"): ("planting_operation_per_acre", HA_PER_ACRE),
    ("establishment", "fertiliser_per_ha"): ("fertiliser_per_acre", HA_PER_ACRE),
    ("establishment", "fencing_other_per_ha"): ("fencing_other_per_acre", HA_PER_ACRE),
    ("establishment", "grant_per_ha"): ("grant_per_acre", HA_PER_ACRE),
    ("establishment", "n_kg_per_ha"): ("n_lb_per_acre", HA_PER_ACRE / KG_PER_LB),
    ("yield", "mature_t_dm_per_ha"): ("mature_short_ton_dm_per_acre", HA_PER_ACRE / T_PER_SHORT_TON),
    ("nutrients", "n_price_per_kg"): ("n_price_per_lb", KG_PER_LB),
    ("nutrients", "p2o5_price_per_kg"): ("p2o5_price_per_lb", KG_PER_LB),
    ("nutrients", "k2o_price_per_kg"): ("k2o_price_per_lb", KG_PER_LB),
    ("nutrients", "spreading_per_ha"): ("spreading_per_acre", HA_PER_ACRE),
    ("nutrients", "n_late_winter_kg_per_t_dm"): ("n_late_winter_lb_per_short_ton_dm", T_PER_SHORT_TON / KG_PER_LB),
    # a mixed spelling (lb per tonne) is accepted too
    ("nutrients", "k2o_late_winter_kg_per_t_dm"): ("k2o_late_winter_lb_per_t_dm", 1 / KG_PER_LB),
    ("costs", "harvest_per_ha"): ("harvest_per_acre", HA_PER_ACRE),
    ("costs", "baling_chipping_per_t_dm"): ("baling_chipping_per_short_ton_dm", T_PER_SHORT_TON),
    ("costs", "haul_distance_km"): ("haul_distance_mile", 1 / KM_PER_MILE),
    ("costs", "haul_per_t_km"): ("haul_per_short_ton_mile", T_PER_SHORT_TON * KM_PER_MILE),
    ("costs", "storage_per_t_dm"): ("storage_per_short_ton_dm", T_PER_SHORT_TON),
    ("costs", "rent_per_ha"): ("rent_per_acre", HA_PER_ACRE),
    ("costs", "overheads_per_ha"): ("overheads_per_acre", HA_PER_ACRE),
    ("costs", "insurance_per_ha"): ("insurance_per_acre", HA_PER_ACRE),
    ("costs", "upkeep_per_ha"): ("upkeep_per_acre", HA_PER_ACRE),
    ("costs", "removal_per_ha"): ("removal_per_acre", HA_PER_ACRE),
    ("revenue", "price_per_t_dm"): ("price_per_short_ton_dm", T_PER_SHORT_TON),
    ("carbon", "diesel_establishment_l_per_ha"): ("diesel_establishment_gal_per_acre", HA_PER_ACRE / L_PER_US_GALLON),
    ("carbon", "diesel_l_per_t_dm"): ("diesel_gal_per_short_ton_dm", T_PER_SHORT_TON / L_PER_US_GALLON),
    ("carbon", "haul_kg_co2e_per_t_km"): ("haul_lb_co2e_per_short_ton_mile", T_PER_SHORT_TON * KM_PER_MILE / KG_PER_LB),
    ("field", "current_n_kg_per_ha"): ("current_n_lb_per_acre", HA_PER_ACRE / KG_PER_LB),
    ("field", "current_p2o5_kg_per_ha"): ("current_p2o5_lb_per_acre", HA_PER_ACRE / KG_PER_LB),
    ("field", "current_k2o_kg_per_ha"): ("current_k2o_lb_per_acre", HA_PER_ACRE / KG_PER_LB),
    ("field", "current_diesel_l_per_ha"): ("current_diesel_gal_per_acre", HA_PER_ACRE / L_PER_US_GALLON),
    ("harvest", "drying_per_t_water"): ("drying_per_short_ton_water", T_PER_SHORT_TON),
    ("carbon", "verification_per_ha"): ("verification_per_acre", HA_PER_ACRE),
    ("carbon", "registry_per_ha"): ("registry_per_acre", HA_PER_ACRE),
}


@pytest.fixture(scope="module")
def metric_and_us():
    base = tomllib.loads((CASES_DIR / "clay_corner_miscanthus.toml").read_text(encoding="utf-8"))
    # the schema's sections only: the ledger does not read [sensitivity] or [risk]
    metric = {s: dict(t) for s, t in base.items() if s in schema.SECTIONS}
    for section, extra in METRIC_EXTRA.items():
        metric.setdefault(section, {}).update(extra)
    us = {}
    converted = 0
    for section, table in metric.items():
        us[section] = {}
        for key, value in table.items():
            if (section, key) in TO_US:
                us_key, mult = TO_US[(section, key)]
                us[section][us_key] = value * mult
                converted += 1
            else:
                assert not units.slots_of(schema.BY_PATH[f"{section}.{key}"].template), (
                    f"{section}.{key} carries a unit but has no US spelling in TO_US")
                us[section][key] = value
    assert converted == len(TO_US)
    us["case"]["units"] = "us_customary"
    return load_text(to_toml(metric), "metric.toml"), load_text(to_toml(us), "us.toml")


class TestUsCustomaryCase:
    def test_us_keys_really_used(self, metric_and_us):
        _, us = metric_and_us
        assert us.given_spelling["field.area_ha"] == "area_acre"
        assert us.given_spelling["carbon.diesel_establishment_l_per_ha"] == "diesel_establishment_gal_per_acre"
        assert us.given_spelling["nutrients.n_price_per_kg"] == "n_price_per_lb"

    def test_same_canonical_values(self, metric_and_us):
        # NIST HB44 App. C conversions: the loader's canonical values agree to 1e-9 relative
        metric, us = metric_and_us
        assert set(metric.values) == set(us.values)
        for path, mv in metric.values.items():
            uv = us.values[path]
            if path == "case.units":
                assert (mv, uv) == ("metric", "us_customary")
            elif path == "case.page_size" and "page_size" not in metric.given().get("case", {}):  # paper follows units
                assert (mv, uv) == ("A4", "Letter")
            elif isinstance(mv, float):
                assert uv == pytest.approx(mv, rel=1e-9, abs=0.0), path
            else:
                assert uv == mv, path

    def test_area_in_hectares(self, metric_and_us):
        # 6.4 ha given as 6.4 / 0.40468564224 acre (NIST HB44 App. C) loads back to 6.4 ha
        _, us = metric_and_us
        assert us.area_ha == pytest.approx(6.4, rel=1e-12)

    def test_same_ledger(self, metric_and_us):
        # every ledger line per ha, to 1e-9 relative (atol: 1e-9 of the line's own scale)
        metric, us = metric_and_us
        a, b = tea.build_ledger(metric), tea.build_ledger(us)
        assert list(a.columns) == list(b.columns)
        for name in a.columns:
            x, y = a[name].to_numpy(float), b[name].to_numpy(float)
            scale = np.nanmax(np.abs(x)) if np.isfinite(x).any() else 0.0
            assert_allclose(y, x, rtol=1e-9, atol=1e-9 * scale, equal_nan=True, err_msg=name)

    def test_same_figures(self, metric_and_us):
        # NPV per ha, IRR, paybacks, break-evens, SOC, GHG, loan: all to 1e-9 relative
        metric, us = metric_and_us
        ra, rb = tea.summarise(metric), tea.summarise(us)
        assert ra.per_ha.keys() == rb.per_ha.keys()
        for name, va in ra.per_ha.items():
            vb = rb.per_ha[name]
            if va is None:
                assert vb is None, name
            else:
                assert vb == pytest.approx(va, rel=1e-9, abs=1e-9 * max(1.0, abs(va))), name
        for name, va in ra.whole_field.items():
            vb = rb.whole_field[name]
            assert (va is None and vb is None) or vb == pytest.approx(va, rel=1e-9, abs=1e-9), name

    def test_us_demo_case_loads_in_hectares(self):
        # the US demo case (an input) gives its area in acres; the case holds hectares
        # (1 acre = 0.40468564224 ha, NIST HB44 App. C)
        text = (CASES_DIR / "sandy_slope_switchgrass.toml").read_text(encoding="utf-8")
        given = tomllib.loads(text)["field"]["area_acre"]
        case = load_text(text, "sandy.toml")
        assert case.area_ha == pytest.approx(given * HA_PER_ACRE, rel=1e-15)

    def test_mapping_and_text_agree(self, metric_and_us):
        metric, _ = metric_and_us
        again = load_mapping(metric.given(), source="metric.toml")
        assert again.hash == metric.hash


class TestUsDisplay:
    """A US-customary case is shown per acre and per short ton, converted with the NIST definitions."""

    @pytest.fixture(scope="class")
    @classmethod
    def shown(cls):
        from conftest import run_cli

        path = CASES_DIR / "sandy_slope_switchgrass.toml"
        res = run_cli(["run", "--brief", path])
        assert res.code == 0, res.err
        case = tea.load_case(path)

        def value(label: str, unit: str) -> float:
            m = re.search(rf"^  {re.escape(label)}\s+(-?[\d,]+(?:\.\d+)?) {re.escape(unit)}", res.out, re.M)
            assert m, f"{label} [{unit}] not shown"
            return float(m.group(1).replace(",", ""))

        return case, tea.summarise(case), value, res.out

    def test_area_in_acres(self, shown):
        case, _, _, out = shown
        given = tomllib.loads((CASES_DIR / "sandy_slope_switchgrass.toml").read_text())["field"]["area_acre"]
        assert f"{given:.1f} acres" in out
        assert case.area_ha / HA_PER_ACRE == pytest.approx(given, rel=1e-12)  # NIST HB44 App. C

    def test_money_per_acre(self, shown):
        # per-ha money x ha per acre (NIST HB44 App. C); shown to 1 at or above 100, to 0.01 below
        _, res, value, _ = shown
        assert value("NPV", "USD/acre") == pytest.approx(res["npv"] * HA_PER_ACRE, abs=0.5)
        assert value("Equivalent annual value", "USD/acre/yr") == pytest.approx(res["eav"] * HA_PER_ACRE, abs=0.005)
        given = tomllib.loads((CASES_DIR / "sandy_slope_switchgrass.toml").read_text())["field"]["current_margin_per_acre"]
        assert value("Current use margin", "USD/acre/yr") == pytest.approx(given, abs=0.005)

    def test_price_and_yield_per_short_ton(self, shown):
        # price per t x t per short ton; yield per ha x ha per acre / t per short ton (NIST HB44 App. C)
        _, res, value, _ = shown
        assert value("Break-even price", "USD/short ton DM") == pytest.approx(
            res["breakeven_price"] * T_PER_SHORT_TON, abs=0.005)
        assert value("Break-even mature yield", "short ton DM/acre/yr") == pytest.approx(
            res["breakeven_mature_yield_t_dm_per_ha"] * HA_PER_ACRE / T_PER_SHORT_TON, abs=0.005)

