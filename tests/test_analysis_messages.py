"""What `tea screen` and `tea risk` tell the reader: rows that cannot be matched to the header,
the units the terminal view shows, and how far a Monte Carlo of few draws can be read.

Formulas checked, each named beside its check:

* the binomial standard error of a share p of n draws, sqrt(p (1 - p) / n) (any statistics textbook);
* the exact one-sided 95 % bound where none of n draws counts, 1 - 0.05^(1/n), and where all do,
  0.05^(1/n) (C. J. Clopper and E. S. Pearson, Biometrika 26(4), 404-413, 1934);
* the sample standard deviation divides by n - 1, so one value has none (any statistics textbook).
"""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path

import numpy as np
import pytest

from tea.analysis import risk
from tea.outputs import analysis_text

from conftest import CASES_DIR, run_cli

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"
FIELDS = CASES_DIR / "fields_demo.csv"
HEADER = "field_id,area_ha,site_factor,haul_distance_km,current_margin_per_ha\n"


def _screen(tmp_path: Path, text: str):
    table = tmp_path / "fields.csv"
    table.write_text(text, encoding="utf-8")
    result = run_cli(["screen", table, "--case", CLAY, "--out", tmp_path / "ranked.csv", "--no-progress"])
    return table, result


def _ranked_ids(tmp_path: Path) -> list[str]:
    lines = [x for x in (tmp_path / "ranked.csv").read_text(encoding="utf-8").splitlines() if not x.startswith("#")]
    return sorted(r["field_id"] for r in csv.DictReader(lines))


def _problems(tmp_path: Path) -> list[dict[str, str]]:
    return list(csv.DictReader((tmp_path / "ranked.errors.csv").open(encoding="utf-8")))


# ----------------------------------------------------------------------------- screen: cells against the header
def test_a_row_with_fewer_cells_than_the_header_is_listed_not_ranked_with_base_values(tmp_path):
    table, result = _screen(tmp_path, HEADER + "A,5,0.9,20,300\nF,5,0.9\n")
    assert result.code == 0, result.err
    assert _ranked_ids(tmp_path) == ["A"]
    assert f"{table}: line 3 (row 2): expected 5 cells, one per header column, got 3" in result.err
    assert [(p["line"], p["column"]) for p in _problems(tmp_path)] == [("3", "")]


@pytest.mark.parametrize("row, got", [("G,4,1.0,10,200,99", "got 6: a value ('99') in no known column"),
                                      ("G,4,1.0,10,200,", "got 6: empty cells after the last column")])
def test_a_row_with_more_cells_than_the_header_is_listed_not_ranked(tmp_path, row, got):
    table, result = _screen(tmp_path, HEADER + "A,5,0.9,20,300\n" + row + "\n")
    assert result.code == 0, result.err
    assert _ranked_ids(tmp_path) == ["A"]
    assert f"{table}: line 3 (row 2): expected 5 cells, one per header column, {got}" in result.err


def test_a_wrong_count_is_the_rows_one_problem(tmp_path):
    """The cells of such a row may sit in the wrong columns, so they are not checked one by one."""
    _, result = _screen(tmp_path, HEADER + "A,5,0.9,20,300\nF,,x\n")
    assert result.code == 0, result.err
    assert [p["reason"].split(",")[0] for p in _problems(tmp_path)] == ["expected 5 cells"]


def test_empty_cells_of_a_full_row_still_keep_the_base_values(tmp_path):
    """The README: an empty cell keeps the base case's value (the area excepted)."""
    _, result = _screen(tmp_path, HEADER + "A,5,,,\n")
    assert result.code == 0, result.err
    assert _ranked_ids(tmp_path) == ["A"] and "no rows skipped" in result.err


def test_a_table_of_short_rows_only_is_refused(tmp_path):
    table, result = _screen(tmp_path, HEADER + "F,5,0.9\nG,4\n")
    assert result.code == 2 and "Traceback" not in result.err
    assert f"{table}: no field could be evaluated" in result.err
    assert not (tmp_path / "ranked.csv").exists()


# ----------------------------------------------------------------------------- screen: the terminal's units
def test_the_screen_terminal_says_irr_in_percent_as_it_shows_it(tmp_path):
    result = run_cli(["screen", FIELDS, "--case", CLAY, "--out", tmp_path / "ranked.csv", "--no-progress"])
    assert result.code == 0, result.err
    head = result.out.split("Top ")[0].replace("\n", " ")
    assert "IRR in percent" in head and "as fractions" not in head
    rows = result.out.split("Top ")[1].splitlines()[3:6]  # below the title line and the two heading lines
    assert all(" %" in r for r in rows)  # the table's IRR cells
    # the ranked file keeps fractions, and its note says so
    text = (tmp_path / "ranked.csv").read_text(encoding="utf-8")
    assert "rates and IRR as fractions (0.08 = 8 %)" in text.splitlines()[2]
    ranked = list(csv.DictReader(x for x in text.splitlines() if not x.startswith("#")))
    assert all(0 < float(r["irr"]) < 1 for r in ranked[:3])


# ----------------------------------------------------------------------------- risk: few draws
def test_one_value_has_no_standard_deviation_nor_standard_error():
    s = risk.stat(np.array([5.0, np.nan]))
    assert s.defined == 1 and s.percentiles[50] == 5.0
    assert math.isnan(s.sd) and math.isnan(s.se)
    s = risk.stat(np.array([1.0, 3.0]))
    assert s.sd == pytest.approx(math.sqrt(2.0)) and s.se == pytest.approx(1.0)  # sd / sqrt(n)


def test_a_share_with_draws_on_each_side_has_the_binomial_standard_error():
    p = risk.probability(np.arange(1000) < 250)
    assert p.standard_error == pytest.approx(math.sqrt(0.25 * 0.75 / 1000))  # sqrt(p (1 - p) / n)
    assert p.upper_bound is None and p.lower_bound is None


@pytest.mark.parametrize("n", [1, 2, 200, 10_000])
def test_no_draw_or_every_draw_gives_a_bound_not_a_standard_error_of_zero(n):
    none, every = risk.probability(np.zeros(n, dtype=bool)), risk.probability(np.ones(n, dtype=bool))
    assert none.standard_error is None and every.standard_error is None
    assert none.upper_bound == pytest.approx(1 - 0.05 ** (1 / n))  # Clopper-Pearson, none of n
    assert every.lower_bound == pytest.approx(0.05 ** (1 / n))  # Clopper-Pearson, all of n
    assert "s.e." not in analysis_text.probability_line("P(NPV < 0)", none)
    if n >= 200:  # the rule of three: about 3 / n
        assert none.upper_bound == pytest.approx(3 / n, rel=0.02)


def test_risk_of_one_draw_warns_and_gives_no_standard_error():
    result = run_cli(["risk", CLAY, "--draws", "1", "--seed", "1", "--no-progress"])
    assert result.code == 0, result.err
    warnings = [x for x in result.err.splitlines() if x.startswith("warning: 1 draw is too few")]
    assert len(warnings) == 1 and "1,000 draws or more" in warnings[0]
    assert "s.e. 0.0%" not in result.out
    assert "P(NPV < 0) = 0.0% (in none of 1 draw: below 95.0% at 95% confidence)" in result.out \
        or "P(NPV < 0) = 100.0% (in all of 1 draw: above 5.0% at 95% confidence)" in result.out
    npv = next(x for x in result.out.splitlines() if x.startswith("NPV (EUR/ha)"))
    assert npv.split()[-1] == "–"  # the mean's standard error


def test_risk_json_of_one_draw_has_no_standard_error():
    result = run_cli(["risk", CLAY, "--draws", "1", "--seed", "1", "--json", "--no-progress"])
    assert result.code == 0, result.err
    data = json.loads(result.out)
    assert data["figures"]["npv"]["standard_error_of_mean"] is None and data["figures"]["npv"]["sd"] is None
    prob = data["prob_npv_negative"]
    assert prob["standard_error"] is None
    assert (prob["upper_bound_95"] or prob["lower_bound_95"]) == pytest.approx(0.95 if prob["probability"] == 0
                                                                              else 0.05)
    assert data["warnings"] and "too few" in data["warnings"][0]


@pytest.mark.parametrize("draws, warned", [(risk.STABLE_DRAWS - 1, True), (risk.STABLE_DRAWS, False)])
def test_the_few_draws_warning_stops_at_its_threshold(draws, warned):
    result = run_cli(["risk", CLAY, "--draws", str(draws), "--seed", "1", "--no-progress"])
    assert result.code == 0, result.err
    assert ("too few for stable percentiles" in result.err) is warned


def test_the_workbook_note_of_a_chance_none_of_the_draws_fall_on_is_its_bound():
    """The workbook's risk sheet says how sure each chance is with the same words as the terminal: where no
    draw of 2,000 falls below the covenant, the exact one-sided 95 % bound 1 - 0.05^(1/2000) (Clopper and
    Pearson 1934; about 3/n, the rule of three), not a standard error of 0."""
    none = risk.Probability(0.0, 0.0, 2000)
    note = analysis_text.probability_note(none, count=True)
    assert note == f"in none of 2,000 draws: below {1 - 0.05 ** (1 / 2000):.1%} at 95% confidence"
    some = risk.Probability(0.25, math.sqrt(0.25 * 0.75 / 1000), 1000)  # binomial s.e. sqrt(p (1 - p) / n)
    assert analysis_text.probability_note(some, count=True) == "s.e. 1.4%, 1,000 draws"
