"""The ledger: one case's declared lines, one row per year, one column per line (per ha).

The lines are declared once in :mod:`tea.model.definition`; this module
evaluates them for one case (:func:`tea.model.evaluate.evaluate`) and returns
a pandas DataFrame. Timing and signs are those of the declarations: year 0 is
planting, year t the t-th growing season booked at its end, the last year the
stand life; cost and revenue lines are positive magnitudes, only cash-flow
lines carry a sign; greenhouse-gas lines are emissions positive, removals
negative.
"""

from __future__ import annotations

import pandas as pd

from tea.inputs.case import Case
from tea.model.declare import Def
from tea.model.definition import MODEL
from tea.model.evaluate import evaluate

#: the lines of the ledger, in order (declarations of :mod:`tea.model.definition`)
LINES: tuple[Def, ...] = tuple(MODEL.ledger_lines)
LINE_NAMES: tuple[str, ...] = tuple(d.name for d in LINES)
BY_NAME: dict[str, Def] = {d.name: d for d in LINES}


def build_ledger(case: Case, model=MODEL) -> pd.DataFrame:
    """One case's ledger: rows are years 0..stand life, columns the ledger lines (per ha).

    >>> from tea import load_case
    >>> ledger = build_ledger(load_case("cases/clay_corner_miscanthus.toml"))
    >>> int(ledger["year"].iloc[-1]) == ledger.attrs["stand_life"]
    True
    """
    names = [d.name for d in model.ledger_lines]
    got = evaluate(case.values, lines=names, model=model, rows=1)
    frame = pd.DataFrame({name: got.lines[name][0] for name in names})
    frame["year"] = frame["year"].astype(int)
    frame.index = pd.Index(frame["year"], name="t")
    frame.attrs.update(case=case.name, currency=case.currency, stand_life=case.stand_life, case_hash=case.hash)
    return frame
