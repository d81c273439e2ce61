"""Operations by year: a case with operations in given years reproduces a hand-built cash flow (numpy-financial)
and their diesel and N reach the greenhouse-gas lines."""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest
from numpy.testing import assert_allclose

import tea
from tea.core.errors import CaseError
from tea.inputs import operations
from tea.inputs.case import load_case, load_text

from conftest import CASES_DIR

WILLOW = CASES_DIR / "flood_meadow_willow.toml"

OPS = """
[[operations]]
name = "cut-back"
year = 1
cost_per_ha = 55.0
diesel_l_per_ha = 12.0

[[operations]]
name = "weed control"
years = [2, 3]
cost_per_ha = 40.0

[[operations]]
name = "lime"
every = 5
from = 5
until = 15
cost_per_ha = 65.0
n_kg_per_ha = 10.0
"""


def _pair():
    """The demo without operations, and the same with OPS."""
    text = WILLOW.read_text(encoding="utf-8")
    bare = text[: text.index("# Operations by year")] + text[text.index("[finance]"):]
    return load_text(bare, "bare.toml"), load_text(bare + OPS, "ops.toml")


def test_cash_flow_matches_hand_built_with_numpy_financial():
    # hand-built: the bare case's net cash flow less 55 in year 1, 40 in years 2 and 3, 65 in years 5, 10, 15
    # (costs constant in real terms in this case); NPV by numpy-financial (reference library) to 1e-9
    bare, ops = _pair()
    assert bare["costs.change_per_year"] == 0.0
    base = tea.build_ledger(bare)["net_cash_flow"].to_numpy()
    hand = base.copy()
    hand[1] -= 55.0
    hand[[2, 3]] -= 40.0
    hand[[5, 10, 15]] -= 65.0
    led = tea.build_ledger(ops)
    assert_allclose(led["net_cash_flow"].to_numpy(), hand, rtol=0, atol=1e-9)
    rate = tea.summarise(ops).discount_rate_real
    assert tea.summarise(ops)["npv"] == pytest.approx(npf.npv(rate, hand), abs=1e-9)


def test_diesel_and_n_reach_the_ghg_lines():
    # hand: diesel +12 l in year 1 x the case's diesel factor; N +10 kg in years 5, 10, 15 through IPCC Eq. 11.1
    bare, ops = _pair()
    a, b = tea.build_ledger(bare), tea.build_ledger(ops)
    extra = np.zeros(len(a))
    extra[1] = 12.0 * ops["carbon.diesel_kg_co2_per_l"] / 1000
    assert_allclose(b["ghg_diesel_t_co2e"] - a["ghg_diesel_t_co2e"], extra, atol=1e-12)
    dn = (b["n_applied_kg"] - a["n_applied_kg"]).to_numpy()
    expected = np.zeros(len(a))
    expected[[5, 10, 15]] = 10.0
    assert_allclose(dn, expected, atol=1e-12)
    # direct N2O: EF1 0.01 (IPCC 2006 Table 11.1) x 44/28 x GWP100 of the case
    gwp = {"AR4": 298.0, "AR5": 265.0, "AR6": 273.0}[ops["carbon.gwp"]]
    # GWP100 of N2O: AR4 WG1 Ch.2 Table 2.14; AR5 WG1 Ch.8 Table 8.7; AR6 WG1 Ch.7 Table 7.15
    assert_allclose((b["ghg_n2o_direct_t_co2e"] - a["ghg_n2o_direct_t_co2e"]).to_numpy()[5],
                    10.0 * 0.01 * 44 / 28 * gwp / 1000, rtol=1e-12)


def test_nothing_after_the_stand_life():
    _, ops = _pair()
    short = ops.replace(**{"finance.stand_life_years": 12, "loan.share_of_establishment": 0.0})
    led = tea.build_ledger(short)
    assert len(led) == 13 and led["operations_cost"].iloc[10] == pytest.approx(65.0)


@pytest.mark.parametrize("bad, key", [
    ('[[operations]]\nname = "x"\ncost_per_ha = 5.0\n', "operations[1].year"),
    ('[[operations]]\nyear = 1\nyears = [2]\ncost_per_ha = 5.0\n', "operations[1].year"),
    ('[[operations]]\nyear = 1\ncost_per_ha = -5.0\n', "operations[1].cost_per_ha"),
    ('[[operations]]\nyear = 1\ncost_per_hour = 5.0\n', "operations[1].cost_per_hour"),
    ('[[operations]]\nyear = 1\n', "operations[1].cost_per_ha"),
])
def test_bad_operations_name_the_entry(bad, key):
    text = WILLOW.read_text(encoding="utf-8")
    bare = text[: text.index("# Operations by year")] + text[text.index("[finance]"):]
    with pytest.raises(CaseError) as info:
        load_text(bare + bad, "bad.toml")
    assert any(p.key == key for p in info.value.problems)


def test_every_n_years_from_a_start():
    assert operations.years_of({"every": 5, "from": 5}) == list(range(5, 61, 5))
    assert operations.years_of({"every": 3, "from": 1, "until": 10}) == [1, 4, 7, 10]


def test_an_operation_after_the_stand_life_is_warned_and_a_year_listed_twice_refused():
    """Nothing in the case file is dropped or merged without a word: an operation in a year after the stand's
    last is left out with a warning naming it; a year listed twice is an error naming the key."""
    text = WILLOW.read_text(encoding="utf-8")
    late = load_text(text + '\n[[operations]]\nname = "late lime"\nyear = 30\ncost_per_ha = 1000\n', source="late.toml")
    life = late.stand_life
    assert any(f"late lime: year 30 is after the stand's last year ({life}); it is left out" in w for w in late.warnings)
    with pytest.raises(CaseError) as err:
        load_text(text + '\n[[operations]]\nname = "twice"\nyears = [0, 0, 3]\ncost_per_ha = 10\n', source="t.toml")
    assert [p.key for p in err.value.problems][0].endswith(".years")
    assert "year 0 is listed twice" in err.value.problems[0].message
