"""The workbook as a credit file: every computed cell a live formula of the one model definition.

:func:`write_workbook` writes one case, :func:`write_portfolio` several cases
with a side-by-side sheet first; :func:`read_case_mapping` (from
:mod:`tea.inputs.workbook_reader`) reads the inputs sheet of such a workbook,
as an advisor edited it, back into a case.

Sheets, in order: **Summary** (one printed page: whole-field figures, the
decision, sources and uses, DSCR by year against the covenant, the lender's
bankable and downside cases, the count of failing checks, the cautions);
**Inputs** (plain words first, units in the case's own system, key names
secondary; data validation from the schema's ranges and choices; each value's
source as a cell comment); **Cash flow**, **Debt and tax**, **Carbon** (years
across the columns, from planting to the end of the stand life, line items
down the rows, grouped; printable with repeated titles and a footer naming the
case hash); **Figures** (every parameter and decision figure, per ha and whole
field); **Checks**; **Sensitivity** and **Risk** (values tea computed, said to
be so) when the case has those sections or they are asked for; **Tables**
(published tables and named constants) and **Notes**.

No formula is written here: each comes from
:class:`tea.model.formulas.Renderer` with this workbook's layout
(:mod:`tea.outputs.workbook.layout`), and its value from the engine is saved
beside it. The file is written by XlsxWriter with a fixed creation date, so
the same case gives the same bytes.
"""

from __future__ import annotations

import io
from datetime import datetime
from pathlib import Path
from typing import Sequence

import xlsxwriter

from tea import __version__
from tea.core.files import atomic_write, check_target
from tea.core.safe_text import xlsx_literal
from tea.inputs.case import Case
from tea.inputs.workbook_reader import read_case_mapping
from tea.model.definition import MODEL
from tea.model.formulas import Renderer
from tea.model.results import Results
from tea.outputs.workbook.credit import CreditWriter, comparison
from tea.outputs.workbook.layout import CARBON, CASH, DEBT, CaseLayout
from tea.outputs.workbook.sheets import engine_values
from tea.outputs.workbook.style import Styles

#: the creation date every workbook carries (the same case gives the same bytes)
DOCUMENT_DATE = datetime(2000, 1, 1)


def _wants(case: Case, section: str, given: bool | None) -> bool:
    if given is not None and not isinstance(given, bool):
        raise TypeError(f"{section}: expected True, False or None")
    return given if given is not None else section in case.values


def _check_ledger(case: Case, ledger) -> None:
    if ledger is not None and ledger.attrs.get("case_hash") not in (None, case.hash):
        raise ValueError("the ledger given does not belong to the case (built from another case)")


def _case_sheets(wb, st: Styles, case: Case, layout: CaseLayout, sensitivity: bool | None,
                 risk: bool | None, results: Results | None = None) -> dict:
    from tea.analysis.lender import lender_cases
    from tea.model.results import summarise
    from tea.outputs.headline import headline

    model = layout.model
    values = engine_values(case, model)
    renderer = Renderer(MODEL, layout)
    sens = risk_res = None
    if _wants(case, "sensitivity", sensitivity):
        from tea.analysis.sensitivity import sensitivity_table

        sens = sensitivity_table(case)
    if _wants(case, "risk", risk):
        from tea.analysis import risk as risk_mod

        risk_res = risk_mod.run(case, progress=False)
    res = results if results is not None and results.case_hash == case.hash else summarise(case)
    w = CreditWriter(wb, st, case, layout, values, renderer, headline=headline(case, res), notes=res.notes,
                     lender=lender_cases(case), sensitivity=sens, risk=risk_res)
    # the checks are built first (the summary counts their failures) but shown after the model sheets
    summary_first = wb.add_worksheet(layout.title("Summary"))
    w.inputs()
    for sheet in (CASH, DEBT, CARBON):
        w.schedule(sheet)
    w.figures()
    w.checks()
    if sens is not None:
        w.sensitivity()
    if risk_res is not None:
        w.risk_sheet()
    from tea.inputs.site import given

    if given(case.values):
        w.site_climate()
    w.tables()
    w.notes(list(model))
    w.summary(summary_first)
    return values


def _new_book(buf, title: str, subject: str, cases: Sequence[Case]):
    wb = xlsxwriter.Workbook(buf, {"in_memory": True, "strings_to_formulas": False, "strings_to_numbers": False,
                                   "strings_to_urls": False})
    demo = any(c["case.demo"] for c in cases)
    text = (f"Written by tea {__version__}; case hash " + ", ".join(c.hash for c in cases)
            + ". Live formulas; planning estimates, not financial, tax or agronomic advice.")
    wb.set_properties({"title": xlsx_literal(title, 200), "subject": xlsx_literal(subject, 200), "author": "tea",
                       "company": "", "comments": ("DEMO DATA. " if demo else "") + text, "created": DOCUMENT_DATE})
    wb.set_calc_mode("auto")
    wb.set_size(1600, 1000)
    return wb


def workbook_bytes(case: Case, ledger=None, results: Results | None = None, sensitivity: bool | None = None,
                   risk: bool | None = None) -> bytes:
    """The workbook of one case as .xlsx bytes (see :func:`write_workbook`)."""
    _check_ledger(case, ledger)
    buf = io.BytesIO()
    wb = _new_book(buf, case.name, f"{case['field.name']}: stand-life economics, debt and carbon", [case])
    _case_sheets(wb, Styles(wb), case, CaseLayout(case, MODEL), sensitivity, risk, results)
    wb.close()
    return buf.getvalue()


def write_workbook(case: Case, ledger, results: Results, path: str | Path, force: bool = False,
                   sensitivity: bool | None = None, risk: bool | None = None) -> Path:
    """Write the credit-file workbook of one case.

    Parameters
    ----------
    case : Case
        The validated case.
    ledger : pandas.DataFrame
        Its ledger (:func:`tea.build_ledger`); checked to belong to the case.
    results : Results
        Its decision figures (:func:`tea.summarise`).
    path : str or Path
        The .xlsx file to write.
    force : bool
        Replace an existing file; otherwise an existing file raises OutputError.
    sensitivity, risk : bool, optional
        Add the sheet of values tea computes when it writes the file: by default
        (None) when the case has a ``[sensitivity]`` (``[risk]``) section; True
        always, False never.

    Returns
    -------
    Path
        The file written. The write is atomic: an interrupted run leaves no half-written file.
    """
    check_target(path, force)
    data = workbook_bytes(case, ledger, results, sensitivity, risk)
    return atomic_write(path, lambda p: p.write_bytes(data), force)


def portfolio_bytes(cases: Sequence[Case], ledgers: Sequence | None = None,
                    results: Sequence[Results] | None = None, sensitivity: bool | None = None,
                    risk: bool | None = None) -> bytes:
    """The workbook of several cases as .xlsx bytes (see :func:`write_portfolio`)."""
    if not cases:
        raise ValueError("a portfolio needs at least one case")
    for case, ledger in zip(cases, ledgers or [None] * len(cases)):
        _check_ledger(case, ledger)
    width = max(2, len(str(len(cases))))
    layouts = [CaseLayout(c, MODEL, prefix=f"c{i:0{width}d}_", sheet_prefix=f"C{i:0{width}d} ")
               for i, c in enumerate(cases, start=1)]
    buf = io.BytesIO()
    wb = _new_book(buf, f"Portfolio of {len(cases)} cases", "Stand-life economics, debt and carbon, side by side",
                   cases)
    st = Styles(wb)
    first = wb.add_worksheet("Side by side")
    values = [_case_sheets(wb, st, case, lay, sensitivity, risk, res)
              for case, lay, res in zip(cases, layouts, results or [None] * len(cases))]
    comparison(first, st, cases, layouts, values)
    first.activate()
    wb.close()
    return buf.getvalue()


def write_portfolio(cases: Sequence[Case], ledgers: Sequence, results: Sequence[Results], path: str | Path,
                    force: bool = False, sensitivity: bool | None = None, risk: bool | None = None) -> Path:
    """Write one workbook holding several cases: a side-by-side sheet, then each case's sheets.

    Sheets of case ``i`` are named ``C01 Summary``, ``C01 Inputs``, ... and its defined
    names carry the prefix ``c01_``. See :func:`write_workbook`.
    """
    check_target(path, force)
    data = portfolio_bytes(cases, ledgers, results, sensitivity, risk)
    return atomic_write(path, lambda p: p.write_bytes(data), force)


__all__ = ["write_workbook", "workbook_bytes", "write_portfolio", "portfolio_bytes", "read_case_mapping",
           "DOCUMENT_DATE"]
