"""Tax: a general tax on the stand's result, no country's code.

The taxable result of a year is its receipts less its costs, the
establishment cost deducted when spent (``expensed``) or in equal parts over
``amortisation_years`` from year 1 (``amortised``; what is left is deducted
in the removal year), and, for the grower's own tax, the loan interest where
it is deductible (deflated to today's money, as the ledger is). A loss is
carried forward against later profits or relieved at once against other
farm income (a tax saving that year). Two versions: the stand's own tax
without interest ("unlevered", for the after-tax NPV and IRR and the cash
available for debt service) and the grower's tax with interest.
"""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.expr import I, L, at_year, lag, maximum, minimum, t, total, where

TX = I.tax
LIFE = I.finance.stand_life_years


def _taxed(suffix: str, label: str, result):
    """Loss pool, losses used and tax of a taxable result (a formula), as lines named with ``suffix``."""
    r, pool, used = f"taxable_result{suffix}", f"tax_loss_pool{suffix}", f"tax_loss_used{suffix}"
    relieved = TX.losses == "relieved"
    return (
        line(r, "money/ha", "tax", f"Taxable result{label}", f"Receipts less deductible costs{label.lower()}.",
             result, show=False),
        line(used, "money/ha", "tax", f"Losses used{label}",
             f"Losses of earlier years set against this year's profit{label.lower()}.",
             where(relieved, 0, minimum(lag(L.__getattr__(pool), 1), maximum(L.__getattr__(r), 0))), show=False),
        line(pool, "money/ha", "tax", f"Losses carried forward{label}",
             f"Losses not yet used at the end of the year{label.lower()}.",
             where(relieved, 0, lag(L.__getattr__(pool), 1) - L.__getattr__(used) + maximum(0 - L.__getattr__(r), 0)),
             show=False),
    )


DEFS = (
    param("establishment_to_deduct", "money/ha", "tax", "Establishment cost to deduct",
          "The establishment cost (planting year and expected replanting).", total(L.establishment_cost)),
    line("establishment_deduction", "money/ha", "tax", "Establishment deducted",
         "Establishment cost deducted for tax: as spent, or in equal parts over the amortisation years "
         "from year 1 (the rest in the removal year).",
         where(TX.establishment == "expensed", L.establishment_cost,
               L.stand_year * minimum(L.establishment_to_deduct / TX.amortisation_years,
                                      maximum(L.establishment_to_deduct * (1 - (t - 1) / TX.amortisation_years), 0))
               + L.removal_year * L.establishment_to_deduct
               * maximum(0, 1 - LIFE / TX.amortisation_years))),
    *_taxed("", " (stand)", L.total_revenue - L.total_cost + L.establishment_cost - L.establishment_deduction),
    line("tax", "money/ha", "tax", "Tax (stand)",
         "Tax on the stand's own result, before loan interest: rate x (result - losses used); a relieved loss "
         "is a tax saving (negative).",
         TX.rate * where(TX.losses == "relieved", L.taxable_result, maximum(L.taxable_result - L.tax_loss_used, 0))),
    line("after_tax_cash_flow", "money/ha", "tax", "Cash flow after tax", "Net cash flow - tax (stand).",
         L.net_cash_flow - L.tax),
    line("interest_deducted", "money/ha", "tax", "Loan interest deducted",
         "Loan interest due in today's money where it is deductible.",
         where(TX.interest_deductible, (L.loan_interest + L.bridge_interest + L.working_capital_interest)
               / L.money_of_the_year, 0), show=False),
    *_taxed("_grower", " (grower)", L.taxable_result - L.interest_deducted),
    line("tax_grower", "money/ha", "tax", "Tax (grower, after interest)",
         "Tax on the grower's result after deductible loan interest.",
         TX.rate * where(TX.losses == "relieved", L.taxable_result_grower,
                         maximum(L.taxable_result_grower - L.tax_loss_used_grower, 0))),
)

__all__ = ["DEFS", "at_year"]
