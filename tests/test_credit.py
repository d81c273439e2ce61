"""The credit file's arithmetic: repayment profiles, cover ratios, tax, escalation, contracts, the IRR rule.

Outside checks: numpy-financial 1.0 (npv, irr, pmt, ipmt, ppmt), hand-worked
examples recomputed here step by step from their definitions in Yescombe,
*Principles of Project Finance*, 2nd ed., 2014, ch. 12 (DSCR = CFADS / debt
service; LLCR = present value at the loan's rate of CFADS over the remaining
loan life / debt outstanding; interest cover = CFADS / interest; sculpting:
debt service = CFADS / target DSCR, the debt the present value of that
service), and Norström, C. J. (1972), "A sufficient condition for a unique
nonnegative internal rate of return", Journal of Financial and Quantitative
Analysis 7(3) (one sign change of the cumulative cash flow: one positive IRR).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import numpy_financial as npf
import pytest
from numpy.testing import assert_allclose

import tea
from tea.methods.irr import irr_by_rule, irr_rule_explained

ROOT = Path(__file__).resolve().parents[1]
CLAY = ROOT / "cases" / "clay_corner_miscanthus.toml"
WILLOW = ROOT / "cases" / "flood_meadow_willow.toml"


def run(path, **changes):
    case = tea.load_case(path).replace(**changes)
    return case, tea.build_ledger(case), tea.summarise(case)


class TestProfiles:
    def test_straight_line_repays_equal_principal(self):
        case, f, res = run(CLAY, **{"loan.profile": "straight_line", "loan.grace_interest": "interest_only",
                                    "loan.grace_years": 2})
        r, n, g = case["loan.rate"], case["loan.term_years"], case["loan.grace_years"]
        amount = f.loc[0, "loan_drawdown"]
        balance = amount
        for k in range(1, n + 1):  # hand-worked: equal principal, interest on the opening balance
            t = g + k
            assert f.loc[t, "loan_principal"] == pytest.approx(amount / n, rel=1e-12)
            assert f.loc[t, "loan_interest"] == pytest.approx(balance * r, rel=1e-12)
            balance -= amount / n
            assert f.loc[t, "loan_balance"] == pytest.approx(balance, rel=1e-9, abs=1e-9)
        assert res["loan_payment"] == pytest.approx(amount / n + amount * r, rel=1e-12)  # the first, largest

    def test_sculpted_loan_has_the_target_dscr_in_every_test_year(self):
        # a target high enough that the debt it repays is below the loan asked for: the loan is capped
        case, f, res = run(WILLOW, **{"loan.profile": "sculpted", "loan.share_of_establishment": 1.0,
                                      "loan.sculpt_dscr": 3.0})
        test = f["covenant_test_year"] == 1
        assert test.sum() >= 3  # the harvest years within the term
        assert_allclose(f.loc[test, "dscr"], 3.0, rtol=1e-10)  # service = CFADS / target, year by year
        assert f["loan_balance"].iloc[-1] == pytest.approx(0.0, abs=1e-8)
        # the loan is capped at the present value, at its rate, of CFADS / target over the repayment years
        g, n, r = case["loan.grace_years"], case["loan.term_years"], case["loan.rate"]
        service = np.where((f["year"] > g) & (f["year"] <= g + n), np.maximum(f["cfads"], 0) / 3.0, 0.0)
        capacity = npf.npv(r, np.concatenate([[0.0], service[g + 1:]]))
        cap = capacity / (1 + r) ** g if case["loan.grace_interest"] == "capitalised" else capacity
        asked = f.loc[0, "establishment_cost"] - case["establishment.grant_per_ha"]
        assert cap < asked and res["loan_principal"] == pytest.approx(cap, rel=1e-10)

    def test_llcr_of_a_loan_sculpted_to_one_dscr_is_that_dscr(self):
        """From the definitions: with debt service = CFADS / target in every repayment year, the present value at
        the loan's rate of the CFADS still to come is target times that of the service still to come, which is
        the balance owed at the start of the year (interest at the same rate): LLCR = target, every year."""
        case, f, res = run(CLAY, **{"loan.profile": "sculpted", "loan.share_of_establishment": 1.0,
                                    "loan.sculpt_dscr": 2.2})
        g, end = case["loan.grace_years"], case["loan.grace_years"] + case["loan.term_years"]
        assert (f.loc[g + 1:end, "cfads"] > 0).all()  # every repayment year has cash: service = CFADS / 2.2
        assert_allclose(f.loc[g + 1:end, "dscr"], 2.2, rtol=1e-10)
        assert_allclose(f.loc[g + 1:end, "llcr"], 2.2, rtol=1e-9)

    def test_sculpted_loan_below_its_capacity_keeps_one_ratio(self):
        case, f, res = run(WILLOW, **{"loan.profile": "sculpted", "loan.share_of_establishment": 0.2,
                                      "loan.sculpt_dscr": 1.4})
        test = f["covenant_test_year"] == 1
        ratios = f.loc[test, "dscr"].to_numpy()
        assert ratios.min() >= 1.4 and np.ptp(ratios) <= 1e-9 * ratios.max()
        assert f["loan_balance"].iloc[-1] == pytest.approx(0.0, abs=1e-8)

    def test_sculpted_loan_capitalises_the_interest_a_year_without_cash_leaves_unpaid(self):
        # the demo willow is harvested every third year: most of its repayment years have no cash, so its
        # sculpted service is 0 there and the year's interest is added to the balance, not repaid as a
        # negative principal
        case, f, res = run(WILLOW)
        assert case["loan.profile"] == "sculpted"
        r, g, n = case["loan.rate"], case["loan.grace_years"], case["loan.term_years"]
        opening = f["loan_balance"].shift(1, fill_value=0.0)
        assert (f["loan_principal"] >= 0).all() and (f["loan_capitalised_interest"] >= 0).all()
        # the roll-forward, year by year (plain arithmetic): opening + drawn + capitalised - repaid = closing
        assert_allclose(opening + f["loan_drawdown"] + f["loan_capitalised_interest"] - f["loan_principal"],
                        f["loan_balance"], rtol=1e-12, atol=1e-9)
        # a repayment year with no cash: nothing paid, interest on the opening balance capitalised
        idle = (f["year"] > g) & (f["year"] < g + n) & (f["cfads"] < 0)
        assert idle.sum() >= 4
        assert_allclose(f.loc[idle, "loan_capitalised_interest"], opening[idle] * r, rtol=1e-12)
        assert (f.loc[idle, "loan_principal"] == 0).all() and (f.loc[idle, "debt_service"] == 0).all()
        # debt service is the interest paid plus the principal; all principal repaid is the loan drawn plus
        # every interest capitalised (the balance ends at zero)
        assert_allclose(f["debt_service"], f["loan_interest"] - f["loan_capitalised_interest"] + f["loan_principal"],
                        rtol=1e-12, atol=1e-9)
        assert f["loan_principal"].sum() == pytest.approx(
            f["loan_drawdown"].sum() + f["loan_capitalised_interest"].sum(), rel=1e-12)
        assert f["loan_balance"].iloc[-1] == pytest.approx(0.0, abs=1e-8)


class TestCoverRatios:
    def test_llcr_and_interest_cover(self):
        case, f, res = run(CLAY, **{"loan.profile": "annuity", "loan.grace_years": 2})
        r, end = case["loan.rate"], case["loan.grace_years"] + case["loan.term_years"]
        for t in range(1, end + 1):
            opening = f.loc[t - 1, "loan_balance"]
            if opening <= 0:
                continue
            future = f.loc[t:end, "cfads"].to_numpy()
            # years t..end, each at its end, back to the start of year t: numpy-financial's npv with a 0 first
            pv = npf.npv(r, np.concatenate([[0.0], future]))
            assert f.loc[t, "llcr"] == pytest.approx(pv / opening, rel=1e-10)
            paid = f.loc[t, "debt_service"] - f.loc[t, "loan_principal"]  # interest paid, not capitalised
            if paid > 0 and f.loc[t, "cfads"] >= 0:
                assert f.loc[t, "interest_cover"] == pytest.approx(f.loc[t, "cfads"] / paid)

    def test_an_llcr_below_zero_is_no_cover_not_a_ratio(self):
        # biomass given away: the cash available is negative, so the present value of the remaining loan life's
        # CFADS is below zero (worked here from the definition with numpy-financial): no cover. The ledger shows
        # no ratio and flags the year; the figures have no value, with the note saying why.
        case, f, res = run(CLAY, **{"revenue.price_per_t_dm": 0.0})
        r, end = case["loan.rate"], case["loan.grace_years"] + case["loan.term_years"]
        covered = 0
        for t in range(1, end + 1):
            opening = f.loc[t - 1, "loan_balance"]
            pv = npf.npv(r, np.concatenate([[0.0], f.loc[t:end, "cfads"].to_numpy()]))
            if pv < 0:
                assert np.isnan(f.loc[t, "llcr"]) and f.loc[t, "llcr_no_cover"] == 1
            else:
                covered += 1
                assert f.loc[t, "llcr"] == pytest.approx(pv / opening, rel=1e-10) and f.loc[t, "llcr_no_cover"] == 0
        assert covered == 0 and res["llcr_no_cover_years"] == end
        assert res["llcr"] is None and res["min_llcr"] is None and res["llcr_no_cover_at_first_test"] == 1
        assert "no cover" in res.notes["llcr"] and "no cover" in res.notes["min_llcr"]
        # the terminal says so in words, no negative ratio
        from tea.outputs.terminal import summary_text

        shown = [ln for ln in summary_text(case, f, res, yearly=False).splitlines() if "LLCR" in ln]
        assert len(shown) == 1 and "below 0: no cover" in shown[0] and "-" not in shown[0].replace("–", "")
        # the demo as given is covered in every year: a ratio, no flag
        case, f, res = run(CLAY)
        assert res["llcr"] > 0 and res["llcr_no_cover_years"] == 0 and "llcr" not in res.notes
        shown = [ln for ln in summary_text(case, f, res, yearly=False).splitlines() if "LLCR" in ln]
        assert len(shown) == 1 and f"{res['llcr']:.2f}" in shown[0]

    def test_negative_cash_is_no_ratio_but_money_short(self):
        case, f, res = run(WILLOW, **{"loan.profile": "annuity"})
        short = (f["debt_service"] > 0) & (f["cfads"] < 0)
        if short.any():
            assert f.loc[short, "dscr"].isna().all()
            assert_allclose(f.loc[short, "dscr_shortfall"], f.loc[short, "debt_service"] - f.loc[short, "cfads"])

    def test_breakeven_price_at_the_covenant(self):
        case, f, res = run(CLAY, **{"loan.profile": "annuity", "loan.grace_years": 2,
                                    "loan.grace_interest": "capitalised"})
        price = res["breakeven_price_at_covenant"]
        again = tea.summarise(case.replace(**{"revenue.price_per_t_dm": price}))
        assert again["min_dscr"] == pytest.approx(case["loan.dscr_covenant"], rel=1e-9)

    def test_sources_equal_uses(self):
        for path in (CLAY, WILLOW):
            case, f, res = run(path, **{"loan.reserve_years": 0.5})
            sources = res["sources_loan"] + res["sources_bridge"] + res["sources_grant"] + res["sources_own"]
            assert sources == pytest.approx(res["uses_total"], rel=1e-12)
            assert res["uses_reserve"] == pytest.approx(0.5 * f.loc[1, "debt_service"], rel=1e-12)
            assert res["loan_to_cost"] == pytest.approx(res["sources_loan"] / res["uses_establishment"])


class TestGrantAndWorkingCapital:
    def test_grant_in_arrears_is_bridged(self):
        case, f, res = run(WILLOW, **{"establishment.grant_year": 1, "loan.bridge_grant": True})
        grant, r = case["establishment.grant_per_ha"], case["loan.rate"]
        assert grant > 0
        assert f.loc[0, "grant"] == 0 and f.loc[1, "grant"] == pytest.approx(grant)
        assert f.loc[0, "bridge_drawdown"] == pytest.approx(grant)
        assert f.loc[1, "bridge_repayment"] == pytest.approx(grant)
        assert f.loc[1, "bridge_interest"] == pytest.approx(grant * r, rel=1e-12)

    def test_working_capital_covers_the_shortfall(self):
        case, f, res = run(WILLOW, **{"working_capital.limit_per_ha": 5000.0, "working_capital.rate": 0.08,
                                      "loan.profile": "annuity"})
        # with a limit large enough, the grower's own cash is never negative after planting
        assert (f.loc[1:, "equity_cash_flow"] >= -1e-9).all()
        assert f["working_capital_balance"].iloc[-1] == pytest.approx(0.0, abs=1e-9)
        drawn = f["working_capital_drawn"].sum()
        assert drawn > 0 and f["working_capital_repaid"].sum() == pytest.approx(drawn, rel=1e-12)


class TestTax:
    def test_losses_carried_forward_by_hand(self):
        case, f, res = run(CLAY, **{"tax.rate": 0.25, "tax.establishment": "expensed"})
        # hand-worked (common practice): result = receipts - costs; a loss is carried forward and set against
        # later profits
        pool, expected = 0.0, []
        for t in range(len(f)):
            result = f.loc[t, "total_revenue"] - f.loc[t, "total_cost"]
            used = min(pool, max(result, 0.0))
            pool = pool - used + max(-result, 0.0)
            expected.append(0.25 * max(result - used, 0.0))
        assert_allclose(f["tax"], expected, rtol=1e-12, atol=1e-9)
        assert res["npv_after_tax"] == pytest.approx(npf.npv(case.real_discount_rate, f["net_cash_flow"] - f["tax"]),
                                                     rel=1e-12)

    def test_amortised_establishment_is_deducted_over_the_years(self):
        case, f, res = run(CLAY, **{"tax.rate": 0.2, "tax.amortisation_years": 8})
        total = f["establishment_cost"].sum()
        assert f["establishment_deduction"].sum() == pytest.approx(total, rel=1e-12)
        assert_allclose(f.loc[1:8, "establishment_deduction"], total / 8, rtol=1e-12)

    def test_relieved_losses_save_tax_at_once(self):
        case, f, res = run(CLAY, **{"tax.rate": 0.25, "tax.losses": "relieved", "tax.establishment": "expensed"})
        assert_allclose(f["tax"], 0.25 * (f["total_revenue"] - f["total_cost"]), rtol=1e-12, atol=1e-9)


class TestEscalation:
    def test_costs_rent_and_contract_price_by_year(self):
        case, f, res = run(CLAY, **{"costs.change_per_year": 0.02, "costs.rent_change_per_year": 0.01,
                                    "costs.rent_per_ha": 100.0, "revenue.contract_years": 5,
                                    "revenue.contract_price_per_t_dm": 110.0, "revenue.contract_change_per_year": 0.0})
        t = f["year"].to_numpy()
        assert_allclose(f["rent"].iloc[1:], 100.0 * 1.01 ** (t[1:] - 1), rtol=1e-12)
        base = tea.build_ledger(tea.load_case(CLAY))
        harvest = f["harvest"] > 0
        assert_allclose(f.loc[harvest, "harvest_cost"], base.loc[harvest, "harvest_cost"] * 1.02 ** (t[harvest] - 1),
                        rtol=1e-12)
        contract = (t >= 1) & (t <= 5)
        assert_allclose(f.loc[contract, "price_per_t_dm"], 110.0, rtol=1e-12)
        assert_allclose(f.loc[t > 5, "price_per_t_dm"], case["revenue.price_per_t_dm"], rtol=1e-12)
        # a hand-built cash flow discounted with numpy-financial gives the same NPV
        assert res["npv"] == pytest.approx(npf.npv(case.real_discount_rate, f["total_revenue"] - f["total_cost"]),
                                           rel=1e-12)

    def test_nominal_escalation_is_made_real(self):
        case, f, res = run(CLAY, **{"finance.escalation_basis": "nominal", "finance.inflation": 0.02,
                                    "costs.rent_per_ha": 100.0, "costs.rent_change_per_year": 0.02})
        assert_allclose(f["rent"].iloc[1:], 100.0, rtol=1e-12)  # rent rising with inflation: flat in today's money


class TestIrrRule:
    # a stand with a removal cost: two sign changes, one change of the cumulative cash flow
    REMOVAL = [-1000.0, 150.0, 350.0, 400.0, 400.0, 400.0, -250.0]

    def test_removal_cost_gives_the_positive_root_of_numpy_financial(self):
        rate = irr_by_rule(self.REMOVAL)
        assert rate > 0 and rate == pytest.approx(npf.irr(self.REMOVAL), abs=1e-12)
        assert npf.npv(rate, self.REMOVAL) == pytest.approx(0.0, abs=1e-9)
        _, reason, note = irr_rule_explained(self.REMOVAL)
        assert reason is None and "Norström" in note

    def test_two_positive_roots_stay_undefined(self):
        flows = [-100.0, 230.0, -132.0]  # NPV = 0 at 10 % and 20 %: the cumulative changes sign twice
        assert np.isnan(irr_by_rule(flows))
        x = np.roots(flows[::-1])  # NPV as a polynomial in x = 1/(1+r): numpy's roots
        assert sorted(np.round(1 / x - 1, 12)) == [0.1, 0.2]

    def test_a_case_with_a_large_removal_cost(self):
        case, f, res = run(CLAY, **{"costs.removal_per_ha": 3000.0})
        flows = f["net_cash_flow"].to_numpy()
        assert np.sum(np.diff(np.sign(flows[flows != 0])) != 0) >= 2  # Descartes promises no single rate
        x = np.roots(flows[::-1])  # NPV as a polynomial in x = 1/(1+r)
        rates = [1 / v.real - 1 for v in x if abs(v.imag) < 1e-9 and v.real > 0]
        positive = [r for r in rates if r > 0]
        assert len(positive) == 1 and len(rates) >= 2  # one positive rate (Norström) and a negative one
        assert res["irr"] == pytest.approx(positive[0], abs=1e-9)
        assert npf.npv(res["irr"], flows) == pytest.approx(0.0, abs=1e-6)
        assert "Norström" in res.notes["irr"]


def test_a_covenant_first_tested_after_the_loan_has_ended_is_refused():
    """A covenant whose first test year comes after the last repayment would never be tested: one line naming
    loan.covenant_first_year and the years allowed (common lending practice: a covenant is tested while the
    debt is outstanding)."""
    from tea.core.errors import CaseError
    from tea.inputs.case import load_text

    from conftest import CASES_DIR

    text = (CASES_DIR / "clay_corner_miscanthus.toml").read_text(encoding="utf-8")
    text = text.replace("[loan]", "[loan]\ncovenant_first_year = 30", 1)
    with pytest.raises(CaseError) as err:
        load_text(text, source="late_covenant.toml")
    [p] = err.value.problems
    assert p.key == "loan.covenant_first_year" and "never be tested" in p.message


def test_tax_a_loan_cut_short_and_uncovered_debt_service_are_told_in_the_terminal(tmp_path):
    """What a grower must not miss reaches the terminal summary, from the engine's own figures: the after-tax
    NPV and IRR of a taxed case, the debt service its cash does not cover in interest-only grace years, and a
    sculpted loan drawn below what was asked for."""
    from conftest import CASES_DIR, run_cli

    clay = (CASES_DIR / "clay_corner_miscanthus.toml").read_text(encoding="utf-8").split("# --- What moves")[0]
    taxed = clay.replace('grace_interest = "capitalised"', 'grace_interest = "interest_only"', 1) \
        + '\n[tax]\nrate = 0.25\nestablishment = "amortised"\namortisation_years = 10\n'
    path = tmp_path / "taxed.toml"
    path.write_text(taxed, encoding="utf-8")
    res = run_cli(["run", path, "--brief"])
    assert res.code == 0, res.text
    figures = tea.summarise(tea.load_case(path))
    assert figures["tax_total"] > 0 and figures["money_short_of_debt_service"] > 0
    assert "NPV after tax" in res.out and "IRR after tax" in res.out
    assert "Debt service not covered" in res.out and "Largest yearly loan payment" in res.out
    sculpted = clay.replace("share_of_establishment = 0.6", "share_of_establishment = 1.0\nsculpt_dscr = 2.5", 1) \
        .replace('profile = "annuity"', 'profile = "sculpted"', 1)
    path = tmp_path / "sculpted.toml"
    path.write_text(sculpted, encoding="utf-8")
    figures = tea.summarise(tea.load_case(path))
    assert figures["loan_asked"] > figures["loan_principal"] > 0
    res = run_cli(["run", path, "--brief"])
    flat = " ".join(res.out.split())  # lines wrap at 100 characters
    assert "asked for: the sculpted profile draws at most what its target DSCR repays" in flat


def test_a_sculpt_target_given_to_another_profile_is_warned():
    """sculpt_dscr given with an annuity: not silently ignored, one warning naming the key."""
    from tea.inputs.case import load_text

    from conftest import CASES_DIR

    text = (CASES_DIR / "clay_corner_miscanthus.toml").read_text(encoding="utf-8")
    case = load_text(text.replace("[loan]", "[loan]\nsculpt_dscr = 2.0", 1), source="annuity.toml")
    assert any("loan.sculpt_dscr: applies to a sculpted profile only" in w for w in case.warnings)
    assert not [w for w in load_text(text, source="demo.toml").warnings if "sculpt" in w]


@pytest.mark.parametrize("profile, warned", [("annuity", True), ("straight_line", True), ("sculpted", False)])
def test_yearly_repayments_on_a_crop_cut_every_few_years_are_warned(profile, warned):
    """common practice (project finance): debt service that falls due every year needs cash every year; a
    coppice harvested every 3 years has none in the years between, where the DSCR is 0. The loan of a case
    carried over to such a crop (``tea new --from CASE --crop coppice``) is warned about, and the ledger
    shows why: a DSCR of 0 in a repayment year with no harvest."""
    from tea.inputs.case import load_text
    from tea.outputs.advice import grower_warnings

    from conftest import CASES_DIR

    text = (CASES_DIR / "flood_meadow_willow.toml").read_text(encoding="utf-8")
    assert 'profile = "sculpted"' in text
    case = load_text(text.replace('profile = "sculpted"', f'profile = "{profile}"', 1), source="w.toml")
    said = [w for w in case.warnings if "loan.profile" in w]
    assert bool(said) is warned
    if warned:
        assert "harvested every 3 years" in said[0] and "DSCR is 0" in said[0]
        assert any("no sale to repay it from" in w for w in grower_warnings(case))
        res = tea.summarise(case)
        assert res["min_dscr"] == 0.0


def test_the_page_tells_the_lender_of_debt_service_uncovered_in_grace_years(tmp_path):
    """A grace year whose interest the stand's cash does not cover lies outside the covenant test years, so
    the lowest DSCR does not show it: the page's loan line names the test years and the money left uncovered
    (common practice in loan reporting: cover ratios are quoted with the period they are tested over)."""
    from html import unescape

    from tea.outputs import report, terminal

    clay = CLAY.read_text(encoding="utf-8").split("# --- What moves")[0]
    path = tmp_path / "grace.toml"
    path.write_text(clay.replace('grace_interest = "capitalised"', 'grace_interest = "interest_only"', 1),
                    encoding="utf-8")
    case = tea.load_case(path)
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)
    from tea.model.evaluate import evaluate

    tested = evaluate(case.values, lines=["dscr_tested"], rows=1).lines["dscr_tested"][0]
    first_test = int(frame["year"][np.isfinite(tested[: len(frame)])].min())
    grace_short = frame["dscr_shortfall"][frame["year"] < first_test].sum()
    assert grace_short > 0  # the grace year's interest is not covered, and no test year sees it
    assert res["money_short_of_debt_service"] == pytest.approx(frame["dscr_shortfall"].sum(), rel=1e-12)
    html = unescape(report.summary_html(case, frame, res))
    shown = terminal._fig(res, case, "money_short_of_debt_service")
    assert f"lowest DSCR of the covenant test years {terminal._fig(res, case, 'min_dscr')}" in html
    assert f"the stand's cash leaves {shown} of debt service uncovered, grace years included" in html


@pytest.mark.parametrize("changes", [
    {},
    {"tax.rate": 0.25, "tax.losses": "relieved", "tax.establishment": "expensed"},  # tax relief at planting
    {"working_capital.limit_per_ha": 5000.0, "working_capital.rate": 0.08, "loan.share_of_establishment": 0.2},
    {"loan.reserve_years": 1.0, "establishment.grant_year": 2, "loan.bridge_grant": True},
])
def test_sources_equal_uses_from_the_planting_years_own_lines(changes):
    """Sources and uses of the planting year (Yescombe ch. 12: sources of funds equal their uses), each side
    from its own ledger lines: the own funds are the own cash flow of year 0 paid out, not what the other
    sources leave, so the sum is a check of the loan, bridge, grant, reserve, working-capital and tax lines."""
    case, f, res = run(CLAY, **changes)
    assert res["sources_own"] == pytest.approx(-f.loc[0, "equity_cash_flow"], rel=1e-12, abs=1e-9)
    assert res["sources_working_capital"] == pytest.approx(f.loc[0, "working_capital_drawn"], abs=1e-9)
    other = -(f.loc[0, "net_cash_flow"] - f.loc[0, "tax_grower"]) - f.loc[0, "establishment_cost"] + f.loc[0, "grant"]
    assert res["uses_other"] == pytest.approx(other, abs=1e-9)
    sources = sum(res[n] for n in ("sources_loan", "sources_bridge", "sources_grant", "sources_working_capital",
                                   "sources_own"))
    assert sources == pytest.approx(res["uses_total"], rel=1e-12)
    assert res["uses_total"] == pytest.approx(res["uses_establishment"] + res["uses_reserve"] + res["uses_other"])


def test_the_pages_loan_line_states_the_terms_the_figures_rest_on():
    """The page's assumptions name what the loan is a share of (the cost less the grant by default, which the
    amount drawn shows), how it is repaid and the facilities beside it (common practice in a credit file: the
    term sheet's terms beside the cover ratios)."""
    from html import unescape

    from tea.outputs import report, terminal

    changes = {"loan.profile": "sculpted", "loan.grace_interest": "capitalised", "loan.reserve_years": 0.5,
               "loan.bridge_grant": True, "establishment.grant_year": 2, "working_capital.limit_per_ha": 500.0,
               "working_capital.rate": 0.08}
    for extra, words in (({}, ["of the planting-year cost less the grant", "level payments"]),
                         (changes, ["(interest added to the loan)", "payments shaped to the cash available at a "
                                    "DSCR of 1.35", "a reserve of 0.5 years of debt service",
                                    "a bridge until the grant is paid in year 2",
                                    "a working-capital line up to 500 EUR/ha at 8.0 %"])):
        case, f, res = run(CLAY, **extra)
        page = " ".join(unescape(report.summary_html(case, f, res)).split())
        line = page[page.rindex("Loan:"):]
        amount = terminal._fig(res, case, "loan_principal")
        assert f"{amount} at 5.5 %, repaid over 8 years after 3 grace years" in line, line[:300]
        for w in words:
            assert w in line, (w, line[:400])
    # the share is of the cost less the grant: the amount drawn says so (60 % of 2,330 - 400)
    assert res["loan_principal"] == pytest.approx(0.6 * (res["uses_establishment"] - 400.0), rel=1e-12)


def test_a_sculpted_loan_below_what_its_target_could_carry_says_why_its_dscr_is_higher(tmp_path):
    """Asked for less than the target DSCR could carry, a sculpted loan keeps the shape of the cash available
    at one higher DSCR (Yescombe ch. 12: sculpted service = CFADS / DSCR); the terminal and the page say so,
    rather than show a DSCR above the target without a word."""
    import re
    from html import unescape

    from conftest import run_cli
    from tea.outputs import report

    case, f, res = run(WILLOW, **{"loan.profile": "sculpted", "loan.share_of_establishment": 0.2,
                                  "loan.sculpt_dscr": 1.4})
    assert res["min_dscr"] > 1.4 * 1.01
    text = re.sub(r"(?m)^sculpt_dscr = .*\n", "", WILLOW.read_text(encoding="utf-8"))  # the demo is sculpted
    text = re.sub(r"(?m)^share_of_establishment = .*$", "share_of_establishment = 0.2\nsculpt_dscr = 1.4", text)
    path = tmp_path / "below.toml"
    path.write_text(text, encoding="utf-8")
    out = run_cli(["run", path, "--brief"])
    assert out.code == 0, out.text
    flat = " ".join(out.out.split())
    assert "above the sculpting target 1.40: the loan asked for is less than that target could carry" in flat
    assert max(len(line) for line in out.out.splitlines()) <= 100
    page = " ".join(unescape(report.summary_html(case, f, res)).split())
    assert f"(the loan asked for is less than that could carry: its DSCR is {res['min_dscr']:.2f})" in page


def test_a_grant_that_repays_its_bridge_is_not_cash_for_the_loans_service():
    """Yescombe ch. 12: CFADS is the cash left for the senior loan's service; a grant paid in arrears against
    which a bridge was drawn goes to repay that bridge and its interest (hand-worked: 400 + 400 x (1.06^2 - 1)
    = 449.44 at the loan's 6 % over two years, more than the grant), so that year's CFADS counts none of the
    400 grant, and no other year changes."""
    terms = {"loan.profile": "annuity", "loan.grace_years": 2, "loan.grace_interest": "interest_only",
             "establishment.grant_year": 2, "loan.covenant_first_year": 2, "loan.share_of_establishment": 0.7,
             "loan.rate": 0.06}
    _, plain, _ = run(CLAY, **terms)
    case, bridged, res = run(CLAY, **terms, **{"loan.bridge_grant": True})
    assert bridged.loc[2, "bridge_interest"] == pytest.approx(400.0 * (1.06 ** 2 - 1), rel=1e-12)
    assert bridged.loc[2, "bridge_repayment"] == pytest.approx(400.0, rel=1e-12)
    expected = plain["cfads"].to_numpy().copy()
    expected[2] -= min(400.0, 400.0 * 1.06 ** 2)  # the grant, as far as it goes to the bridge
    assert_allclose(bridged["cfads"], expected, rtol=1e-12, atol=1e-9)
    assert res["min_dscr_year"] == 2 and res["min_dscr"] == pytest.approx(expected[2] / bridged.loc[2, "debt_service"])


def test_the_loan_line_says_a_capped_loan_and_names_grace_years_only_where_they_count():
    """A sculpted loan capped at what its target DSCR repays draws less than the share asked for: the line
    gives both (Yescombe ch. 12: the sculpted debt is the present value of CFADS / target). Debt service left
    uncovered names grace years only where they have debt service (interest paid in them)."""
    from html import unescape

    from tea.outputs import report, terminal

    case, f, res = run(CLAY, **{"loan.profile": "sculpted", "loan.sculpt_dscr": 3.0,
                                "loan.share_of_establishment": 1.0})
    assert res["loan_principal"] < res["loan_asked"] - 1.0
    page = " ".join(unescape(report.summary_html(case, f, res)).split())
    assert (f"{terminal._fig(res, case, 'loan_asked')} asked for, {terminal._fig(res, case, 'loan_principal')} "
            "drawn (what the target DSCR repays)") in page
    case, f, res = run(CLAY, **{"loan.profile": "straight_line", "loan.grace_years": 0,
                                "revenue.price_per_t_dm": 40.0})
    assert res["money_short_of_debt_service"] > 0
    page = " ".join(unescape(report.summary_html(case, f, res)).split())
    assert "of debt service uncovered" in page and "grace years included" not in page


def test_a_zero_lowest_dscr_says_the_year_had_no_cash_to_cover_anything():
    """Yescombe, Principles of Project Finance (2nd ed.), ch. 12: DSCR = CFADS / debt service. Where a test
    year's CFADS is negative the ratio is taken as 0 (tea's definition); the terminal and the page then say
    that the year's cash is nil or negative, so that 0.00 does not read as a rounded small cover."""
    from tea.outputs import page, terminal

    case, f, res = run(CLAY, **{"loan.profile": "annuity", "loan.grace_years": 0, "loan.covenant_first_year": 0})
    year = int(res["min_dscr_year"])
    assert res["min_dscr"] == 0 and f.loc[year, "cfads"] <= 0 < f.loc[year, "debt_service"]
    assert "the cash available that year is nil or negative" in terminal.summary_text(case, f, res, yearly=False)
    assert f"0.00 in year {year}, a year whose cash available is nil or negative" in page._loan_line(case, res)
    plain, g, low = run(CLAY)
    assert low["min_dscr"] > 0 and "nil or negative" not in page._loan_line(plain, low)
