"""Screening many fields over a base case, ranked.

:func:`screen` reads a field table (CSV, one row per field, columns overriding
case values) through :class:`tea.inputs.fieldtable.FieldTable`, which checks
every cell and skips and reports bad rows, and evaluates every good row of a
chunk in one pass of the model's evaluator (:func:`tea.model.evaluate.evaluate`,
the same one a single case uses), then returns the fields ranked
(:mod:`tea.outputs.screen_files` writes and shows them).
"""

from __future__ import annotations

import re
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from tea.model.definition import MODEL
from tea.model.evaluate import evaluate
from tea.inputs.case import Case
from tea.core.errors import CaseError, Problem
from tea.core.safe_text import brief
from tea.inputs.fieldtable import BadRow, FieldTable, Record, count_rows

#: rows read, checked and evaluated together from a field table
TABLE_CHUNK_ROWS = 65536


# ============================================================================= screening a field table
@dataclass
class ScreenResult:
    """A screened field table: figures per field, ranked, and the rows skipped."""

    table: Any  # pandas.DataFrame, ranked
    bad: list[BadRow]
    rows_read: int
    rows_skipped: int
    warnings: list[str]
    rank_by: str  # the ranked file's column (per acre, short tons in a US case)
    case: Case
    source: str
    units_note: str
    ascending: bool = False

    @property
    def rows_evaluated(self) -> int:
        return self.rows_read - self.rows_skipped


def screen(fields: str | Path, case: Case, rank_by: str = "eav_vs_current_use", ascending: bool = False,
           chunk_rows: int = TABLE_CHUNK_ROWS, progress: bool | None = None) -> ScreenResult:
    """Screen a field table over a base case.

    Parameters
    ----------
    fields : path
        CSV file: a header row naming case keys (``area_ha``, ``costs.haul_distance_km``,
        ``site_factor``, ``climate``, ...; any spelling the case file accepts, with or
        without the section), an optional ``field_id`` column, then one row per
        field. Empty cells keep the base case's value, except an empty area
        (a bad row). Lines starting with ``#`` are comments; commas,
        semicolons or tabs separate the cells (:mod:`tea.inputs.fieldtable`).
    case : Case
        The base case.
    rank_by : str
        Figure to rank by: a name of :data:`SCREEN_FIGURES`, or with ``_field``
        for the whole-field value, or the ranked file's name of its column
        (:func:`file_columns`: ``npv_per_acre``, ``soc_gain_short_ton_co2e_field``).
    ascending : bool
        Rank the smallest first.
    chunk_rows : int
        Rows read, checked and evaluated together.
    progress : bool, optional
        Show a progress bar on stderr; default: when stderr is a terminal.

    Returns
    -------
    ScreenResult
    """
    import pandas as pd

    source = str(fields)
    figure_names = SCREEN_FIGURES
    # a figure is named as the model names it or as the ranked file's column does (per acre, short tons)
    columns = file_columns(case)
    named = {shown: name for name, (shown, _factor) in columns.items()}
    rank_by = named.get(rank_by, rank_by)
    if rank_by not in columns:
        raise CaseError([Problem(source, "--rank-by", f"unknown figure {brief(rank_by)}; expected a column "
                                 "of the ranked file: " + ", ".join(sorted(named)))])
    pieces = []
    bad: list[BadRow] = []
    with FieldTable(fields, case) as fields_table:
        bar = progress_bar(count_rows(fields), "screening", progress)
        try:
            for chunk in fields_table.chunks(chunk_rows):
                pieces.append(_screen_chunk(fields_table, chunk, bad, figure_names))
                bar.update(len(chunk))
        finally:
            bar.close()
    read = fields_table.rows_read
    warnings = fields_table.warnings + fields_table.duplicate_warnings()
    table = pd.concat(pieces, ignore_index=True) if pieces else pd.DataFrame()
    if len(table):
        key = table[rank_by].to_numpy(dtype=float)
        order = np.lexsort((table["line"].to_numpy(), np.isnan(key), key if ascending else -key))
        table = table.iloc[order].reset_index(drop=True)
        table.insert(0, "rank", np.arange(1, len(table) + 1))
    skipped = len({b.line for b in bad})
    table = _rename_with_units(table, columns)
    return ScreenResult(table, sorted(bad, key=lambda b: (b.line, b.column)), read, skipped, warnings,
                        columns[rank_by][0], case, source, _units_note(case), ascending)


#: the figures a screen reports per field (per ha), in output order
SCREEN_FIGURES = (
    "eav_vs_current_use", "npv_vs_current_use", "npv", "eav", "irr", "irr_vs_current_use", "payback_year",
    "discounted_payback_year", "peak_funding_need", "establishment_cost", "breakeven_price",
    "breakeven_price_vs_current_use", "sold_t_dm", "mean_sold_t_dm_per_year", "soc_start_t_c_per_ha",
    "soc_end_t_c_per_ha", "soc_gain_t_c", "soc_gain_t_co2e", "ghg_net_t_co2e", "credited_t_co2e",
    "carbon_credit_pv", "loan_principal", "min_dscr", "years_below_covenant",
)
#: figures also given for the whole field (per ha x area)
FIELD_FIGURES = ("npv_vs_current_use", "npv", "eav_vs_current_use", "peak_funding_need", "soc_gain_t_co2e",
                 "ghg_net_t_co2e")


def _screen_chunk(fields_table: FieldTable, chunk: list[Record], bad: list[BadRow], names: Sequence[str]):
    import pandas as pd

    values, good, problems, shown = fields_table.check(chunk)
    bad.extend(problems)
    idx = np.flatnonzero(good)
    columns: dict[str, Any] = {"line": [chunk[i].line for i in idx]}  # one DataFrame at the end: faster
    for header, cells in shown.items():
        columns[header] = cells[idx]
    if idx.size == 0:
        for name in (*names, *(f"{n}_field" for n in FIELD_FIGURES)):
            columns[name] = np.empty(0)
        return pd.DataFrame(columns)
    m = len(chunk)
    sub = {}
    for path, v in values.items():
        arr = np.asarray(v) if not isinstance(v, (list, dict)) else None
        if arr is not None and arr.ndim == 1 and arr.shape[0] == m and path not in ("yield.ramp_up_fractions",
                                                                                  "revenue.price_path"):
            sub[path] = arr[idx]
        else:
            sub[path] = v
    figs = evaluate(sub, figures=names, rows=idx.size).figures
    for name in names:
        columns[name] = figs[name]
    area = np.broadcast_to(np.asarray(sub["field.area_ha"], dtype=float), (idx.size,))
    for name in FIELD_FIGURES:
        columns[f"{name}_field"] = figs[name] * area
    return pd.DataFrame(columns)


def _units_note(case: Case, terminal: bool = False) -> str:
    """What the numbers of a screen are in: of its files (rates as fractions), or of its terminal view,
    whose table marks whole-field figures by name and shows the IRR in percent."""
    per = "acre" if case.unit_system == "us_customary" else "ha"
    units = "short tons, carbon included, miles" if case.unit_system == "us_customary" else "t, km"
    if terminal:
        whole, rates = ("in a column marked 'field' (whole field)",
                        "IRR in percent (a fraction in the ranked file: 8.0 % = 0.08)")
    else:
        whole, rates = "the column ends in _field (whole field)", "rates and IRR as fractions (0.08 = 8 %)"
    return (f"money in {case.currency}; figures per {per} ({units}) unless {whole}; {rates}; "
            "years counted from planting (year 0)")


def terminal_units_note(case: Case) -> str:
    """The units note of a screen's terminal view (see :func:`_units_note`)."""
    return _units_note(case, terminal=True)


def file_columns(case: Case) -> dict[str, tuple[str, float]]:
    """Each figure column of a screen (a name of :data:`SCREEN_FIGURES`, or with ``_field``) as the ranked
    file names it in the case's unit system, with the factor its values are converted by.

    Per-area figures end in ``_per_ha`` (``_per_acre``); dry matter in US
    customary units is named ``short_ton_dm``; break-even prices end in the
    price's unit, carbon ``short_ton_c``/``short_ton_co2e``; money in the case's currency.
    """
    from tea.inputs import display

    system = case.unit_system
    us = system == "us_customary"
    columns = {}
    for name in SCREEN_FIGURES:
        unit = MODEL.figure(name).unit
        new = name
        if name.startswith("breakeven_price"):
            unit = "money/GJ" if case.price_basis == "gj" else "money/t DM"
            new = name + ("_per_gj" if case.price_basis == "gj" else "_per_short_ton_dm" if us else "_per_t_dm")
        factor, shown = display.convert(1.0, unit, system)
        if "/ha" in unit and "per_ha" not in new:
            new = f"{new}_per_ha"
        if us:
            new = new.replace("per_ha", "per_acre")
            if shown.startswith("short ton"):  # dry matter and carbon alike: converted
                new = _in_short_tons(new)
        columns[name] = (new, factor)
    for name in FIELD_FIGURES:
        col = f"{name}_field"
        factor, shown = display.convert(1.0, MODEL.figure(name).unit.replace("/ha", ""), system)
        columns[col] = (_in_short_tons(col) if shown.startswith("short ton") else col, factor)
    return columns


def _rename_with_units(table, columns: dict[str, tuple[str, float]]):
    """Figures shown in the case's unit system, each column named by its unit where a name alone is unclear
    (``columns``: :func:`file_columns` of the case)."""
    if not len(table.columns):
        return table
    renames = {}
    for name, (new, factor) in columns.items():
        if name not in table:
            continue
        if factor != 1.0:
            table[name] = table[name] * factor
        renames[name] = new
    return table.rename(columns=renames)


def _in_short_tons(column: str) -> str:
    """A column's name with its tonnes of dry matter, C or CO2e named as short tons.

    >>> _in_short_tons("soc_gain_t_co2e_field"), _in_short_tons("sold_t_dm_per_acre")
    ('soc_gain_short_ton_co2e_field', 'sold_short_ton_dm_per_acre')
    """
    return re.sub(r"_t_(dm|c|co2e)(?=_|$)", r"_short_ton_\1", column)


class _NoBar:
    def update(self, n: int) -> None:
        pass

    def close(self) -> None:
        pass


#: a run this long (rows or draws) shows its progress even when stderr is not a terminal (a log)
LONG_RUN = 1_000_000


def progress_bar(total: int, what: str, enabled: bool | None, unit: str = "rows"):
    """A tqdm bar on stderr, never on stdout.

    By default it is shown when stderr is a terminal (and only once the run
    has lasted 0.5 s), or, sparsely, for a long run logged to a file.
    """
    stream = getattr(sys.stderr, "raw", sys.stderr)  # the bar's own carriage returns pass the terminal filter
    terminal = stream.isatty()
    if enabled is None:
        enabled = terminal or total >= LONG_RUN
    if not enabled:
        return _NoBar()
    from tqdm import tqdm

    if terminal:
        return tqdm(total=total, desc=what, unit=unit, file=stream, delay=0.5, leave=False)
    return tqdm(total=total, desc=what, unit=unit, file=stream, mininterval=30.0, ascii=True)
