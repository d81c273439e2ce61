"""What moves the NPV on a case's page: the tornado chart and the note on where its ranges come from.

The sensitivity run (:func:`tea.analysis.sensitivity.run`, one vectorised
evaluation of the full ledger) is made once per page, and the chart drawn
once for its place below the other charts; only a page that needs the last
layout step draws it again, narrow, for its place beside the yearly table.
"""

from __future__ import annotations

from typing import Any

from tea.inputs.case import Case
from tea.inputs import display
from tea.outputs import charts
from tea.outputs.page import BESIDE, GIVEN_BARS, chart_view, per_area, print_minus


#: the figures a tornado chart can show: name on the chart, and whether it is a yearly amount
FIGURES = {"npv": ("NPV", False), "eav": ("EAV", True), "npv_vs_current_use": ("NPV vs current use", False),
           "eav_vs_current_use": ("EAV vs current use", True)}
#: width of the tornado chart [in]: below the other charts, beside a split yearly table, below a single one
TORNADO_WIDTH_IN, TORNADO_SPLIT_WIDTH_IN, TORNADO_SIDE_WIDTH_IN = 7.2, 2.35, 3.5


def tornado_parts(case: Case, run, figure: str = "npv", beside: bool = False) -> dict[str, Any]:
    """The tornado chart's rows for a sensitivity run, in the case's units: labels, low, high, base, unit.

    The same parts serve the page and ``tea sensitivity --plot``, so both show
    the same colours, units and words.
    """
    name, yearly = FIGURES[figure]
    per = per_area(case)

    def shown(value: float) -> float:
        return display.convert(float(value), "money/ha", case.unit_system)[0]

    labels, low, high = [], [], []
    for i in run.order(figure):
        m = run.moved[i]
        text = f"{m.label}{'*' if m.declared else ''}" + (f"\n{m.range_text(case)}" if beside
                                                          else f" ({m.range_text(case)})")
        labels.append(print_minus(text))
        low.append(shown(run.low[figure][i]))
        high.append(shown(run.high[figure][i]))
    unit = f"{case.currency} per {per}" + (" per year" if yearly else "")
    return {"labels": labels, "low": low, "high": high, "base": shown(run.base[figure]), "unit_label": unit,
            "figure": name}


class SensitivityViews:
    """The sensitivity block of one case's page at each layout step (None: no block).

    The run is made once; the chart is drawn once for its place below the
    other charts and, only if the last layout step is reached, once more,
    narrow with two-line labels, for its place beside the yearly table.
    """

    def __init__(self, case: Case, given: charts.Chart | bool | None, anchor: str):
        if given is not None and not isinstance(given, (bool, charts.Chart)):
            raise TypeError("sensitivity: expected True, False, None or a tea.outputs.charts.Chart")
        self.case, self.anchor = case, anchor
        self.chart = given if isinstance(given, charts.Chart) else None
        self.run = None
        if shows_block(case, given) and self.chart is None:
            from tea.analysis import sensitivity as sens

            self.run = sens.run(case, with_surface=False)
        #: what the fit cache tells layouts apart by
        self.key = self.chart.svg if self.chart is not None else ("tornado" if self.run is not None else None)
        #: whether the block can move beside the yearly table (a tornado chart drawn here)
        self.movable = self.run is not None
        #: bars of the tornado chart (0: no block), for the page's expected height
        self.bars = len(self.run.order("npv")) if self.run is not None else (GIVEN_BARS if self.chart else 0)
        self._views: dict[tuple[bool, bool], dict[str, Any]] = {}

    def view(self, density: int, split: bool) -> dict[str, Any] | None:
        """The block at a layout step; ``split``: the yearly table runs in two blocks side by side."""
        if self.chart is not None:
            return dict(chart_view(self.chart), note="", beside=False)
        if self.run is None:
            return None
        beside = density >= BESIDE
        key = (beside, split and beside)
        if key not in self._views:
            self._views[key] = _tornado_view(self.case, self.run, self.anchor, beside, split)
        return self._views[key]


    def below(self) -> dict[str, Any] | None:
        """The block in its usual place, below the other charts (what every layout step but the last shows)."""
        return self.view(0, False)

    def below_spec(self) -> charts.Spec | None:
        """The tornado chart of the block below the other charts, described (None: no chart to draw here)."""
        if self.run is None or self.chart is not None:
            return None
        return _tornado_spec(self.case, self.run, self.anchor, False, False)

    def keep_below(self, chart: charts.Chart) -> None:
        """Take the tornado chart of the block below the other charts as drawn elsewhere (from
        :meth:`below_spec`, e.g. in a worker process)."""
        if self.run is not None and self.chart is None:
            self._views[(False, False)] = _block(self.case, self.run, chart, False)


def shows_block(case: Case, given: charts.Chart | bool | None) -> bool:
    """Whether the case's page has the block: ``given`` as for :class:`SensitivityViews` (None: where the case
    has a ``[sensitivity]`` section)."""
    return given if isinstance(given, bool) else (given is not None or "sensitivity" in case.values)


def _tornado_view(case: Case, run, anchor: str, beside: bool, split: bool) -> dict[str, Any]:
    """The tornado chart of NPV, ranked by swing, per area unit of the case, and its caption."""
    return _block(case, run, _tornado_spec(case, run, anchor, beside, split).draw(), beside)


def _tornado_spec(case: Case, run, anchor: str, beside: bool, split: bool) -> charts.Spec:
    """The tornado chart of :func:`_tornado_view`, described."""
    width = (TORNADO_SPLIT_WIDTH_IN if split else TORNADO_SIDE_WIDTH_IN) if beside else TORNADO_WIDTH_IN
    title = ("What moves the NPV: each input moved alone to its low and its high value, the others at base; "
             "largest swing first")
    return charts.Spec("tornado", dict(**tornado_parts(case, run, "npv", beside), name=f"{anchor}-tornado",
                                       width_in=width, row_in=charts.TORNADO_ROW_IN * (1.85 if beside else 1.0),
                                       title=title if not beside else "What moves the NPV"))


def _block(case: Case, run, chart: charts.Chart, beside: bool) -> dict[str, Any]:
    """The block of a drawn tornado chart: the chart and its note on where the ranges come from."""
    note = _ranges_note(case, run)
    if beside:
        note = ("Each input moved alone to its low and its high value, the others at base; largest swing first. "
                + note)
    return dict(chart_view(chart), note=note, beside=beside)


def _ranges_note(case: Case, run) -> str:
    """One line: where the low and high values come from (declared in the case, or a share of the base)."""
    from tea.inputs import riskspec

    spec = case.values.get("sensitivity") or {}
    share = spec.get("default_share", riskspec.DEFAULT_SHARE)
    whose = "the case's default share" if "default_share" in spec else "tea's default share"
    declared = sum(1 for m in run.moved if m.declared)
    bounded = any(not m.declared and ("clipped" in m.note or "raised" in m.note) for m in run.moved)
    shared = f"base \u2212/+ {display.percent(share, 0)} ({whose}" + (", within bounds)" if bounded else ")")
    head = "Low / high values: "
    if declared == len(run.moved):
        return "Low / high values as declared in the case's [sensitivity] section."
    if declared:
        return head + f"* declared in the case's [sensitivity] section; the others {shared}."
    return head + f"{shared}; a [sensitivity] section in the case can declare them."


