"""The terminal text of sensitivity and risk runs (the numbers come from :mod:`tea.analysis`)."""

from __future__ import annotations

import math

import numpy as np

from tea.analysis.risk import BOUND_CONFIDENCE, PERCENTILES, Probability, RiskResult
from tea.analysis.sensitivity import Sensitivity, Surface, _display_factor, _unit
from tea.inputs import riskspec, units
from tea.inputs.case import Case
from tea.core.texts import CAUTIONS
from tea.outputs.terminal import wrapped
from tea.inputs import display
from tea.outputs.whatmoves import FIGURES


#: longest note on where a range comes from that sits in the table's last column [characters]
NOTE_IN_TABLE = 16


def sensitivity_text(res: Sensitivity, figure: str = "npv") -> str:
    """Terminal view: the ranked table, a text tornado and the break-even surface."""
    c = res.case
    per = "acre" if c.unit_system == "us_customary" else "ha"
    scale = units.HA_PER_ACRE if per == "acre" else 1.0
    money = lambda v: display.money(v * scale, digits=0)  # noqa: E731
    head = f"Sensitivity of {c.name}" + ("   [DEMO DATA]" if c["case.demo"] else "")
    out = [head, "=" * len(head)]
    out.append(f"Base NPV {display.money(res.base['npv'] * scale, c.currency)}/{per}; "
               f"EAV {display.money(res.base['eav'] * scale, c.currency)}/{per}/yr; NPV vs current use "
               f"{display.money(res.base['npv_vs_current_use'] * scale, c.currency)}/{per}.")
    name, yearly = FIGURES[figure]  # the words and unit of the page's and --plot's tornado chart
    unit = f"{c.currency}/{per}" + ("/yr" if yearly else "")
    out.append(f"Each input moved alone, the others at their base values; ranked by the swing of {name} ({unit}).")
    out.append("")
    rows, notes = [], []
    for rank, i in enumerate(res.order(figure), start=1):
        m = res.moved[i]
        where = "declared" if m.declared else m.note
        if len(where) > NOTE_IN_TABLE:  # a long note goes below the table, so that the table stays narrow
            notes.append(where)
            where = f"note {len(notes)}"
        rows.append([str(rank), m.label, m.range_text(c),
                     money(res.low[figure][i]), money(res.high[figure][i]),
                     money(abs(res.high[figure][i] - res.low[figure][i])), where])
    short = name.replace(" vs current use", " vs now")  # over the two columns it heads: the table stays narrow
    heads = ["#", "input", "low / high", "low", "high", "swing", "range"]
    widths = [max(len(h), *(len(r[j]) for r in rows)) for j, h in enumerate(heads)] if rows else [len(h) for h in heads]
    widths[4] = max(widths[4], len(short) - widths[3] - 2)
    align = lambda j, s: s.ljust(widths[j]) if j in (1, 2, 6) else s.rjust(widths[j])  # noqa: E731
    out.append(" " * (sum(widths[:3]) + 6) + short.rjust(widths[3] + 2 + widths[4]))
    out.append("  ".join(align(j, h) for j, h in enumerate(heads)).rstrip())
    out.extend("  ".join(align(j, s) for j, s in enumerate(r)).rstrip() for r in rows)
    out.extend(f"note {k}: {text}" for k, text in enumerate(notes, start=1))
    if figure == "npv":
        out.append(f"(EAV low and high, per {per} a year: `tea sensitivity --json` or --figure eav.)")
    only_vs = [res.moved[i].label for i in range(len(res.moved))
               if res.low["npv"][i] == res.high["npv"][i] and res.low["npv_vs_current_use"][i] != res.high["npv_vs_current_use"][i]]
    if only_vs and figure == "npv":
        out.append(f"{', '.join(only_vs)}: changes only the comparison with today's use "
                   "(NPV vs current use), not the stand's own NPV; see --figure npv_vs_current_use.")
    out.append("")
    out.append(f"Tornado ({name}, {unit}; '<' input low, '>' input high, | base):")
    out.extend(_text_tornado(res, figure, scale))
    if res.surface is not None:
        out.append("")
        out.extend(_surface_text(res.surface, c))
    out.append("")
    out.append("Cautions:")
    out.extend(f"  - {x}" for x in CAUTIONS)
    return _joined(out)


def _text_tornado(res: Sensitivity, figure: str, scale: float, width: int = 48) -> list[str]:
    base = res.base[figure] * scale
    order = res.order(figure)
    lo = res.low[figure] * scale
    hi = res.high[figure] * scale
    extent = max(np.max(np.abs(lo - base)), np.max(np.abs(hi - base)), 1e-12)
    half = width // 2
    label_w = max(len(m.label) for m in res.moved)
    lines = []
    for i in order:
        cells = [" "] * width
        for value, mark in ((lo[i], "<"), (hi[i], ">")):
            k = int(round((value - base) / extent * half))
            if k < 0:
                for j in range(half + k, half):
                    cells[j] = mark
            elif k > 0:
                for j in range(half, half + k):
                    cells[j] = mark
        cells.insert(half, "|")
        lines.append(f"  {res.moved[i].label.ljust(label_w)} {''.join(cells)}")
    return lines


def _surface_text(s: Surface, c: Case) -> list[str]:
    per = "acre" if c.unit_system == "us_customary" else "ha"
    scale = units.HA_PER_ACRE if per == "acre" else 1.0
    fx, fy = _display_factor(c, s.x), _display_factor(c, s.y)
    out = [f"Break-even surface: NPV ({c.currency}/{per}) by {riskspec.label(s.x)} [{_unit(c, s.x)}] (columns) "
           f"and {riskspec.label(s.y)} [{_unit(c, s.y)}] (rows); '*' marks a cell next to NPV = 0"]
    xs = [display.number(v * fx) for v in s.x_values]
    cells = [[display.money(v * scale, digits=0) for v in row] for row in s.npv]
    sign = np.sign(s.npv)
    marked = np.zeros_like(s.npv, dtype=bool)
    marked[:-1] |= sign[:-1] != sign[1:]
    marked[1:] |= sign[:-1] != sign[1:]
    marked[:, :-1] |= sign[:, :-1] != sign[:, 1:]
    marked[:, 1:] |= sign[:, :-1] != sign[:, 1:]
    cells = [[v + ("*" if marked[i, j] else " ") for j, v in enumerate(row)] for i, row in enumerate(cells)]
    ys = [display.number(v * fy) for v in s.y_values]
    w = max(len(v) for row in cells for v in row)
    w = max(w, *(len(v) + 1 for v in xs))
    yw = max(len(v) for v in ys)
    out.append(" " * (yw + 2) + "".join(v.rjust(w) + " " for v in xs))
    for i in range(len(ys) - 1, -1, -1):
        out.append(ys[i].rjust(yw) + "  " + "".join(v.rjust(w + 1) for v in cells[i]))
    if s.contour:
        pts = "; ".join(f"{display.number(a * fx)} -> {display.number(b * fy)}" for a, b in s.contour)
        out.append(f"NPV = 0 ({riskspec.label(s.x)} -> {riskspec.label(s.y)}): {pts}")
    else:
        out.append("NPV does not cross zero on this grid.")
    return out


def risk_text(res: RiskResult) -> str:
    """Terminal view: percentiles, probabilities, the cash-flow band and a text histogram."""
    c = res.case
    per = "acre" if c.unit_system == "us_customary" else "ha"
    scale = 0.40468564224 if per == "acre" else 1.0
    head = f"Monte Carlo of {c.name}" + ("   [DEMO DATA]" if c["case.demo"] else "")
    out = [head, "=" * len(head)]
    names = ", ".join(riskspec.label(p) for p in res.spec.get("inputs", {})) or "none"
    out.append(f"{res.draws:,} draws, seed {res.seed}; inputs drawn: {names}"
               + (f"; establishment failed in {res.failure_share:.1%} of draws" if res.failure_share is not None else ""))
    out.append("")
    rows = [("NPV", "npv", "money"), ("NPV vs current use", "npv_vs_current_use", "money"),
            ("EAV", "eav", "money"), ("EAV vs current use", "eav_vs_current_use", "money"), ("IRR", "irr", "pct")]
    if "min_dscr" in res.stats:
        rows.append(("Lowest DSCR", "min_dscr", "ratio"))
    heads = ["", *(f"P{q}" for q in PERCENTILES), "mean", "+/- s.e."]
    table = []
    for label, name, kind in rows:
        s = res.stats[name]
        fmt = {"money": lambda v: display.money(v * scale, digits=0), "pct": lambda v: display.percent(v),
               "ratio": lambda v: f"{v:.2f}" if v == v else "–"}[kind]
        unit = {"money": f" ({c.currency}/{per}" + ("/yr)" if name.startswith("eav") else ")"), "pct": "", "ratio": ""}[kind]
        table.append([label + unit, *(fmt(s.percentiles[q]) for q in PERCENTILES), fmt(s.mean), fmt(s.se)])
    widths = [max(len(h), *(len(r[j]) for r in table)) for j, h in enumerate(heads)]
    out.append("  ".join(h.ljust(widths[0]) if j == 0 else h.rjust(widths[j]) for j, h in enumerate(heads)))
    for r in table:
        out.append("  ".join(v.ljust(widths[0]) if j == 0 else v.rjust(widths[j]) for j, v in enumerate(r)))
    out.append("")
    out.append(probability_line("P(NPV < 0)", res.prob_npv_negative))
    out.append(probability_line("P(NPV vs current use < 0)", res.prob_npv_vs_current_use_negative))
    if res.prob_dscr_below_covenant is not None:
        out.append(probability_line(f"P(lowest DSCR < covenant {res.covenant:.2f})", res.prob_dscr_below_covenant))
    for note in res.notes:
        out.append(f"note: {note}")
    out.append("")
    out.append(f"Cumulative cash flow by year ({c.currency}/{per}):")
    heads = ["year", *(f"P{q}" for q in PERCENTILES)]
    rows_b = [[str(int(y)), *(display.money(res.band[q][i] * scale, digits=0) for q in PERCENTILES)]
              for i, y in enumerate(res.band_years)]
    widths = [max(len(h), *(len(r[j]) for r in rows_b)) for j, h in enumerate(heads)]
    out.append("  ".join(h.rjust(w) for h, w in zip(heads, widths)))
    out.extend("  ".join(v.rjust(w) for v, w in zip(r, widths)) for r in rows_b)
    out.append("")
    out.append(f"NPV histogram ({c.currency}/{per}, {res.draws:,} draws):")
    counts, edges = res.histogram
    top = max(int(counts.max()), 1)
    for k, count in enumerate(counts):
        left, right = edges[k] * scale, edges[k + 1] * scale
        bar = "#" * int(round(40 * count / top))
        out.append(f"  {display.money(left, digits=0):>9} .. {display.money(right, digits=0):>9}  {bar} {count}")
    out.append("")
    out.append("Cautions:")
    out.extend(f"  - {x}" for x in CAUTIONS)
    return _joined(out)


def probability_line(label: str, pr: Probability) -> str:
    """A chance from the draws with its standard error, or, where none or all of the draws count (the
    standard error would be 0), the one-sided bound the draws allow (:class:`tea.analysis.risk.Probability`).

    >>> from tea.analysis.risk import Probability
    >>> probability_line("P(NPV < 0)", Probability(0.25, 0.0137, 1000))
    'P(NPV < 0) = 25.0% (s.e. 1.4%)'
    >>> probability_line("P(NPV < 0)", Probability(0.0, 0.0, 1))
    'P(NPV < 0) = 0.0% (in none of 1 draw: below 95.0% at 95% confidence)'
    """
    if pr.of == 0 or pr.value != pr.value:
        return f"{label}: no draw to count"
    return f"{label} = {pr.value:.1%} ({probability_note(pr)})"


def probability_note(pr: Probability, count: bool = False) -> str:
    """How sure a chance from the draws is: its standard error (``count``: and of how many draws), or the
    one-sided bound where none or all of the draws count (:func:`probability_line`)."""
    draws = f"{pr.of:,} draw{'s' if pr.of != 1 else ''}"
    if pr.upper_bound is not None:
        why = f"in none of {draws}: below {_bound(pr.upper_bound)} at {BOUND_CONFIDENCE:.0%} confidence"
    elif pr.lower_bound is not None:
        why = f"in all of {draws}: above {_bound(pr.lower_bound)} at {BOUND_CONFIDENCE:.0%} confidence"
    elif pr.standard_error is not None:
        why = f"s.e. {pr.standard_error:.1%}"
    else:
        why = f"{draws}: no standard error"
    return f"{why}, {draws}" if count and pr.standard_error is not None else why


def _bound(share: float) -> str:
    """A bound on a chance as a percentage with the decimals it takes to stay short of 0 % and of 100 %.

    >>> _bound(0.95), _bound(1 - 0.05 ** (1 / 10_000)), _bound(0.05 ** (1 / 10_000))
    ('95.0%', '0.030%', '99.970%')
    """
    gap = min(share, 1.0 - share) * 100.0  # percentage points from 0 % or 100 %
    decimals = 1 if gap >= 0.1 else min(6, 1 - math.floor(math.log10(gap)) if gap > 0 else 6)
    return f"{share * 100:.{decimals}f}%"


def _joined(lines: list[str]) -> str:
    """The lines as one text, prose wrapped at 100 characters (a line with columns, two spaces apart inside
    it, is a table row and stays whole)."""
    return "\n".join(line if "  " in line.strip() else wrapped(line) for line in lines)
