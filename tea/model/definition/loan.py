"""The establishment loan: drawdown, grace years, level repayment, debt service, DSCR.

The loan is drawn at planting as a share of the year-0 establishment cost.
In each grace year the interest is paid (``interest_only``) or added to the
balance (``capitalised``); then the balance is repaid by a level payment
over the term (the annuity formula, PMT), each payment split into interest
on the opening balance and principal. Payments fall at the end of each year.
The loan is contracted in money of the year: in a nominal case the ledger's
real cash flow is inflated to it for the DSCR, and the debt service deflated
to today's money for the grower's own cash.

DSCR (debt service cover ratio) = cash available for debt service / debt
service, in years with debt service; the cash available is the stand's net
cash flow before financing.
"""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.expr import NOTHING, I, L, at_year, lag, method, or_default, t, where

LN = I.loan
IN_GRACE = (t >= 1) & (t <= LN.grace_years)
REPAYING = (t > LN.grace_years) & (t <= LN.grace_years + LN.term_years)

DEFS = (
    param("loan_amount", "money/ha", "loan", "Loan drawn at planting",
          "Share borrowed x the year-0 establishment cost.",
          LN.share_of_establishment * at_year(L.establishment_cost, 0)),
    param("loan_rate", "fraction/yr", "loan", "Loan interest rate", "The loan's interest rate (0 when none is given).",
          or_default(LN.rate, 0)),
    param("loan_capitalised", "flag", "loan", "Grace interest capitalised",
          "1 when grace-year interest is added to the balance, 0 when it is paid.",
          LN.grace_interest == "capitalised"),
    param("loan_balance_after_grace", "money/ha", "loan", "Balance when repayment starts",
          "The amount drawn, with the grace years' interest if it is capitalised.",
          where(L.loan_capitalised, L.loan_amount * (1 + L.loan_rate) ** LN.grace_years, L.loan_amount)),
    param("loan_level_payment", "money/ha/yr", "loan", "Level yearly payment",
          "The level payment that repays the balance over the term (PMT).",
          method("level_payment", L.loan_rate, LN.term_years, L.loan_balance_after_grace),
          source="annuity formula: P r / (1 - (1 + r)^-n)"),
    param("loan_inflation", "fraction/yr", "loan", "Inflation of the loan's money",
          "Inflation that turns the loan's money of the year into today's money (0 in a real case).",
          where(I.finance.rate_basis == "nominal", I.finance.inflation, 0)),
    line("loan_drawdown", "money/ha", "loan", "Loan drawn", "Loan drawn at planting: share x year-0 establishment cost.",
         L.planting_year * L.loan_amount),
    line("loan_opening_balance", "money/ha", "loan", "Opening balance", "Balance owed at the start of the year.",
         lag(L.loan_balance, 1), show=False),
    line("loan_interest", "money/ha", "loan", "Loan interest",
         "Interest due on the opening balance (capitalised in grace years if so chosen); money of the year (nominal).",
         (IN_GRACE | REPAYING) * L.loan_opening_balance * L.loan_rate),
    line("loan_principal", "money/ha", "loan", "Principal repaid",
         "Principal repaid (level payment - interest); money of the year.",
         REPAYING * (L.loan_level_payment - L.loan_opening_balance * L.loan_rate)),
    line("debt_service", "money/ha", "loan", "Debt service", "Interest paid + principal repaid; money of the year.",
         where(IN_GRACE & (L.loan_capitalised == 1), 0, L.loan_interest) + L.loan_principal),
    line("loan_balance", "money/ha", "loan", "Loan balance", "Balance owed at the end of the year; money of the year.",
         L.loan_opening_balance + L.loan_drawdown + where(IN_GRACE & (L.loan_capitalised == 1), L.loan_interest, 0)
         - L.loan_principal),
    line("money_of_the_year", "fraction", "loan", "Money of the year per today's money",
         "(1 + inflation)^t in a nominal case, 1 in a real one.", (1 + L.loan_inflation) ** t, show=False),
    line("dscr", "ratio", "loan", "DSCR",
         "Net cash flow in money of the year (x (1 + inflation)^t in a nominal case) / debt service; blank without debt service.",
         where(L.debt_service > 0, L.net_cash_flow * L.money_of_the_year / L.debt_service, NOTHING)),
    line("equity_cash_flow", "money/ha", "loan", "Own cash flow (today's money)",
         "Net cash flow + drawdown - debt service in today's money (/ (1 + inflation)^t): the grower's own cash.",
         L.net_cash_flow + (L.loan_drawdown - L.debt_service) / L.money_of_the_year),
)
