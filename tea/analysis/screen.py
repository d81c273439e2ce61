"""Screening many fields over a base case, ranked.

:func:`screen` reads a field table (CSV, one row per field, columns overriding
case values), checks every cell, skips and reports bad rows, and evaluates
every good row of a chunk in one pass of the model's evaluator
(:func:`tea.model.evaluate.evaluate`, the same one a single case uses), then
returns the fields ranked.
"""

from __future__ import annotations

import csv
import io
import math
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterator, Mapping, Sequence

import numpy as np

from tea import __version__
from tea.inputs import published
from tea.model.definition import MODEL
from tea.model.evaluate import evaluate
from tea.inputs import schema
from tea.inputs.case import Case
from tea.core.errors import CaseError, OutputError, Problem
from tea.core.texts import CAUTIONS

#: rows read, checked and evaluated together from a field table
TABLE_CHUNK_ROWS = 65536


# ============================================================================= the field table
ID_COLUMN = "field_id"
#: schema keys of kind str a field table may carry (labels, not model inputs)
LABEL_KEYS = ("field.name",)


@dataclass
class Column:
    """One column of a field table: what its header names."""

    header: str
    index: int
    kind: str  # "id" | "key" | "label" | "unknown"
    key: schema.Key | None = None
    factor: float = 1.0
    reason: str = ""


@dataclass
class BadRow:
    """One problem of one row of a field table."""

    line: int  # line number in the file (the header is line 1 when there are no comment lines)
    row: int  # data row number, 1 = the first data row
    column: str
    value: str
    reason: str

    def __str__(self) -> str:
        where = f"line {self.line} (row {self.row})"
        col = f": {self.column}" if self.column else ""
        return f"{where}{col}: {self.reason}"


@dataclass
class ScreenResult:
    """A screened field table: figures per field, ranked, and the rows skipped."""

    table: Any  # pandas.DataFrame, ranked
    bad: list[BadRow]
    rows_read: int
    rows_skipped: int
    warnings: list[str]
    rank_by: str
    case: Case
    source: str
    units_note: str
    ascending: bool = False

    @property
    def rows_evaluated(self) -> int:
        return self.rows_read - self.rows_skipped


def _all_spellings() -> dict[str, list[tuple[schema.Key, float]]]:
    from tea.inputs.case import _spelling_index

    out: dict[str, list[tuple[schema.Key, float]]] = {}
    for section, table in _spelling_index().items():
        for spelling, (k, factor) in table.items():
            out.setdefault(spelling, []).append((k, factor))
    return out


def resolve_column(header: str, index: int) -> Column:
    """What a field-table header names: the id column, a case key (any spelling), or nothing known."""
    from tea.inputs.case import _spelling_index, _suggest

    name = header.strip()
    if name == ID_COLUMN:
        return Column(header, index, "id")
    spelled = _spelling_index()
    hit = None
    if "." in name:
        section, _, key = name.partition(".")
        found = spelled.get(section, {}).get(key)
        if found is None:
            candidates = [f"{s}.{k}" for s in spelled for k in spelled[s]]
            return Column(header, index, "unknown", reason="unknown column" + _suggest(name, candidates))
        hit = found
    else:
        options = _all_spellings().get(name, [])
        if len(options) > 1:
            paths = ", ".join(f"{k.section}.{name}" for k, _ in options)
            return Column(header, index, "unknown", reason=f"ambiguous column: write it as one of {paths}")
        if not options:
            return Column(header, index, "unknown",
                          reason="unknown column" + _suggest(name, list(_all_spellings()) + [ID_COLUMN]))
        hit = options[0]
    k, factor = hit
    if k.path in LABEL_KEYS:
        return Column(header, index, "label", k, factor)
    if k.section in ("case", "crop") or k.kind in ("list", "bool", "str"):
        return Column(header, index, "unknown", k, factor,
                      reason=f"{k.path} cannot differ between fields of one screen (it belongs to the base case)")
    return Column(header, index, "key", k, factor)


def _read_rows(path: Path) -> Iterator[tuple[int, list[str]]]:
    """(line number, cells) of each data row and the header; '#' comment lines and blank lines skipped."""
    try:
        handle = path.open("r", encoding="utf-8-sig", newline="")
    except FileNotFoundError:
        raise CaseError([Problem(str(path), "", "file not found")]) from None
    except OSError as exc:
        raise CaseError([Problem(str(path), "", f"cannot read the file ({exc})")]) from None
    with handle:
        reader = csv.reader(handle)
        try:
            for cells in reader:
                if not cells or (len(cells) == 1 and not cells[0].strip()):
                    continue
                if cells[0].lstrip().startswith("#"):
                    continue
                yield reader.line_num, cells
        except (csv.Error, UnicodeDecodeError) as exc:
            raise CaseError([Problem(str(path), f"line {reader.line_num}", f"not a readable CSV file ({exc})")]) from None


def _count_rows(path: Path) -> int:
    try:
        with path.open("rb") as f:
            return sum(1 for line in f if line.strip() and not line.lstrip().startswith(b"#")) - 1
    except OSError:
        return 0


def _range_reason(k: schema.Key, value: float, factor: float, system: str) -> str | None:
    from tea.inputs.case import _range_error

    return _range_error(k, value, factor, system)


class _Checker:
    """Reads, checks and merges the rows of a field table over a base case, chunk by chunk."""

    def __init__(self, case: Case, columns: list[Column], source: str):
        self.case = case
        self.columns = columns
        self.source = source
        self.keys = [c for c in columns if c.kind == "key"]
        self.system = case.unit_system
        by_path: dict[str, Column] = {}
        problems = []
        for c in columns:
            if c.kind in ("key", "label"):
                if c.key.path in by_path:
                    problems.append(Problem(source, c.header, f"names the same key as column {by_path[c.key.path].header!r}; "
                                            "keep one of them"))
                by_path[c.key.path] = c
        ids = [c for c in columns if c.kind == "id"]
        if len(ids) > 1:
            problems.append(Problem(source, ID_COLUMN, "given twice; keep one column"))
        price_key = "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"
        for c in self.keys:
            if c.key.path in ("revenue.price_per_gj", "revenue.price_per_t_dm") and c.key.path != price_key:
                c.kind, c.reason = "unknown", (f"the base case prices by {price_key}; give the price in that key, "
                                               "not in this one")
        self.keys = [c for c in columns if c.kind == "key"]
        if problems:
            raise CaseError(problems)
        self.by_path = {c.key.path: c for c in self.keys}

    def check(self, chunk: list[tuple[int, int, list[str]]]) -> tuple[dict[str, Any], np.ndarray, list[BadRow], dict]:
        """Merged values for the chunk's rows, which rows are good, the problems, and the shown cells."""
        import pandas as pd

        from tea.inputs.case import _suggest

        m = len(chunk)
        width = len(self.columns)
        bad_rows: list[BadRow] = []
        good = np.ones(m, dtype=bool)

        def flag(i: int, column: str, value: str, reason: str) -> None:
            good[i] = False
            line, row, _ = chunk[i]
            bad_rows.append(BadRow(line, row, column, value, reason))

        for i, (line, row, cells) in enumerate(chunk):
            if len(cells) > width:
                extra = [v for v in cells[width:] if v.strip()]
                if extra:
                    flag(i, "", extra[0], f"{len(cells)} cells but the header names {width} columns: "
                         f"a value ({extra[0]!r}) in no known column")
        # the table column by column: each a numpy array of stripped strings
        padded = [cells[:width] + [""] * (width - len(cells)) if len(cells) != width else cells
                  for _, _, cells in chunk]
        columns = [np.char.strip(np.array(col, dtype=str)) for col in zip(*padded)] if m else \
            [np.empty(0, dtype=str) for _ in range(width)]

        for c in self.columns:
            if c.kind == "unknown":
                raw = columns[c.index]
                for i in np.flatnonzero(raw != ""):
                    flag(i, c.header, str(raw[i]), c.reason)

        values: dict[str, Any] = dict(self.case.values)
        shown: dict[str, np.ndarray] = {}
        given: dict[str, np.ndarray] = {}
        for c in self.columns:
            if c.kind in ("id", "label"):
                shown[c.header] = columns[c.index]
        for c in self.keys:
            k = c.key
            raw = columns[c.index]
            shown[c.header] = raw
            present = raw != ""
            given[k.path] = present
            base = values.get(k.path)
            if k.kind == "enum":
                for i in np.flatnonzero(present & ~np.isin(raw, k.choices)):
                    v = str(raw[i])
                    flag(i, c.header, v, f"expected one of {', '.join(k.choices)}, got {v!r}" + _suggest(v, k.choices))
                values[k.path] = np.where(present, raw, base if base is not None else "")
                continue
            nums = np.array(pd.to_numeric(pd.Series(raw), errors="coerce"), dtype=float)
            for i in np.flatnonzero(present & ~np.isfinite(nums)):
                v = str(raw[i])
                try:
                    float(v)
                    flag(i, c.header, v, f"expected a finite number, got {v!r}")
                except ValueError:
                    flag(i, c.header, v, f"expected a number, got {v!r}")
                nums[i] = np.nan
            nums[~present] = np.nan
            if k.kind == "int":
                fractional = np.isfinite(nums) & (nums != np.round(nums))
                for i in np.flatnonzero(fractional):
                    flag(i, c.header, str(raw[i]), f"expected a whole number, got {str(raw[i])!r}")
                nums[fractional] = np.nan
            canonical = nums * c.factor
            ok = present & np.isfinite(canonical)
            lo_bad = np.zeros(m, dtype=bool)
            if k.lo is not None:
                lo_bad |= ok & ((canonical < k.lo) | ((canonical == k.lo) if k.lo_open else False))
            if k.hi is not None:
                lo_bad |= ok & ((canonical > k.hi) | ((canonical == k.hi) if k.hi_open else False))
            for i in np.flatnonzero(lo_bad):
                flag(i, c.header, str(raw[i]), _range_reason(k, float(canonical[i]), c.factor, self.system) or "out of range")
            if base is None:
                base_value = np.nan
            else:
                base_value = float(base)
            merged = np.where(ok & ~lo_bad, canonical, base_value)
            if k.kind == "int":
                merged = np.where(np.isfinite(merged), merged, 0).astype(np.int64)
            values[k.path] = merged

        self._derive(values, given, flag, good.copy(), m)
        self._cross_checks(values, given, flag, good.copy(), m)
        return values, good, bad_rows, shown

    def _derive(self, values, given, flag, ok, m) -> None:
        """Re-derive, per row, the values the base case looked up from climate, soil and current use.

        Only rows still ``ok`` (no bad cell) are looked up.
        """
        case = self.case
        climate = np.broadcast_to(np.asarray(values["field.climate"], dtype=str), (m,))
        soil = np.broadcast_to(np.asarray(values["field.soil"], dtype=str), (m,))
        use = np.broadcast_to(np.asarray(values["field.current_use"], dtype=str), (m,))
        site_changed = ok & (given.get("field.climate", np.zeros(m, bool)) | given.get("field.soil", np.zeros(m, bool)))
        use_changed = ok & (given.get("field.climate", np.zeros(m, bool)) | given.get("field.current_use", np.zeros(m, bool)))
        ref = "carbon.soc_ref_t_c_per_ha"
        if case.origin.get(ref) != "case" and site_changed.any():
            refs = np.broadcast_to(np.asarray(values[ref], dtype=float), (m,)).copy()
            own = given.get(ref, np.zeros(m, bool))
            for combo in set(zip(climate[site_changed & ~own], soil[site_changed & ~own])):
                rows = np.flatnonzero(site_changed & ~own & (climate == combo[0]) & (soil == combo[1]))
                try:
                    refs[rows] = published.soc_ref_t_c_per_ha(combo[0], combo[1])
                except KeyError:
                    for i in rows:
                        flag(i, ref, "", f"IPCC Table 2.3 has no reference SOC stock for {combo[0]} on {combo[1]}; "
                             "give soc_ref_t_c_per_ha in this row")
            values[ref] = refs
        names = ("carbon.current_f_lu", "carbon.current_f_mg", "carbon.current_f_i")
        derived = [p for p in names if case.origin.get(p) != "case"]
        if derived and use_changed.any():
            cols = {p: np.broadcast_to(np.asarray(values[p], dtype=float), (m,)).copy() for p in derived}
            for combo in set(zip(use[use_changed], climate[use_changed])):
                rows = np.flatnonzero(use_changed & (use == combo[0]) & (climate == combo[1]))
                factors = dict(zip(names, published.land_use_factors(combo[0], combo[1])))
                for p in derived:
                    keep = rows[~given.get(p, np.zeros(m, bool))[rows]]
                    cols[p][keep] = factors[p]
            values.update(cols)

    def _cross_checks(self, values, given, flag, ok, m) -> None:
        """The case loader's rules that tie keys together, row by row (rows still ``ok`` only)."""
        from tea.inputs.case import YIELD_CEILING_T_DM_PER_HA

        g = lambda path: np.broadcast_to(np.asarray(values[path]), (m,))  # noqa: E731
        flag_ok = flag

        def flag(i, *args):  # noqa: F811
            if ok[i]:
                flag_ok(i, *args)
        touched = lambda *paths: any(p in given for p in paths)  # noqa: E731
        if touched("yield.mature_t_dm_per_ha", "yield.record_t_dm_per_ha"):
            y, rec = g("yield.mature_t_dm_per_ha").astype(float), g("yield.record_t_dm_per_ha").astype(float)
            ceiling = np.minimum(YIELD_CEILING_T_DM_PER_HA, 2.0 * rec)
            for i in np.flatnonzero(y > ceiling):
                flag(i, "yield.mature_t_dm_per_ha", f"{y[i]:g}",
                     f"{y[i]:g} t DM/ha is far above the highest recorded for this crop ({rec[i]:g} t DM/ha); "
                     f"expected at most {ceiling[i]:g}")
        life = g("finance.stand_life_years").astype(int)
        if touched("finance.stand_life_years", "harvest.first_year"):
            first = g("harvest.first_year").astype(int)
            for i in np.flatnonzero(first > life):
                flag(i, "harvest.first_year", f"{first[i]}",
                     f"the first harvest (year {first[i]}) falls after the stand's life ({life[i]} years)")
        if touched("finance.stand_life_years", "loan.term_years", "loan.grace_years", "loan.share_of_establishment"):
            share = g("loan.share_of_establishment").astype(float)
            grace, term = g("loan.grace_years").astype(int), g("loan.term_years").astype(int)
            for i in np.flatnonzero((share > 0) & (grace + term > life)):
                flag(i, "loan.term_years", f"{term[i]}",
                     f"grace ({grace[i]}) + term ({term[i]}) years run past the stand life ({life[i]} years)")
            if values.get("loan.rate") is None:
                for i in np.flatnonzero(share > 0):
                    flag(i, "loan.share_of_establishment", f"{share[i]:g}",
                         "a loan needs its interest rate (loan.rate), which the base case does not give")


def screen(fields: str | Path, case: Case, rank_by: str = "eav_vs_current_use", ascending: bool = False,
           chunk_rows: int = TABLE_CHUNK_ROWS, progress: bool | None = None) -> ScreenResult:
    """Screen a field table over a base case.

    Parameters
    ----------
    fields : path
        CSV file: a header row naming case keys (``area_ha``, ``costs.haul_distance_km``,
        ``site_factor``, ``climate``, ...; any spelling the case file accepts, with or
        without the section), an optional ``field_id`` column, then one row per
        field. Empty cells keep the base case's value. Lines starting with ``#``
        are comments.
    case : Case
        The base case.
    rank_by : str
        Figure to rank by (a name of :data:`LEAN_FIGURES`, or with ``_field``
        for the whole-field value).
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

    path = Path(fields)
    source = str(path)
    rows = _read_rows(path)
    try:
        header_line, header = next(rows)
    except StopIteration:
        raise CaseError([Problem(source, "", "no header row: expected a row naming the columns")]) from None
    columns = [resolve_column(h, j) for j, h in enumerate(header)]
    empty = [c for c in columns if not c.header.strip()]
    if empty:
        raise CaseError([Problem(source, f"column {empty[0].index + 1}", "has no name in the header row")])
    checker = _Checker(case, columns, source)
    warnings = [f"{source}: column {c.header!r}: {c.reason}; rows with a value there are skipped"
                for c in columns if c.kind == "unknown"]
    figure_names = SCREEN_FIGURES
    valid_rank = set(figure_names) | {f"{n}_field" for n in FIELD_FIGURES}
    if rank_by not in valid_rank:
        raise CaseError([Problem(source, "--rank-by", f"unknown figure {rank_by!r}; expected one of "
                                 + ", ".join(sorted(valid_rank)))])

    total = _count_rows(path)
    bar = progress_bar(total, "screening", progress)
    pieces = []
    bad: list[BadRow] = []
    read = 0
    try:
        chunk: list[tuple[int, int, list[str]]] = []
        for line, cells in rows:
            read += 1
            chunk.append((line, read, cells))
            if len(chunk) >= chunk_rows:
                pieces.append(_screen_chunk(checker, chunk, bad, figure_names))
                bar.update(len(chunk))
                chunk = []
        if chunk:
            pieces.append(_screen_chunk(checker, chunk, bad, figure_names))
            bar.update(len(chunk))
    finally:
        bar.close()
    table = pd.concat(pieces, ignore_index=True) if pieces else pd.DataFrame()
    if len(table):
        key = table[rank_by].to_numpy(dtype=float)
        order = np.lexsort((table["line"].to_numpy(), np.isnan(key), key if ascending else -key))
        table = table.iloc[order].reset_index(drop=True)
        table.insert(0, "rank", np.arange(1, len(table) + 1))
    skipped = len({b.line for b in bad})
    table = _rename_with_units(table, case)
    return ScreenResult(table, sorted(bad, key=lambda b: (b.line, b.column)), read, skipped, warnings,
                        rank_by, case, source, _units_note(case), ascending)


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


def _screen_chunk(checker: _Checker, chunk, bad: list[BadRow], names: Sequence[str]):
    import pandas as pd

    values, good, problems, shown = checker.check(chunk)
    bad.extend(problems)
    idx = np.flatnonzero(good)
    frame = pd.DataFrame({"line": [chunk[i][0] for i in idx]})
    for header, cells in shown.items():
        frame[header] = cells[idx]
    if idx.size == 0:
        for name in names:
            frame[name] = np.empty(0)
        for name in FIELD_FIGURES:
            frame[f"{name}_field"] = np.empty(0)
        return frame
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
        frame[name] = figs[name]
    area = np.broadcast_to(np.asarray(sub["field.area_ha"], dtype=float), (idx.size,))
    for name in FIELD_FIGURES:
        frame[f"{name}_field"] = figs[name] * area
    return frame


def _units_note(case: Case) -> str:
    per = "acre" if case.unit_system == "us_customary" else "ha"
    units = "short tons, miles" if case.unit_system == "us_customary" else "t, km"
    return (f"money in {case.currency}; figures per {per} ({units}; carbon in metric t) unless the column ends in "
            "_field (whole field); rates and IRR as fractions (0.08 = 8 %); years counted from planting (year 0)")


def _rename_with_units(table, case: Case):
    """Figures shown in the case's unit system, each column named by its unit where a name alone is unclear.

    Per-area figures end in ``_per_ha`` (``_per_acre``); dry matter in US
    customary units is named ``short_ton_dm``; break-even prices end in the
    price's unit. Carbon stays in metric tonnes, money in the case's currency.
    """
    from tea.inputs import display

    if not len(table.columns):
        return table
    system = case.unit_system
    us = system == "us_customary"
    renames = {}
    for name in SCREEN_FIGURES:
        if name not in table:
            continue
        unit = MODEL.figure(name).unit
        new = name
        if name.startswith("breakeven_price"):
            unit = "money/GJ" if case.price_basis == "gj" else "money/t DM"
            new = name + ("_per_gj" if case.price_basis == "gj" else "_per_short_ton_dm" if us else "_per_t_dm")
        factor, shown = display.convert(1.0, unit, system)
        if factor != 1.0:
            table[name] = table[name] * factor
        if "/ha" in unit and "per_ha" not in new:
            new = f"{new}_per_ha"
        if us:
            new = new.replace("per_ha", "per_acre")
            if shown.startswith("short ton"):
                new = new.replace("_t_dm", "_short_ton_dm")
        renames[name] = new
    for name in FIELD_FIGURES:
        col = f"{name}_field"
        factor, _ = display.convert(1.0, MODEL.figure(name).unit.replace("/ha", ""), system)
        if col in table and factor != 1.0:
            table[col] = table[col] * factor
    return table.rename(columns=renames)


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


# ============================================================================= writing
def write_table(result: ScreenResult, out: str | Path, force: bool = False) -> Path:
    """Write the ranked table: .csv (with # comment lines on top), .xlsx or .parquet."""
    from tea.core.files import atomic_write, atomic_write_text, check_target

    out = Path(out)
    check_target(out, force)
    suffix = out.suffix.lower()
    meta = metadata_lines(result)
    if suffix == ".csv":
        head = "".join(f"# {line}\n" for line in meta)
        return atomic_write_text(out, head + csv_text(result.table), force=True)
    if suffix == ".xlsx":
        import pandas as pd

        if len(result.table) > 1_048_575:
            raise OutputError(f"{out}: {len(result.table):,} fields do not fit a worksheet (1,048,575 rows); write .csv")

        def write(tmp: Path) -> None:
            with pd.ExcelWriter(tmp, engine="openpyxl") as xl:
                result.table.to_excel(xl, sheet_name="ranked fields", index=False)
                pd.DataFrame({"notes": meta}).to_excel(xl, sheet_name="notes", index=False)
        return atomic_write(out, write, force=True)
    if suffix == ".parquet":
        if not parquet_available():
            raise OutputError(f"{out}: Parquet output needs the pyarrow package (pip install pyarrow); "
                              "write .csv or .xlsx instead")

        def write_pq(tmp: Path) -> None:
            table = result.table.copy()
            table.attrs = {"notes": "\n".join(meta)}
            table.to_parquet(tmp, index=False)
        return atomic_write(out, write_pq, force=True)
    raise OutputError(f"{out}: unknown output type {suffix or '(none)'}; expected .csv, .xlsx or .parquet")


def _csv_cell(text: str) -> str:
    """A text cell, quoted the CSV way (RFC 4180) where it holds a comma, a quote or a line break."""
    if any(ch in text for ch in ',"\r\n'):
        return '"' + text.replace('"', '""') + '"'
    return text


def csv_text(table) -> str:
    """A DataFrame as CSV text: numbers to 10 significant digits, NaN as an empty cell.

    Formats column by column (faster than ``DataFrame.to_csv`` with a float format).

    >>> import pandas as pd
    >>> print(csv_text(pd.DataFrame({"field_id": ["A, east"], "npv": [1234.56789012345], "irr": [float("nan")]})), end="")
    field_id,npv,irr
    "A, east",1234.56789,
    """
    cols = []
    for name in table.columns:
        values = table[name].to_numpy()
        if values.dtype.kind == "f":
            cols.append(["" if v != v else "%.10g" % v for v in values.tolist()])
        elif values.dtype.kind in "iub":
            cols.append([str(v) for v in values.tolist()])
        else:
            cols.append([_csv_cell(str(v)) for v in values.tolist()])
    lines = [",".join(_csv_cell(str(n)) for n in table.columns)]
    lines.extend(",".join(row) for row in zip(*cols))
    return "\n".join(lines) + "\n"


def parquet_available() -> bool:
    try:
        import pyarrow  # noqa: F401
    except ImportError:
        return False
    return True


def check_output(out: str | Path, force: bool) -> None:
    """Refuse, before any work, an output that cannot be written."""
    from tea.core.files import check_target

    out = Path(out)
    suffix = out.suffix.lower()
    if suffix not in (".csv", ".xlsx", ".parquet"):
        raise OutputError(f"{out}: unknown output type {suffix or '(none)'}; expected .csv, .xlsx or .parquet")
    if suffix == ".parquet" and not parquet_available():
        raise OutputError(f"{out}: Parquet output needs the pyarrow package (pip install pyarrow); "
                          "write .csv or .xlsx instead")
    check_target(out, force)


def write_errors(result: ScreenResult, out: str | Path, force: bool = True) -> Path:
    """Write the skipped rows' problems as CSV: line, row, column, value, reason."""
    from tea.core.files import atomic_write_text

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["line", "row", "column", "value", "reason"])
    for b in result.bad:
        w.writerow([b.line, b.row, b.column, b.value, b.reason])
    return atomic_write_text(out, buf.getvalue(), force=force)


def metadata_lines(result: ScreenResult) -> list[str]:
    case = result.case
    lines = [
        f"tea {__version__} screen of {result.source} over base case {case.name!r} ({case.source}, hash {case.hash})",
        f"{result.rows_evaluated} fields evaluated, {result.rows_skipped} rows skipped; ranked by {result.rank_by}"
        + (" (smallest first)" if result.ascending else " (largest first)"),
        result.units_note,
    ]
    if case["case.demo"]:
        lines.append("DEMO DATA: the base case is invented demo data")
    lines.extend(CAUTIONS)
    return lines


def summary_text(result: ScreenResult, top: int = 10) -> str:
    """The terminal view: counts, the best-ranked fields, the cautions."""
    from tea.inputs import display

    case = result.case
    out = [f"Screen of {result.source} over {case.name}" + ("   [DEMO DATA]" if case["case.demo"] else "")]
    out.append("=" * len(out[0]))
    out.append(f"{result.rows_read} rows read; {result.rows_evaluated} fields evaluated; "
               f"{result.rows_skipped} rows skipped" + (" (see the error file)" if result.rows_skipped else ""))
    out.append(result.units_note)
    table = result.table
    if len(table):
        per = "acre" if case.unit_system == "us_customary" else "ha"
        label = next((c for c in (ID_COLUMN, "field.name", "name") if c in table), "line")
        cols = [("rank", "rank"), (label, "field"), (f"eav_vs_current_use_per_{per}", f"EAV vs now /{per}/yr"),
                (f"npv_vs_current_use_per_{per}", f"NPV vs now /{per}"), ("npv_vs_current_use_field", "NPV vs now, field"),
                ("irr", "IRR"), ("payback_year", "payback yr"), (f"soc_gain_t_co2e_per_{per}", f"SOC t CO2e/{per}")]
        cols = [(c, h) for c, h in cols if c in table]
        head = table.head(top)
        cells = []
        for c, h in cols:
            vals = []
            for v in head[c].tolist():
                if c == "irr":
                    vals.append(display.percent(float(v)) if v == v else "–")
                elif c == "payback_year":
                    vals.append(f"{v:.0f}" if v == v else "none")
                elif isinstance(v, float):
                    vals.append(display.number(v) if v == v else "–")
                else:
                    vals.append(str(v))
            cells.append((h, vals))
        widths = [max(len(h), *(len(v) for v in vals)) for h, vals in cells]
        out.append("")
        out.append(f"Top {len(head)} by {result.rank_by} ({case.currency}):")
        out.append("  ".join(h.rjust(w) for (h, _), w in zip(cells, widths)))
        for i in range(len(head)):
            out.append("  ".join(vals[i].rjust(w) for (_, vals), w in zip(cells, widths)))
    out.append("Cautions:")
    out.extend(f"  - {c}" for c in CAUTIONS)
    return "\n".join(out)
