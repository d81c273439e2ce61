"""The current use's own emissions and every GHG figure against it, worked by hand from IPCC 2006 Vol.4 Ch.11."""

from __future__ import annotations

import pytest
from numpy.testing import assert_allclose

import tea
from tea.inputs.case import load_case

from conftest import CASES_DIR, DEMO_CASES

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"

# IPCC 2006 Vol.4 Ch.11 Table 11.1 EF1 = 0.01; Table 11.3 Frac_GASF = 0.10, EF4 = 0.01, Frac_LEACH = 0.30 (wet
# climates), EF5 = 0.0075;
# N2O-N to N2O 44/28 (stoichiometry); GWP100 of N2O 273 (IPCC AR6 WG1 Ch.7 Table 7.15)
EF1, FRAC_GASF, EF4, FRAC_LEACH, EF5 = 0.01, 0.10, 0.01, 0.30, 0.0075
GWP_N2O_AR6 = 273.0


def test_wheat_n2o_and_inputs_by_hand():
    # hand calculation, IPCC 2006 Vol.4 Eq. 11.1 + 11.9 + 11.10 for 190 kg N/ha/yr in a moist climate:
    # 190 x (0.01 + 0.10 x 0.01 + 0.30 x 0.0075) x 44/28 x 273 / 1000 t CO2e a year
    case = load_case(CLAY).replace(**{"field.current_n_kg_per_ha": 190.0, "field.current_p2o5_kg_per_ha": 60.0,
                                      "field.current_k2o_kg_per_ha": 70.0, "field.current_diesel_l_per_ha": 95.0,
                                      "carbon.gwp": "AR6", "carbon.n2o_method": "ipcc2006"})
    led = tea.build_ledger(case)
    n2o = 190 * (EF1 + FRAC_GASF * EF4 + FRAC_LEACH * EF5) * 44 / 28 * GWP_N2O_AR6 / 1000
    life = case["finance.stand_life_years"]
    assert_allclose(led["current_n2o_t_co2e"][1:life + 1], n2o, rtol=1e-12)
    assert led["current_n2o_t_co2e"][0] == 0  # none in the planting year: the field is being planted
    inputs = (190 * case["carbon.n_manufacture_kg_co2e_per_kg"] + 60 * case["carbon.p2o5_manufacture_kg_co2e_per_kg"]
              + 70 * case["carbon.k2o_manufacture_kg_co2e_per_kg"] + 95 * case["carbon.diesel_kg_co2_per_l"]) / 1000
    assert_allclose(led["current_inputs_t_co2e"][1:life + 1], inputs, rtol=1e-12)
    res = tea.summarise(case)
    assert_allclose(res["current_ghg_t_co2e"], life * (n2o + inputs), rtol=1e-12)
    assert_allclose(res["ghg_net_vs_current_use_t_co2e"], res["ghg_net_t_co2e"] - life * (n2o + inputs), rtol=1e-12)
    assert_allclose(res["ghg_net_with_reversion_vs_current_use_t_co2e"],
                    res["ghg_net_with_reversion_t_co2e"] - life * (n2o + inputs), rtol=1e-12)


def test_no_current_inputs_no_current_emissions():
    case = load_case(CLAY).replace(**{"field.current_n_kg_per_ha": 0.0, "field.current_p2o5_kg_per_ha": 0.0,
                                      "field.current_k2o_kg_per_ha": 0.0, "field.current_diesel_l_per_ha": 0.0})
    res = tea.summarise(case)
    assert res["current_ghg_t_co2e"] == 0
    assert_allclose(res["ghg_net_vs_current_use_t_co2e"], res["ghg_net_t_co2e"], rtol=1e-12)


@pytest.mark.parametrize("path", DEMO_CASES, ids=lambda p: p.stem)
def test_demo_current_use_emits(path):
    # each demo names its current use's inputs: the balance against it is below the stand's own
    res = tea.summarise(load_case(path))
    assert res["current_ghg_t_co2e"] > 0
    assert res["ghg_net_vs_current_use_t_co2e"] < res["ghg_net_t_co2e"]
