"""Charts of ``tea sensitivity --plot/--surface-plot`` and ``tea risk --plot``, in the page's style.

The tornado chart is the page's own (:func:`tea.outputs.charts.tornado_figure`
fed by :func:`tea.outputs.whatmoves.tornado_parts`): the same colours, units
and words on the page and in the file. The break-even surface marks the case
itself; the risk chart's year axis has whole years only. Money is per area
unit of the case (per acre for a US customary case), in its currency.
"""

from __future__ import annotations

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator

from tea.inputs import riskspec, units
from tea.inputs import display
from tea.outputs import charts
from tea.outputs.page import per_area
from tea.outputs.whatmoves import FIGURES, tornado_parts


def save(fig: Figure, target, fmt: str) -> None:
    """Save a figure in the charts' style with the same bytes for the same chart: no date in SVG or PDF
    metadata, fixed SVG ids (svg.hashsalt)."""
    metadata = {"svg": {"Date": None}, "pdf": {"CreationDate": None, "ModDate": None}}.get(fmt)
    with matplotlib.rc_context({**charts.STYLE, "svg.hashsalt": "tea-chart"}):
        charts.spaced(fig)
        fig.savefig(target, format=fmt, dpi=200, metadata=metadata)


def tornado(run, figure: str = "npv") -> Figure:
    """The tornado chart of a sensitivity run for ``figure`` (npv, eav, npv_vs_current_use, eav_vs_current_use)."""
    parts = tornado_parts(run.case, run, figure)
    return charts.tornado_figure(**parts, width_in=7.2)


def surface(run) -> Figure:
    """NPV over the break-even surface's grid, the NPV = 0 line, and the case itself marked."""
    case, surf = run.case, run.surface
    fx = _factor(case, surf.x)
    fy = _factor(case, surf.y)
    per_ha = display.convert(1.0, "money/ha", case.unit_system)[0]
    X, Y = np.meshgrid(surf.x_values * fx, surf.y_values * fy)
    with matplotlib.rc_context(charts.STYLE):
        fig = Figure(figsize=(5.2, 3.8))
        ax = fig.add_subplot()
        filled = ax.contourf(X, Y, surf.npv * per_ha, levels=12, cmap="RdBu")
        fig.colorbar(filled, ax=ax, label=f"NPV [{case.currency} per {per_area(case)}]")
        if surf.npv.min() < 0 < surf.npv.max():
            ax.contour(X, Y, surf.npv, levels=[0.0], colors=charts.INK, linewidths=1.2)
        bx, by = _base(case, surf.x) * fx, _base(case, surf.y) * fy
        ax.plot([bx], [by], marker="o", markersize=6, markerfacecolor="white", markeredgecolor=charts.INK,
                linestyle="none", label="this case")
        ax.legend(loc="upper right", fontsize=6.0, frameon=True)
        ax.set_xlabel(charts.plain(f"{riskspec.label(surf.x)} [{_unit(case, surf.x)}]"))
        ax.set_ylabel(charts.plain(f"{riskspec.label(surf.y)} [{_unit(case, surf.y)}]"))
        ax.set_title("Break-even surface: NPV = 0 on the dark line; the open circle is this case")
        fig.tight_layout()
    return fig


def risk(res) -> Figure:
    """NPV histogram and the P5-P95 band of the cumulative cash flow, whole years on the year axis."""
    case = res.case
    per = per_area(case)
    scale = display.convert(1.0, "money/ha", case.unit_system)[0]
    with matplotlib.rc_context(charts.STYLE):
        fig = Figure(figsize=(7.2, 3.0))
        ax1, ax2 = fig.subplots(1, 2)
        ax1.hist(res.figures["npv"] * scale, bins=40, color=charts.ACCENT)
        ax1.axvline(0.0, color=charts.INK, linewidth=0.8)
        ax1.set_xlabel(f"NPV [{case.currency} per {per}]")
        ax1.set_ylabel("draws")
        ax1.set_title(f"P(NPV < 0) = {res.prob_npv_negative.value:.1%}")
        years = res.band_years
        ax2.fill_between(years, res.band[5] * scale, res.band[95] * scale, color="#c9dbea", label="P5-P95")
        ax2.fill_between(years, res.band[10] * scale, res.band[90] * scale, color="#8fb3d3", label="P10-P90")
        ax2.plot(years, res.band[50] * scale, color=charts.INK, label="P50")
        ax2.axhline(0.0, color=charts.INK, linewidth=0.6)
        ax2.xaxis.set_major_locator(MaxNLocator(integer=True))  # whole years: no half-year ticks
        ax2.set_xlabel("year after planting")
        ax2.set_ylabel(f"running total of cash [{case.currency} per {per}]")
        ax2.legend(loc="upper left", fontsize=6.0)
        for ax in (ax1, ax2):
            ax.xaxis.set_major_formatter(charts.formatter())
            ax.yaxis.set_major_formatter(charts.formatter())
        fig.suptitle(charts.plain(f"{case.name}: {res.draws:,} draws, seed {res.seed}"), fontsize=7.0)
        fig.tight_layout()
    return fig


def _base(case, path: str) -> float:
    from tea.analysis import sensitivity

    return float(sensitivity.base_value(case, path))


def _factor(case, path: str) -> float:
    inp, _ = riskspec.resolve(path)
    return 1.0 if inp is None or inp.key is None else units.display_factor(inp.key.template, case.unit_system)


def _unit(case, path: str) -> str:
    inp, _ = riskspec.resolve(path)
    return "" if inp is None else inp.unit_text(case.unit_system, case.currency)


__all__ = ["FIGURES", "risk", "save", "surface", "tornado"]
