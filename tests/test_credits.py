"""Carbon credits with their terms: verification, buffer, the reversal at removal, and the net GHG over the stand
life with and without the reversion, against the buffer arithmetic worked by hand."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import tea
from tea.inputs.case import load_case

from conftest import CASES_DIR

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"
C_TO_CO2 = 44.0 / 12.0  # stoichiometry

# Hand calculation, IPCC 2006 Vol.4 Eq. 2.25: SOC_ref 95 t C/ha (Table 2.3, cool temperate moist HAC), F_LU 0.69
# (long-term cultivated) to 0.82 (set-aside, Table 5.5), linear over 20 yr: 95 x 0.13 / 20 t C/ha/yr.
GAIN_T_CO2E_PER_YEAR = 95 * (0.82 - 0.69) / 20 * C_TO_CO2


def _case(**changes):
    base = {"carbon.credit_price_per_t_co2e": 30.0, "carbon.credit_first_year": 3,
            "carbon.credit_buffer_share": 0.2, "carbon.verification_per_ha": 25.0,
            "carbon.verification_interval_years": 5, "carbon.registry_per_ha": 3.0,
            "carbon.credit_reversal": "payback", "finance.stand_life_years": 20, "costs.change_per_year": 0.0}
    base.update(changes)
    return load_case(CLAY).replace(**base)


class TestBufferArithmetic:
    def test_credits_and_reversal_by_hand(self):
        # hand: removals of years 1..19 are eligible (none in the removal year 20): R = 19 g.
        # Issued: 0.8 R; buffer: 0.2 R; at removal all of R is lost (SOC back to the arable level), the buffer
        # bears 0.2 R and 0.8 R is paid back: credits net of payback = 0.
        g = GAIN_T_CO2E_PER_YEAR
        led = tea.build_ledger(_case())
        r = 19 * g
        expected_gross = np.zeros(21)
        expected_gross[3] = 3 * g  # first verification: years 1-3
        expected_gross[4:20] = g
        assert_allclose(led["credited_gross_t_co2e"], expected_gross, rtol=1e-12, atol=1e-12)
        assert_allclose(led["credited_t_co2e"].sum(), 0.8 * r, rtol=1e-12)
        assert_allclose(led["credit_buffer_t_co2e"].sum(), 0.2 * r, rtol=1e-12)
        assert_allclose(led["credit_reversal_t_co2e"].iloc[20], r, rtol=1e-12)
        assert_allclose(led["credit_payback_t_co2e"].iloc[20], r - 0.2 * r, rtol=1e-12)
        assert_allclose(led["credit_net_t_co2e"].sum(), 0.0, atol=1e-12)
        # paid back at the credit price in the removal year
        assert_allclose(led["credit_payback_cost"].iloc[20], 0.8 * r * 30.0, rtol=1e-12)
        assert led["credited_t_co2e"].iloc[20] == 0  # no credit in the removal year

    def test_buffer_only_reversal_pays_nothing_back(self):
        # the registry's buffer bears the loss: nothing paid back, credits keep their 0.8 R
        led = tea.build_ledger(_case(**{"carbon.credit_reversal": "buffer_only"}))
        assert (led["credit_payback_t_co2e"] == 0).all()
        assert_allclose(led["credit_net_t_co2e"].sum(), 0.8 * 19 * GAIN_T_CO2E_PER_YEAR, rtol=1e-12)

    def test_partial_reversal_beyond_the_buffer(self):
        # a stand credited for part of its gain: verification from year 12 on a 10-year transition: removals of
        # years 1..10 credited in year 12 (R = 10 g'), the loss at removal is the whole gain 10 g' = R
        led = tea.build_ledger(_case(**{"carbon.transition_years": 10, "carbon.credit_first_year": 12}))
        g10 = 95 * (0.82 - 0.69) / 10 * C_TO_CO2
        assert_allclose(led["credited_gross_t_co2e"].iloc[12], 10 * g10, rtol=1e-12)
        assert_allclose(led["credit_payback_t_co2e"].iloc[20], 0.8 * 10 * g10, rtol=1e-12)


class TestCosts:
    def test_verification_years_and_registry(self):
        # first verification in year 3, every 5 years while the stand stands: 3, 8, 13, 18; registry 1..19
        led = tea.build_ledger(_case())
        expected = np.zeros(21)
        expected[1:20] = 3.0
        expected[[3, 8, 13, 18]] += 25.0
        assert_allclose(led["verification_cost"], expected, rtol=1e-12)

    def test_no_cost_without_credits(self):
        led = tea.build_ledger(_case(**{"carbon.credit_price_per_t_co2e": 0.0}))
        assert (led["verification_cost"] == 0).all() and (led["credit_payback_cost"] == 0).all()

    @pytest.mark.parametrize("changes", [
        # the stand's SOC factors equal the current use's: IPCC Eq. 2.25 gives no stock change, so no removal
        # is ever verified (hand: SOC_ref x F_LU x F_MG x F_I the same before and after)
        {"carbon.crop_f_lu": 0.69, "carbon.crop_f_mg": 1.0, "carbon.crop_f_i": 1.0,
         "carbon.current_f_lu": 0.69, "carbon.current_f_mg": 1.0, "carbon.current_f_i": 1.0},
        # the first verification falls after the stand life (20 years): nothing is ever credited
        {"carbon.credit_first_year": 25},
    ], ids=["no_soc_gain", "first_verification_after_the_stand"])
    def test_no_fee_where_no_credit_is_issued(self, changes):
        # a credit price alone claims nothing: with no credit issued there is no verification to pay for and no
        # registry account to keep, so the stand's cash is that of the same case without a credit price
        led = tea.build_ledger(_case(**changes))
        assert led["credited_t_co2e"].sum() == 0
        assert (led["verification_cost"] == 0).all()
        unpriced = tea.build_ledger(_case(**changes, **{"carbon.credit_price_per_t_co2e": 0.0}))
        assert_allclose(led["net_cash_flow"], unpriced["net_cash_flow"], rtol=1e-12, atol=1e-12)


class TestNetGhg:
    def test_life_plus_reversion_adds_the_soc_lost(self):
        # hand: net over life + reversion = net over life + SOC gained x 44/12 (all of it lost after removal)
        # + the N2O of the N that loss mineralises: x 1000 / 15 (IPCC Eq. 11.8) x (EF1 0.01 + Frac_LEACH 0.30 x
        # EF5 0.0075) x 44/28 x GWP100 273 (IPCC 2006 Tables 11.1, 11.3; AR6)
        res = tea.summarise(_case(**{"carbon.gwp": "AR6", "carbon.n2o_method": "ipcc2006"}))
        lost = 95 * (0.82 - 0.69)
        n2o = lost * 1000 / 15 * (0.01 + 0.30 * 0.0075) * 44 / 28 * 273 / 1000
        assert_allclose(res["ghg_net_with_reversion_t_co2e"], res["ghg_net_t_co2e"] + lost * C_TO_CO2 + n2o,
                        rtol=1e-12)
        assert_allclose(res["ghg_net_with_reversion_t_co2e"], res["ghg_emissions_t_co2e"] + n2o, rtol=1e-9)

    @pytest.mark.parametrize("path", sorted(CASES_DIR.glob("*.toml")), ids=lambda p: p.stem)
    def test_reversion_never_improves_the_balance(self, path):
        res = tea.summarise(load_case(path))
        assert res["ghg_net_with_reversion_t_co2e"] >= res["ghg_net_t_co2e"] - 1e-12


def test_a_case_that_sells_no_credits_has_no_credited_or_paid_back_tonnes():
    # common practice: a credit exists only where it is sold (a buyer's price); a case with no credit price
    # has no credit volumes to show a lender, nor a payback liability at removal, though its soil still gains
    led = tea.build_ledger(_case(**{"carbon.credit_price_per_t_co2e": 0.0}))
    assert led["soc_change_t_c"].iloc[1:20].gt(0).all()  # the soil gains as before
    for line in ("credit_eligible_t_co2e", "credited_gross_t_co2e", "credited_t_co2e", "credit_buffer_t_co2e",
                 "credit_reversal_t_co2e", "credit_payback_t_co2e", "credit_payback_cost"):
        assert (led[line] == 0).all(), line
    sold = tea.build_ledger(_case())
    assert sold["credited_t_co2e"].sum() > 0 and sold["credit_payback_t_co2e"].sum() > 0
