"""The model's spreadsheet formulas, recalculated by an independent engine (LibreOffice Calc, headless).

Every declaration of the model (lines in every year, parameters, figures,
the working lines and slopes behind the break-evens) is written as the
formula :class:`tea.model.formulas.Renderer` derives from it, into a plain
workbook (``tests/model_book.py``), for the demo cases and for variants
that take the branches they do not (first-order SOC, an autumn harvest, a
price path, a decline, capitalised grace interest, 2019 N2O factors, a
per-GJ price, two sign changes). LibreOffice recalculates every cell and
each must equal the numpy evaluation to 1e-9 relative (LibreOffice returns
15 significant digits), and where the engine has no value the cell must be
blank. A line added in a test (one declaration) appears in the same way.
"""

from __future__ import annotations

import io
import math
import re
from pathlib import Path

import pytest
from openpyxl import load_workbook

import spreadsheet_engine as engine
from model_book import book
from tea import load_case
from tea.model import expr as E
from tea.model.declare import line
from tea.model.definition import MODEL

ROOT = Path(__file__).resolve().parents[1]
DEMOS = {p.stem: p for p in sorted((ROOT / "cases").glob("*.toml"))}
RTOL = ATOL = 1e-9
LAST_YEAR = 30

#: a synthetic line declared in a test: a quarter of the dry matter sold, lagged a year, plus the SOC stock
EXTRA = line("test_extra_line", "t DM/ha", "test", "Test line", "A line added by a test.",
             0.25 * E.lag(E.L.sold_t_dm, 1) + E.L.soc_t_c)
EXTENDED = MODEL.with_defs([EXTRA])


def _variants():
    clay = load_case(DEMOS["clay_corner_miscanthus"])
    yield "branches", clay.replace(**{
        "carbon.soc_method": "first_order", "harvest.timing": "autumn", "revenue.price_path": [1.0, 1.05, 0.95, 1.1],
        "yield.decline_start_year": 12, "yield.decline_per_year": 0.03, "revenue.annual_payment_per_ha": 55.0,
        "revenue.annual_payment_years": 5, "loan.grace_interest": "capitalised", "carbon.n2o_method": "ipcc2019",
        "carbon.gwp": "AR5", "finance.mirr_finance_rate": 0.05, "finance.mirr_reinvest_rate": 0.03,
        "harvest.field_loss": 0.07, "finance.stand_life_years": 23}), MODEL
    yield "two_sign_changes", clay.replace(**{"costs.removal_per_ha": 9000.0}), MODEL
    yield "no_loan", clay.replace(**{"loan.share_of_establishment": 0.0, "carbon.credit_price_per_t_co2e": 0.0}), MODEL
    yield "synthetic_line", clay, EXTENDED


@pytest.fixture(scope="module")
def recalculated(tmp_path_factory):
    engine.require_engine()
    src, out = tmp_path_factory.mktemp("model_books"), tmp_path_factory.mktemp("recalculated")
    made = {}
    cases = [(name, load_case(path), MODEL) for name, path in DEMOS.items()] + list(_variants())
    for name, case, model in cases:
        data, info = book(case.values, model, LAST_YEAR)
        path = src / f"{name}.xlsx"
        path.write_bytes(data)
        made[name] = (path, info)
    engine.recalculate([p for p, _ in made.values()], out)
    return {name: (out / path.name, info) for name, (path, info) in made.items()}


def _close(actual, expected, where: str) -> None:
    if isinstance(expected, str):
        assert actual == expected, f"{where}: sheet {actual!r} vs engine {expected!r}"
        return
    if expected is None or math.isnan(expected):
        assert actual in (None, ""), f"{where}: engine has no value, sheet shows {actual!r}"
        return
    assert isinstance(actual, (int, float)) and not isinstance(actual, bool), \
        f"{where}: expected the number {expected!r}, got {actual!r}"
    assert abs(actual - expected) <= max(RTOL * abs(expected), ATOL), f"{where}: sheet {actual!r} vs engine {expected!r}"


def compare(path: Path, info: dict) -> int:
    wb = engine.load_values(path)
    assert engine.error_cells(wb) == []
    lay, values = info["layout"], info["engine"]
    lines = list(wb["Lines"].iter_rows(values_only=True))
    rows = list(wb["Rows"].iter_rows(values_only=True))
    n = 0
    for d in lay.lines:
        r = lines[lay.line_row[d.key]]
        assert r[0] == d.name
        for y in range(LAST_YEAR + 1):
            _close(r[1 + y], float(values[d.key][y]), f"{d.name}[{y}]")
            n += 1
    for d in lay.rows:
        r = rows[lay.row_row[d.key]]
        assert r[0] == d.name
        v = values[d.key]
        _close(r[1], v if isinstance(v, str) else float(v), d.name)
        n += 1
    return n


@pytest.mark.parametrize("name", [*DEMOS, "branches", "two_sign_changes", "no_loan"])
def test_every_formula_recalculates_to_the_engine(recalculated, name):
    path, info = recalculated[name]
    cells = compare(path, info)
    declared = sum(1 for d in info["layout"].model)
    assert cells >= declared  # every declaration was compared, lines in every year


def test_a_line_declared_in_a_test_has_its_formula(recalculated):
    path, info = recalculated["synthetic_line"]
    compare(path, info)
    wb = engine.load_values(path)
    row = next(r for r in wb["Lines"].iter_rows(values_only=True) if r[0] == "test_extra_line")
    sold = info["engine"][("line", "sold_t_dm")]
    soc = info["engine"][("line", "soc_t_c")]
    # year 5 by hand: a quarter of year 4's dry matter sold, plus year 5's SOC stock
    assert row[1 + 5] == pytest.approx(0.25 * sold[4] + soc[5], rel=1e-12)


def test_no_volatile_function_and_no_number_typed_in_a_formula():
    # constants are defined names with their sources; only 0 and 1 may be typed (common practice of
    # spreadsheet modelling standards: no hidden numbers in formulas)
    data, _ = book(load_case(DEMOS["clay_corner_miscanthus"]).values, MODEL, LAST_YEAR)
    wb = load_workbook(io.BytesIO(data))
    reference = re.compile(r"(\w+!)?\$?[A-Z]{1,3}\$?\d+")
    bad = []
    for ws in (wb["Lines"], wb["Rows"]):
        for row in ws.iter_rows():
            for c in row:
                f = c.value
                if not (isinstance(f, str) and f.startswith("=")):
                    continue
                assert not re.search(r"\b(OFFSET|INDIRECT|NOW|TODAY|RAND)\(", f), f
                text = re.sub(r'"[^"]*"', "", f)
                text = reference.sub("", text)
                text = re.sub(r"\b[A-Za-z_][A-Za-z_0-9.]*", "", text)  # names and functions
                numbers = {float(x) for x in re.findall(r"\d+\.?\d*(?:[eE][-+]?\d+)?", text)}
                if numbers - {0.0, 1.0}:
                    bad.append((c.coordinate, f))
    assert not bad, bad[:5]
