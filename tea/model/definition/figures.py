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
from tea.model.definition.constants import C_TO_CO2, KG_PER_T
from tea.model.definition.money import real
from tea.model.expr import (NOTHING, F, I, L, at_year, cumsum, first_year, given, lag, lowest, maximum, method,
                            npv, sign, slope, t, total, where, year_of_lowest)

LIFE = I.finance.stand_life_years
RATE = L.discount_rate_real
MATURE = I.yield_.mature_t_dm_per_ha


def _breakeven(fig, x):
    """The value of input ``x`` that makes figure ``fig`` zero, where the figure rises with it."""
    return where(slope(fig, x) > 0, x - fig / slope(fig, x), NOTHING)


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


def _payback(prefix: str):
    return where(total(L.__getattr__(f"{prefix}_below")) == 0, 0, first_year(L.__getattr__(f"{prefix}_back")))


def _interpolated(year, flow: str, cum: str):
    """t - 1 + the deficit at the end of year t - 1 / the flow of year t."""
    return where(year == 0, 0, year - 1 - at_year(L.__getattr__(cum), year - 1) / at_year(L.__getattr__(flow), year))


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
    *_sign_workings("net_cash_flow", "net"),
    *_sign_workings("incremental_cash_flow", "incremental"),
    line("below_covenant", "flag", "workings", "DSCR below the covenant",
         "1 in a year with debt service whose DSCR is below the covenant.",
         (L.debt_service > 0) & (L.dscr < I.loan.dscr_covenant), show=False),
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
           method("irr", L.net_cash_flow, changes=total(L.net_sign_change), guess=F.mirr, life=LIFE)),
    figure("irr_vs_current_use", "fraction", "cash", "IRR vs current use", "IRR of the incremental cash flows.",
           method("irr", L.incremental_cash_flow, changes=total(L.incremental_sign_change), guess=F.mirr,
                  life=LIFE)),
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
    figure("peak_funding_need", M, "cash", "Peak funding need",
           "Deepest point of the cumulative cash flow, as a positive amount.",
           maximum(0, 0 - lowest(L.cumulative_cash_flow)), scales=True),
    figure("peak_funding_year", "yr", "cash", "Peak funding in", "Year of the peak funding need.",
           year_of_lowest(L.cumulative_cash_flow)),
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
    figure("credited_t_co2e", "t CO2e/ha", "carbon", "Carbon credited (life)",
           "Carbon credits earned over the stand life (after the buffer).", total(L.credited_t_co2e), scales=True),
    figure("carbon_credit_revenue", M, "carbon", "Carbon-credit receipts (life)",
           "Credit receipts over the stand life, undiscounted.", total(L.carbon_credit_revenue), scales=True),
    figure("carbon_credit_pv", M, "carbon", "Carbon credits, present value", "Present value of the credit receipts.",
           npv(L.carbon_credit_revenue, RATE), scales=True),
    figure("loan_principal", M, "loan", "Establishment loan", "Establishment loan drawn at planting.",
           at_year(L.loan_drawdown, 0), scales=True),
    figure("loan_payment", "money/ha/yr", "loan", "Yearly loan payment", "Level yearly payment once the grace years end.",
           where(L.loan_amount > 0, L.loan_level_payment, 0), scales=True),
    figure("loan_interest_total", M, "loan", "Interest over the loan", "Interest over the life of the loan.",
           total(L.loan_interest), scales=True),
    figure("min_dscr", "ratio", "loan", "Lowest DSCR", "Lowest debt service cover ratio over the loan.",
           lowest(L.dscr)),
    figure("min_dscr_year", "yr", "loan", "Lowest DSCR in", "Year of the lowest DSCR.", year_of_lowest(L.dscr)),
    figure("dscr_covenant", "ratio", "loan", "DSCR covenant", "DSCR the lender requires.", I.loan.dscr_covenant + 0),
    figure("years_below_covenant", "yr", "loan", "Years below covenant",
           "Number of years the DSCR falls below the covenant.", total(L.below_covenant)),
    figure("equity_peak_funding_need", M, "loan", "Peak own funding after loan",
           "Deepest point of the grower's own cumulative cash, after the loan.",
           maximum(0, 0 - lowest(L.cumulative_equity_cash_flow)), scales=True),
)
