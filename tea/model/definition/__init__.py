"""The model, declared once: every parameter, ledger line and decision figure of `tea`.

One file per concern; the order here is the order lines are shown in. To add
a line, add one ``line(...)`` to the file of its group (DEVELOPERS.md, "How to
add a ledger line"); the evaluator, the workbook formulas, ``tea explain``
and the README reference follow from it.
"""

from __future__ import annotations

from tea.model.declare import Model
from tea.model.definition import carbon, crop, establishment, figures, loan, money, operations, tax, timing

MODEL = Model([*timing.DEFS, *establishment.DEFS, *operations.DEFS, *crop.DEFS, *money.DEFS, *carbon.DEFS, *tax.DEFS, *loan.DEFS,
               *figures.DEFS])
MODEL.check()

__all__ = ["MODEL"]
