"""Tests of screening: the evaluator's batches against single cases, and field-table screening.

A batch of rows evaluated together must equal each row evaluated as its own
case to 1e-9; per-field screening results are
checked against the case loader itself (`Case.replace` of each row, then
`tea.results.summarise`), so a field screened in bulk gives what the same
field gives as its own case. External checks: numpy-financial (npv, irr) and
the exact unit definitions of NIST Handbook 44 (acre, short ton).
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import numpy_financial as npf
import pandas as pd
import pytest

from tea import load_case, summarise
from tea.methods import finance
from tea.model.definition import MODEL
from tea.model.evaluate import evaluate
from tea.analysis import screen
from tea.outputs import screen_files
from tea.cli.main import main
from tea.core.errors import CaseError, OutputError

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
DEMO_CASES = ("clay_corner_miscanthus", "sandy_slope_switchgrass", "flood_meadow_willow")
FIELDS = CASES / "fields_demo.csv"
# NIST Handbook 44 (2024), Appendix C: 1 acre = 0.40468564224 ha (exact)
HA_PER_ACRE = 0.40468564224


@pytest.fixture(scope="module")
def cases():
    return {name: load_case(CASES / f"{name}.toml") for name in DEMO_CASES}


#: figures naming the year of a minimum: two years can tie to the last bit
TIED_YEARS = ("min_dscr_year", "peak_funding_year")


def _close(lean, full, what: str) -> None:
    """Equal to 1e-9 relative (1e-9 absolute for values below 1), NaN where the reference is NaN."""
    lean, full = np.asarray(lean, dtype=float), np.asarray(full, dtype=float)
    assert np.array_equal(np.isnan(lean), np.isnan(full)), what
    ok = ~np.isnan(full)
    err = np.abs(lean[ok] - full[ok]) / np.maximum(1.0, np.abs(full[ok]))
    assert err.size == 0 or err.max() <= 1e-9, f"{what}: largest relative difference {err.max():.3g}"


def _variants(case, n: int, seed: int, vary_structure: bool) -> dict:
    """Many variants of a case: continuous inputs always, stand life and discount rate if asked."""
    rng = np.random.default_rng(seed)
    v = dict(case.values)
    price = "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"
    v[price] = case[price] * rng.uniform(0.4, 1.6, n)
    v["yield.mature_t_dm_per_ha"] = case["yield.mature_t_dm_per_ha"] * rng.uniform(0.5, 1.5, n)
    v["yield.site_factor"] = rng.uniform(0.5, 1.2, n)
    v["costs.haul_distance_km"] = rng.uniform(0.0, 90.0, n)
    v["costs.rent_per_ha"] = rng.uniform(0.0, 250.0, n)
    v["field.current_margin_per_ha"] = rng.uniform(-100.0, 400.0, n)
    v["carbon.soc_ref_t_c_per_ha"] = rng.uniform(30.0, 130.0, n)
    v["carbon.credit_price_per_t_co2e"] = rng.uniform(0.0, 60.0, n)
    v["establishment.failure_probability"] = rng.uniform(0.0, 0.4, n)
    v["loan.share_of_establishment"] = np.where(rng.random(n) < 0.3, 0.0, rng.uniform(0.1, 0.9, n))
    if case["loan.rate"] is None:
        v["loan.rate"] = 0.05
    if vary_structure:
        low = max(case["loan.grace_years"] + case["loan.term_years"], case["harvest.first_year"], 2)
        v["finance.stand_life_years"] = rng.integers(low, case.stand_life + 5, n)
        v["finance.discount_rate"] = rng.uniform(0.0, 0.12, n)
    return v


def _row(values: dict, i: int) -> dict:
    """The case values of row i of a batch."""
    return {k: (v[i] if isinstance(v, np.ndarray) and v.ndim == 1 else v) for k, v in values.items()}


ALL_FIGURES = tuple(f.name for f in MODEL.figures)
CASH_LINES = ("net_cash_flow", "incremental_cash_flow", "cumulative_cash_flow", "discounted_cash_flow",
              "cumulative_discounted_cash_flow", "equity_cash_flow")


class TestBatchEqualsSingleCase:
    """A batch evaluated in chunks equals each of its rows evaluated alone, as its own one-row case.

    Screening, risk and sensitivity use the same evaluator as `tea run`, so the
    two agree by construction; what these tests hold is the evaluator's batch
    machinery: chunks, rows of different stand lives padded with zero years,
    per-row and shared inputs broadcast together.
    """

    @pytest.mark.parametrize("name", DEMO_CASES)
    def test_demo_case_itself(self, cases, name):
        case = cases[name]
        got = evaluate(case.values, figures=ALL_FIGURES)
        res = summarise(case)
        for fig in ALL_FIGURES:
            _close(got.figures[fig][0], np.nan if res[fig] is None else res[fig], f"{name}: {fig}")

    @pytest.mark.parametrize("name", DEMO_CASES)
    @pytest.mark.parametrize("vary_structure", [False, True])
    def test_many_variants(self, cases, name, vary_structure):
        case = cases[name]
        n = 60
        values = _variants(case, n, seed=7, vary_structure=vary_structure)
        batch = evaluate(values, figures=ALL_FIGURES, lines=CASH_LINES, chunk_rows=16)
        for i in range(n):
            alone = evaluate(_row(values, i), figures=ALL_FIGURES, lines=CASH_LINES)
            life = int(_row(values, i)["finance.stand_life_years"])
            for fig in ALL_FIGURES:
                if fig in TIED_YEARS:
                    continue
                _close(batch.figures[fig][i], alone.figures[fig][0], f"{name} row {i}: {fig}")
            for line in CASH_LINES:
                _close(batch.lines[line][i, : life + 1], alone.lines[line][0], f"{name} row {i}: {line}")
            # the year of a minimum may differ only where two years tie to rounding: the line must
            # reach its minimum in the year the batch names
            for fig, line in (("min_dscr_year", "dscr_tested"), ("peak_funding_year", "cumulative_cash_flow")):
                year = batch.figures[fig][i]
                _close(np.isnan(year), np.isnan(alone.figures[fig][0]), f"{name}: {fig} defined")
                if not np.isnan(year):
                    flows = evaluate(_row(values, i), lines=(line,)).lines[line][0]
                    _close(flows[int(year)], np.nanmin(flows), f"{name} row {i}: {line} in the {fig}")

    def test_npv_and_irr_against_numpy_financial(self, cases):
        # numpy-financial 1.0 npv/irr on each row's own years 0..life
        case = cases["clay_corner_miscanthus"]
        values = _variants(case, 40, seed=3, vary_structure=True)
        got = evaluate(values, figures=("npv", "irr"), lines=("net_cash_flow",))
        life = values["finance.stand_life_years"]
        rate = values["finance.discount_rate"]  # the demo case's rate is real
        assert case["finance.rate_basis"] == "real"
        for i in range(40):
            flows = got.lines["net_cash_flow"][i, : life[i] + 1]
            assert got.figures["npv"][i] == pytest.approx(npf.npv(rate[i], flows), rel=1e-11, abs=1e-8)
            if not math.isnan(got.figures["irr"][i]):
                assert got.figures["irr"][i] == pytest.approx(npf.irr(flows), abs=1e-9)

    def test_payback_rule_equals_finance_payback(self, cases):
        # the model's payback (declared as formulas of working lines) follows the rule of
        # tea.methods.finance.payback, which its own tests check against a textbook example
        case = cases["clay_corner_miscanthus"]
        values = _variants(case, 300, seed=11, vary_structure=True)
        values["field.current_margin_per_ha"] = 0.0
        got = evaluate(values, figures=("payback_year", "payback_years", "discounted_payback_year",
                                        "discounted_payback_years"),
                       lines=("net_cash_flow", "discounted_cash_flow"))
        life = values["finance.stand_life_years"]
        for i in range(300):
            flows = got.lines["net_cash_flow"][i, : life[i] + 1]
            year, years = finance.payback(flows)
            np.testing.assert_array_equal(got.figures["payback_year"][i], year)
            _close(got.figures["payback_years"][i], years, "payback years")
            dflows = got.lines["discounted_cash_flow"][i, : life[i] + 1]
            year, years = finance.payback(dflows)
            np.testing.assert_array_equal(got.figures["discounted_payback_year"][i], year)
            _close(got.figures["discounted_payback_years"][i], years, "discounted payback years")

    def test_a_batch_always_has_its_rows(self, cases):
        # no model input varies, yet the batch has 5 rows (a field table of areas only)
        got = evaluate(cases["clay_corner_miscanthus"].values, figures=("npv",), lines=("net_cash_flow",), rows=5)
        assert got.figures["npv"].shape == (5,) and np.all(got.figures["npv"] == got.figures["npv"][0])
        assert got.lines["net_cash_flow"].shape[0] == 5

    def test_unknown_figure_is_refused(self, cases):
        with pytest.raises(KeyError, match="no figure named 'nvp'"):
            evaluate(cases["clay_corner_miscanthus"].values, figures=("nvp",))


# ----------------------------------------------------------------------------- field tables
def _read_demo_rows():
    with FIELDS.open(newline="") as f:
        lines = [line for line in f if not line.startswith("#")]
    return list(csv.DictReader(lines))


COLUMN_KEYS = {
    "area_ha": "field.area_ha", "site_factor": "yield.site_factor", "haul_distance_km": "costs.haul_distance_km",
    "climate": "field.climate", "soil": "field.soil", "current_use": "field.current_use",
    "current_margin_per_ha": "field.current_margin_per_ha", "rent_per_ha": "costs.rent_per_ha",
    "soc_ref_t_c_per_ha": "carbon.soc_ref_t_c_per_ha", "field.name": "field.name",
}


@pytest.fixture(scope="module")
def demo_screen(cases):
    return screen.screen(FIELDS, cases["clay_corner_miscanthus"], progress=False)


class TestDemoFieldTable:
    def test_every_demo_row_is_evaluated(self, demo_screen):
        rows = _read_demo_rows()
        assert 200 <= len(rows) <= 1000  # "a few hundred" fields
        assert demo_screen.rows_read == len(rows)
        assert demo_screen.rows_skipped == 0 and not demo_screen.bad
        assert len(demo_screen.table) == len(rows)

    def test_demo_table_is_labelled_demo_data(self):
        assert FIELDS.read_text().startswith("# DEMO DATA")

    def test_ranked_by_eav_vs_current_use(self, demo_screen):
        col = demo_screen.table["eav_vs_current_use_per_ha"].to_numpy()
        assert np.all(np.diff(col) <= 0)
        assert demo_screen.table["rank"].tolist() == list(range(1, len(col) + 1))

    def test_fields_equal_their_own_case(self, cases, demo_screen):
        """Rows screened in bulk equal each field loaded as its own case (Case.replace + summarise)."""
        base = cases["clay_corner_miscanthus"]
        table = demo_screen.table.set_index("field_id")
        rows = _read_demo_rows()
        # every row whose climate, soil or use differs from the base, plus rows giving their own SOC stock
        picked = [r for r in rows if r["soil"] != base["field.soil"] or r["soc_ref_t_c_per_ha"]][:12]
        picked += [r for r in rows if r["current_use"] != base["field.current_use"]][:8] + rows[:5]
        assert {r["climate"] for r in picked} > {base["field.climate"]}
        for r in picked:
            changes = {}
            for col, path in COLUMN_KEYS.items():
                if r[col] == "":
                    continue
                changes[path] = r[col] if path.startswith(("field.climate", "field.soil", "field.current_use",
                                                           "field.name")) else float(r[col])
            own = summarise(base.replace(**changes))
            got = table.loc[r["field_id"]]
            for fig in ("npv", "npv_vs_current_use", "eav_vs_current_use", "irr", "soc_gain_t_c", "ghg_net_t_co2e",
                        "discounted_payback_year", "breakeven_price", "min_dscr"):
                col = {"breakeven_price": "breakeven_price_per_t_dm"}.get(fig, fig)
                col = col if col in table.columns else f"{fig}_per_ha"
                ref = own[fig]
                if ref is None:
                    assert math.isnan(got[col]), (r["field_id"], fig)
                else:
                    assert got[col] == pytest.approx(ref, rel=1e-9, abs=1e-9), (r["field_id"], fig)
            assert got["npv_field"] == pytest.approx(own.whole_field["npv"], rel=1e-9)

    def test_chunks_do_not_change_results(self, cases, demo_screen):
        small = screen.screen(FIELDS, cases["clay_corner_miscanthus"], chunk_rows=7, progress=False)
        pd.testing.assert_frame_equal(small.table, demo_screen.table)

    def test_us_customary_base_case_reports_per_acre(self, cases, tmp_path):
        base = cases["sandy_slope_switchgrass"]
        path = tmp_path / "f.csv"
        path.write_text("field_id,area_acre,haul_distance_mile\nA,10,5\nB,20,30\n")
        res = screen.screen(path, base, progress=False)
        row = res.table.set_index("field_id").loc["A"]
        own = summarise(base.replace(**{"field.area_ha": 10 * HA_PER_ACRE,
                                                "costs.haul_distance_km": 5 * 1.609344}))
        # per-acre money = per-ha money x ha per acre (NIST HB44 exact definition)
        assert row["npv_per_acre"] == pytest.approx(own["npv"] * HA_PER_ACRE, rel=1e-9)
        assert row["npv_field"] == pytest.approx(own.whole_field["npv"], rel=1e-9)
        # carbon in short tons per acre too, as its column says (1 short ton = 0.90718474 t, NIST HB44)
        assert row["soc_gain_short_ton_co2e_per_acre"] == pytest.approx(
            own["soc_gain_t_co2e"] * HA_PER_ACRE / 0.90718474, rel=1e-9)
        assert not any("_t_c" in c or "_t_dm" in c for c in res.table.columns)

    @pytest.mark.parametrize("model_name, file_name", [
        ("npv", "npv_per_acre"), ("soc_gain_t_co2e_field", "soc_gain_short_ton_co2e_field"),
        ("sold_t_dm", "sold_short_ton_dm_per_acre")])
    def test_a_us_screen_ranks_by_the_column_the_ranked_file_names(self, cases, tmp_path, model_name, file_name):
        """``--rank-by`` takes the name of a column as the ranked file writes it (per acre, short tons) as well
        as the figure's own name: the same ranking, by the column the file has, and said by that name."""
        base = cases["sandy_slope_switchgrass"]
        path = tmp_path / "f.csv"
        path.write_text("field_id,area_acre,haul_distance_mile,site_factor\nA,10,5,0.7\nB,20,30,1.0\nC,5,60,0.85\n")
        by_model = screen.screen(path, base, rank_by=model_name, progress=False)
        by_file = screen.screen(path, base, rank_by=file_name, progress=False)
        pd.testing.assert_frame_equal(by_model.table, by_file.table)
        assert by_file.rank_by == by_model.rank_by == file_name
        column = by_file.table[file_name].to_numpy()
        assert list(column) == sorted(column, reverse=True)  # ranked by that very column, largest first
        with pytest.raises(CaseError, match="npv_per_acre"):  # the error lists the file's names
            screen.screen(path, base, rank_by="npv_per_ha", progress=False)
        # the terminal names the figure in words (the model's own label) and the file's column that holds it
        words = {"npv": "NPV", "soc_gain_t_co2e_field": "SOC gain as CO2, whole field",
                 "sold_t_dm": "Dry matter sold (life)"}[model_name]
        assert f"Top 3 by {words} (column {file_name}):" in screen_files.summary_text(by_file)


BAD_TABLE = """\
# comment lines and blank lines are skipped

field_id,area_ha,costs.haul_distance_km,site_factor,climate,haul_km,finance.stand_life_years,soil
ok1,3,20,0.9,cool_temperate_moist,,,
bad_number,x,20,0.9,cool_temperate_moist,,,
bad_range,3,-5,0.9,cool_temperate_moist,,,
bad_enum,3,20,0.9,cool_temperate_mist,,,
bad_column,3,20,0.9,cool_temperate_moist,12,,
bad_life,3,20,0.9,cool_temperate_moist,,5,
bad_site,3,20,0.9,warm_temperate_dry,,,spodic
bad_extra,3,20,0.9,,,,,extra
bad_nan,3,20,nan,,,,
bad_whole,3,20,0.9,,,12.5,
ok2,1e1,,,,,,
"""


class TestBadRows:
    @pytest.fixture(scope="class")
    @classmethod
    def result(cls, tmp_path_factory):
        path = tmp_path_factory.mktemp("bad") / "fields.csv"
        path.write_text(BAD_TABLE)
        return screen.screen(path, load_case(CASES / "clay_corner_miscanthus.toml"), progress=False)

    def test_good_rows_evaluated_bad_rows_skipped(self, result):
        assert result.rows_read == 11
        assert result.rows_skipped == 9
        assert sorted(result.table["field_id"]) == ["ok1", "ok2"]

    @pytest.mark.parametrize("line, column, reason", [
        (5, "area_ha", "expected a number, got 'x'"),
        (6, "costs.haul_distance_km", "must be >= 0, got -5"),
        (7, "climate", "did you mean 'cool_temperate_moist'"),
        (8, "haul_km", "unknown column"),
        (9, "loan.term_years", "run past the stand life (5 years)"),
        (10, "carbon.soc_ref_t_c_per_ha", "no reference SOC stock for warm_temperate_dry on spodic"),
        (11, "", "in no known column"),
        (12, "site_factor", "expected a finite number"),
        (13, "finance.stand_life_years", "expected a whole number"),
    ])
    def test_each_bad_row_has_its_line_and_reason(self, result, line, column, reason):
        hits = [b for b in result.bad if b.line == line]
        assert hits, f"line {line} not reported"
        assert any(b.column == column and reason in b.reason for b in hits), hits
        assert all(b.row == line - 3 for b in hits)  # header on line 3, first data row on line 4

    def test_unknown_column_is_warned(self, result):
        assert any("haul_km" in w for w in result.warnings)

    def test_error_file(self, result, tmp_path):
        out = screen_files.write_errors(result, tmp_path / "err.csv")
        rows = list(csv.DictReader(out.open()))
        assert {int(r["line"]) for r in rows} == {5, 6, 7, 8, 9, 10, 11, 12, 13}
        assert set(rows[0]) == {"line", "row", "column", "value", "reason"}

    def test_duplicate_key_columns_are_a_file_error(self, tmp_path):
        path = tmp_path / "dup.csv"
        path.write_text("area_ha,field.area_acre\n1,2\n")
        with pytest.raises(CaseError, match="same key"):
            screen.screen(path, load_case(CASES / "clay_corner_miscanthus.toml"), progress=False)


class TestOutputs:
    def test_csv_carries_cautions_and_reads_back(self, demo_screen, tmp_path):
        out = screen_files.write_table(demo_screen, tmp_path / "ranked.csv")
        text = out.read_text()
        assert "# Planning estimates only" in text and "hash" in text.splitlines()[0]
        back = pd.read_csv(out, comment="#")
        assert len(back) == len(demo_screen.table)
        np.testing.assert_allclose(back["npv_per_ha"], demo_screen.table["npv_per_ha"], rtol=1e-9)

    def test_xlsx_has_a_notes_sheet(self, demo_screen, tmp_path):
        import openpyxl

        out = screen_files.write_table(demo_screen, tmp_path / "ranked.xlsx")
        wb = openpyxl.load_workbook(out, read_only=True)
        assert wb.sheetnames == ["ranked fields", "notes"]

    def test_parquet_needs_pyarrow(self, demo_screen, tmp_path):
        if screen_files.parquet_available():
            out = screen_files.write_table(demo_screen, tmp_path / "ranked.parquet")
            assert len(pd.read_parquet(out)) == len(demo_screen.table)
        else:
            with pytest.raises(OutputError, match="pyarrow"):
                screen_files.write_table(demo_screen, tmp_path / "ranked.parquet")

    def test_refuses_to_overwrite(self, demo_screen, tmp_path):
        out = screen_files.write_table(demo_screen, tmp_path / "ranked.csv")
        with pytest.raises(OutputError, match="exists"):
            screen_files.write_table(demo_screen, out)


class TestCommand:
    def test_screen_demo_table(self, tmp_path, capsys):
        out = tmp_path / "ranked.csv"
        code = main(["screen", str(FIELDS), "--case", str(CASES / "clay_corner_miscanthus.toml"), "--out", str(out),
                     "--no-progress"])
        captured = capsys.readouterr()
        assert code == 0
        assert "300 fields evaluated; 0 rows skipped" in captured.out
        assert out.exists() and not (tmp_path / "ranked.errors.csv").exists()

    def test_bad_rows_go_to_the_error_file(self, tmp_path, capsys):
        fields = tmp_path / "f.csv"
        fields.write_text(BAD_TABLE)
        code = main(["screen", str(fields), "--case", str(CASES / "clay_corner_miscanthus.toml"),
                     "--out", str(tmp_path / "r.csv"), "--no-progress"])
        err = capsys.readouterr().err
        assert code == 0
        assert "skipped 9 of 11 rows" in err
        assert (tmp_path / "r.errors.csv").exists()

    def test_cells_a_case_file_would_refuse_are_refused_in_a_screen(self, tmp_path, capsys):
        """The case file's own limits (schema: size at most 1e12, July temperature at most 50 degC) hold for
        a row of a field table too: such a row is listed, not ranked."""
        fields = tmp_path / "f.csv"
        fields.write_text("field_id;area_ha;haul_distance_km;current_margin_per_ha;temperature_c_7\n"
                          "A1;3;1e308;100;\nA2;3;20;1e300;\nA3;3;20;100;77\nA4;3;20;100;16\n", encoding="utf-8")
        out = tmp_path / "r.csv"
        code = main(["screen", str(fields), "--case", str(CASES / "clay_corner_miscanthus.toml"), "--out", str(out),
                     "--no-progress"])
        capsys.readouterr()
        assert code == 0
        problems = list(csv.DictReader((tmp_path / "r.errors.csv").open(encoding="utf-8")))
        assert [(p["row"], p["column"]) for p in problems] == [("1", "haul_distance_km"),
                                                               ("2", "current_margin_per_ha"), ("3", "temperature_c_7")]
        assert "at most 1e+12" in problems[0]["reason"] and "<= 50" in problems[2]["reason"]
        ranked = [r for r in csv.DictReader(line for line in out.read_text(encoding="utf-8").splitlines()
                                            if not line.startswith("#"))]
        assert [r["field_id"] for r in ranked] == ["A4"]

    def test_a_table_whose_every_row_is_bad_is_an_error_with_no_ranked_file(self, tmp_path, capsys):
        fields = tmp_path / "f.csv"
        fields.write_text("field_id|area_ha\nP1|3\n", encoding="utf-8")  # no separator tea reads
        out = tmp_path / "r.csv"
        code = main(["screen", str(fields), "--case", str(CASES / "clay_corner_miscanthus.toml"), "--out", str(out),
                     "--no-progress"])
        err = capsys.readouterr().err
        assert code == 2 and "no field could be evaluated" in err and "Traceback" not in err
        assert not out.exists() and (tmp_path / "r.errors.csv").exists()

    def test_numeric_columns_of_an_xlsx_ranking_are_numbers(self, tmp_path, capsys):
        """openpyxl reads the cells back: numbers a spreadsheet can sum, text where the column is text."""
        import openpyxl

        out = tmp_path / "r.xlsx"
        code = main(["screen", str(FIELDS), "--case", str(CASES / "clay_corner_miscanthus.toml"), "--out", str(out),
                     "--no-progress"])
        capsys.readouterr()
        assert code == 0
        sheet = openpyxl.load_workbook(out, read_only=True)["ranked fields"]
        rows = sheet.iter_rows(values_only=True)
        head = list(next(rows))
        first = dict(zip(head, next(rows)))
        assert isinstance(first["area_ha"], (int, float)) and isinstance(first["site_factor"], (int, float))
        assert isinstance(first["field_id"], str) and isinstance(first["climate"], str)

    @pytest.mark.parametrize("extra, message", [
        (["--rank-by", "npvv"], "unknown figure 'npvv'"),
        (["--out", "x.txt"], "unknown output type"),
    ])
    def test_bad_options_exit_2(self, tmp_path, capsys, extra, message):
        code = main(["screen", str(FIELDS), "--case", str(CASES / "clay_corner_miscanthus.toml"),
                     "--out", str(tmp_path / "r.csv"), *extra])
        err = capsys.readouterr().err
        assert code == 2
        assert message in err and "Traceback" not in err

    def test_missing_files_exit_2(self, tmp_path, capsys):
        code = main(["screen", str(tmp_path / "none.csv"), "--case", str(CASES / "clay_corner_miscanthus.toml"),
                     "--out", str(tmp_path / "r.csv")])
        assert code == 2
        assert "none.csv: file not found" in capsys.readouterr().err
        code = main(["screen", str(FIELDS), "--case", str(tmp_path / "none.toml"), "--out", str(tmp_path / "r.csv")])
        assert code == 2


def test_a_us_screens_terminal_view_stays_within_the_terminal_width(cases, tmp_path):
    """The README promises terminal lines of at most 100 characters: a US screen's view (per-acre and
    short-ton headings, each on two lines) and a title with a long path and case name keep to it, and the
    table's columns still line up under their headings."""
    from tea.core.texts import WIDTH

    base = cases["sandy_slope_switchgrass"]
    folder = tmp_path / ("a-rather-long-folder-name-for-the-fields-of-this-farm" * 2)
    folder.mkdir()
    path = folder / "fields.csv"
    path.write_text("field_id,area_acre,haul_distance_mile,site_factor\nNorth-forty-by-the-creek,10,5,0.7\n"
                    "B,20,30,1.0\n")
    text = screen_files.summary_text(screen.screen(path, base, progress=False))
    assert max(len(line) for line in text.splitlines()) <= WIDTH, text
    lines = text.splitlines()
    heads = next(i for i, line in enumerate(lines) if line.lstrip().startswith("rank"))
    assert "short ton CO2e/acre" in lines[heads] and "SOC gain" in lines[heads - 1]
    assert len(lines[heads]) == len(lines[heads + 1])  # right-aligned: the first row ends where the headings do
    assert "[DEMO DATA]" in text
    assert "North-forty-by-\u2026" in text  # a long id cut short in the terminal (the ranked file has it whole)


@pytest.mark.parametrize("made, status, said", [
    # README (exit statuses): 2 for a path that names no file, 1 for a file the machine would not read
    ("folder", 2, "cannot read the file: it is a folder; expected a field table (.csv)"),
    ("missing", 2, "file not found"),
])
def test_a_field_table_that_cannot_be_read_is_said_as_any_input_is(tmp_path, capsys, made, status, said):
    from tea.cli.main import main

    path = tmp_path / ("fields" if made == "folder" else "none.csv")
    if made == "folder":
        path.mkdir()
    assert main(["screen", str(path), "--case", str(CASES / "clay_corner_miscanthus.toml")]) == status
    assert capsys.readouterr().err.strip() == f"error: {path}: {said}"
