"""Charts of sensitivity and risk runs as matplotlib figures (tornado, break-even surface, NPV histogram)."""

from __future__ import annotations

import numpy as np

from tea.analysis.risk import RiskResult
from tea.analysis.sensitivity import Sensitivity, Surface, _display_factor, _unit, run, surface
from tea.inputs import riskspec, units
from tea.inputs.case import Case


def tornado_chart(case: Case | Sensitivity, path=None, figure: str = "npv", ax=None):
    """A tornado chart of the sensitivity of NPV (or ``figure``) to each input.

    Parameters
    ----------
    case : Case or Sensitivity
        A case (run here) or a finished run.
    path : str or Path, optional
        Also save the chart there (the format follows the suffix: .png, .svg, .pdf).
    figure : str
        ``"npv"``, ``"eav"``, ``"npv_vs_current_use"`` or ``"eav_vs_current_use"``.
    ax : matplotlib Axes, optional
        Draw into these axes instead of a new figure.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if ax is None:
        from matplotlib.figure import Figure

        fig = Figure(figsize=(7.5, 5.7))
        ax = fig.add_subplot(1, 1, 1)
    else:
        fig = ax.figure
    res = case if isinstance(case, Sensitivity) else run(case, with_surface=False)
    c = res.case
    order = res.order(figure)[::-1]
    base = res.base[figure]
    per = "acre" if c.unit_system == "us_customary" else "ha"
    scale = units.HA_PER_ACRE if per == "acre" else 1.0
    labels = []
    for pos, i in enumerate(order):
        m = res.moved[i]
        lo, hi = res.low[figure][i] * scale, res.high[figure][i] * scale
        ax.barh(pos, lo - base * scale, left=base * scale, color="#b2182b", height=0.6)
        ax.barh(pos, hi - base * scale, left=base * scale, color="#2166ac", height=0.6)
        f = m.display_factor(c)
        unit = m.unit_text(c)
        labels.append(f"{m.label}\n{m.low * f:g} / {m.high * f:g} {unit}".strip())
    ax.set_yticks(range(len(order)))
    ax.set_yticklabels(labels, fontsize=7)
    ax.axvline(base * scale, color="black", linewidth=0.8)
    name = {"npv": "NPV", "eav": "Equivalent annual value", "npv_vs_current_use": "NPV vs current use",
            "eav_vs_current_use": "EAV vs current use"}[figure]
    unit = f"{c.currency}/{per}" + ("/yr" if figure.startswith("eav") else "")
    ax.set_xlabel(f"{name} [{unit}]  (red: input at its low value, blue: at its high value)", fontsize=8)
    ax.set_title(f"{c.name}: what moves {name}", fontsize=9)
    ax.tick_params(axis="x", labelsize=7)
    fig.tight_layout()
    if path is not None:
        fig.savefig(path, metadata={"Date": None} if str(path).endswith((".svg", ".pdf")) else None)
    return fig


# ----------------------------------------------------------------------------- break-even surface


def surface_chart(case: Case | Sensitivity | Surface, path=None, ax=None, case_for_labels: Case | None = None):
    """A filled contour chart of NPV over the surface grid, with the NPV = 0 line."""
    from matplotlib.figure import Figure

    if isinstance(case, Sensitivity):
        c, surf = case.case, case.surface or surface(case.case)
    elif isinstance(case, Surface):
        c, surf = case_for_labels, case
    else:
        c, surf = case, surface(case)
    if ax is None:
        fig = Figure(figsize=(6.5, 4.8))
        ax = fig.add_subplot(1, 1, 1)
    else:
        fig = ax.figure
    fx = _display_factor(c, surf.x)
    fy = _display_factor(c, surf.y)
    X, Y = np.meshgrid(surf.x_values * fx, surf.y_values * fy)
    filled = ax.contourf(X, Y, surf.npv, levels=12, cmap="RdBu")
    fig.colorbar(filled, ax=ax, label=f"NPV [{c.currency if c else ''}/ha]")
    if surf.npv.min() < 0 < surf.npv.max():
        ax.contour(X, Y, surf.npv, levels=[0.0], colors="black", linewidths=1.2)
    ax.set_xlabel(f"{riskspec.label(surf.x)} [{_unit(c, surf.x)}]")
    ax.set_ylabel(f"{riskspec.label(surf.y)} [{_unit(c, surf.y)}]")
    ax.set_title("Break-even surface: NPV = 0 on the black line", fontsize=9)
    fig.tight_layout()
    if path is not None:
        fig.savefig(path)
    return fig


def histogram_chart(res: RiskResult, path=None):
    """A two-panel chart: NPV histogram, and the P5-P95 band of the cumulative cash flow."""
    from matplotlib.figure import Figure

    c = res.case
    per = "acre" if c.unit_system == "us_customary" else "ha"
    scale = 0.40468564224 if per == "acre" else 1.0
    fig = Figure(figsize=(9.0, 3.8))
    ax1, ax2 = fig.subplots(1, 2)
    npv = res.figures["npv"] * scale
    ax1.hist(npv, bins=40, color="#4575b4")
    ax1.axvline(0.0, color="black", linewidth=0.8)
    ax1.set_xlabel(f"NPV [{c.currency}/{per}]", fontsize=8)
    ax1.set_ylabel("draws", fontsize=8)
    ax1.set_title(f"P(NPV < 0) = {res.prob_npv_negative.value:.1%}", fontsize=9)
    years = res.band_years
    ax2.fill_between(years, res.band[5] * scale, res.band[95] * scale, color="#abd9e9", label="P5-P95")
    ax2.fill_between(years, res.band[10] * scale, res.band[90] * scale, color="#74add1", label="P10-P90")
    ax2.plot(years, res.band[50] * scale, color="#313695", label="P50")
    ax2.axhline(0.0, color="black", linewidth=0.8)
    ax2.set_xlabel("year", fontsize=8)
    ax2.set_ylabel(f"cumulative cash flow [{c.currency}/{per}]", fontsize=8)
    ax2.legend(fontsize=7)
    for ax in (ax1, ax2):
        ax.tick_params(labelsize=7)
    fig.suptitle(f"{c.name}: {res.draws:,} draws, seed {res.seed}", fontsize=9)
    fig.tight_layout()
    if path is not None:
        fig.savefig(path)
    return fig
