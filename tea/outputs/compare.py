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
from tea.inputs import display
from tea.outputs import charts, side_by_side
from tea.outputs.advice import crop_name
from tea.outputs.headline import headline
from tea.outputs.page import Cell, chart_view, per_area, print_minus, rate_text, tone, value_of

#: cases per column block of the side-by-side table
CASES_PER_TABLE = 4


def overview(cases: Sequence[Case], ledgers: Sequence[pd.DataFrame], results: Sequence[Results],
              size: str) -> dict[str, Any]:
    cols = []
    for i, (case, res) in enumerate(zip(cases, results)):
        area_v, area_u = display.area(case.area_ha, case.unit_system)
        head = headline(case, res)
        cols.append({
            "anchor": f"case-{i}",
            "number": i + 1,
            "title": case.name,
            "field": f"{case.values.get('field.name', '')}, {display.number(area_v)} {area_u}",
            "crop": crop_name(case),
            "demo": bool(case.values.get("case.demo")),
            "sentence": head.sentence,
            "verdict_tone": head.tone,
            "basis": f"per {per_area(case)}, {case.currency}, {rate_text(res)}, {case.stand_life} years",
            "life": f"{case.stand_life}-year stand",
            "hash": res.case_hash,
        })
    groups = []
    for title, group in side_by_side.rows(cases, results):
        groups.append({"title": title, "rows": [
            {"label": r.label, "whole": r.whole,
             "cells": [Cell(print_minus(text), tone(value) if r.name in side_by_side.TONED and not r.whole else "")
                       for text, value in r.cells]}
            for r in group]})
    blocks = []
    for start in range(0, len(cases), CASES_PER_TABLE):
        sl = slice(start, start + CASES_PER_TABLE)
        blocks.append({
            "cols": cols[sl],
            "groups": [{"title": g["title"], "rows": [dict(r, cells=r["cells"][sl]) for r in g["rows"]]}
                       for g in groups],
        })
    width = 7.2 if size == "A4" else 7.4
    panels = _panels(cases, ledgers, results)
    chart = charts.compare_cumulative(panels, name="compare-cash",
                                      width_in=width, height_in=1.65 if size == "A4" else 1.4)  # Letter is shorter
    return {
        "count": len(cases),
        "cols": cols,
        "blocks": blocks,
        "chart": chart_view(chart),
        "mixed": len({(c.currency, c.unit_system) for c in cases}) > 1,
        "crowded": (f"A panel of more than {charts.MOST_NAMED_LINES} cases draws each as a thin grey line and names "
                    f"the {charts.NAMED_HIGHEST} whose running total ends highest and the {charts.NAMED_LOWEST} that "
                    f"end{'s' if charts.NAMED_LOWEST == 1 else ''} lowest."
                    if any(len(series) > charts.MOST_NAMED_LINES for _, series in panels) else ""),
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


