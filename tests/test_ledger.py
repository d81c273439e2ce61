"""The ledger: facts of the trade and exact identities of the engine.

Facts of the trade (marked `common practice`: no single source) are checked as
directions and patterns on the demo cases, which serve as inputs only.
Identities are checked against numpy-financial (a reference library) or
against the model's own defining equations put back into the case.
"""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest
from numpy.testing import assert_allclose

import tea
from tea.inputs.case import load_case
from tea.model.ledger import LINE_NAMES

from conftest import CASES_DIR, DEMO_CASES, DEMO_IDS

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"  # rhizome-planted grass, late-winter harvest
SANDY = CASES_DIR / "sandy_slope_switchgrass.toml"  # seed-sown grass, US units, nominal rate
WILLOW = CASES_DIR / "flood_meadow_willow.toml"  # coppice, price per GJ
GRASS_CASES = [CLAY, SANDY]


@pytest.fixture(scope="module")
def demo():
    """Case, ledger and results of every demo case, by file stem."""
    out = {}
    for path in DEMO_CASES:
        case = load_case(path)
        frame = tea.build_ledger(case)
        out[path.stem] = (case, frame, tea.summarise(case, frame))
    return out


def _ledger(case):
    return tea.build_ledger(case)


def _npv(case) -> float:
    return tea.summarise(case)["npv"]


# --------------------------------------------------------------------------------------
# facts of the trade
# --------------------------------------------------------------------------------------
class TestHarvestTiming:
    """common practice: perennial grasses move nutrients back to their rhizomes as they senesce, so a
    late-winter harvest removes less N per t DM than an autumn (green) harvest, at the price of leaf
    and tip losses (less dry matter)."""

    @pytest.mark.parametrize("path", GRASS_CASES, ids=lambda p: p.stem)
    def test_late_winter_removes_less_n_per_tonne(self, path):
        case = load_case(path)
        late = _ledger(case.replace(**{"harvest.timing": "late_winter"}))
        autumn = _ledger(case.replace(**{"harvest.timing": "autumn"}))
        per_t_late = late["n_offtake_kg"].sum() / late["harvested_t_dm"].sum()
        per_t_autumn = autumn["n_offtake_kg"].sum() / autumn["harvested_t_dm"].sum()
        assert per_t_late < per_t_autumn  # common practice
        # year by year too, wherever there is a harvest
        cut = late["harvested_t_dm"] > 0
        assert (late["n_offtake_kg"][cut] / late["harvested_t_dm"][cut]
                < autumn["n_offtake_kg"][cut] / autumn["harvested_t_dm"][cut]).all()

    @pytest.mark.parametrize("path", GRASS_CASES, ids=lambda p: p.stem)
    def test_late_winter_yields_less_dry_matter(self, path):
        case = load_case(path)
        late = _ledger(case.replace(**{"harvest.timing": "late_winter"}))
        autumn = _ledger(case.replace(**{"harvest.timing": "autumn"}))
        assert late["harvested_t_dm"].sum() < autumn["harvested_t_dm"].sum()  # common practice
        cut = late["harvest"] > 0
        assert (late["harvested_t_dm"][cut] < autumn["harvested_t_dm"][cut]).all()
        assert (late["overwinter_loss_t_dm"][cut] > 0).all() and (autumn["overwinter_loss_t_dm"] == 0).all()

    @pytest.mark.parametrize("path", GRASS_CASES, ids=lambda p: p.stem)
    def test_late_winter_crop_is_drier(self, path):
        # common practice: a late-harvested grass is drier, so fewer fresh tonnes are hauled per t DM
        case = load_case(path)
        late = _ledger(case.replace(**{"harvest.timing": "late_winter"}))
        autumn = _ledger(case.replace(**{"harvest.timing": "autumn"}))
        assert (late["sold_fresh_t"].sum() / late["sold_t_dm"].sum()
                < autumn["sold_fresh_t"].sum() / autumn["sold_t_dm"].sum())


class TestEstablishment:
    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_establishment_years_are_cash_negative(self, stem, demo):
        # common practice: establishment years are cash-negative; a perennial is not harvested, or barely,
        # in its first season. Establishment years: planting (0), the first season, and any before the
        # first harvest.
        case, frame, _ = demo[stem]
        years = sorted({0, 1} | set(range(case["harvest.first_year"])))
        assert (frame.loc[years, "net_cash_flow"] < 0).all(), frame.loc[years, "net_cash_flow"]

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_establishment_costs_fall_at_planting(self, stem, demo):
        case, frame, _ = demo[stem]
        for name in ("est_site_preparation", "est_weed_control", "est_planting_material",
                     "est_planting_operation", "est_fertiliser", "est_fencing_other", "grant"):
            assert (frame[name].iloc[1:] == 0).all(), name
        # planting material = units per ha x unit price (definition of the line)
        assert frame.loc[0, "est_planting_material"] == pytest.approx(
            case["establishment.planting_units_per_ha"] * case["establishment.planting_unit_price"], rel=1e-12)


class TestYieldPattern:
    def test_coppice_yields_nothing_between_harvests(self, demo):
        # common practice: a short-rotation coppice yields nothing in the years between harvests
        case, frame, _ = demo["flood_meadow_willow"]
        first, every, life = case["harvest.first_year"], case["harvest.interval_years"], case.stand_life
        assert every > 1
        expected = list(range(first, life + 1, every))  # first_year + k * interval, up to the stand life
        assert frame.index[frame["harvest"] > 0].tolist() == expected
        assert frame.index[frame["harvested_t_dm"] > 0].tolist() == expected
        between = ~frame.index.isin(expected)
        for name in ("standing_t_dm", "harvested_t_dm", "sold_t_dm", "biomass_revenue", "harvest_cost",
                     "baling_chipping_cost", "haulage_cost", "n_offtake_kg"):
            assert (frame.loc[between, name] == 0).all(), name

    def test_coppice_harvest_takes_the_growth_since_the_last(self, demo):
        # each harvest in year h cuts the growth of the `interval` years ending in h (tea.agronomy convention)
        case, frame, _ = demo["flood_meadow_willow"]
        every = case["harvest.interval_years"]
        for h in frame.index[frame["harvest"] > 0]:
            grown = frame.loc[h - every + 1: h, "growth_t_dm"].sum()
            assert frame.loc[h, "standing_t_dm"] == pytest.approx(grown, rel=1e-12)

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_ramp_up_then_plateau(self, stem, demo):
        case, frame, _ = demo[stem]
        ramp = case["yield.ramp_up_fractions"]
        as_planted = [ramp[t - 1] if t <= len(ramp) else 1.0 for t in range(1, case.stand_life + 1)]
        late = [0.0] + as_planted[:-1]  # a failed establishment ramps up a year late
        p = case["establishment.failure_probability"]
        expected = [0.0] + [(1 - p) * a + p * b for a, b in zip(as_planted, late)]
        assert_allclose(frame["growth_fraction"], expected, rtol=0, atol=1e-15)
        mature = case["yield.mature_t_dm_per_ha"] * case["yield.site_factor"]
        assert_allclose(frame["growth_t_dm"], mature * np.array(expected), rtol=1e-12)

    def test_decline_after_the_plateau(self):
        # compounding decline after decline_start_year: (1 - d)^(t - start)
        case = load_case(CLAY).replace(**{"yield.decline_start_year": 12, "yield.decline_per_year": 0.05,
                                          "establishment.failure_probability": 0.0})  # the ramp as planted
        frame = _ledger(case)
        ramp = case["yield.ramp_up_fractions"]
        for t in range(1, case.stand_life + 1):
            base = ramp[t - 1] if t <= len(ramp) else 1.0
            assert frame.loc[t, "growth_fraction"] == pytest.approx(base * 0.95 ** max(t - 12, 0), rel=1e-12)

    @pytest.mark.parametrize("stem", ["clay_corner_miscanthus", "sandy_slope_switchgrass"])
    def test_grass_harvest_every_year_from_the_first(self, stem, demo):
        case, frame, _ = demo[stem]
        assert frame.index[frame["harvest"] > 0].tolist() == list(range(case["harvest.first_year"], case.stand_life + 1))

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_losses_chain(self, stem, demo):
        # standing -> overwinter loss -> field loss -> harvested -> storage loss -> sold (mass balance)
        case, f, _ = demo[stem]
        assert_allclose(f["standing_t_dm"] - f["overwinter_loss_t_dm"] - f["field_loss_t_dm"], f["harvested_t_dm"],
                        rtol=1e-12, atol=1e-12)
        assert_allclose(f["harvested_t_dm"] - f["storage_loss_t_dm"], f["sold_t_dm"], rtol=1e-12, atol=1e-12)
        # fresh mass at a wet-basis moisture m: dry / (1 - m) (definition of wet-basis moisture)
        cut = f["harvest"] > 0
        assert_allclose(f["sold_fresh_t"][cut], f["sold_t_dm"][cut] / (1 - f["moisture"][cut]), rtol=1e-12)


class TestTiming:
    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_removal_cost_in_the_last_year_only(self, stem, demo):
        case, frame, _ = demo[stem]
        removal = frame["removal_cost"]
        assert removal.loc[case.stand_life] == case["costs.removal_per_ha"]
        assert (removal.drop(case.stand_life) == 0).all()
        assert frame.index[-1] == case.stand_life

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_yearly_costs_run_years_1_to_life(self, stem, demo):
        case, frame, _ = demo[stem]
        for line, key in (("overheads", "costs.overheads_per_ha"), ("insurance", "costs.insurance_per_ha"),
                          ("upkeep", "costs.upkeep_per_ha"), ("rent", "costs.rent_per_ha"),
                          ("current_margin", "field.current_margin_per_ha")):
            assert frame.loc[0, line] == 0, line
            assert (frame[line].iloc[1:] == case[key]).all(), line


# --------------------------------------------------------------------------------------
# exact identities
# --------------------------------------------------------------------------------------
class TestCashIdentities:
    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_net_is_revenue_minus_cost(self, stem, demo):
        _, f, _ = demo[stem]
        assert_allclose(f["net_cash_flow"], f["total_revenue"] - f["total_cost"], rtol=1e-13, atol=0)
        # rent and overheads are paid under either use, so the current use nets margin - rent - overheads
        # (common practice: a partial budget counts only what changes)
        current_use = f["current_margin"] - f["rent"] - f["overheads"]
        assert_allclose(f["current_use_cash_flow"], current_use, rtol=1e-13, atol=0)
        assert_allclose(f["incremental_cash_flow"], f["net_cash_flow"] - current_use, rtol=1e-13, atol=1e-12)

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_totals_are_sums_of_their_lines(self, stem, demo):
        _, f, _ = demo[stem]
        costs = ["establishment_cost", "fertiliser_cost", "harvest_cost", "baling_chipping_cost", "haulage_cost",
                 "storage_cost", "drying_cost", "rent", "overheads", "insurance", "upkeep", "removal_cost",
                 "grant_clawback", "credit_payback_cost", "verification_cost", "operations_cost"]
        assert_allclose(f["total_cost"], f[costs].sum(axis=1), rtol=1e-12)
        revenue = ["biomass_revenue", "grant", "annual_payment", "carbon_credit_revenue"]
        assert_allclose(f["total_revenue"], f[revenue].sum(axis=1), rtol=1e-12)

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_npv_equals_numpy_financial(self, stem, demo):
        # numpy-financial npv (reference library): values[0] at t = 0, undiscounted
        case, f, res = demo[stem]
        rate = res.discount_rate_real
        expected = npf.npv(rate, f["net_cash_flow"].to_numpy())
        assert res["npv"] == pytest.approx(expected, rel=1e-12)
        assert res["npv_vs_current_use"] == pytest.approx(npf.npv(rate, f["incremental_cash_flow"].to_numpy()), rel=1e-12)
        assert_allclose(f["discount_factor"], (1 + rate) ** -np.arange(len(f)), rtol=1e-13)

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_npv_at_irr_is_zero(self, stem, demo):
        # NPV(IRR) = 0 (definition of the IRR; numpy-financial npv as the reference)
        _, f, res = demo[stem]
        flows = f["net_cash_flow"].to_numpy()
        assert res["irr"] is not None
        scale = np.abs(flows).sum()
        assert abs(npf.npv(res["irr"], flows)) <= 1e-6 * scale

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_irr_matches_numpy_financial(self, stem, demo):
        # numpy-financial irr (reference library), where it has exactly one rate
        _, f, res = demo[stem]
        reference = npf.irr(f["net_cash_flow"].to_numpy())
        assert res["irr"] == pytest.approx(reference, rel=1e-9)

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_mirr_matches_numpy_financial(self, stem, demo):
        # numpy-financial mirr (reference library) at the real discount rate for both rates
        case, f, res = demo[stem]
        r = res.discount_rate_real
        assert res["mirr"] == pytest.approx(npf.mirr(f["net_cash_flow"].to_numpy(), r, r), rel=1e-9)

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_whole_field_is_per_ha_times_area(self, stem, demo):
        case, _, res = demo[stem]
        whole = res.whole_field
        from tea.model.results import FIGURE_BY_NAME

        for name, per_ha in res.per_ha.items():
            if per_ha is None:
                assert whole[name] is None
            elif FIGURE_BY_NAME[name].scales:
                assert whole[name] == pytest.approx(per_ha * case.area_ha, rel=1e-13), name
            else:
                assert whole[name] == per_ha, name

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_cumulative_lines(self, stem, demo):
        _, f, _ = demo[stem]
        assert_allclose(f["cumulative_cash_flow"], np.cumsum(f["net_cash_flow"]), rtol=1e-12, atol=1e-9)
        assert_allclose(f["cumulative_discounted_cash_flow"].iloc[-1], demo[stem][2]["npv"], rtol=1e-12)

    def test_every_line_present(self, demo):
        for _, frame, _ in demo.values():
            assert list(frame.columns) == list(LINE_NAMES)
            ratios = ["dscr", "interest_cover", "llcr"]  # blank where no debt service, interest or balance falls due
            assert np.isfinite(frame.drop(columns=ratios).to_numpy(float)).all()


class TestBreakEven:
    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_breakeven_price_gives_npv_zero(self, stem, demo):
        # definition: the price at which NPV = 0, put back into the case
        case, _, res = demo[stem]
        key = "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"
        at_breakeven = case.replace(**{key: res["breakeven_price"]})
        assert abs(_npv(at_breakeven)) < 1e-6

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_breakeven_price_vs_current_use(self, stem, demo):
        case, _, res = demo[stem]
        key = "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"
        at_breakeven = case.replace(**{key: res["breakeven_price_vs_current_use"]})
        assert abs(tea.summarise(at_breakeven)["npv_vs_current_use"]) < 1e-6

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_breakeven_yield_gives_npv_zero(self, stem, demo):
        case, _, res = demo[stem]
        be = res["breakeven_mature_yield_t_dm_per_ha"]
        assert be is not None and be > 0
        at_breakeven = case.replace(**{"yield.mature_t_dm_per_ha": be})
        assert abs(_npv(at_breakeven)) < 1e-6

    @pytest.mark.parametrize("stem", DEMO_IDS)
    def test_breakeven_yield_vs_current_use(self, stem, demo):
        case, _, res = demo[stem]
        be = res["breakeven_mature_yield_vs_current_use_t_dm_per_ha"]
        at_breakeven = case.replace(**{"yield.mature_t_dm_per_ha": be})
        assert abs(tea.summarise(at_breakeven)["npv_vs_current_use"]) < 1e-6


class TestRates:
    def test_nominal_rate_made_real_by_fisher(self, demo):
        # Fisher equation (from memory: standard identity): 1 + i_nominal = (1 + i_real)(1 + inflation)
        case, f, res = demo["sandy_slope_switchgrass"]
        assert case["finance.rate_basis"] == "nominal"
        nominal, inflation = case["finance.discount_rate"], case["finance.inflation"]
        real = (1 + nominal) / (1 + inflation) - 1
        assert res.discount_rate_real == pytest.approx(real, rel=1e-14)
        assert case.real_discount_rate == pytest.approx(real, rel=1e-14)
        assert_allclose(f["discount_factor"], (1 + real) ** -np.arange(len(f)), rtol=1e-13)

    def test_fisher_worked_example(self):
        # Fisher equation (from memory: standard identity): 8 % nominal, 2 % inflation -> 1.08/1.02 - 1 = 5.882 %
        case = load_case(CLAY).replace(**{"finance.rate_basis": "nominal", "finance.discount_rate": 0.08,
                                          "finance.inflation": 0.02})
        assert tea.summarise(case).discount_rate_real == pytest.approx(0.058824, abs=5e-7)

    def test_real_rate_is_used_as_given(self, demo):
        case, _, res = demo["clay_corner_miscanthus"]
        assert case["finance.rate_basis"] == "real"
        assert res.discount_rate_real == case["finance.discount_rate"]

    def test_eav_is_npv_over_annuity_factor(self, demo):
        # annuity factor (1 - (1+r)^-n)/r = present value of 1 a year (textbook annuity formula)
        for case, _, res in demo.values():
            r, n = res.discount_rate_real, case.stand_life
            af = -npf.pv(r, n, 1.0)  # numpy-financial pv of 1 a year (reference library)
            assert res["eav"] == pytest.approx(res["npv"] / af, rel=1e-12)

    def test_eav_at_a_tiny_rate_is_npv_over_years(self):
        # regression: a rate too small for 1 + r to differ from 1 gave an annuity factor of 0 (EAV undefined);
        # the limit r -> 0 of the annuity factor (1 - (1+r)^-n)/r is n (calculus: l'Hopital)
        case = load_case(CLAY).replace(**{"finance.discount_rate": 1e-18})
        res = tea.summarise(case)
        assert res["eav"] == pytest.approx(res["npv"] / case.stand_life, rel=1e-12)


class TestLoan:
    """The establishment loan against numpy-financial pmt/ipmt/ppmt (reference library)."""

    @pytest.mark.parametrize("stem", ["clay_corner_miscanthus", "flood_meadow_willow"])
    def test_interest_only_grace(self, stem, demo):
        case = demo[stem][0].replace(**{"loan.grace_interest": "interest_only", "loan.profile": "annuity",
                                         "loan.grace_years": 2})
        f, res = _ledger(case), tea.summarise(case)
        r, n, g = case["loan.rate"], case["loan.term_years"], case["loan.grace_years"]
        # the share is of the year-0 establishment cost less the grant (loan.sized_on default)
        principal = case["loan.share_of_establishment"] * (f.loc[0, "establishment_cost"]
                                                           - case["establishment.grant_per_ha"])
        assert f.loc[0, "loan_drawdown"] == pytest.approx(principal, rel=1e-13)
        for t in range(1, g + 1):  # grace years: interest on the whole loan, no principal
            assert f.loc[t, "loan_interest"] == pytest.approx(principal * r, rel=1e-13)
            assert f.loc[t, "loan_principal"] == 0
        payment = -npf.pmt(r, n, principal)
        for k in range(1, n + 1):
            t = g + k
            assert f.loc[t, "loan_interest"] == pytest.approx(-npf.ipmt(r, k, n, principal), rel=1e-10)
            assert f.loc[t, "loan_principal"] == pytest.approx(-npf.ppmt(r, k, n, principal), rel=1e-10)
            assert f.loc[t, "debt_service"] == pytest.approx(payment, rel=1e-12)
            # balance after payment k: -fv of the loan after k payments (numpy-financial fv)
            assert f.loc[t, "loan_balance"] == pytest.approx(-npf.fv(r, k, -payment, principal), rel=1e-9, abs=1e-9)
        assert (f.loc[g + n + 1:, "debt_service"] == 0).all()
        assert f["loan_principal"].sum() == pytest.approx(principal, rel=1e-12)
        assert res["loan_payment"] == pytest.approx(payment, rel=1e-12)

    def test_capitalised_grace(self):
        case = load_case(CLAY).replace(**{"loan.grace_interest": "capitalised", "loan.profile": "annuity"})
        f = _ledger(case)
        r, n, g = case["loan.rate"], case["loan.term_years"], case["loan.grace_years"]
        principal = f.loc[0, "loan_drawdown"]
        grown = -npf.fv(r, g, 0.0, principal)  # principal with g years of interest added (numpy-financial fv)
        assert f.loc[g, "loan_balance"] == pytest.approx(grown, rel=1e-12)
        assert (f.loc[1:g, "debt_service"] == 0).all()
        for k in range(1, n + 1):
            assert f.loc[g + k, "loan_interest"] == pytest.approx(-npf.ipmt(r, k, n, grown), rel=1e-10)
            assert f.loc[g + k, "loan_principal"] == pytest.approx(-npf.ppmt(r, k, n, grown), rel=1e-10)
            assert f.loc[g + k, "debt_service"] == pytest.approx(-npf.pmt(r, n, grown), rel=1e-12)

    def test_tiny_rate_is_repaid_in_equal_parts(self):
        # regression: a rate too small for 1 + r to differ from 1 gave an infinite payment;
        # numpy-financial pmt at rate 0 is principal / n
        case = load_case(CLAY).replace(**{"loan.rate": 1e-18, "loan.profile": "annuity"})
        f = _ledger(case)
        n, g = case["loan.term_years"], case["loan.grace_years"]
        principal = f.loc[0, "loan_drawdown"]
        assert_allclose(f.loc[g + 1: g + n, "debt_service"], -npf.pmt(0.0, n, principal), rtol=1e-12)
        assert np.isfinite(f["loan_balance"]).all()

    @pytest.mark.parametrize("stem", ["clay_corner_miscanthus", "flood_meadow_willow"])
    def test_dscr_definition(self, stem, demo):
        # DSCR = cash available for debt service / (principal + interest) (Yescombe, Principles of Project
        # Finance, 2nd ed. 2014, ch. 12); the cash available counts what the case's lender counts
        case, f, _ = demo[stem]
        inflate = (1 + case["finance.inflation"]) ** f["year"]
        cfads = (f["net_cash_flow"] - f["tax"]
                 - (1 - case["loan.cfads_credit_share"]) * f["carbon_credit_revenue"]
                 - (0 if case["loan.cfads_counts_grants"] else f["grant"])
                 - (1 - case["loan.cfads_uncontracted_share"]) * f["uncontracted_revenue"]) * inflate
        assert_allclose(f["cfads"], cfads, rtol=1e-13, atol=1e-9)
        due = (f["debt_service"] > 0) & (cfads >= 0)
        assert_allclose(f.loc[due, "dscr"], cfads[due] / f.loc[due, "debt_service"], rtol=1e-13)
        assert f.loc[~due, "dscr"].isna().all()
        no_wc = case["working_capital.limit_per_ha"] == 0 and case["loan.reserve_years"] == 0
        if no_wc and case["tax.rate"] == 0:
            assert_allclose(f["equity_cash_flow"], f["net_cash_flow"] + (f["loan_drawdown"] - f["debt_service"])
                            / inflate, rtol=1e-13, atol=1e-9)
