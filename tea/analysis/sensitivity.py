"""What moves the answer: one-at-a-time sensitivity and the break-even surface.

:func:`run` moves each key input of a case to a low and a high value (declared
in the case's ``[sensitivity]`` section, or the base value -/+ a default
share), recomputes NPV and the equivalent annual value (EAV) for every
variant in one vectorised evaluation of the full ledger, and ranks the inputs
by the swing of NPV. :func:`surface` computes NPV over a grid of two inputs
(by default biomass price x mature yield) and the NPV = 0 contour.

Method: one-factor-at-a-time ranges shown as a tornado diagram
(A. C. Eschenbach, "Spiderplots versus tornado diagrams for sensitivity
analysis", *Interfaces* 22(6), 40-46, 1992, doi:10.1287/inte.22.6.40).
Figures are per hectare, in the case's currency.

Other views call :func:`sensitivity_table` (a pandas DataFrame, one row per
input) and :func:`tornado_chart` (a matplotlib figure).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from tea import __version__
from tea.inputs import published, riskspec, site, units
from tea.model.evaluate import evaluate
from tea.inputs.case import Case
from tea.core.errors import CaseError, Problem
from tea.core.texts import CAUTIONS
from tea.inputs.case import case_header as json_header

#: the figures recomputed for each variant
FIGURES = ("npv", "eav", "npv_vs_current_use", "eav_vs_current_use", "min_dscr", "llcr")

#: the pseudo-input of the mature yield estimated from the site climate (moved over the published ranges of
#: the light-use parameters, tea/inputs/data/light_use.toml)
LIGHT_USE = "light_use.estimate"
#: the parameters whose ranges make the estimate's range
LIGHT_USE_PARAMETERS = ("rue_g_per_mj_par", "extinction_coefficient", "leaf_area_per_degree_day",
                        "lai_max", "base_temperature_c", "end_temperature_c", "par_share")


# ----------------------------------------------------------------------------- inputs of a case
@dataclass
class Moved:
    """One input of a sensitivity run, with its base, low and high values (canonical units)."""

    path: str
    label: str
    base: float
    low: float
    high: float
    declared: bool
    note: str = ""

    def unit_text(self, case: Case) -> str:
        inp, _ = riskspec.resolve(_key_path(self.path))
        return inp.unit_text(case.unit_system, case.currency) if inp else ""

    def range_text(self, case: Case) -> str:
        """``low / high unit`` as shown to people (whole years, percentages for rates)."""
        from tea.inputs import display

        f = self.display_factor(case)
        unit = self.unit_text(case)
        inp, _ = riskspec.resolve(_key_path(self.path))
        if inp is not None and inp.integer:
            return f"{self.low * f:.0f} / {self.high * f:.0f} {unit}".strip()
        if unit.startswith("fraction"):
            digits = 2 if max(abs(self.low), abs(self.high)) < 0.1 else 1
            return f"{display.percent(self.low, digits)} / {display.percent(self.high, digits)}"
        return f"{display.number(self.low * f)} / {display.number(self.high * f)} {unit}".strip()

    def display_factor(self, case: Case) -> float:
        inp, _ = riskspec.resolve(_key_path(self.path))
        if inp is None or inp.key is None:
            return 1.0
        return units.display_factor(inp.key.template, case.unit_system)


def _key_path(path: str) -> str:
    """The case key an input is shown as: the site-climate estimate is a mature yield."""
    return "yield.mature_t_dm_per_ha" if path == LIGHT_USE else path


def price_key(case: Case) -> str:
    """The price key the case gives: per t DM or per GJ."""
    return "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"


def base_value(case: Case, path: str) -> float | None:
    """The case's value of an input (canonical units); None where the case does not use the key."""
    if path == riskspec.COST_MULTIPLIER:
        return 1.0
    if path == riskspec.SUCCESS:
        return 1.0 - float(case["establishment.failure_probability"])
    if path == LIGHT_USE:
        if case.origin.get("yield.mature_t_dm_per_ha") != "estimated":
            return None  # moves nothing unless the yield is estimated from the site climate
        return float(case["yield.mature_t_dm_per_ha"])
    v = case.values.get(path)
    return None if v is None else float(v)


def apply(values: dict[str, Any], path: str, column: np.ndarray) -> None:
    """Set an input in a values mapping to a per-row column (pseudo-inputs set their keys).

    Apply the establishment cost multiplier after any direct change of the
    costs it scales.
    """
    if path == riskspec.COST_MULTIPLIER:
        for key in riskspec.ESTABLISHMENT_COST_KEYS:
            values[key] = np.asarray(values[key], dtype=float) * column
    elif path == riskspec.SUCCESS:
        values["establishment.failure_probability"] = 1.0 - column
    else:
        values[path] = column


def real_changes(case: Case, path: str, value: float) -> dict[str, Any]:
    """The case keys a single input value sets, for validation with ``Case.replace``."""
    if path == riskspec.COST_MULTIPLIER:
        return {key: case[key] * value for key in riskspec.ESTABLISHMENT_COST_KEYS}
    if path == riskspec.SUCCESS:
        return {"establishment.failure_probability": 1.0 - value}
    inp, _ = riskspec.resolve(path)
    if inp is not None and inp.integer:
        return {path: int(round(value))}
    return {path: value}


def check_value(case: Case, path: str, value: float, where: str) -> list[Problem]:
    """Problems a case would have with one input set to ``value`` (the loader's own rules)."""
    if path == LIGHT_USE:  # a range of the estimated mature yield: checked as that yield
        path = "yield.mature_t_dm_per_ha"
    try:
        case.replace(**real_changes(case, path, value))
    except CaseError as exc:
        return [Problem(case.source, where, f"{_shown(case, path, value)}: {p.key}: {p.message}") for p in exc.problems]
    return []


def _shown(case: Case, path: str, value: float) -> str:
    inp, _ = riskspec.resolve(path)
    if inp is None or inp.key is None:
        return f"{value:g}"
    f = units.display_factor(inp.key.template, case.unit_system)
    return f"{value * f:g} {inp.unit_text(case.unit_system, case.currency)}".strip()


def _feasible_life(case: Case) -> int:
    """Shortest stand life the case's harvest and loan terms allow."""
    low = max(2, int(case["harvest.first_year"]))
    if case["loan.share_of_establishment"] > 0:
        low = max(low, int(case["loan.grace_years"]) + int(case["loan.term_years"]))
    return low


def moved_inputs(case: Case) -> list[Moved]:
    """The inputs a sensitivity run moves, with their ranges; raises CaseError on a bad range."""
    spec = case.values.get("sensitivity", {}) or {}
    share = spec.get("default_share", riskspec.DEFAULT_SHARE)
    declared = spec.get("ranges", {})
    listed = spec.get("inputs")
    names = list(listed) if listed is not None else [price_key(case) if p == riskspec.PRICE else p
                                                     for p in riskspec.KEY_INPUTS]
    if listed is None:
        names += [p for p in declared if p not in names]
    # a yield estimated from the site climate moves with the light-use parameters (below), not by a share of
    # itself; a range declared for the yield itself is kept instead
    lue = listed is None and case.origin.get("yield.mature_t_dm_per_ha") == "estimated" \
        and "yield.mature_t_dm_per_ha" not in declared
    if lue:
        names = [p for p in names if p != "yield.mature_t_dm_per_ha"]
    out: list[Moved] = []
    problems: list[Problem] = []
    for path in names:
        base = base_value(case, path)
        label = riskspec.label(path)
        if base is None:
            if path in declared or listed is not None:
                problems.append(Problem(case.source, f"sensitivity.inputs.{path}", "the case does not use this key "
                                        "(it has no value), so it cannot be moved"))
            continue
        inp, _ = riskspec.resolve(path)
        if path in declared:
            low, high = declared[path]["low"], declared[path]["high"]
            for side, v in (("low", low), ("high", high)):
                problems.extend(check_value(case, path, v, f"sensitivity.ranges.{path}.{side}"))
            out.append(Moved(path, label, base, low, high, True))
            continue
        step = share * abs(base)
        low, high = base - step, base + step
        lo, hi, lo_open, _ = inp.bounds
        note = f"base -/+ {share:.0%}"
        if lo is not None and low < lo:
            low = lo
            note += f", low clipped to {lo:g}"
        if hi is not None and high > hi:
            high = hi
            note += f", high clipped to {hi:g}"
        if inp.integer:
            low, high = float(round(low)), float(round(high))
        if path == "finance.stand_life_years" and low < _feasible_life(case):
            low = float(_feasible_life(case))
            note += ", low raised to the shortest life the harvest and loan terms allow"
        if base == 0:
            note = "base is 0, so a share of it does not move it; declare a range in [sensitivity.ranges]"
        for side, v in (("low", low), ("high", high)):
            found = check_value(case, path, v, f"sensitivity.inputs.{path}")
            if found:
                problems.extend(Problem(p.source, p.key, f"the default {side} value {p.message}; declare a range "
                                        "in [sensitivity.ranges]") for p in found)
        out.append(Moved(path, label, base, low, high, False, note))
    if lue:
        low, high = light_use_range(case)
        out.append(Moved(LIGHT_USE, "Yield from site climate", float(case["yield.mature_t_dm_per_ha"]), low, high,
                         False, "light-use parameters at the ends of their published ranges"))
    if problems:
        raise CaseError(problems)
    return out


def evaluate_variants(case: Case, variants: Sequence[Mapping[str, float]], names: Sequence[str] = FIGURES
                      ) -> dict[str, np.ndarray]:
    """Figures for variants of a case, each a mapping input path -> value, in one evaluation.

    One pass of the model's evaluator, one row per variant.
    """
    n = len(variants)
    values: dict[str, Any] = dict(case.values)
    if any(LIGHT_USE in v for v in variants):  # the estimate's range is a range of the mature yield
        variants = [{("yield.mature_t_dm_per_ha" if p == LIGHT_USE else p): x for p, x in v.items()} for v in variants]
    paths = list(dict.fromkeys(p for v in variants for p in v))
    direct = [p for p in paths if p != riskspec.COST_MULTIPLIER]
    if riskspec.COST_MULTIPLIER in paths:
        direct.append(riskspec.COST_MULTIPLIER)
    for path in direct:
        col = np.array([v.get(path, base_value(case, path)) for v in variants], dtype=float)
        inp, _ = riskspec.resolve(path)
        if inp is not None and inp.integer:
            col = np.round(col).astype(np.int64)
        apply(values, path, col)
    return evaluate(values, figures=names, rows=n).figures


def light_use_range(case: Case) -> tuple[float, float]:
    """The lowest and highest mature yield the site climate gives with every light-use parameter at the end of
    its published range that lowers (raises) the estimate [t DM ha⁻¹]."""
    entries = published.light_use_entries(case["crop.preset"])
    base = {name: e["value"] for name, e in entries.items()}
    low, high = dict(base), dict(base)
    for name in LIGHT_USE_PARAMETERS:
        e = entries[name]
        at = {end: site.season_for(case.values, {**base, name: e[end]}).peak_t_per_ha for end in ("low", "high")}
        down, up = ("low", "high") if at["low"] <= at["high"] else ("high", "low")
        low[name], high[name] = e[down], e[up]
    return site.season_for(case.values, low).peak_t_per_ha, site.season_for(case.values, high).peak_t_per_ha


# ----------------------------------------------------------------------------- the run
@dataclass
class Sensitivity:
    """A sensitivity run: the base figures and, per input, the figures at its low and high values."""

    case: Case
    base: dict[str, float]
    moved: list[Moved]
    low: dict[str, np.ndarray]
    high: dict[str, np.ndarray]
    surface: "Surface | None" = None

    def swing(self, figure: str = "npv") -> np.ndarray:
        return np.abs(self.high[figure] - self.low[figure])

    def order(self, figure: str = "npv") -> np.ndarray:
        """Inputs ranked by swing, largest first (ties keep the listed order)."""
        return np.argsort(-self.swing(figure), kind="stable")


def run(case: Case, with_surface: bool = True) -> Sensitivity:
    """Move each input low and high; recompute NPV and EAV (per ha) in one vectorised pass."""
    moved = moved_inputs(case)
    variants: list[dict[str, float]] = [{}]
    for m in moved:
        variants.append({m.path: m.low})
        variants.append({m.path: m.high})
    figs = evaluate_variants(case, variants)
    base = {k: float(v[0]) for k, v in figs.items()}
    low = {k: v[1::2].copy() for k, v in figs.items()}
    high = {k: v[2::2].copy() for k, v in figs.items()}
    result = Sensitivity(case, base, moved, low, high)
    if with_surface:
        result.surface = surface(case)
    return result


def sensitivity_table(case: Case | Sensitivity):
    """One row per input, ranked by NPV swing (largest first).

    Parameters
    ----------
    case : Case or Sensitivity
        A case (run here) or a finished run.

    Returns
    -------
    pandas.DataFrame
        Columns: ``rank``, ``input`` (key path), ``label``, ``unit`` (canonical,
        metric), ``base``, ``low``, ``high`` (canonical units), ``range``
        (``declared`` or how the default was set), then for each of ``npv``,
        ``eav``, ``npv_vs_current_use``, ``eav_vs_current_use``: ``<fig>_low``,
        ``<fig>_high``, ``<fig>_swing`` [currency ha⁻¹, or currency ha⁻¹ yr⁻¹
        for EAV]. ``attrs`` holds ``base_npv``, ``base_eav``, ``currency``,
        ``case``, ``case_hash`` and ``tool_version``.
    """
    import pandas as pd

    res = case if isinstance(case, Sensitivity) else run(case, with_surface=False)
    c = res.case
    rows = []
    for rank, i in enumerate(res.order("npv"), start=1):
        m = res.moved[i]
        inp, _ = riskspec.resolve(m.path)
        row = {
            "rank": rank, "input": m.path, "label": m.label,
            "unit": inp.unit_text("metric", c.currency) if inp else "",
            "base": m.base, "low": m.low, "high": m.high,
            "range": "declared" if m.declared else m.note,
        }
        for fig in FIGURES:
            row[f"{fig}_low"] = float(res.low[fig][i])
            row[f"{fig}_high"] = float(res.high[fig][i])
            row[f"{fig}_swing"] = float(abs(res.high[fig][i] - res.low[fig][i]))
        rows.append(row)
    frame = pd.DataFrame(rows)
    frame.attrs.update(base_npv=res.base["npv"], base_eav=res.base["eav"], currency=c.currency, case=c.name,
                       case_hash=c.hash, tool_version=__version__)
    return frame


@dataclass
class Surface:
    """NPV over a grid of two inputs, and where it crosses zero."""

    x: str
    y: str
    x_values: np.ndarray
    y_values: np.ndarray
    npv: np.ndarray  # (len(y_values), len(x_values)) [currency ha⁻¹]
    contour: list[tuple[float, float]] = field(default_factory=list)


def _axis(case: Case, path: str, spec: Mapping[str, Any], axis: str, points: int) -> np.ndarray:
    base = base_value(case, path)
    if base is None:
        raise CaseError([Problem(case.source, f"sensitivity.surface.{axis}", f"the case does not use {path}")])
    inp, _ = riskspec.resolve(path)
    lo = spec.get(f"{axis}_low", base * (1.0 - riskspec.SURFACE_SHARE) if base >= 0 else base * (1.0 + riskspec.SURFACE_SHARE))
    hi = spec.get(f"{axis}_high", base * (1.0 + riskspec.SURFACE_SHARE) if base >= 0 else base * (1.0 - riskspec.SURFACE_SHARE))
    blo, bhi, lo_open, hi_open = inp.bounds
    if blo is not None:
        lo = max(lo, blo)
        if lo_open and lo == blo:
            lo = blo + 1e-9 * max(1.0, abs(hi - blo))
    if bhi is not None:
        hi = min(hi, bhi)
    if not hi > lo:
        raise CaseError([Problem(case.source, f"sensitivity.surface.{axis}", f"{path}: the grid has no width "
                                 f"(from {lo:g} to {hi:g}); give {axis}_low and {axis}_high")])
    grid = np.linspace(lo, hi, points)
    if inp.integer:
        grid = np.unique(np.round(grid))
    problems = check_value(case, path, float(grid[0]), f"sensitivity.surface.{axis}_low")
    problems += check_value(case, path, float(grid[-1]), f"sensitivity.surface.{axis}_high")
    if problems:
        raise CaseError(problems)
    return grid


def surface(case: Case) -> Surface:
    """NPV (per ha) over a grid of two inputs, with the NPV = 0 contour.

    The inputs and their bounds come from ``[sensitivity.surface]``; by
    default biomass price x mature yield, each from base -50 % to +50 %,
    11 points. NPV is linear in the price and, for a positive yield, in the
    mature yield, so linear interpolation between grid points places the
    contour exactly along each axis.
    """
    spec = (case.values.get("sensitivity", {}) or {}).get("surface", {})
    x = spec.get("x", price_key(case))
    y = spec.get("y", "yield.mature_t_dm_per_ha")
    points = spec.get("points", riskspec.SURFACE_POINTS)
    xs = _axis(case, x, spec, "x", points)
    ys = _axis(case, y, spec, "y", points)
    variants = [{x: float(a), y: float(b)} for b in ys for a in xs]
    npv = evaluate_variants(case, variants, names=("npv",))["npv"].reshape(len(ys), len(xs))
    contour: list[tuple[float, float]] = []
    for j, a in enumerate(xs):
        col = npv[:, j]
        for i in range(len(ys) - 1):
            n0, n1 = col[i], col[i + 1]
            if n0 == 0:
                contour.append((float(a), float(ys[i])))
            elif n0 * n1 < 0:
                contour.append((float(a), float(ys[i] + (0.0 - n0) * (ys[i + 1] - ys[i]) / (n1 - n0))))
        if col[-1] == 0:
            contour.append((float(a), float(ys[-1])))
    return Surface(x, y, xs, ys, npv, contour)


def _display_factor(case: Case | None, path: str) -> float:
    inp, _ = riskspec.resolve(path)
    if case is None or inp is None or inp.key is None:
        return 1.0
    return units.display_factor(inp.key.template, case.unit_system)


def _unit(case: Case | None, path: str) -> str:
    inp, _ = riskspec.resolve(path)
    if inp is None:
        return ""
    return inp.unit_text(case.unit_system if case else "metric", case.currency if case else "")


# ----------------------------------------------------------------------------- views
def to_dict(res: Sensitivity) -> dict[str, Any]:
    """JSON-able result (canonical metric units, per ha)."""
    c = res.case
    table = sensitivity_table(res)
    out: dict[str, Any] = {
        **json_header(c),
        "method": "one input at a time moved to its low and high value; full ledger recomputed",
        "base": {k: _num(v) for k, v in res.base.items()},
        "inputs": [{k: (_num(v) if isinstance(v, float) else v) for k, v in row.items()}
                   for row in table.to_dict(orient="records")],
    }
    if res.surface is not None:
        s = res.surface
        out["surface"] = {
            "x": s.x, "y": s.y, "x_values": s.x_values.tolist(), "y_values": s.y_values.tolist(),
            "npv_per_ha": [[_num(v) for v in row] for row in s.npv.tolist()],
            "npv_zero_contour": [{"x": a, "y": b} for a, b in s.contour],
        }
    out["cautions"] = list(CAUTIONS)
    return out


def _num(v: float) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None
