"""`tea explain`: the audit trail of a figure, derived from the one definition of the model.

The inputs it lists must be exactly the inputs whose change moves the figure
in this case: each input the figure's formulas reach is changed by itself
(numbers by 1 % either way, whole numbers by one, labels to every other
choice; the change `tea explain` documents), the figure recomputed in its own
evaluation, and compared. Figures that are a year or a count found by a
search (payback year, year of the lowest DSCR, years below the covenant) move
in steps, so for them every input that moves them must be listed, and every
listed input must move the line they are read from.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from tea import load_case
from tea.cli.main import main
from tea.inputs import schema
from tea.model import expr as E
from tea.model import explain as X
from tea.model.definition import MODEL
from tea.model.evaluate import evaluate
from tea.model.slopes import expanded

from conftest import CASES_DIR, run_cli

ROOT = Path(__file__).resolve().parents[1]
DEMOS = ("clay_corner_miscanthus", "sandy_slope_switchgrass", "flood_meadow_willow")
M = expanded(MODEL)
#: whole-number figures and the line (or lines) each is read from (the figures' own formulas say so)
STEPPED = {"payback_year": "cumulative_cash_flow", "payback_lost_year": "cumulative_cash_flow",
           "discounted_payback_year": "cumulative_discounted_cash_flow",
           "peak_funding_year": "cumulative_cash_flow", "min_dscr_year": "dscr_tested",
           "years_below_covenant": "dscr_tested",
           "llcr_no_cover_years": ("llcr_pv_cfads", "loan_opening_balance")}


def basis_lines(name: str) -> tuple[str, ...]:
    lines = STEPPED[name]
    return (lines,) if isinstance(lines, str) else lines


def changes(case, path):
    v, k = case.values.get(path), schema.BY_PATH[path]
    if v is None:
        return []
    if k.kind == "enum":
        return [c for c in k.choices if c != v]
    if k.kind == "bool":
        return [not v]
    if k.kind == "int":
        return [x for x in (v - 1, v + 1) if (k.lo is None or x >= k.lo) and (k.hi is None or x <= k.hi)]
    if k.kind == "list":
        return [[x * 1.01 for x in v], [x * 0.99 for x in v]]
    step = abs(v) * 0.01 + 1e-6
    return [v + step, v - step]


class Moves:
    """Every input of a case changed by itself (one row each), every figure and stepped basis line evaluated."""

    def __init__(self, case):
        self.case = case
        paths = sorted(set().union(*(reached(d.name) for d in MODEL.figures)))
        self.rows = [(p, v) for p in paths for v in changes(case, p)]
        figures = [d.name for d in MODEL.figures]
        lines = sorted({line for name in STEPPED for line in basis_lines(name)})
        base = evaluate(case.values, figures=figures, lines=lines)
        self.base = {**{f: base.figures[f][0] for f in figures}, **{n: base.lines[n][0] for n in lines}}
        self.got = {}
        for path, value in self.rows:  # one evaluation per change: no batching shared with tea explain
            values = dict(case.values)
            values[path] = value
            got = evaluate(values, figures=figures, lines=lines)
            self.got[(path, repr(value))] = {**{f: got.figures[f][0] for f in figures},
                                             **{n: got.lines[n][0] for n in lines}}

    def __call__(self, path, name) -> bool:
        for p, value in self.rows:
            if p != path:
                continue
            got, base = np.atleast_1d(self.got[(p, repr(value))][name]), np.atleast_1d(self.base[name])
            if got.shape != base.shape or not np.allclose(got, base, rtol=1e-12, atol=1e-12, equal_nan=True):
                return True
        return False


def reached(figure: str) -> set[str]:
    return set().union(*(E.inputs(d.expr) for d in M.closure([M.figure(figure)])))


@pytest.fixture(scope="module")
def cases():
    return {name: load_case(ROOT / "cases" / f"{name}.toml") for name in DEMOS}


@pytest.mark.parametrize("name", DEMOS)
def test_listed_inputs_are_exactly_those_that_move_the_figure(cases, name):
    case = cases[name]
    moves = Moves(case)
    checked = 0
    for d in MODEL.figures:
        listed = {u.path for u in X.explain(case, "figure:" + d.name).inputs}
        moving = {p for p in reached(d.name) if moves(p, d.name)}
        if d.name in STEPPED:
            assert moving <= listed, (d.name, moving - listed)
            # a listed input moves the line the figure is read from, or is read by its own condition
            conditions = {p for dd in M.closure([M.figure(d.name)]) if dd.unit in ("flag", "yr") for p in E.inputs(dd.expr)}
            basis = {p for p in listed if p in conditions or any(moves(p, ln) for ln in basis_lines(d.name))}
            assert listed == basis, (d.name, listed - basis)
        else:
            assert listed == moving, (d.name, sorted(listed - moving), sorted(moving - listed))
        checked += len(reached(d.name))
    assert checked > 1000


def test_explains_a_line_in_a_year_with_its_tree(cases):
    case = cases["clay_corner_miscanthus"]
    ex = X.explain(case, "sold_t_dm", year=5, depth=3)
    root = ex.root
    assert root.kind == "line" and root.value == pytest.approx(
        evaluate(case.values, lines=("sold_t_dm",)).lines["sold_t_dm"][0, 5])
    assert root.symbols == "harvested_t_dm × (1 - storage_loss_share)"
    assert "storage" in root.words and "[harvested dm]" in root.words
    assert [c.name for c in root.children] == ["harvested_t_dm", "storage_loss_share"]
    assert root.children[0].children, "depth 3 shows what the harvested dry matter rests on"
    inputs = {u.path: u for u in ex.inputs}
    # the demo has a site climate and gives no mature yield: the estimate from the climate is used
    assert inputs["yield.mature_t_dm_per_ha"].origin == "site climate"
    assert "estimated from the site climate" in inputs["yield.mature_t_dm_per_ha"].source
    assert inputs["harvest.storage_loss"].origin == "preset"
    # the autumn moisture is in the formulas of the harvest, but a late-winter harvest never reads it
    assert "harvest.moisture_autumn" not in inputs


def test_a_branch_not_taken_and_a_zero_factor_are_no_inputs(cases):
    case = cases["sandy_slope_switchgrass"]  # no loan: the loan's rate moves nothing
    ex = X.explain(case, "npv")
    listed = {u.path for u in ex.inputs}
    assert "loan.rate" not in listed and "revenue.price_per_t_dm" in listed
    assert "carbon.soc_ref_t_c_per_ha" in listed or case["carbon.credit_price_per_t_co2e"] == 0


def test_cli_explain_text_and_json(cases, capsys):
    path = ROOT / "cases" / "clay_corner_miscanthus.toml"
    assert main(["explain", str(path), "npv", "--depth", "1"]) == 0
    out = capsys.readouterr().out
    assert "npv(net_cash_flow, discount_rate_real)" in out and "yield.mature_t_dm_per_ha" in out
    assert main(["explain", str(path), "soc_change_t_c", "--year", "3", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["year"] == 3 and data["explains"]["name"] == "soc_change_t_c"
    assert {i["path"] for i in data["inputs"]} >= {"carbon.soc_ref_t_c_per_ha", "carbon.crop_f_lu"}
    assert main(["explain", str(path), "nvp"]) == 2
    assert "did you mean npv" in capsys.readouterr().err
    assert main(["explain", str(path), "npv", "--year", "3"]) == 2


def test_a_figure_with_no_value_in_the_case_says_so_and_why(cases, capsys):
    # the switchgrass demo borrows nothing: its DSCR (line and figure) and LLCR have no value, and the
    # explanation says so first, then names the inputs that would give them one
    sandy = ROOT / "cases" / "sandy_slope_switchgrass.toml"
    assert cases["sandy_slope_switchgrass"]["loan.share_of_establishment"] == 0
    for name in ("dscr", "min_dscr", "llcr"):
        ex = X.explain(cases["sandy_slope_switchgrass"], name)
        assert ex.no_value and "no loan" in ex.no_value, name
    assert main(["explain", str(sandy), "dscr"]) == 0
    out = capsys.readouterr().out
    assert "No value: this line has no value in this case, because the case draws no loan" in out
    assert "Case inputs whose change would give it a value" in out and "Case inputs it uses" not in out
    assert main(["explain", str(sandy), "dscr", "--json"]) == 0
    assert "no loan" in json.loads(capsys.readouterr().out)["no_value"]
    # the clay demo borrows: its DSCR has a value, and no such line; in a grace year (2: no debt service) the
    # line has none, and the reason is the condition its formula puts on the debt service
    clay = cases["clay_corner_miscanthus"]
    assert X.explain(clay, "dscr").no_value is None and X.explain(clay, "min_dscr").no_value is None
    graced = X.explain(clay, "dscr", year=2)
    assert clay["loan.grace_years"] >= 2 and "[debt service] > 0 is not met in year 2" in graced.no_value
    assert main(["explain", str(ROOT / "cases" / "clay_corner_miscanthus.toml"), "dscr"]) == 0
    out = capsys.readouterr().out
    assert "No value" not in out and "Case inputs it uses" in out


def test_every_figure_and_line_of_every_demo_explains(cases):
    for case in cases.values():
        for kind, name, _ in X.listing():
            ex = X.explain(case, f"{kind}:{name}", depth=1)
            assert ex.root.name == name and ex.root.symbols


def test_a_us_case_is_explained_with_its_values_in_its_own_units_too():
    """The formulas work per ha; a US customary case also sees each value per acre (NIST Handbook 44
    Appendix C: 1 acre = 0.40468564224 ha), so the number matches its other outputs."""
    import tea
    from tea.inputs import display

    from conftest import CASES_DIR, run_cli

    path = CASES_DIR / "sandy_slope_switchgrass.toml"
    res = run_cli(["explain", path, "npv"])
    assert res.code == 0, res.text
    npv = tea.summarise(tea.load_case(path))["npv"]
    assert f"({display.number(npv * 0.40468564224)} USD/acre)" in res.out
    assert "a value in brackets is in the case's units" in res.out


def test_a_us_case_finds_its_own_keys_and_values_among_the_inputs():
    """The inputs of a US customary case are listed with the key as its file spells it and its value in its
    units beside the model's (1 short ton = 0.90718474 t, 1 acre = 0.40468564224 ha, NIST Handbook 44
    Appendix C): the demo file's mature yield, 4.6 short ton DM/acre, is found as written."""
    res = run_cli(["explain", CASES_DIR / "sandy_slope_switchgrass.toml", "sold_t_dm", "--year", "5"])
    assert res.code == 0, res.text
    line = next(x for x in res.out.splitlines() if x.strip().startswith("yield.mature_t_dm_per_ha ="))
    metric = 4.6 * 0.90718474 / 0.40468564224
    assert f"= {metric:.6g} t DM/ha/yr (yield.mature_short_ton_dm_per_acre = 4.6 short ton DM/acre/yr)" in line
