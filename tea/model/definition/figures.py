"""Decision figures: the ledger read as the numbers a decision rests on (per ha).

* NPV: the net cash flow discounted at the real rate, year 0 undiscounted;
  "vs current use" figures use the incremental flow, the change the decision
  makes.
* EAV (equivalent annual value): NPV / annuity factor over the stand life, to
  compare with the yearly margin of the current use.
* Break-even price and mature yield: the value making NPV = 0. NPV is linear
  in both (no cost depends on the price; every yield-driven line is
  proportional to the mature yield), so the root is exact: the input less
  NPV over NPV's slope in that input, the slope taken from the formulas.
* Payback: the first year the cumulative cash flow is back at zero after
  having been below it, interpolated within the year; peak funding need: the
  lowest point of the cumulative cash flow, as a positive amount.
"""

from __future__ import annotations

from tea.model.declare import figure, line, param
from tea.model.definition.constants import C_TO_CO2, KG_PER_T, TIE_TOLERANCE
from tea.model.definition.money import real
from tea.model.expr import (NOTHING, F, I, L, at_year, cumsum, first_year, given, highest, lag, lowest, maximum,
                            method, npv, sign, slope, t, total, where)
from tea.model.expr import abs_

LIFE = I.finance.stand_life_years
RATE = L.discount_rate_real
MATURE = I.yield_.mature_t_dm_per_ha


def _breakeven(fig, x):
    """The value of input ``x`` that makes figure ``fig`` zero, where the figure rises with it."""
    return where(slope(fig, x) > 0, x - fig / slope(fig, x), NOTHING)


def _at_covenant(x):
    """By covenant test year: the value of input ``x`` at which that year's DSCR equals the covenant
    (CFADS is linear in it; the debt service of an annuity or straight-line loan does not move with it)."""
    need = L.cfads - I.loan.dscr_covenant * L.debt_service
    return where(L.covenant_test_year & (slope(L.cfads, x) > 0), x - need / slope(L.cfads, x), NOTHING)


def _payback_workings(flow: str, cum: str, prefix: str):
    """Working lines of a payback: below zero so far, then back at zero."""
    return (
        line(f"{prefix}_below", "flag", "workings", f"{prefix.replace('_', ' ').capitalize()}: below zero",
             f"1 where the {cum.replace('_', ' ')} is below zero.", L.__getattr__(cum) < 0, show=False),
        line(f"{prefix}_been_below", "flag", "workings", f"{prefix.replace('_', ' ').capitalize()}: has been below zero",
             f"1 from the first year the {cum.replace('_', ' ')} is below zero.",
             cumsum(L.__getattr__(f"{prefix}_below")) > 0, show=False),
        line(f"{prefix}_back", "flag", "workings", f"{prefix.replace('_', ' ').capitalize()}: back at zero",
             f"1 where the {cum.replace('_', ' ')} is back at zero after having been below it.",
             lag(L.__getattr__(f"{prefix}_been_below"), 1) & (L.__getattr__(cum) >= 0), show=False),
    )


def _lowest_workings(x: str, name: str):
    """A working line flagging the years a line is at its lowest (within rounding): the first is its year."""
    return line(name, "flag", "workings", f"At the lowest {x.replace('_', ' ')}",
                f"1 in the years the {x.replace('_', ' ')} is at its lowest, within rounding.",
                L.__getattr__(x) <= lowest(L.__getattr__(x)) + TIE_TOLERANCE * abs_(lowest(L.__getattr__(x))),
                show=False)


def _payback(prefix: str):
    return where(total(L.__getattr__(f"{prefix}_below")) == 0, 0, first_year(L.__getattr__(f"{prefix}_back")))


def _interpolated(year, flow: str, cum: str):
    """t - 1 + the deficit at the end of year t - 1 / the flow of year t."""
    return where(year == 0, 0, year - 1 - at_year(L.__getattr__(cum), year - 1) / at_year(L.__getattr__(flow), year))


def _irr(flow: str, prefix: str):
    """The IRR of a cash flow line, with what its spreadsheet rule reads (sign changes of the flow and of its
    running total, first flow, running total at removal)."""
    return method("irr", L.__getattr__(flow), changes=total(L.__getattr__(f"{prefix}_sign_change")),
                  cum_changes=total(L.__getattr__(f"{prefix}_cumulative_sign_change")),
                  first=at_year(L.__getattr__(flow), 0), end=at_year(L.__getattr__(f"{prefix}_cumulative"), LIFE),
                  guess=F.mirr, life=LIFE)


def _irr_workings(flow: str, prefix: str):
    """Working lines of the IRR rule: the flow's sign changes, its running total and that total's sign changes."""
    return (
        *_sign_workings(flow, prefix),
        line(f"{prefix}_cumulative", "money/ha", "workings", f"Running total of the {flow.replace('_', ' ')}",
             f"Running total of the {flow.replace('_', ' ')} (Norström's criterion reads its signs).",
             cumsum(L.__getattr__(flow)), show=False),
        *_sign_workings(f"{prefix}_cumulative", f"{prefix}_cumulative"),
    )


def _sign_workings(flow: str, prefix: str):
    """Working lines counting the sign changes of a cash flow (zeros skipped): the spreadsheet's IRR rule."""
    return (
        line(f"{prefix}_sign", "sign", "workings", f"Sign of the last nonzero {flow.replace('_', ' ')}",
             "Sign of this year's flow, or of the last nonzero one before it.",
             where(L.__getattr__(flow) != 0, sign(L.__getattr__(flow)), lag(L.__getattr__(f"{prefix}_sign"), 1,
                                                                              fill=sign(L.__getattr__(flow)))),
             show=False),
        line(f"{prefix}_sign_change", "flag", "workings", f"Sign change of the {flow.replace('_', ' ')}",
             "1 where the sign differs from the last nonzero flow before it.",
             (t >= 1) & (L.__getattr__(f"{prefix}_sign") * lag(L.__getattr__(f"{prefix}_sign"), 1) < 0), show=False),
    )


WORKINGS = (
    *_payback_workings("net_cash_flow", "cumulative_cash_flow", "payback"),
    *_payback_workings("discounted_cash_flow", "cumulative_discounted_cash_flow", "discounted_payback"),
    line("payback_been_back", "flag", "workings", "Payback: back at zero so far",
         "1 from the payback year on: the cumulative cash flow has been back at zero after having been below it.",
         cumsum(L.payback_back) > 0, show=False),
    line("payback_below_again", "flag", "workings", "Payback: below zero again",
         "1 where the cumulative cash flow is below zero in a year after the payback year.",
         lag(L.payback_been_back, 1) & L.payback_below, show=False),
    _lowest_workings("dscr_tested", "dscr_at_lowest"),
    _lowest_workings("cumulative_cash_flow", "cumulative_cash_flow_at_lowest"),
    *_irr_workings("net_cash_flow", "net"),
    *_irr_workings("incremental_cash_flow", "incremental"),
    *_irr_workings("after_tax_cash_flow", "after_tax"),
    line("price_at_covenant_by_year", "money/price unit", "workings", "Price at the covenant, by test year",
         "Market price at which a test year's DSCR equals the covenant.",
         where(given(I.revenue.price_per_gj), _at_covenant(I.revenue.price_per_gj),
               _at_covenant(I.revenue.price_per_t_dm)), show=False),
    line("yield_at_covenant_by_year", "t DM/ha/yr", "workings", "Mature yield at the covenant, by test year",
         "Mature yield at which a test year's DSCR equals the covenant.", _at_covenant(MATURE), show=False),
    line("cumulative_equity_cash_flow", "money/ha", "workings", "Cumulative own cash",
         "Running total of the grower's own cash flow.", cumsum(L.equity_cash_flow), show=False),
    param("mirr_finance_rate_real", "fraction/yr", "cash", "MIRR finance rate",
          "MIRR finance rate (real; the discount rate if not given).",
          where(given(I.finance.mirr_finance_rate), real(I.finance.mirr_finance_rate), RATE)),
    param("mirr_reinvest_rate_real", "fraction/yr", "cash", "MIRR reinvestment rate",
          "MIRR reinvestment rate (real; the discount rate if not given).",
          where(given(I.finance.mirr_reinvest_rate), real(I.finance.mirr_reinvest_rate), RATE)),
    param("annuity_factor", "yr", "cash", "Annuity factor",
          "Present value of 1 a year over the stand life at the real rate: (1 - (1 + r)^-n) / r.",
          method("annuity_factor", RATE, LIFE)),
)

M = "money/ha"
DEFS = WORKINGS + (
    figure("npv", M, "cash", "NPV", "Net present value of the stand's own cash flows.",
           npv(L.net_cash_flow, RATE), scales=True),
    figure("npv_vs_current_use", M, "cash", "NPV vs current use",
           "NPV of the change from today's use: stand cash flow minus the current use's (margin - rent - overheads).",
           npv(L.incremental_cash_flow, RATE), scales=True),
    figure("pv_current_use", M, "cash", "PV of the current use",
           "Present value of what the field nets under its current use (margin - rent - overheads) over the stand life.",
           npv(L.current_use_cash_flow, RATE), scales=True),
    figure("irr", "fraction", "cash", "IRR", "Internal rate of return of the stand's cash flows (real).",
           _irr("net_cash_flow", "net")),
    figure("irr_vs_current_use", "fraction", "cash", "IRR vs current use", "IRR of the incremental cash flows.",
           _irr("incremental_cash_flow", "incremental")),
    figure("mirr", "fraction", "cash", "MIRR", "Modified IRR (finance and reinvestment rates as the case says).",
           method("mirr", L.net_cash_flow, L.mirr_finance_rate_real, L.mirr_reinvest_rate_real, LIFE)),
    figure("eav", "money/ha/yr", "cash", "Equivalent annual value",
           "Equivalent annual value of the stand: NPV / annuity factor.", F.npv / L.annuity_factor, scales=True),
    figure("current_margin", "money/ha/yr", "cash", "Current use margin", "The current use's yearly gross margin.",
           I.field.current_margin_per_ha + 0, scales=True),
    figure("current_use_net", "money/ha/yr", "cash", "Current use, after rent+overheads",
           "What the field nets a year under its current use: margin - rent - overheads.",
           I.field.current_margin_per_ha - I.costs.rent_per_ha - I.costs.overheads_per_ha, scales=True),
    figure("eav_vs_current_use", "money/ha/yr", "cash", "EAV vs current use",
           "How much more (or less) a year the stand earns than today's use.",
           F.npv_vs_current_use / L.annuity_factor, scales=True),
    figure("payback_year", "yr", "cash", "Payback", "First year the cumulative cash flow is back to zero.",
           _payback("payback")),
    figure("payback_years", "yr", "cash", "Payback (interpolated)", "Simple payback, interpolated within the year.",
           _interpolated(F.payback_year, "net_cash_flow", "cumulative_cash_flow")),
    figure("payback_lost_year", "yr", "cash", "Below zero again in",
           "First year after the payback year in which the cumulative cash flow is below zero again (e.g. the "
           "cost of taking the stand out); none where it stays at or above zero.",
           first_year(L.payback_below_again)),
    figure("cash_at_removal", M, "cash", "Cash over the stand life",
           "The cumulative cash flow in the removal year: the stand's net cash over its life, undiscounted.",
           at_year(L.cumulative_cash_flow, LIFE), scales=True),
    figure("discounted_payback_year", "yr", "cash", "Discounted payback",
           "First year the cumulative discounted cash flow is back to zero.", _payback("discounted_payback")),
    figure("discounted_payback_years", "yr", "cash", "Discounted payback (interpolated)",
           "Discounted payback, interpolated within the year.",
           _interpolated(F.discounted_payback_year, "discounted_cash_flow", "cumulative_discounted_cash_flow")),
    figure("breakeven_price", "money/price unit", "breakeven", "Break-even price",
           "Biomass price that makes NPV = 0 (per t DM, or per GJ).",
           where(given(I.revenue.price_per_gj), _breakeven(F.npv, I.revenue.price_per_gj),
                 _breakeven(F.npv, I.revenue.price_per_t_dm))),
    figure("breakeven_price_vs_current_use", "money/price unit", "breakeven", "Break-even price vs current use",
           "Price that makes the stand match the current use.",
           where(given(I.revenue.price_per_gj), _breakeven(F.npv_vs_current_use, I.revenue.price_per_gj),
                 _breakeven(F.npv_vs_current_use, I.revenue.price_per_t_dm))),
    figure("breakeven_mature_yield_t_dm_per_ha", "t DM/ha/yr", "breakeven", "Break-even mature yield",
           "Mature yield that makes NPV = 0.", _breakeven(F.npv, MATURE)),
    figure("breakeven_mature_yield_vs_current_use_t_dm_per_ha", "t DM/ha/yr", "breakeven",
           "Break-even yield vs current use", "Mature yield that makes the stand match the current use.",
           _breakeven(F.npv_vs_current_use, MATURE)),
    figure("breakeven_sold_t_dm_per_ha_per_year", "t DM/ha/yr", "breakeven", "Break-even dry matter sold",
           "Dry matter sold per year, on average over the stand life, at the break-even mature yield: the "
           "break-even in what the grower delivers (after site factor, ramp-up and losses).",
           where(MATURE > 0, F.mean_sold_t_dm_per_year * F.breakeven_mature_yield_t_dm_per_ha / MATURE, NOTHING)),
    figure("peak_funding_need", M, "cash", "Peak funding need",
           "Deepest point of the cumulative cash flow, as a positive amount.",
           maximum(0, 0 - lowest(L.cumulative_cash_flow)), scales=True),
    figure("peak_funding_year", "yr", "cash", "Peak funding in", "Year of the peak funding need.",
           first_year(L.cumulative_cash_flow_at_lowest)),
    figure("establishment_cost", M, "cash", "Establishment cost",
           "Establishment cost, with the expected replanting in year 1.", total(L.establishment_cost), scales=True),
    figure("sold_t_dm", "t DM/ha", "output", "Dry matter sold (life)", "Dry matter sold over the stand life.",
           total(L.sold_t_dm), scales=True),
    figure("sold_gj", "GJ/ha", "output", "Energy sold (life)", "Energy sold over the stand life.",
           total(L.sold_gj), scales=True),
    figure("mean_sold_t_dm_per_year", "t DM/ha/yr", "output", "Dry matter sold per year",
           "Dry matter sold per year of stand life, on average.", F.sold_t_dm / LIFE),
    figure("soc_start_t_c_per_ha", "t C/ha", "carbon", "SOC at planting",
           "SOC stock at planting (the current use's equilibrium).", at_year(L.soc_t_c, 0)),
    figure("soc_end_t_c_per_ha", "t C/ha", "carbon", "SOC at removal", "SOC stock when the stand is removed.",
           at_year(L.soc_t_c, LIFE)),
    figure("soc_gain_t_c", "t C/ha", "carbon", "SOC gain", "SOC gained over the stand life, against the current use.",
           F.soc_end_t_c_per_ha - L.soc_start_t_c, scales=True),
    figure("soc_gain_t_co2e", "t CO2e/ha", "carbon", "SOC gain as CO2", "SOC gain as CO2 (x 44/12).",
           F.soc_gain_t_c * C_TO_CO2, scales=True),
    figure("soc_loss_after_reversion_t_c", "t C/ha", "carbon", "SOC lost after reversion",
           "SOC expected to be lost again once the field returns to its current use.",
           maximum(0, F.soc_end_t_c_per_ha - L.soc_start_t_c), scales=True),
    figure("ghg_emissions_t_co2e", "t CO2e/ha", "carbon", "GHG emissions (life)",
           "Emissions over the stand life (N2O, fertiliser, diesel, haulage).", total(L.ghg_emissions_t_co2e),
           scales=True),
    figure("ghg_net_t_co2e", "t CO2e/ha", "carbon", "Net GHG balance (life)",
           "Net balance over the stand life: emissions minus SOC gain.", total(L.ghg_net_t_co2e), scales=True),
    figure("ghg_net_t_co2e_per_year", "t CO2e/ha/yr", "carbon", "Net GHG per year",
           "Net balance per year of stand life.", F.ghg_net_t_co2e / LIFE, scales=True),
    figure("ghg_net_kg_co2e_per_t_dm", "kg CO2e/t DM", "carbon", "Net GHG per t DM",
           "Net balance per t of dry matter sold.",
           where(F.sold_t_dm > 0, KG_PER_T * F.ghg_net_t_co2e / F.sold_t_dm, NOTHING)),
    figure("ghg_net_kg_co2e_per_gj", "kg CO2e/GJ", "carbon", "Net GHG per GJ", "Net balance per GJ sold.",
           where(F.sold_gj > 0, KG_PER_T * F.ghg_net_t_co2e / F.sold_gj, NOTHING)),
    figure("ghg_net_with_reversion_t_co2e", "t CO2e/ha", "carbon", "Net GHG, life and reversion",
           "Net balance over the stand life plus the SOC lost when the field returns to its current use and the "
           "N2O of the N that loss mineralises (IPCC Eq. 11.8).",
           F.ghg_net_t_co2e + F.soc_loss_after_reversion_t_c * C_TO_CO2
           + F.soc_loss_after_reversion_t_c * KG_PER_T / I.carbon.soc_c_to_n * L.n2o_per_kg_n_t_co2e, scales=True),
    figure("current_ghg_t_co2e", "t CO2e/ha", "carbon", "Current use emissions (life)",
           "Emissions the current use would have had over the stand life (N2O, fertiliser, diesel).",
           total(L.current_ghg_t_co2e), scales=True),
    figure("ghg_net_vs_current_use_t_co2e", "t CO2e/ha", "carbon", "Net GHG vs current use (life)",
           "Net balance over the stand life less the current use's emissions over the same years.",
           F.ghg_net_t_co2e - F.current_ghg_t_co2e, scales=True),
    figure("ghg_net_with_reversion_vs_current_use_t_co2e", "t CO2e/ha", "carbon",
           "Net GHG vs current use, life + reversion",
           "Net balance over the stand life plus the SOC lost at reversion, less the current use's emissions.",
           F.ghg_net_with_reversion_t_co2e - F.current_ghg_t_co2e, scales=True),
    figure("ghg_net_vs_current_use_t_co2e_per_year", "t CO2e/ha/yr", "carbon", "Net GHG vs current use per year",
           "Net balance against the current use per year of stand life.", F.ghg_net_vs_current_use_t_co2e / LIFE,
           scales=True),
    figure("ghg_net_vs_current_use_kg_co2e_per_t_dm", "kg CO2e/t DM", "carbon", "Net GHG vs current use per t DM",
           "Net balance against the current use per t DM sold.",
           where(F.sold_t_dm > 0, KG_PER_T * F.ghg_net_vs_current_use_t_co2e / F.sold_t_dm, NOTHING)),
    figure("credited_t_co2e", "t CO2e/ha", "carbon", "Carbon credited (life)",
           "Carbon credits issued over the stand life (after the buffer).", total(L.credited_t_co2e), scales=True),
    figure("credit_payback_t_co2e", "t CO2e/ha", "carbon", "Credits paid back at removal",
           "Credited removals lost at removal beyond the buffer, paid back.", total(L.credit_payback_t_co2e),
           scales=True),
    figure("credit_net_t_co2e", "t CO2e/ha", "carbon", "Credits net of payback",
           "Credits issued less those paid back at removal.", total(L.credit_net_t_co2e), scales=True),
    figure("carbon_credit_revenue", M, "carbon", "Carbon-credit receipts (life)",
           "Credit receipts over the stand life, undiscounted.", total(L.carbon_credit_revenue), scales=True),
    figure("carbon_credit_pv", M, "carbon", "Carbon credits, present value",
           "Present value of the credit receipts less the payback at removal and the verification and registry "
           "costs.", npv(L.carbon_credit_net_cash, RATE), scales=True),
    figure("loan_principal", M, "loan", "Establishment loan", "Establishment loan drawn at planting.",
           at_year(L.loan_drawdown, 0), scales=True),
    figure("loan_asked", M, "loan", "Loan asked for",
           "The loan asked for (share x establishment cost); a sculpted profile draws at most what its target "
           "DSCR repays.", L.loan_requested + 0, scales=True),
    figure("loan_payment", "money/ha/yr", "loan", "Largest yearly debt service",
           "Largest debt service of a year (the level payment of an annuity).", highest(L.debt_service),
           scales=True),
    figure("loan_interest_total", M, "loan", "Interest over the loan", "Interest over the life of the loan.",
           total(L.loan_interest), scales=True),
    figure("min_dscr", "ratio", "loan", "Lowest DSCR (test years)",
           "Lowest debt service cover ratio of the covenant test years (0 where the cash available is negative).",
           lowest(L.dscr_tested)),
    figure("min_dscr_year", "yr", "loan", "Lowest DSCR in", "Year of the lowest DSCR.", first_year(L.dscr_at_lowest)),
    figure("dscr_covenant", "ratio", "loan", "DSCR covenant", "DSCR the lender requires.", I.loan.dscr_covenant + 0),
    figure("years_below_covenant", "yr", "loan", "Years below covenant",
           "Number of covenant test years whose DSCR falls below the covenant.", total(L.below_covenant)),
    figure("money_short_of_debt_service", M, "loan", "Debt service not covered",
           "Debt service the cash available does not cover, summed over every year with debt service (grace "
           "years included, which the covenant does not test).", total(L.dscr_shortfall),
           scales=True),
    figure("min_interest_cover", "ratio", "loan", "Lowest interest cover (test years)",
           "Lowest CFADS / interest paid over the covenant test years.", lowest(L.interest_cover_tested)),
    figure("llcr", "ratio", "loan", "LLCR at the first test",
           "Loan-life cover ratio at the start of the first covenant test year; no value where the present value "
           "of the cash to come is below zero (no cover).",
           at_year(L.llcr, L.covenant_first_year)),
    figure("llcr_no_cover_at_first_test", "flag", "loan", "No loan-life cover at the first test",
           "1 where the LLCR at the first covenant test is below zero: no cover.",
           at_year(L.llcr_no_cover, L.covenant_first_year)),
    figure("llcr_no_cover_years", "yr", "loan", "Years with no loan-life cover",
           "Number of years with a balance owed whose LLCR is below zero (no cover).", total(L.llcr_no_cover)),
    figure("min_llcr", "ratio", "loan", "Lowest LLCR",
           "Lowest loan-life cover ratio over the loan's life; no value where a year has no cover (LLCR below 0).",
           where(F.llcr_no_cover_years > 0, NOTHING, lowest(L.llcr))),
    figure("loan_repaid_year", "yr", "loan", "Loan repaid in", "Last year with a balance owed before it is cleared.",
           where(L.loan_amount > 0, I.loan.grace_years + I.loan.term_years, NOTHING)),
    figure("breakeven_price_at_covenant", "money/price unit", "loan", "Break-even price at the covenant",
           "Market price at which the lowest DSCR of the test years equals the covenant (annuity and straight-line "
           "profiles; a sculpted one is sized to its target).",
           where(I.loan.profile == "sculpted", NOTHING, highest(L.price_at_covenant_by_year))),
    figure("breakeven_yield_at_covenant_t_dm_per_ha", "t DM/ha/yr", "loan", "Break-even yield at the covenant",
           "Mature yield at which the lowest DSCR of the test years equals the covenant.",
           where(I.loan.profile == "sculpted", NOTHING, highest(L.yield_at_covenant_by_year))),
    # sources and uses of funds at planting
    figure("uses_establishment", M, "sources_uses", "Uses: establishment (year 0)",
           "Establishment cost spent at planting.", at_year(L.establishment_cost, 0), scales=True),
    figure("uses_reserve", M, "sources_uses", "Uses: debt service reserve", "Reserve funded at planting.",
           at_year(L.reserve_funding, 0), scales=True),
    figure("uses_other", M, "sources_uses", "Uses: other cash of the planting year",
           "Running costs of year 0 and tax, less its receipts other than the grant (0 when the planting year "
           "has only the establishment cost and the grant).",
           at_year(L.grant, 0) - at_year(L.establishment_cost, 0) - at_year(L.net_cash_flow, 0)
           + at_year(L.tax_grower, 0), scales=True),
    figure("uses_total", M, "sources_uses", "Uses: total", "Establishment, reserve and other cash at planting.",
           F.uses_establishment + F.uses_reserve + F.uses_other, scales=True),
    figure("sources_loan", M, "sources_uses", "Sources: loan", "Establishment loan drawn.", L.loan_amount + 0,
           scales=True),
    figure("sources_bridge", M, "sources_uses", "Sources: grant bridge", "Grant bridge drawn at planting.",
           at_year(L.bridge_drawdown, 0), scales=True),
    figure("sources_grant", M, "sources_uses", "Sources: grant at planting", "Grant received at planting.",
           at_year(L.grant, 0), scales=True),
    figure("sources_working_capital", M, "sources_uses", "Sources: working capital at planting",
           "Working-capital line drawn in year 0.", at_year(L.working_capital_drawn, 0), scales=True),
    # the grower's own money from the own cash flow, not as what the other sources leave: sources equal uses
    # is then a check that the financing lines of the planting year add up (the Checks sheet)
    figure("sources_own", M, "sources_uses", "Sources: own funds", "The grower's own money at planting: the "
           "own cash flow of year 0, paid out.", 0 - at_year(L.equity_cash_flow, 0), scales=True),
    figure("loan_to_cost", "fraction", "sources_uses", "Loan to cost",
           "Loan / establishment cost at planting.",
           where(F.uses_establishment > 0, F.sources_loan / F.uses_establishment, NOTHING)),
    # after tax
    figure("npv_after_tax", M, "tax", "NPV after tax", "NPV of the stand's cash flows after its own tax.",
           npv(L.after_tax_cash_flow, RATE), scales=True),
    figure("irr_after_tax", "fraction", "tax", "IRR after tax", "IRR of the stand's cash flows after its own tax.",
           _irr("after_tax_cash_flow", "after_tax")),
    figure("tax_total", M, "tax", "Tax over the stand life", "The stand's own tax, summed over the years.",
           total(L.tax), scales=True),
    figure("equity_peak_funding_need", M, "loan", "Peak own funding after loan",
           "Deepest point of the grower's own cumulative cash, after the loan.",
           maximum(0, 0 - lowest(L.cumulative_equity_cash_flow)), scales=True),
)
