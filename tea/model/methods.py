"""Published methods the model calls by name, where a formula of lines would not do.

Each entry gives the numpy function (over ``(rows, years)`` and ``(rows, 1)``
arrays, from :mod:`tea.methods`) and the spreadsheet formula of the same
method (:func:`tea.model.formulas` renders its arguments). ``linear`` lists the
arguments the method is linear in, so the model's slopes pass through it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from tea.methods import finance, loan
from tea.methods.irr import irr_by_rule


@dataclass(frozen=True)
class MethodDef:
    name: str
    doc: str
    numpy: Callable[..., np.ndarray]
    sheet: Callable[[Any, Any], str]  # (renderer, method node) -> spreadsheet formula
    linear: tuple[int, ...] = ()  # argument positions the result is linear in (others held fixed)
    source: str = ""


def _kw(node) -> dict:
    return dict(node.sheet)


def _irr_sheet(r, n) -> str:
    """IRR over years 0..stand life where the flows change sign an odd number of times (Descartes), or
    where their running total changes sign once from a cost to a positive end (Norström's criterion)."""
    kw = _kw(n)
    changes, cum_changes = r.render(kw["changes"], None), r.render(kw["cum_changes"], None)
    first, end = r.render(kw["first"], None), r.render(kw["end"], None)
    flows = r.years_to(n.args[0], kw["life"])
    rule = f"OR(AND({changes}>0,ISODD({changes})),AND({cum_changes}=1,{first}<0,{end}>0))"
    return f"IF({rule},IRR({flows},{r.render(kw['guess'], None)}),NA())"


def _mirr_sheet(r, n) -> str:
    flows = r.years_to(n.args[0], n.args[3])
    fin, rei = r.render(n.args[1], None), r.render(n.args[2], None)
    return f'IF(AND(COUNTIF({flows},">0")>0,COUNTIF({flows},"<0")>0),MIRR({flows},{fin},{rei}),NA())'


def _level_payment_sheet(r, n) -> str:
    rate, years, principal = (r.render(a, None) for a in n.args)
    return f"-PMT({rate},{years},{principal})"


def _annuity_factor_sheet(r, n) -> str:
    rate, years = (r.render(a, None) for a in n.args)
    return f"PV({rate},{years},-1)"


def _column(x) -> np.ndarray:
    return np.asarray(x, dtype=float).reshape(-1, 1)


def _irr(flows: np.ndarray) -> np.ndarray:
    return _column(np.atleast_1d(irr_by_rule(flows)))


def _mirr(flows: np.ndarray, finance_rate, reinvest_rate, life) -> np.ndarray:
    """MIRR over each row's own years 0..life (trailing padded years would change its exponent)."""
    rows = flows.shape[0]
    fin = np.broadcast_to(np.asarray(finance_rate, dtype=float), (rows, 1))[:, 0]
    rei = np.broadcast_to(np.asarray(reinvest_rate, dtype=float), (rows, 1))[:, 0]
    life = np.broadcast_to(np.asarray(life), (rows, 1))[:, 0].astype(int)
    out = np.empty(rows)
    for n in np.unique(life):
        sel = life == n
        out[sel] = np.atleast_1d(finance.mirr(flows[sel, : n + 1], fin[sel], rei[sel]))
    return out.reshape(-1, 1)


def _level_payment(rate, n, principal) -> np.ndarray:
    return np.asarray(loan.level_payment(rate, n, principal), dtype=float)


def _annuity_factor(rate, n) -> np.ndarray:
    return np.asarray(finance.annuity_factor(rate, n), dtype=float)


METHODS: dict[str, MethodDef] = {
    m.name: m for m in (
        MethodDef("irr", "Internal rate of return: the one rate at which the flows' NPV is zero, or, where the "
                  "running total of the flows changes sign once, the one positive rate (Norström's criterion); "
                  "undefined (not a number) otherwise.", _irr, _irr_sheet,
                  source="polynomial root counted by Descartes' rule of signs; Norström (1972), J. Financial and "
                         "Quantitative Analysis 7(3) (tea.methods.irr.irr_by_rule)"),
        MethodDef("mirr", "Modified IRR over years 0..stand life, at the finance and reinvestment rates.", _mirr,
                  _mirr_sheet,
                  source="MIRR, as numpy-financial and spreadsheets define it"),
        MethodDef("level_payment", "Level end-of-year payment repaying a principal over n years: "
                  "P r / (1 - (1 + r)^-n), or P / n at r = 0.", _level_payment, _level_payment_sheet, linear=(2,),
                  source="annuity formula (spreadsheet PMT)"),
        MethodDef("annuity_factor", "Present value of 1 a year for n years: (1 - (1 + r)^-n) / r, or n at r = 0.",
                  _annuity_factor, _annuity_factor_sheet, source="annuity formula"),
    )
}
