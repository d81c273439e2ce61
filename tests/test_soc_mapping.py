"""Soil carbon under the stand: the land-use factor each crop maps to, the three SOC paths, the SOC factor as a
sensitivity input, and the grass presets' default gain against published field measurements."""

from __future__ import annotations

import math

import pytest
from numpy.testing import assert_allclose

import tea
from tea.core.errors import CaseError
from tea.inputs import published
from tea.inputs.case import load_case
from tea.analysis import sensitivity

from conftest import CASES_DIR

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"  # rhizome grass on cropland, cool temperate moist, HAC
SANDY = CASES_DIR / "sandy_slope_switchgrass.toml"  # seed-sown grass on cropland
WILLOW = CASES_DIR / "flood_meadow_willow.toml"  # coppice
C_TO_CO2 = 44.0 / 12.0  # stoichiometry

# IPCC 2006 Vol.4 Ch.5 Table 5.5 F_LU, temperate: set-aside (< 20 yr) dry 0.93, moist 0.82; long-term cultivated
# dry 0.80, moist 0.69; perennial/tree crop 1.00. The set-aside values are the same in the IPCC Good Practice
# Guidance for LULUCF (2003) default table, as reproduced in Ecological Processes 8 (2019), Table 3 (secondary).
SET_ASIDE = {"dry": 0.93, "moist": 0.82}
CULTIVATED = {"dry": 0.80, "moist": 0.69}

# Published field measurements of the SOC change after arable land is planted to a perennial rhizome grass,
# 0-30 cm [t C/ha/yr]:
# * Poeplau & Don 2014, GCB Bioenergy, doi:10.1111/gcbb.12043: C4 (new) carbon accumulation 0.78 +/- 0.19 over
#   six European sites; the vegetation-change-induced net rate 0.40 +/- 0.20 (14 sites);
# * Biomass and Bioenergy 83:141-151 (2015), 93-site chronosequence in England and Wales: arable to Miscanthus
#   no significant change.
# The net gain lies between no change and the gross input of new carbon: 0 .. 0.78 + 0.19.
PUBLISHED_NET_LOW, PUBLISHED_GROSS_HIGH = 0.0, 0.78 + 0.19


class TestMapping:
    @pytest.mark.parametrize("climate, moisture", [("cool_temperate_moist", "moist"), ("cool_temperate_dry", "dry"),
                                                   ("warm_temperate_moist", "moist"), ("warm_temperate_dry", "dry")])
    def test_grass_on_cropland_takes_the_set_aside_factor(self, climate, moisture):
        # IPCC 2006 Vol.4 Ch.6 (cropland converted to grassland: the Table 5.5 set-aside factor)
        under = published.crop_land_use("perennial_grass", "cropland_full_till")
        assert published.land_use_factors(under, climate) == (SET_ASIDE[moisture], 1.0, 1.0)

    def test_grass_on_grassland_stays_grassland(self):
        # IPCC 2006 Vol.4 Ch.6: grassland remaining grassland, nominally managed, all factors 1
        under = published.crop_land_use("perennial_grass", "grassland")
        assert published.land_use_factors(under, "cool_temperate_moist") == (1.0, 1.0, 1.0)

    def test_presets_map_as_ipcc_advises(self):
        # Table 5.5: grasses on the demo's cropland take set-aside (moist 0.82); coppice perennial/tree crop 1.0
        assert load_case(CLAY)["carbon.crop_f_lu"] == SET_ASIDE["moist"]
        assert load_case(SANDY)["carbon.crop_f_lu"] == SET_ASIDE["moist"]
        assert load_case(WILLOW)["carbon.crop_f_lu"] == 1.0

    def test_a_case_may_choose_another_mapping(self):
        # a case naming perennial_crop for a grass gets Table 5.5's perennial/tree-crop factor
        import tomllib
        raw = tomllib.loads(CLAY.read_text(encoding="utf-8"))
        raw["carbon"]["crop_land_use"] = "perennial_crop"
        from tea.inputs.case import load_mapping
        case = load_mapping(raw, str(CLAY))
        assert case["carbon.crop_f_lu"] == 1.0


class TestPaths:
    def test_stock_change_eq_2_25_by_hand(self):
        # IPCC 2006 Vol.4 Eq. 2.25, hand calculation: SOC_ref 95 (Table 2.3, cool temperate moist HAC);
        # start 95 x 0.69 = 65.55, under the stand 95 x 0.82 = 77.90; linear over D = 20 yr: 0.6175 t C/ha/yr
        led = tea.build_ledger(load_case(CLAY))
        assert_allclose(led["soc_t_c"][0], 65.55, rtol=1e-12)
        assert_allclose(led["soc_change_t_c"][1:21], (77.90 - 65.55) / 20, rtol=1e-12)

    @pytest.mark.parametrize("years", [10, 20, 40])
    def test_first_order_takes_its_rate_from_the_transition(self, years):
        # first-order decay, hand calculation (common practice: the path has made 95 % of the change after the
        # transition period D): k = ln(20) / D leaves exp(-ln 20) = 5 % of the change after D years
        case = load_case(CLAY).replace(**{"carbon.soc_method": "first_order", "carbon.transition_years": years,
                                          "finance.stand_life_years": 45})
        soc = tea.build_ledger(case)["soc_t_c"]
        assert_allclose((77.90 - soc[years]) / (77.90 - 65.55), 0.05, rtol=1e-12)
        assert_allclose(soc[1], 77.90 - (77.90 - 65.55) * math.exp(-math.log(20) / years), rtol=1e-12)

    def test_measured_rate_by_hand(self):
        # measured-rate option: SOC_t = SOC_0 + rate x min(t, D); 0.40 t C/ha/yr (Poeplau & Don 2014) over 20 yr
        case = load_case(CLAY).replace(**{"carbon.soc_method": "measured_rate",
                                          "carbon.soc_rate_t_c_per_ha_per_year": 0.40})
        soc = tea.build_ledger(case)["soc_t_c"]
        assert_allclose(soc[:21], 65.55 + 0.40 * __import__("numpy").arange(21), rtol=1e-12)

    def test_measured_rate_without_a_rate_is_refused(self, tmp_path):
        text = CLAY.read_text(encoding="utf-8").replace("[carbon]\n", '[carbon]\nsoc_method = "measured_rate"\n', 1)
        path = tmp_path / "c.toml"
        path.write_text(text, encoding="utf-8")
        with pytest.raises(CaseError, match="soc_rate_t_c_per_ha_per_year"):
            load_case(path)


class TestPublishedRange:
    @pytest.mark.parametrize("path", [CLAY, SANDY], ids=lambda p: p.stem)
    def test_default_grass_gain_within_field_measurements(self, path):
        # Poeplau & Don 2014 and the 93-site British chronosequence (module docstring): 0 .. 0.97 t C/ha/yr
        case = load_case(path)
        res = tea.summarise(case)
        years = min(case["finance.stand_life_years"], case["carbon.transition_years"])
        rate = res["soc_gain_t_c"] / years
        assert PUBLISHED_NET_LOW <= rate <= PUBLISHED_GROSS_HIGH

    def test_perennial_crop_factor_for_a_grass_exceeds_the_measurements(self):
        # IPCC 2006 Table 5.5 perennial/tree-crop F_LU 1.0 for the grass: 95 x (1 - 0.69) / 20 = 1.47 t C/ha/yr,
        # above the gross C4 input measured by Poeplau & Don 2014: why grasses take the set-aside factor
        case = load_case(CASES_DIR / "clay_corner_miscanthus.toml").replace(**{"carbon.crop_f_lu": 1.0})
        rate = tea.summarise(case)["soc_gain_t_c"] / case["carbon.transition_years"]
        assert rate == pytest.approx(95 * (1.0 - CULTIVATED["moist"]) / 20, rel=1e-9)
        assert rate > PUBLISHED_GROSS_HIGH


class TestSensitivity:
    def test_soc_factor_moves_credits_by_hand(self):
        # the stand's F_LU from set-aside 0.82 to perennial/tree crop 1.0: 95 x 0.18 x 44/12 x (1 - 0.2 buffer)
        # more t CO2e over the 20-year transition, of which the removals of years 1-19 are credited (none in the
        # removal year 20): x 19/20 (hand calculation, Eq. 2.25)
        case = load_case(CLAY)
        assert case["finance.stand_life_years"] == case["carbon.transition_years"] == 20
        low = tea.summarise(case)
        high = tea.summarise(case.replace(**{"carbon.crop_f_lu": 1.0}))
        expected = 95 * (1.0 - 0.82) * C_TO_CO2 * (1 - case["carbon.credit_buffer_share"]) * 19 / 20
        assert_allclose(high["credited_t_co2e"] - low["credited_t_co2e"], expected, rtol=1e-9)

    def test_soc_factor_is_a_sensitivity_input(self):
        # the demo declares the factor's range (IPCC Table 5.5: 0.69 as cultivated .. 1.0 perennial/tree crop)
        moved = {m.path: m for m in sensitivity.moved_inputs(load_case(CLAY))}
        assert "carbon.crop_f_lu" in moved
