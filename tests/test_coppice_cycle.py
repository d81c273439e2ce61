"""The coppice life cycle: cut-back year, rotations of any length, final harvest at removal, mortality, and the
warning when growth is grown but never harvested."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import tea
from tea.core.errors import CaseError
from tea.inputs.case import load_case

from conftest import CASES_DIR

WILLOW = CASES_DIR / "flood_meadow_willow.toml"  # coppice preset: cut back after year 1


def _variant(interval, life, final=True, first=None):
    return load_case(WILLOW).replace(**{
        "harvest.interval_years": interval, "finance.stand_life_years": life,
        "harvest.first_year": 1 + interval if first is None else first, "harvest.cut_back_year": 1,
        "harvest.final_harvest_at_removal": final, "loan.share_of_establishment": 0.0})


@pytest.mark.parametrize("interval", [2, 3, 4, 5])  # harvest cycles of 2-5 years (from memory: UK forestry guidance)
@pytest.mark.parametrize("life", range(10, 31))
def test_harvests_take_all_growth_after_the_cut_back(interval, life):
    # mass balance: every t of dry matter grown after the cut-back year is cut exactly once (final harvest on)
    led = tea.build_ledger(_variant(interval, life))
    growth = led["growth_t_dm"].to_numpy()
    assert_allclose(led["standing_t_dm"].sum(), growth[2:life + 1].sum(), rtol=1e-12)
    # the cut-back year's growth is never sold: nothing is cut before the first harvest
    assert (led["standing_t_dm"][: 1 + interval] == 0).all()


def test_a_short_first_rotation_takes_only_growth_after_the_cut_back():
    # cut back after year 1, first harvest in year 3 on a 3-year cycle: years 2 and 3 only (the cut-back year's
    # growth is left out, where a fixed 3-year window would have taken it)
    led = tea.build_ledger(_variant(3, 21, first=3))
    g = led["growth_t_dm"].to_numpy()
    assert_allclose(led["standing_t_dm"][3], g[2] + g[3], rtol=1e-12)
    assert_allclose(led["standing_t_dm"][6], g[4] + g[5] + g[6], rtol=1e-12)


def test_without_a_final_harvest_the_last_growth_is_warned():
    # life 22, harvests 3, 5, ..., 21 on a 2-year cycle from year 3: year 22 grown, never harvested
    case = _variant(2, 22, final=False, first=3)
    led = tea.build_ledger(case)
    g = led["growth_t_dm"].to_numpy()
    assert_allclose(led["standing_t_dm"].sum(), g[2:22].sum(), rtol=1e-12)
    assert any("never harvested" in w for w in case.warnings)
    assert not any("never harvested" in w for w in _variant(2, 22, final=True, first=3).warnings)


def test_cut_back_after_the_first_harvest_is_refused(tmp_path):
    text = WILLOW.read_text(encoding="utf-8").replace("[harvest]\n", "[harvest]\ncut_back_year = 5\n", 1)
    if "[harvest]\n" not in WILLOW.read_text(encoding="utf-8"):
        text += "\n[harvest]\ncut_back_year = 5\n"
    path = tmp_path / "c.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(CaseError, match="cut_back_year"):
        load_case(path)


def test_mortality_compounds_from_year_two():
    # definition: growth x (1 - m)^(t - 1) from year 1 (hand calculation)
    base = _variant(3, 22)
    plain = tea.build_ledger(base)["growth_t_dm"].to_numpy()
    lost = tea.build_ledger(base.replace(**{"yield.mortality_per_year": 0.02}))["growth_t_dm"].to_numpy()
    t = np.arange(len(plain))
    assert_allclose(lost[1:], plain[1:] * 0.98 ** (t[1:] - 1), rtol=1e-12)


def test_poplar_preset_against_its_trial():
    # iForest 5:224-229 (2012), doi:10.3832/ifor0628-005: 7,140 cuttings/ha, 13.0 t DM/ha/yr on a triennial
    # rotation, 89.9 % of stumps alive after two rotations (five years): mortality 1 - 0.899^(1/5) a year
    from tea.inputs.case import load_preset
    p = load_preset("poplar_coppice").values
    assert p["establishment.planting_units_per_ha"] == 7140
    assert p["yield.mature_t_dm_per_ha"] == 13.0 and p["harvest.interval_years"] == 3
    assert p["yield.mortality_per_year"] == pytest.approx(1 - 0.899 ** (1 / 5), abs=5e-4)


SWITCHGRASS = CASES_DIR / "sandy_slope_switchgrass.toml"  # seeded grass preset


@pytest.mark.parametrize("interval", [2, 3])
def test_a_grass_left_uncut_keeps_a_fifth_of_its_standing_crop_from_earlier_years(interval):
    """Adler, Sanderson, El Nashaar, Griffith & Banowetz 2008 (ASA-CSSA-SSSA Annual Meeting Abstracts 296,
    USDA-ARS): in switchgrass harvested every 2 or 3 years only 15-25 % of the standing harvestable biomass was
    from earlier years' growth. A grass cut every `interval` years must not sell `interval` years of growth at
    once, as a coppice does with its wood; once the yield is mature, the share of the cut standing crop that
    grew before the harvest year lies in that published range."""
    grass = load_case(SWITCHGRASS).replace(**{"harvest.interval_years": interval, "harvest.first_year": 1})
    led = tea.build_ledger(grass)
    cut = [int(t) for t in led.index if led.at[t, "harvest"] and t >= 4 and t < grass.stand_life]
    assert cut
    for t in cut:
        earlier = 1.0 - led.at[t, "growth_t_dm"] / led.at[t, "standing_t_dm"]
        assert 0.15 <= earlier <= 0.25, (t, earlier)
        assert led.at[t, "standing_t_dm"] < 1.5 * led.at[t, "growth_t_dm"]
    # a coppice keeps its wood: a rotation's growth is all cut at once (mass balance)
    willow = tea.build_ledger(_variant(interval, 20))
    assert_allclose(willow["standing_t_dm"].sum(), willow["growth_after_cut_back_t_dm"].sum(), rtol=1e-12)
