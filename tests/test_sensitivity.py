"""Tests of `tea.sensitivity` and the [sensitivity] section of `tea.riskspec`.

Check values come from closed forms, each named beside its check:
* NPV is linear in an input that only scales one group of flows (price,
  haul distance, establishment cost, current-use margin), so the slope of a
  sensitivity run equals the present value of the flows it scales
  (definition of NPV: L. J. Gitman, *Principles of Managerial Finance*, 2003,
  p. 346; common practice);
* NPV at another discount rate and the equivalent annual value, from
  numpy-financial (``npf.npv``, ``npf.pmt``) on the case's own cash flows;
* the present value of 1 a year (annuity factor, textbook: Brealey, Myers and
  Allen, *Principles of Corporate Finance*, ch. 2);
* unit conversions by the exact definitions of NIST Handbook 44, Appendix C.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import numpy_financial as npf
import pytest

from tea import build_ledger, load_case, load_text, summarise
from tea.inputs import riskspec
from tea.analysis import sensitivity
from tea.cli.main import main
from tea.outputs import analysis_charts, analysis_text
from tea.core.errors import CaseError

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
CLAY = CASES / "clay_corner_miscanthus.toml"
WILLOW = CASES / "flood_meadow_willow.toml"
# NIST Handbook 44 (2024), Appendix C, exact: 1 acre = 0.40468564224 ha, 1 short ton = 0.90718474 t
HA_PER_ACRE = 0.40468564224
T_PER_SHORT_TON = 0.90718474


@pytest.fixture(scope="module")
def clay():
    return load_case(CLAY)


@pytest.fixture(scope="module")
def clay_run(clay):
    return sensitivity.run(clay)


def _row(res, path):
    i = [m.path for m in res.moved].index(path)
    return res.moved[i], {k: v[i] for k, v in res.low.items()}, {k: v[i] for k, v in res.high.items()}


def _pv(line, rate):
    """Present value of a ledger line at the case's rate (year 0 undiscounted)."""
    return float(np.sum(line.to_numpy() * (1.0 + rate) ** -np.arange(len(line))))


class TestLinearInputs:
    def test_price_slope_is_pv_of_dry_matter_sold(self, clay, clay_run):
        # dNPV/dprice = sum_t sold_t x price_index_t x (1+r)^-t (NPV linear in price)
        frame = build_ledger(clay)
        rate = clay.real_discount_rate
        analytic = _pv(frame["sold_t_dm"] * frame["price_index"], rate)
        m, low, high = _row(clay_run, "revenue.price_per_t_dm")
        slope = (high["npv"] - low["npv"]) / (m.high - m.low)
        assert slope == pytest.approx(analytic, rel=1e-9)
        assert low["npv"] == pytest.approx(clay_run.base["npv"] + analytic * (m.low - m.base), rel=1e-9)

    def test_price_per_gj_slope_is_pv_of_energy_sold(self):
        case = load_case(WILLOW)
        res = sensitivity.run(case, with_surface=False)
        frame = build_ledger(case)
        analytic = _pv(frame["sold_gj"] * frame["price_index"], case.real_discount_rate)
        m, low, high = _row(res, "revenue.price_per_gj")
        assert (high["npv"] - low["npv"]) / (m.high - m.low) == pytest.approx(analytic, rel=1e-9)

    def test_haul_distance_slope(self, clay, clay_run):
        # dNPV/dkm = -sum_t fresh t sold x haul rate x (1+r)^-t
        frame = build_ledger(clay)
        analytic = -_pv(frame["sold_fresh_t"], clay.real_discount_rate) * clay["costs.haul_per_t_km"]
        m, low, high = _row(clay_run, "costs.haul_distance_km")
        assert (high["npv"] - low["npv"]) / (m.high - m.low) == pytest.approx(analytic, rel=1e-9)

    def test_establishment_cost_multiplier_slope(self, clay, clay_run):
        # dNPV/dmultiplier = -(PV of every establishment cost line): year 0 and the replanting in year 1
        frame = build_ledger(clay)
        analytic = -_pv(frame["establishment_cost"], clay.real_discount_rate)
        m, low, high = _row(clay_run, riskspec.COST_MULTIPLIER)
        assert m.base == 1.0
        assert (high["npv"] - low["npv"]) / (m.high - m.low) == pytest.approx(analytic, rel=1e-9)

    def test_current_margin_moves_only_the_comparison(self, clay, clay_run):
        # NPV vs current use falls by the margin x annuity factor (1 - (1+r)^-L) / r; the stand's NPV does not move
        r, life = clay.real_discount_rate, clay.stand_life
        annuity = (1.0 - (1.0 + r) ** -life) / r
        m, low, high = _row(clay_run, "field.current_margin_per_ha")
        assert high["npv"] == low["npv"] == pytest.approx(clay_run.base["npv"], rel=1e-12)
        slope = (high["npv_vs_current_use"] - low["npv_vs_current_use"]) / (m.high - m.low)
        assert slope == pytest.approx(-annuity, rel=1e-9)


class TestOtherInputs:
    def test_discount_rate_against_numpy_financial(self, clay, clay_run):
        # the rate does not change the flows: NPV = npf.npv(rate, flows), EAV = -npf.pmt(rate, L, NPV)
        flows = build_ledger(clay)["net_cash_flow"].to_numpy()
        m, low, high = _row(clay_run, "finance.discount_rate")
        for rate, figs in ((m.low, low), (m.high, high)):
            assert figs["npv"] == pytest.approx(npf.npv(rate, flows), rel=1e-10)
            assert figs["eav"] == pytest.approx(-npf.pmt(rate, clay.stand_life, figs["npv"]), rel=1e-10)

    def test_stand_life_variants_equal_separate_cases(self, clay, clay_run):
        # one vectorised run with several stand lives = each life loaded as its own case
        m, low, high = _row(clay_run, "finance.stand_life_years")
        for life, figs in ((m.low, low), (m.high, high)):
            own = summarise(clay.replace(**{"finance.stand_life_years": int(life)}))
            assert figs["npv"] == pytest.approx(own["npv"], rel=1e-10)
            assert figs["eav"] == pytest.approx(own["eav"], rel=1e-10)

    def test_establishment_success_sets_the_failure_probability(self, clay, clay_run):
        m, low, high = _row(clay_run, riskspec.SUCCESS)
        assert m.base == pytest.approx(1.0 - clay["establishment.failure_probability"])
        own = summarise(clay.replace(**{"establishment.failure_probability": 1.0 - m.low}))
        assert low["npv"] == pytest.approx(own["npv"], rel=1e-10)


class TestRanges:
    def test_declared_ranges_are_used(self, clay, clay_run):
        declared = clay["sensitivity"]["ranges"]
        for path, rng in declared.items():
            m, _, _ = _row(clay_run, path)
            assert (m.low, m.high, m.declared) == (rng["low"], rng["high"], True)

    def test_default_share_moves_undeclared_inputs(self, clay, clay_run):
        m, _, _ = _row(clay_run, "costs.haul_distance_km")
        base = clay["costs.haul_distance_km"]
        assert (m.low, m.high, m.declared) == (pytest.approx(0.8 * base), pytest.approx(1.2 * base), False)

    def test_the_nine_key_inputs_are_moved(self, clay, clay_run):
        paths = {m.path for m in clay_run.moved}
        # the demo's mature yield is estimated from its site climate: the light-use range moves it, once
        assert clay.origin["yield.mature_t_dm_per_ha"] == "estimated"
        assert paths >= {sensitivity.LIGHT_USE, "revenue.price_per_t_dm", riskspec.COST_MULTIPLIER,
                         riskspec.SUCCESS, "finance.discount_rate", "costs.haul_distance_km",
                         "finance.stand_life_years", "carbon.credit_price_per_t_co2e", "field.current_margin_per_ha"}
        assert "yield.mature_t_dm_per_ha" not in paths

    def test_an_estimated_yield_with_a_declared_range_is_moved_once(self, clay):
        """A range declared for the mature yield itself stands; the light-use range is not added beside it (two
        bars for one input)."""
        text = Path(clay.source).read_text(encoding="utf-8").replace(
            "[sensitivity.ranges]", '[sensitivity.ranges]\n"yield.mature_t_dm_per_ha" = { low = 15.0, high = 24.0 }', 1)
        own = load_text(text, source="declared.toml")
        paths = [m.path for m in sensitivity.moved_inputs(own)]
        assert paths.count("yield.mature_t_dm_per_ha") == 1 and sensitivity.LIGHT_USE not in paths

    def test_ranked_by_swing(self, clay_run):
        swings = clay_run.swing("npv")[clay_run.order("npv")]
        assert np.all(np.diff(swings) <= 0)

    def test_default_stand_life_respects_the_loan_term(self):
        text = CLAY.read_text().split("# --- What moves")[0].replace("term_years = 8", "term_years = 16")
        case = load_text(text, source="long_loan.toml")
        life = next(m for m in sensitivity.moved_inputs(case) if m.path == "finance.stand_life_years")
        assert life.low == 19  # grace 3 + term 16, not 0.8 x 20 = 16
        assert "shortest life" in life.note

    def test_declared_range_the_case_rules_reject(self):
        text = CLAY.read_text().replace('"finance.stand_life_years" = { low = 15, high = 25 }',
                                        '"finance.stand_life_years" = { low = 6, high = 25 }')
        case = load_text(text, source="short.toml")
        with pytest.raises(CaseError) as err:
            sensitivity.run(case)
        assert any(p.key == "sensitivity.ranges.finance.stand_life_years.low" and "past the stand life" in p.message
                   for p in err.value.problems)


class TestSurface:
    def test_contour_points_have_zero_npv(self, clay, clay_run):
        s = clay_run.surface
        assert s.npv.shape == (len(s.y_values), len(s.x_values)) == (10, 10)
        assert s.contour
        for x, y in s.contour[:4]:
            own = summarise(clay.replace(**{s.x: x, s.y: y}))
            assert abs(own["npv"]) < 1e-6 * np.abs(s.npv).max()

    def test_contour_at_base_yield_is_the_breakeven_price(self, clay, clay_run):
        # the grid 8, 10, ..., 26 t DM/ha holds the base yield; along it NPV = 0 at the break-even price
        # (the demo's yield is estimated from its site climate, off the grid: the case at 18 t DM/ha is)
        clay = clay.replace(**{"yield.mature_t_dm_per_ha": 18.0})
        s = sensitivity.surface(clay)
        j = int(np.flatnonzero(np.isclose(s.y_values, clay["yield.mature_t_dm_per_ha"]))[0])
        row = s.npv[j]
        k = int(np.flatnonzero(np.sign(row[:-1]) != np.sign(row[1:]))[0])
        x0 = s.x_values[k] - row[k] * (s.x_values[k + 1] - s.x_values[k]) / (row[k + 1] - row[k])
        assert x0 == pytest.approx(summarise(clay)["breakeven_price"], rel=1e-9)

    def test_grid_cells_equal_separate_cases(self, clay, clay_run):
        s = clay_run.surface
        own = summarise(clay.replace(**{s.x: float(s.x_values[3]), s.y: float(s.y_values[7])}))
        assert s.npv[7, 3] == pytest.approx(own["npv"], rel=1e-10)


class TestViews:
    def test_table_columns_and_attrs(self, clay_run):
        table = sensitivity.sensitivity_table(clay_run)
        assert list(table["rank"]) == list(range(1, len(table) + 1))
        for col in ("input", "label", "unit", "base", "low", "high", "npv_low", "npv_high", "npv_swing",
                    "eav_low", "eav_high", "eav_swing"):
            assert col in table.columns
        assert table.attrs["base_npv"] == clay_run.base["npv"]
        assert table["npv_swing"].is_monotonic_decreasing

    def test_table_from_a_case(self, clay):
        table = sensitivity.sensitivity_table(clay)
        # the nine key inputs (the mature yield, estimated from climate, moved by its light-use range), and the
        # demo's declared SOC factor
        assert len(table) == 9 + 1

    def test_tornado_chart(self, clay_run, tmp_path):
        fig = analysis_charts.tornado_chart(clay_run, tmp_path / "t.png")
        assert len(fig.axes[0].patches) == 2 * len(clay_run.moved)
        assert (tmp_path / "t.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    def test_surface_chart(self, clay_run, tmp_path):
        analysis_charts.surface_chart(clay_run, tmp_path / "s.png")
        assert (tmp_path / "s.png").stat().st_size > 1000

    def test_json_is_strict(self, clay_run):
        data = json.loads(json.dumps(sensitivity.to_dict(clay_run), allow_nan=False))
        assert data["case_hash"] == clay_run.case.hash
        assert data["cautions"] and len(data["inputs"]) == 9 + 1  # as test_table_from_a_case
        assert data["surface"]["npv_zero_contour"]

    def test_summary_text(self, clay_run):
        text = analysis_text.sensitivity_text(clay_run)
        assert "Biomass price" in text and "Break-even surface" in text and "Planning estimates" in text

    @pytest.mark.parametrize("figure, name, unit", [
        ("npv", "NPV", "EUR/ha"), ("eav", "EAV", "EUR/ha/yr"),
        ("npv_vs_current_use", "NPV vs current use", "EUR/ha"),
        ("eav_vs_current_use", "EAV vs current use", "EUR/ha/yr")])
    def test_the_table_is_headed_by_the_figure_it_gives(self, clay_run, figure, name, unit):
        # the equivalent annual value is a yearly amount (Brealey, Myers and Allen, ch. 6): its table says
        # "EAV ... /yr", and its numbers are the run's EAV, never headed as NPV
        text = " ".join(analysis_text.sensitivity_text(clay_run, figure).split())
        assert f"ranked by the swing of {name} ({unit})" in text
        assert f"Tornado ({name}, {unit};" in text
        short = name.replace(" vs current use", " vs now")
        table = analysis_text.sensitivity_text(clay_run, figure).splitlines()
        over = next(i for i, line in enumerate(table) if line.split()[:1] == ["#"])
        assert table[over - 1].strip() == short and table[over].split()[-4:] == ["low", "high", "swing", "range"]
        assert len(table[over - 1]) == table[over].index("  swing")  # the name ends over the "high" column
        assert max(len(line) for line in table) <= 100  # README: terminal lines within 100 characters
        top = clay_run.order(figure)[0]
        low, high = (round(float(v[figure][top])) for v in (clay_run.low, clay_run.high))
        row = next(line for line in analysis_text.sensitivity_text(clay_run, figure).splitlines()
                   if line.split()[:1] == ["1"])
        assert f"{low:,}".replace("-", "\u2212") in row or f"{low:,}" in row, row
        assert f"{high:,}".replace("-", "\u2212") in row or f"{high:,}" in row, row
        if figure.startswith("eav"):
            assert "NPV" not in text.split("Base NPV")[1].split("Biomass price")[0].replace("NPV vs current use", "")


class TestSection:
    def test_normalised_section_parses_to_itself(self, clay):
        spec = clay["sensitivity"]
        again, problems = riskspec.parse("sensitivity", spec, "x")
        assert problems == [] and again == spec
        assert clay.replace(**{"revenue.price_per_t_dm": 90.0})["sensitivity"] == spec

    def test_units_are_converted(self):
        table = {"ranges": {"yield": {"mature_short_ton_dm_per_acre": {"low": 4.0, "high": 6.0}}}}
        spec, problems = riskspec.parse("sensitivity", table, "x")
        assert problems == []
        # short ton per acre -> t per ha: x 0.90718474 / 0.40468564224 (NIST HB44)
        assert spec["ranges"]["yield.mature_t_dm_per_ha"]["low"] == pytest.approx(4.0 * T_PER_SHORT_TON / HA_PER_ACRE)

    @pytest.mark.parametrize("table, key, words", [
        ({"default_share": 1.5}, "sensitivity.default_share", "between 0 and 1"),
        ({"inputs": ["yield.matur_t_dm_per_ha"]}, "sensitivity.inputs[0]", "did you mean 'mature_t_dm_per_ha'"),
        ({"inputs": ["case.name"]}, "sensitivity.inputs[0]", "cannot be varied"),
        ({"ranges": {"yield.mature_t_dm_per_ha": {"low": 20, "high": 10}}},
         "sensitivity.ranges.yield.mature_t_dm_per_ha.high", "must be above low"),
        ({"ranges": {"yield.mature_t_dm_per_ha": {"low": -1, "high": 10}}},
         "sensitivity.ranges.yield.mature_t_dm_per_ha.low", "must be > 0"),
        ({"ranges": {"finance.stand_life_years": {"low": 10.5, "high": 20}}},
         "sensitivity.ranges.finance.stand_life_years.low", "whole number"),
        ({"ranges": {"costs.haul_distance_km": {"low": 1, "hi": 10}}}, "sensitivity.ranges.costs.haul_distance_km.hi",
         "unknown key"),
        ({"surface": {"x": "revenue.price_per_t_dm", "y": "revenue.price_per_t_dm"}}, "sensitivity.surface.y",
         "must differ"),
        ({"surface": {"points": 2}}, "sensitivity.surface.points", "from 3 to"),
        ({"spread": 1}, "sensitivity.spread", "unknown key"),
    ])
    def test_problems_name_their_key(self, table, key, words):
        _, problems = riskspec.parse("sensitivity", table, "case.toml")
        assert any(p.key == key and words in p.message for p in problems), problems

    def test_bad_section_fails_the_case_load(self):
        text = CLAY.read_text().replace("default_share = 0.2", "default_share = 2.0")
        with pytest.raises(CaseError, match="sensitivity.default_share"):
            load_text(text, source="bad.toml")


class TestCommand:
    def test_terminal_and_chart(self, tmp_path, capsys):
        code = main(["sensitivity", str(CLAY), "--plot", str(tmp_path / "t.png"), "--surface-plot",
                     str(tmp_path / "s.png")])
        out = capsys.readouterr().out
        assert code == 0 and "Tornado" in out
        assert (tmp_path / "t.png").exists() and (tmp_path / "s.png").exists()

    def test_json(self, capsys):
        assert main(["sensitivity", str(CLAY), "--json", "--no-surface"]) == 0
        data = json.loads(capsys.readouterr().out)
        assert "surface" not in data and data["inputs"][0]["rank"] == 1

    def test_bad_input_exits_2_with_one_line_per_problem(self, tmp_path, capsys):
        bad = tmp_path / "bad.toml"
        bad.write_text(CLAY.read_text().replace("default_share = 0.2", "default_share = 2.0"))
        code = main(["sensitivity", str(bad)])
        err = capsys.readouterr().err
        assert code == 2
        assert err.strip().splitlines() == [f"error: {bad}: sensitivity.default_share: expected a share between 0 and 1 "
                                            "(0.2 means +/- 20 %), got 2.0"]

    def test_bad_chart_type_exits_2(self, tmp_path, capsys):
        assert main(["sensitivity", str(CLAY), "--plot", str(tmp_path / "t.txt")]) == 2
        assert "unknown output type .txt; expected .png, .svg or .pdf" in capsys.readouterr().err
