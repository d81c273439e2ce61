"""The stand's own biomass carbon, kept apart from SOC: built up with the ramp-up, lost at removal (IPCC 2006
Vol. 4 Ch. 2 Eq. 2.7, stock difference), worked by hand."""

from __future__ import annotations

import numpy as np
from numpy.testing import assert_allclose

import tea
from tea.inputs.case import load_case

from conftest import CASES_DIR

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"


def test_pool_builds_up_and_is_lost_at_removal():
    # hand: 20 t DM/ha x 0.47 t C/t DM (IPCC 2006 Vol.4 Ch.6 default carbon fraction; from memory) = 9.4 t C
    # at maturity (44/12: stoichiometry); with no failure the pool follows the ramp-up
    # [0, 0.4, 0.8, 1, ...] and is gone in the removal year 20: CO2 lines -9.4 x 44/12 x ramp steps, then
    # +9.4 x 44/12 in year 20; over the stand life they sum to 0
    case = load_case(CLAY).replace(**{"carbon.stand_biomass_t_dm_per_ha": 20.0,
                                      "carbon.biomass_carbon_fraction": 0.47,
                                      "establishment.failure_probability": 0.0,
                                      "yield.ramp_up_fractions": [0.0, 0.4, 0.8]})
    led = tea.build_ledger(case)
    pool = np.zeros(21)
    pool[1:20] = 9.4 * np.array([0.0, 0.4, 0.8] + [1.0] * 16)
    assert_allclose(led["biomass_pool_t_c"], pool, rtol=1e-12, atol=1e-12)
    assert_allclose(led["ghg_biomass_t_co2e"][2], -9.4 * 0.4 * 44 / 12, rtol=1e-12)
    assert_allclose(led["ghg_biomass_t_co2e"][20], 9.4 * 44 / 12, rtol=1e-12)
    assert abs(led["ghg_biomass_t_co2e"].sum()) < 1e-12
    # kept apart from SOC, and the life balance is unchanged by a pool that returns at removal
    base = tea.summarise(case.replace(**{"carbon.stand_biomass_t_dm_per_ha": 0.0}))
    assert_allclose(tea.summarise(case)["ghg_net_t_co2e"], base["ghg_net_t_co2e"], rtol=1e-12)
    assert_allclose(led["soc_t_c"], tea.build_ledger(case.replace(**{"carbon.stand_biomass_t_dm_per_ha": 0.0}))["soc_t_c"])
