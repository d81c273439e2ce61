"""The advisor's comparison: the cases side by side (figures, crops, loans), and one chart of all.

Each case keeps its own currency and units: cases in different ones are
never drawn on one axis, and no exchange rate or conversion is implied.
"""

from __future__ import annotations

from typing import Any, Sequence

import pandas as pd

from tea import __version__
from tea.core.texts import CAUTIONS
from tea.inputs.case import Case
from tea.model.results import Results
from tea.outputs import charts, display, terminal
from tea.outputs.headline import headline
from tea.outputs.page import Cell, chart_view, fig_text, per_area, rate_text, tone, value_of

COMPARE_ROWS = (
    ("Money", ("npv", "npv_vs_current_use", "eav_vs_current_use", "irr", "current_margin", "establishment_cost")),
    ("Risk", ("payback_year", "discounted_payback_year", "peak_funding_need", "peak_funding_year",
              "breakeven_price", "breakeven_mature_yield_t_dm_per_ha")),
    ("Carbon", ("soc_gain_t_c", "ghg_net_t_co2e", "carbon_credit_pv")),
)
COMPARE_WHOLE = ("npv", "npv_vs_current_use", "peak_funding_need")
#: figures coloured by their sign (gain or loss) in the comparison
COMPARE_TONED = ("npv", "npv_vs_current_use", "eav_vs_current_use")
#: cases per column block of the side-by-side table
CASES_PER_TABLE = 4


def overview(cases: Sequence[Case], ledgers: Sequence[pd.DataFrame], results: Sequence[Results],
              size: str) -> dict[str, Any]:
    cols = []
    for i, (case, res) in enumerate(zip(cases, results)):
        area_v, area_u = display.area(case.area_ha, case.unit_system)
        cols.append({
            "anchor": f"case-{i}",
            "number": i + 1,
            "title": case.name,
            "field": f"{case.values.get('field.name', '')}, {display.number(area_v)} {area_u}",
            "crop": case.preset.title,
            "demo": bool(case.values.get("case.demo")),
            "sentence": headline(case, res).sentence,
            "verdict_tone": headline(case, res).tone,
            "basis": f"per {per_area(case)}, {case.currency}, {rate_text(res)}, {case.stand_life} years",
            "hash": res.case_hash,
        })
    groups = []
    for title, names in COMPARE_ROWS:
        rows = []
        for name in names:
            cells = []
            for case, res in zip(cases, results):
                v = value_of(res, name)
                text = "–" if v is None else fig_text(case, res, name)
                cells.append(Cell(text, tone(v) if name in COMPARE_TONED else ""))
            rows.append({"label": terminal.LABELS.get(name, name), "whole": False, "cells": cells})
            if name in COMPARE_WHOLE:
                rows.append({"label": f"{terminal.LABELS.get(name, name)}, whole field", "whole": True,
                             "cells": [Cell("–" if value_of(r, name) is None else fig_text(c, r, name, whole=True))
                                       for c, r in zip(cases, results)]})
        groups.append({"title": title, "rows": rows})
    blocks = []
    for start in range(0, len(cases), CASES_PER_TABLE):
        sl = slice(start, start + CASES_PER_TABLE)
        blocks.append({
            "cols": cols[sl],
            "groups": [{"title": g["title"], "rows": [dict(r, cells=r["cells"][sl]) for r in g["rows"]]}
                       for g in groups],
        })
    width = 7.2 if size == "A4" else 7.4
    chart = charts.compare_cumulative(_panels(cases, ledgers, results), name="compare-cash",
                                      width_in=width, height_in=2.6)
    return {
        "count": len(cases),
        "cols": cols,
        "blocks": blocks,
        "chart": chart_view(chart),
        "mixed": len({(c.currency, c.unit_system) for c in cases}) > 1,
        "demo": any(c.values.get("case.demo") for c in cases),
        "cautions": list(CAUTIONS),
        "version": __version__,
    }


def _panels(cases, ledgers, results) -> list[tuple[str, list[charts.Series]]]:
    """One panel per currency and area unit, the cases in their order of appearance."""
    panels: dict[tuple[str, str], list[charts.Series]] = {}
    for i, (case, frame, res) in enumerate(zip(cases, ledgers, results)):
        unit = f"{case.currency} per {per_area(case)}"
        values = [display.convert(float(x), "money/ha", case.unit_system)[0] for x in frame["cumulative_cash_flow"]]
        panels.setdefault((unit, case.unit_system), []).append(
            charts.Series(f"{i + 1}. {case.name}", [float(y) for y in frame["year"]], values,
                          value_of(res, "payback_year")))
    return [(unit, series) for (unit, _), series in panels.items()]


