"""Several cases side by side: the rows both the comparison report and the terminal show.

Each row is a figure (or a fact of the case: crop, field, stand life, discount
rate), each column a case, every value formatted as the terminal formats it,
in the case's own currency and units. The terminal table wraps its columns
to stay within :data:`WIDTH` characters.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass
from typing import Sequence

from tea.core.texts import WIDTH
from tea.inputs.case import Case
from tea.model.results import Results
from tea.inputs import display
from tea.outputs import terminal
from tea.outputs.advice import crop_name

#: figure rows by group; "crop", "field", "stand_life" and "discount_rate" are facts of the case
ROWS = (
    ("The case", ("crop", "field", "stand_life", "discount_rate")),
    ("Money", ("npv", "npv_vs_current_use", "eav_vs_current_use", "irr", "current_margin", "establishment_cost")),
    ("Risk", ("payback_year", "cash_at_removal", "discounted_payback_year", "peak_funding_need", "peak_funding_year",
              "breakeven_price", "breakeven_mature_yield_t_dm_per_ha")),
    ("Loan", ("loan_principal", "loan_payment", "min_dscr", "min_dscr_year", "dscr_covenant",
              "years_below_covenant", "equity_peak_funding_need")),
    ("Carbon", ("soc_gain_t_c", "ghg_net_t_co2e", "carbon_credit_pv")),
)
FACTS = {"crop": "Crop", "field": "Field", "stand_life": "Stand life", "discount_rate": "Discount rate (real)"}
#: figures also shown for the whole field
WHOLE = ("npv", "npv_vs_current_use", "peak_funding_need")
#: figures coloured by their sign (gain or loss) on the page
TONED = ("npv", "npv_vs_current_use", "eav_vs_current_use", "cash_at_removal")


@dataclass(frozen=True)
class Row:
    """One row: its label, whether it is a whole-field figure, and per case the text and the value."""

    name: str
    label: str
    whole: bool
    cells: tuple[tuple[str, float | None], ...]


def _fact(case: Case, res: Results, name: str) -> str:
    if name == "crop":
        return crop_name(case)
    if name == "field":
        area, unit = display.area(case.area_ha, case.unit_system)
        return f"{case.values.get('field.name', '')}, {display.number(area)} {unit}"
    if name == "stand_life":
        return f"{case.stand_life} years"
    return display.percent(res.discount_rate_real, 1)


def _text(case: Case, res: Results, name: str, whole: bool = False, short: bool = False) -> tuple[str, float | None]:
    if name in FACTS:
        return _fact(case, res, name), None
    value = res.per_ha.get(name)
    if name.startswith("loan_") or name in ("min_dscr", "min_dscr_year", "dscr_covenant", "years_below_covenant",
                                            "equity_peak_funding_need"):
        if not res.per_ha.get("loan_principal"):
            return "no loan", None
    if value is None:
        return "–", None
    again = res.per_ha.get("payback_lost_year") if name == "payback_year" else None
    if short and name in ("payback_year", "discounted_payback_year"):  # the interpolated years are in each case's
        return f"year {value:.0f}" + (f", <0 again yr {again:.0f}" if again is not None else ""), value  # summary
    return terminal._fig(res, case, name, whole=whole), value


def rows(cases: Sequence[Case], results: Sequence[Results], short: bool = False) -> list[tuple[str, list[Row]]]:
    """The groups of rows for these cases (the loan group only where a case has a loan); ``short``: paybacks
    as whole years only, for the terminal's narrow columns."""
    out = []
    any_loan = any(r.per_ha.get("loan_principal") for r in results)
    any_credit = any(c.values.get("carbon.credit_price_per_t_co2e") for c in cases)
    for title, names in ROWS:
        if title == "Loan" and not any_loan:
            continue
        group = []
        for name in names:
            if name == "carbon_credit_pv" and not any_credit:
                continue
            label = FACTS.get(name) or terminal.LABELS.get(name, name)
            group.append(Row(name, label, False, tuple(_text(c, r, name, short=short) for c, r in zip(cases, results))))
            if name in WHOLE:
                group.append(Row(name, f"{label}, whole field", True,
                                 tuple(_text(c, r, name, whole=True) for c, r in zip(cases, results))))
        out.append((title, group))
    return out


def text_table(cases: Sequence[Case], results: Sequence[Results], width: int = WIDTH) -> str:
    """The cases side by side as plain text, in blocks of as many columns as fit ``width`` characters."""
    groups = rows(cases, results, short=True)
    labels = [r.label for _, g in groups for r in g] + [t for t, _ in groups]
    label_w = 2 + min(max(len(x) for x in labels), 34)  # the rows' labels, indented by two
    cols = []
    for i, case in enumerate(cases):
        texts = [r.cells[i][0] for _, g in groups for r in g]
        col_w = min(max(22, *(len(t) for t in texts)), width - label_w - 2)
        head = textwrap.wrap(f"{i + 1}. {case.name}", col_w)[:3]
        cols.append((col_w, head))
    blocks, start = [], 0
    while start < len(cases):
        end, used = start, label_w
        while end < len(cases) and (end == start or used + 2 + cols[end][0] <= width):
            used += 2 + cols[end][0]
            end += 1
        blocks.append(range(start, end))
        start = end
    out = []
    for block in blocks:
        depth = max(len(cols[i][1]) for i in block)
        for k in range(depth):
            out.append((" " * label_w + "".join(
                "  " + (cols[i][1][k] if k < len(cols[i][1]) else "").rjust(cols[i][0]) for i in block)).rstrip())
        for title, group in groups:
            out.append(title)
            for r in group:
                label = textwrap.shorten(r.label, label_w - 2, placeholder="…")
                out.append((f"  {label:<{label_w - 2}}" + "".join(
                    "  " + r.cells[i][0].rjust(cols[i][0]) for i in block)).rstrip())
        out.append("")
    return "\n".join(out).rstrip() + "\n"
