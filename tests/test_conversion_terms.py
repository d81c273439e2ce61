"""Conversion terms, each worked by hand from its IPCC 2006 Vol. 4 equation: the prior vegetation's biomass
(Ch. 2 Eq. 2.16 with Ch. 6 Table 6.4), N2O from N mineralised when SOC is lost (Ch. 11 Eq. 11.8), CO2 from lime
and urea (Ch. 11 Eq. 11.12, 11.13)."""

from __future__ import annotations

import numpy as np
from numpy.testing import assert_allclose

import tea
from tea.inputs.case import load_case, load_text

from conftest import CASES_DIR

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"
C_TO_CO2 = 44.0 / 12.0  # stoichiometry
# IPCC 2006 Vol.4 Ch.11: EF1 0.01 (Table 11.1), Frac_LEACH 0.30 (wet), EF5 0.0075 (Table 11.3);
# GWP100 N2O 273 (IPCC AR6 WG1 Ch.7 Table 7.15); 44/28 stoichiometry
N2O_PER_KG_N = (0.01 + 0.30 * 0.0075) * 44 / 28 * 273.0 / 1000


def test_prior_biomass_eq_2_16_by_hand():
    # Eq. 2.16, B_after = 0 at planting: 10 t DM/ha x 0.47 t C/t DM (IPCC 2006 Vol.4 Ch.6 default carbon
    # fraction; from memory) x 44/12 (stoichiometry) = 17.233 t CO2e, in year 0 only
    case = load_case(CLAY).replace(**{"carbon.prior_biomass_t_dm_per_ha": 10.0,
                                      "carbon.biomass_carbon_fraction": 0.47})
    line = tea.build_ledger(case)["ghg_prior_biomass_t_co2e"].to_numpy()
    assert_allclose(line[0], 10.0 * 0.47 * C_TO_CO2, rtol=1e-12)
    assert (line[1:] == 0).all()
    # cropland is converted after its last harvest: nothing standing
    assert load_case(CLAY)["carbon.prior_biomass_t_dm_per_ha"] == 0.0


def test_grassland_prior_biomass_is_looked_up():
    # the willow demo is on grassland (cool temperate moist): Table 6.4 total non-woody biomass, > 0
    case = load_case(CASES_DIR / "flood_meadow_willow.toml")
    assert case["carbon.prior_biomass_t_dm_per_ha"] > 0


def test_n_mineralised_eq_11_8_by_hand():
    # improved grassland (F_MG 1.14, Table 6.2) under a grass stand counted as nominal grassland (1.0): SOC falls
    # 95 x 0.14 / 20 t C/ha a year (SOC_ref 95 t C/ha: IPCC 2006 Vol.4 Ch.2 Table 2.3, cool temperate moist,
    # high-activity clay; linear over the default D = 20 years); Eq. 11.8: N = that x 1000 / 15 (C:N of land-use change); N2O by Eq. 11.1 and
    # 11.10 as above (hand calculation)
    case = load_case(CLAY).replace(**{"field.current_use": "grassland_improved", "carbon.gwp": "AR6",
                                      "carbon.n2o_method": "ipcc2006", "carbon.soc_c_to_n": 15.0})
    led = tea.build_ledger(case)
    lost = 95 * (1.14 - 1.0) / 20
    assert_allclose(led["soc_change_t_c"][1:21], -lost, rtol=1e-9)
    assert_allclose(led["n_mineralised_kg"][1:21], lost * 1000 / 15, rtol=1e-9)
    assert_allclose(led["ghg_n2o_mineralised_t_co2e"][1:21], lost * 1000 / 15 * N2O_PER_KG_N, rtol=1e-9)
    # no N mineralised where SOC rises (the demo on cropland)
    assert (tea.build_ledger(load_case(CLAY))["n_mineralised_kg"] == 0).all()


def test_reversion_counts_the_n2o_of_the_soc_it_loses():
    # life + reversion = life + SOC lost x 44/12 + SOC lost x 1000 / 15 x N2O per kg N (hand, Eq. 11.8)
    case = load_case(CLAY).replace(**{"carbon.gwp": "AR6", "carbon.n2o_method": "ipcc2006"})
    res = tea.summarise(case)
    lost = res["soc_loss_after_reversion_t_c"]
    assert_allclose(res["ghg_net_with_reversion_t_co2e"],
                    res["ghg_net_t_co2e"] + lost * C_TO_CO2 + lost * 1000 / 15 * N2O_PER_KG_N, rtol=1e-12)


def test_lime_and_urea_eq_11_12_11_13_by_hand():
    # Eq. 11.12: 2 t limestone x 0.12 + 1 t dolomite x 0.13 t C, x 44/12 (IPCC defaults, to their printed two
    # decimals); Eq. 11.13: urea = N / (28.014/60.056) (molar masses of N2 and
    # CO(NH2)2, IUPAC standard atomic weights), x 0.20 t C/t urea (IPCC 2006 Vol.4 Ch.11 Eq. 11.13)
    text = CLAY.read_text(encoding="utf-8") + """
[[operations]]
name = "lime"
year = 5
cost_per_ha = 90.0
limestone_t_per_ha = 2.0
dolomite_t_per_ha = 1.0
"""
    case = load_text(text, "lime.toml")
    led = tea.build_ledger(case)
    assert_allclose(led["ghg_lime_urea_t_co2e"][5], (2.0 * 0.12 + 1.0 * 0.13) * C_TO_CO2, rtol=2e-3)
    assert led["ghg_lime_urea_t_co2e"][4] == 0
    urea = case.replace(**{"nutrients.urea_share_of_n": 1.0, "nutrients.n_replace_share": 1.0})
    u = tea.build_ledger(urea)
    n_t = u["n_applied_kg"].to_numpy()[6] / 1000
    assert n_t > 0
    assert_allclose(u["ghg_lime_urea_t_co2e"][6], n_t / (28.014 / 60.056) * 0.20 * C_TO_CO2, rtol=2e-3)


def test_residue_n_of_the_removal_year_by_hand():
    # Eq. 11.1 (F_CR) and 11.10: 12 t DM/ha of rhizomes and roots at 8 kg N/t ploughed in at removal (year 20):
    # 96 kg N x (0.01 + 0.30 x 0.0075) x 44/28 x 273 / 1000 t CO2e; nothing in other years
    case = load_case(CLAY).replace(**{"carbon.stand_biomass_t_dm_per_ha": 12.0,
                                      "carbon.stand_biomass_n_kg_per_t_dm": 8.0,
                                      "carbon.gwp": "AR6", "carbon.n2o_method": "ipcc2006"})
    line = tea.build_ledger(case)["ghg_n2o_residue_t_co2e"].to_numpy()
    assert_allclose(line[20], 96.0 * N2O_PER_KG_N, rtol=1e-12)
    assert (line[:20] == 0).all()
