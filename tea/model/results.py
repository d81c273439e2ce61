"""Decision figures of one case: :func:`summarise` wraps them in a :class:`Results` with ``to_dict()``.

The figures are declared once in :mod:`tea.model.definition.figures` (read
there what each means); the evaluator computes them.
Money and quantities are per hectare; ``whole_field`` multiplies them by the
area.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from tea import __version__
from tea.core.texts import CAUTIONS
from tea.inputs.case import Case
from tea.methods.irr import irr_rule_explained
from tea.model.declare import Def
from tea.model.definition import MODEL
from tea.model.evaluate import evaluate


#: the decision figures, in order (declarations of :mod:`tea.model.definition`)
FIGURES: tuple[Def, ...] = tuple(MODEL.figures)
FIGURE_NAMES = tuple(f.name for f in FIGURES)
FIGURE_BY_NAME = {f.name: f for f in FIGURES}


# ----------------------------------------------------------------------------- one case
@dataclass
class Results:
    """The decision figures of one case, per ha and for the whole field."""

    case_name: str
    case_hash: str
    currency: str
    area_ha: float
    stand_life_years: int
    discount_rate_real: float
    discount_rate_given: float
    rate_basis: str
    inflation: float
    price_basis: str
    per_ha: dict[str, float | None]
    notes: dict[str, str] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    version: str = __version__

    @property
    def whole_field(self) -> dict[str, float | None]:
        return {
            name: (None if v is None else v * self.area_ha if FIGURE_BY_NAME[name].scales else v)
            for name, v in self.per_ha.items()
        }

    def __getitem__(self, name: str) -> float | None:
        return self.per_ha[name]

    def to_dict(self) -> dict[str, Any]:
        return {
            "case": self.case_name,
            "case_hash": self.case_hash,
            "tool_version": self.version,
            "currency": self.currency,
            "area_ha": self.area_ha,
            "stand_life_years": self.stand_life_years,
            "discount_rate": {
                "used_real": self.discount_rate_real,
                "given": self.discount_rate_given,
                "basis": self.rate_basis,
                "inflation": self.inflation,
            },
            "price_basis": self.price_basis,
            "figures_per_ha": dict(self.per_ha),
            "figures_whole_field": self.whole_field,
            "figure_units": {f.name: f.unit for f in FIGURES},
            "notes": dict(self.notes),
            "warnings": list(self.warnings),
            "cautions": list(CAUTIONS),
        }


#: what an LLCR below 0 is said to be: no cover, not a ratio to read
NO_COVER = "below 0: no cover; a negative ratio is not meaningful"


def _clean(v: float) -> float | None:
    v = float(v)
    return None if not np.isfinite(v) else v


def summarise(case: Case, frame: pd.DataFrame | None = None, model=MODEL) -> Results:
    """The decision figures of one case (its ledger, if given, must be this case's)."""
    if frame is not None and frame.attrs.get("case_hash") != case.hash:
        raise ValueError("this ledger was not built from this case")
    names = [f.name for f in model.figures]
    flows = {"irr": "net_cash_flow", "irr_vs_current_use": "incremental_cash_flow", "irr_after_tax": "after_tax_cash_flow"}
    # where several rates leave an IRR undefined, the figure shown beside it to judge by (a MIRR is shown for
    # the stand's own cash flow only)
    instead = {"irr": "see MIRR", "irr_vs_current_use": "judge the gain by NPV vs current use",
               "irr_after_tax": "judge by NPV after tax"}
    got = evaluate(case.values, figures=names, lines=tuple(flows.values()), model=model, rows=1)
    per_ha = {name: _clean(got.figures[name][0]) for name in names}
    notes: dict[str, str] = {}
    for name, line in flows.items():
        _, reason, rule = irr_rule_explained(got.lines[line][0], instead[name])
        if reason:
            notes[name] = f"IRR undefined: {reason}"
        elif rule:
            notes[name] = f"IRR by the project's rule: {rule}"
    if per_ha["payback_year"] is None:
        notes["payback_year"] = "the cumulative cash flow never returns to zero within the stand life"
    if per_ha["discounted_payback_year"] is None:
        notes["discounted_payback_year"] = "the cumulative discounted cash flow never returns to zero within the stand life"
    if per_ha["breakeven_mature_yield_t_dm_per_ha"] is not None and per_ha["breakeven_mature_yield_t_dm_per_ha"] < 0:
        notes["breakeven_mature_yield_t_dm_per_ha"] = "negative: the stand pays even with no harvest"
    if per_ha["min_dscr"] is None:
        notes["min_dscr"] = "no loan: no debt service falls due"
    elif per_ha["years_below_covenant"]:
        notes["min_dscr"] = (f"below the covenant in {per_ha['years_below_covenant']:.0f} test year(s); "
                             "0 means the cash available was negative")
    if not per_ha["loan_principal"]:
        notes["llcr"] = notes["min_llcr"] = "no loan: no balance to cover"
    else:
        if per_ha["llcr_no_cover_at_first_test"]:
            notes["llcr"] = NO_COVER
        if per_ha["llcr_no_cover_years"]:
            notes["min_llcr"] = (f"below 0: no cover in {per_ha['llcr_no_cover_years']:.0f} year(s) of the loan "
                                 "; a negative ratio is not meaningful")
    if case["loan.profile"] == "sculpted" and per_ha["loan_principal"]:
        notes["breakeven_price_at_covenant"] = "not meaningful for a sculpted loan: it is sized to its target DSCR"
    for name in ("breakeven_price", "breakeven_price_vs_current_use"):
        if per_ha[name] is None:
            notes[name] = "undefined: no biomass is sold at the market price, so no price brings NPV to zero"
        elif per_ha[name] < 0:
            notes[name] = "negative: the stand pays even if the biomass were given away"
    if per_ha["mirr"] is None:
        notes["mirr"] = "MIRR undefined: the flows need both a cost and a receipt"
    return Results(
        case_name=case.name,
        case_hash=case.hash,
        currency=case.currency,
        area_ha=case.area_ha,
        stand_life_years=case.stand_life,
        discount_rate_real=case.real_discount_rate,
        discount_rate_given=case["finance.discount_rate"],
        rate_basis=case["finance.rate_basis"],
        inflation=case["finance.inflation"],
        price_basis=case.price_basis,
        per_ha=per_ha,
        notes=notes,
        warnings=list(case.warnings),
    )
