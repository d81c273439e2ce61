"""The lender's two cases: the bankable case and a downside.

The bankable case is the case itself: its cash available for debt service
already counts only what the lender counts (the ``loan.cfads_*`` switches:
carbon credits excluded or haircut, grants, sales outside a contract). The
downside moves every biomass price by ``downside.price_change``, the mature
yield by ``downside.yield_change`` and starts the ramp-up
``downside.delay_years`` late, and tests the loan as drawn in the base case:
its debt service stays as scheduled (a sculpted loan is not resized to the
weaker cash), so the downside DSCR is the downside's cash over the base case's
debt service, in the base case's covenant test years.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from tea.inputs.case import Case
from tea.model.evaluate import evaluate

FIGURES = ("npv", "npv_vs_current_use", "irr", "min_dscr", "years_below_covenant", "llcr", "llcr_no_cover_at_first_test",
           "money_short_of_debt_service", "equity_peak_funding_need")
PRICE_KEYS = ("revenue.price_per_t_dm", "revenue.price_per_gj", "revenue.contract_price_per_t_dm",
              "revenue.contract_price_per_gj")


@dataclass
class LenderCases:
    base: dict[str, float]
    downside: dict[str, float]
    terms: dict[str, Any]


def downside_values(case: Case) -> dict[str, Any]:
    """The case's values under the downside's price, yield and delay."""
    v = dict(case.values)
    for key in PRICE_KEYS:
        if v.get(key) is not None:
            v[key] = v[key] * (1 + case["downside.price_change"])
    v["yield.mature_t_dm_per_ha"] = v["yield.mature_t_dm_per_ha"] * (1 + case["downside.yield_change"])
    delay = int(case["downside.delay_years"])
    if delay:
        v["yield.ramp_up_fractions"] = [0.0] * delay + list(v["yield.ramp_up_fractions"] or [])
    return v


def lender_cases(case: Case) -> LenderCases:
    """Figures of the bankable case and of the downside (per ha)."""
    base = evaluate(case.values, figures=FIGURES, lines=("debt_service", "covenant_test_year", "cfads"))
    down = evaluate(downside_values(case), figures=FIGURES, lines=("cfads",), years=base.lines["cfads"].shape[1])
    service = base.lines["debt_service"][0]
    test = base.lines["covenant_test_year"][0] > 0
    cash = down.lines["cfads"][0]
    out_base = {k: float(base.figures[k][0]) for k in FIGURES}
    out_down = {k: float(down.figures[k][0]) for k in FIGURES}
    if test.any():
        ratio = np.maximum(cash[test], 0.0) / service[test]
        out_down["min_dscr"] = float(ratio.min())
        out_down["years_below_covenant"] = float(np.sum(ratio < case["loan.dscr_covenant"]))
        out_down["money_short_of_debt_service"] = float(np.sum(np.maximum(0.0, service - cash)[service > 0]))
    else:
        for k in ("min_dscr", "years_below_covenant", "money_short_of_debt_service"):
            out_down[k] = out_base[k]
    terms = {"price_change": case["downside.price_change"], "yield_change": case["downside.yield_change"],
             "delay_years": int(case["downside.delay_years"])}
    return LenderCases(out_base, out_down, terms)
