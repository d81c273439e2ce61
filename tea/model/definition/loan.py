"""Debt: the establishment loan, a grant bridge, a debt service reserve and a working-capital line.

Loans are contracted in money of the year, the ledger is in today's money:
``money_of_the_year`` = (1 + inflation)^t turns one into the other, whatever
the basis of the discount rate.

* **Cash available for debt service** (CFADS): the stand's cash flow after its
  own tax, in money of the year, counting what the lender counts: a share of
  carbon-credit receipts (0 = excluded), grants or not, a share of sales
  outside a fixed-price contract.
* **The establishment loan** is drawn at planting: a share of the year-0
  establishment cost, or of that cost less the grant. In grace years the
  interest is paid or added to the balance (capitalised); then it is repaid
  over the term by level payments (annuity, PMT), equal principal
  (straight-line), or sculpted: debt service in each repayment year in
  proportion to its CFADS, so that the DSCR is the same in every repayment
  year, the loan capped at what a target DSCR repays (the present value at
  the loan's rate of CFADS / target). The last repayment year clears the
  balance. Interest a year's debt service does not pay (grace years
  capitalised, a sculpted year whose cash is short) is its own line, interest
  capitalised: principal repaid is never negative, and opening balance + drawn
  + interest capitalised - principal repaid = closing balance in every year.
* **DSCR** = CFADS / debt service, tested from the covenant's first year to
  the end of the term; not meaningful where cash is negative (then the money
  short is shown). **Interest cover** = CFADS / interest. **LLCR** = present
  value at the loan's rate of CFADS over the remaining loan life / balance
  outstanding (Yescombe, *Principles of Project Finance*, 2nd ed. 2014,
  ch. 12); where that present value is below zero there is no cover, and a
  negative ratio would read as a (small) cover: the LLCR is then blank and
  the year flagged "no loan-life cover", as DSCR is blank where cash is
  negative.
* A grant paid in arrears can be bridged: a short loan at the loan's rate,
  repaid with interest when the grant arrives. A debt service reserve holds
  ``reserve_years`` of the next year's debt service, funded from planting and
  released as the loan runs down. A working-capital line is drawn when the
  grower's cash after debt service runs short, up to its limit, and repaid
  from later surpluses (and in full at removal).
"""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.definition.constants import REPAID_TOLERANCE
from tea.model.expr import (NOTHING, I, L, at_year, cumsum, lag, lead, maximum, method, minimum, or_default, t,
                            total, where)

LN, WC = I.loan, I.working_capital
G, N = LN.grace_years, LN.term_years
IN_GRACE = (t >= 1) & (t <= G)
REPAYING = (t > G) & (t <= G + N)
LAST_REPAYMENT = t == G + N
GRACE_CAPITALISED = IN_GRACE & (L.loan_capitalised == 1)

DEFS = (
    param("loan_rate", "fraction/yr", "loan", "Loan interest rate", "The loan's interest rate (0 when none is given).",
          or_default(LN.rate, 0)),
    param("loan_capitalised", "flag", "loan", "Grace interest capitalised",
          "1 when grace-year interest is added to the balance, 0 when it is paid.",
          LN.grace_interest == "capitalised"),
    line("money_of_the_year", "fraction", "loan", "Money of the year per today's money",
         "(1 + inflation)^t: the loan's money of the year per unit of the ledger's today's money.",
         (1 + I.finance.inflation) ** t, show=False),
    # cash available for debt service
    line("cfads", "money/ha", "loan", "Cash available for debt service",
         "Net cash flow after the stand's tax, less what the lender does not count (carbon credits beyond their "
         "counted share, grants if excluded, sales outside a contract beyond their counted share, and a grant "
         "that goes to repay its bridge), in money of the year.",
         (L.after_tax_cash_flow - (1 - LN.cfads_credit_share) * L.carbon_credit_revenue
          - where(LN.cfads_counts_grants, 0, L.grant) - (1 - LN.cfads_uncontracted_share) * L.uncontracted_revenue)
         * L.money_of_the_year
         # a grant that repays the bridge drawn against it is not cash for the establishment loan's service
         - where(LN.cfads_counts_grants, minimum(L.grant * L.money_of_the_year,
                                                 L.bridge_repayment + L.bridge_interest), 0)),
    # the establishment loan
    param("loan_requested", "money/ha", "loan", "Loan asked for",
          "Share borrowed x the year-0 establishment cost (less the grant, if so sized).",
          LN.share_of_establishment * maximum(0, at_year(L.establishment_cost, 0) - where(
              LN.sized_on == "cost_net_of_grant", I.establishment.grant_per_ha, 0))),
    line("loan_sculpt_capacity", "money/ha", "loan", "Debt a sculpted profile repays (by year)",
         "CFADS / target DSCR of each repayment year, discounted at the loan's rate to the start of repayment.",
         REPAYING * maximum(L.cfads, 0) / LN.sculpt_dscr * (1 + L.loan_rate) ** (G - t), show=False),
    param("loan_amount", "money/ha", "loan", "Loan drawn at planting",
          "The loan asked for; for a sculpted profile at most what the target DSCR repays.",
          where(LN.profile == "sculpted",
                minimum(L.loan_requested, total(L.loan_sculpt_capacity)
                        / where(L.loan_capitalised, (1 + L.loan_rate) ** G, 1)),
                L.loan_requested)),
    param("loan_balance_after_grace", "money/ha", "loan", "Balance when repayment starts",
          "The amount drawn, with the grace years' interest if it is capitalised.",
          where(L.loan_capitalised, L.loan_amount * (1 + L.loan_rate) ** G, L.loan_amount)),
    param("loan_level_payment", "money/ha/yr", "loan", "Level yearly payment",
          "The level payment that repays the balance over the term (PMT).",
          method("level_payment", L.loan_rate, N, L.loan_balance_after_grace),
          source="annuity formula: P r / (1 - (1 + r)^-n)"),
    line("loan_drawdown", "money/ha", "loan", "Loan drawn", "Loan drawn at planting.",
         L.planting_year * L.loan_amount),
    line("loan_opening_balance", "money/ha", "loan", "Opening balance", "Balance owed at the start of the year.",
         lag(L.loan_balance, 1), show=False),
    line("loan_interest", "money/ha", "loan", "Loan interest",
         "Interest due on the opening balance, paid or capitalised; money of the year.",
         (IN_GRACE | REPAYING) * L.loan_opening_balance * L.loan_rate),
    line("loan_scheduled_service", "money/ha", "loan", "Scheduled debt service",
         "Debt service the profile sets in a repayment year: the level payment, equal principal plus interest, "
         "or the sculpted share of CFADS.",
         REPAYING * where(LN.profile == "annuity", L.loan_level_payment,
                          where(LN.profile == "straight_line",
                                L.loan_balance_after_grace / N + L.loan_interest,
                                where(total(L.loan_sculpt_capacity) > 0,
                                      maximum(L.cfads, 0) / LN.sculpt_dscr * L.loan_balance_after_grace
                                      / total(L.loan_sculpt_capacity), 0))),
         show=False),
    line("loan_capitalised_interest", "money/ha", "loan", "Interest capitalised",
         "Interest added to the balance instead of paid: all of it in a grace year where grace interest is "
         "capitalised; in a repayment year before the last, the part the scheduled debt service does not pay "
         "(a sculpted year whose cash available is short of the interest). Money of the year.",
         where(GRACE_CAPITALISED, L.loan_interest,
               REPAYING * (1 - LAST_REPAYMENT) * maximum(0, L.loan_interest - L.loan_scheduled_service))),
    line("loan_principal", "money/ha", "loan", "Principal repaid",
         "Principal repaid: scheduled service less interest, never below 0 (interest it leaves unpaid is "
         "capitalised); the last repayment year, or a service that repays all but a rounding remainder, clears "
         "the balance.",
         where(LAST_REPAYMENT | (REPAYING & (L.loan_scheduled_service - L.loan_interest
                                             >= L.loan_opening_balance * (1 - REPAID_TOLERANCE))),
               L.loan_opening_balance, REPAYING * maximum(0, L.loan_scheduled_service - L.loan_interest))),
    line("debt_service", "money/ha", "loan", "Debt service",
         "Interest paid (interest less the interest capitalised) + principal repaid; money of the year.",
         L.loan_interest - L.loan_capitalised_interest + L.loan_principal),
    line("loan_balance", "money/ha", "loan", "Loan balance",
         "Balance owed at the end of the year: opening balance + drawn + interest capitalised - principal repaid; "
         "money of the year.",
         L.loan_opening_balance + L.loan_drawdown + L.loan_capitalised_interest - L.loan_principal),
    # covenant tests
    param("covenant_first_year", "yr", "loan", "First covenant test",
          "First year the DSCR covenant is tested (the first repayment year unless the case says).",
          where(LN.covenant_first_year > 0, LN.covenant_first_year, G + 1)),
    line("covenant_test_year", "flag", "loan", "Covenant test year",
         "1 in the years the DSCR covenant is tested: from the first test year to the end of the term, "
         "within the stand life, with debt service due.",
         (t >= L.covenant_first_year) & (t <= G + N) & L.stand_year & (L.debt_service > 0)),
    line("dscr", "ratio", "loan", "DSCR",
         "CFADS / debt service; blank without debt service or where the cash available is negative.",
         where((L.debt_service > 0) & (L.cfads >= 0), L.cfads / L.debt_service, NOTHING)),
    line("dscr_tested", "ratio", "loan", "DSCR in a covenant test year",
         "CFADS / debt service in the covenant test years, 0 where the cash available is negative.",
         where(L.covenant_test_year, maximum(L.cfads, 0) / L.debt_service, NOTHING), show=False),
    line("below_covenant", "flag", "loan", "DSCR below the covenant",
         "1 in a covenant test year whose DSCR is below the covenant.",
         L.covenant_test_year & (L.dscr_tested < LN.dscr_covenant), show=False),
    line("dscr_shortfall", "money/ha", "loan", "Money short of debt service",
         "Debt service the cash available does not cover, where it does not.",
         where(L.debt_service > 0, maximum(0, L.debt_service - L.cfads), 0)),
    line("interest_cover", "ratio", "loan", "Interest cover",
         "CFADS / interest paid; blank without interest paid (capitalised interest is not paid) or where the "
         "cash available is negative.",
         where((L.debt_service - L.loan_principal > 0) & (L.cfads >= 0),
               L.cfads / (L.debt_service - L.loan_principal), NOTHING)),
    line("interest_cover_tested", "ratio", "loan", "Interest cover in a covenant test year",
         "CFADS / interest paid in the covenant test years, 0 where the cash available is negative.",
         where(L.covenant_test_year & (L.debt_service - L.loan_principal > 0),
               maximum(L.cfads, 0) / (L.debt_service - L.loan_principal), NOTHING), show=False),
    line("loan_life_pv_cfads", "money/ha", "loan", "CFADS discounted to year 0 over the loan life",
         "CFADS of the years the loan is outstanding, discounted at the loan's rate to year 0.",
         ((t >= 1) & (t <= G + N)) * L.cfads * (1 + L.loan_rate) ** (0 - t), show=False),
    line("llcr_pv_cfads", "money/ha", "loan", "CFADS of the remaining loan life, present value",
         "CFADS of the years from this one to the end of the term, discounted at the loan's rate to the start of "
         "the year; money of the year.",
         # year k's CFADS comes at the end of year k: k - t + 1 years after the start of year t
         (total(L.loan_life_pv_cfads) - lag(cumsum(L.loan_life_pv_cfads), 1)) * (1 + L.loan_rate) ** (t - 1),
         show=False),
    line("llcr", "ratio", "loan", "LLCR",
         "Loan-life cover ratio: present value at the loan's rate of the CFADS of the remaining loan life / "
         "balance owed at the start of the year; blank where that present value is below zero (no cover: not a "
         "meaningful ratio, see the next line).",
         where((L.loan_opening_balance > 0) & (t >= 1) & (L.llcr_pv_cfads >= 0),
               L.llcr_pv_cfads / L.loan_opening_balance, NOTHING)),
    line("llcr_no_cover", "flag", "loan", "No loan-life cover (LLCR below 0)",
         "1 in a year with a balance owed where the present value of the CFADS of the remaining loan life is "
         "below zero: the cash to come does not cover even its own costs, let alone the loan (an LLCR below 0, "
         "shown as no cover rather than as a negative ratio).",
         (L.loan_opening_balance > 0) & (t >= 1) & (L.llcr_pv_cfads < 0)),
    # the grant bridge and the reserve
    line("bridge_drawdown", "money/ha", "loan", "Grant bridge drawn",
         "A grant paid in arrears, bridged from planting.",
         L.planting_year * where(LN.bridge_grant & (I.establishment.grant_year > 0), I.establishment.grant_per_ha, 0)),
    line("bridge_interest", "money/ha", "loan", "Grant bridge interest",
         "Interest on the bridge at the loan's rate, paid with it when the grant arrives.",
         (t == I.establishment.grant_year) * at_year(L.bridge_drawdown, 0)
         * ((1 + L.loan_rate) ** I.establishment.grant_year - 1)),
    line("bridge_repayment", "money/ha", "loan", "Grant bridge repaid", "The bridge repaid when the grant arrives.",
         (t == I.establishment.grant_year) * at_year(L.bridge_drawdown, 0)),
    line("reserve_balance", "money/ha", "loan", "Debt service reserve",
         "Reserve held at the end of the year: reserve years x next year's debt service.",
         LN.reserve_years * lead(L.debt_service, 1)),
    line("reserve_funding", "money/ha", "loan", "Reserve funded (+) or released (-)",
         "Change of the debt service reserve.", L.reserve_balance - lag(L.reserve_balance, 1)),
    # the grower's cash, and the working-capital line
    line("cash_after_debt", "money/ha", "loan", "Cash after debt service (money of the year)",
         "The grower's cash after tax and all debt flows but the working-capital line, in money of the year.",
         (L.net_cash_flow - L.tax_grower) * L.money_of_the_year + L.loan_drawdown - L.debt_service
         + L.bridge_drawdown - L.bridge_repayment - L.bridge_interest - L.reserve_funding, show=False),
    line("working_capital_opening", "money/ha", "loan", "Working capital owed (start of year)",
         "Working-capital line owed at the start of the year.", lag(L.working_capital_balance, 1), show=False),
    line("working_capital_interest", "money/ha", "loan", "Working capital interest",
         "Interest on the working-capital line.", L.working_capital_opening * WC.rate),
    line("working_capital_drawn", "money/ha", "loan", "Working capital drawn",
         "Drawn to cover cash short after debt service and interest, up to the line's limit.",
         L.stand_year * minimum(maximum(0, L.working_capital_interest - L.cash_after_debt),
                                maximum(0, WC.limit_per_ha - L.working_capital_opening))),
    line("working_capital_repaid", "money/ha", "loan", "Working capital repaid",
         "Repaid from cash left after debt service and interest; in full in the removal year.",
         where(L.removal_year, L.working_capital_opening,
               minimum(L.working_capital_opening, maximum(0, L.cash_after_debt - L.working_capital_interest)))),
    line("working_capital_balance", "money/ha", "loan", "Working capital owed",
         "Working-capital line owed at the end of the year.",
         L.working_capital_opening + L.working_capital_drawn - L.working_capital_repaid),
    line("equity_cash_flow", "money/ha", "loan", "Own cash flow (today's money)",
         "The grower's own cash after tax, all debt flows and the reserve, in today's money.",
         (L.cash_after_debt + L.working_capital_drawn - L.working_capital_repaid - L.working_capital_interest)
         / L.money_of_the_year),
)
