"""Charts of sensitivity and risk runs as matplotlib figures (tornado, break-even surface, NPV histogram).

Each is the chart :mod:`tea.outputs.plots` draws for ``--plot``, in the page's
style (the tornado is the page's own), optionally saved to a file whose
suffix gives the format (.png, .svg, .pdf).
"""

from __future__ import annotations

from pathlib import Path

from tea.analysis.risk import RiskResult
from tea.analysis.sensitivity import Sensitivity, Surface, run, surface
from tea.inputs.case import Case
from tea.outputs import plots


def _saved(fig, path):
    if path is not None:
        plots.save(fig, path, Path(path).suffix.lower().lstrip(".") or "png")
    return fig


def tornado_chart(case: Case | Sensitivity, path=None, figure: str = "npv"):
    """A tornado chart of the sensitivity of NPV (or ``figure``: eav, npv_vs_current_use, eav_vs_current_use)."""
    res = case if isinstance(case, Sensitivity) else run(case, with_surface=False)
    return _saved(plots.tornado(res, figure=figure), path)


def surface_chart(case: Case | Sensitivity, path=None):
    """NPV over the break-even surface's grid with the NPV = 0 line and the case marked."""
    res = case if isinstance(case, Sensitivity) else run(case, with_surface=True)
    if res.surface is None:
        res.surface = surface(res.case)
    return _saved(plots.surface(res), path)


def histogram_chart(res: RiskResult, path=None):
    """A two-panel chart: NPV histogram, and the P5-P95 band of the cumulative cash flow."""
    return _saved(plots.risk(res), path)


__all__ = ["Surface", "histogram_chart", "surface_chart", "tornado_chart"]
